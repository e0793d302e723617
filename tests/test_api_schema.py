"""Property-based tests of the API against its own OpenAPI document (schemathesis, WSGI: no
network). Bounded by count: 25 examples per operation, no deadline.

Checks: no 5xx, every status and body documented and matching its schema, auth enforced,
undeclared methods refused. Valid-looking data may still be refused with 400/404/413/422 where
the document cannot say it in JSON Schema (a length without a unit, an id that does not exist,
a file that is not a spectrum): those are the statuses allowed for "positive" data.
"""
import concurrent.futures
import io
import json
import shutil
import tempfile

import pytest
import schemathesis
from hypothesis import HealthCheck, settings
from schemathesis.config import SchemathesisConfig

from edgefit_web import create_app

from service_support import synthetic_csv


# The schema is loaded when the module is imported (schemathesis's fixture-based loader does
# not work with this pytest), so the application is made here, in a directory of its own that
# the module fixture removes at the end.
class _SeedThenHold:
    """Runs fits at once while the module seeds its records, then holds every later one
    (cancelled: its job stays queued). The property test is about HTTP, not about fitting
    whatever options it draws (up to 5000 bootstrap resamples)."""

    def __init__(self):
        self.run = True

    def submit(self, fn, *args):
        future = concurrent.futures.Future()
        if self.run:
            future.set_result(fn(*args))
        else:
            future.cancel()
        return future


_EXECUTOR = _SeedThenHold()
_DATA = tempfile.mkdtemp(prefix="edgefit-schema-")
APP = create_app({"DATA_DIR": _DATA, "JOB_EXECUTOR": _EXECUTOR,
                  "MAX_FILES": 5, "MAX_POINTS": 5000, "MAX_CONTENT_LENGTH": 2 * 1024 * 1024,
                  "RESUME_JOBS": False})
# an admin token, so that the /tokens routes are exercised too (a token cannot revoke itself
# over the API: 409)
TOKEN = APP.extensions["edgefit"].archive.create_token("schemathesis", "admin")
schema = schemathesis.openapi.from_wsgi("/api/v1/openapi.json", APP, config=SchemathesisConfig
                                        .from_dict({
    "headers": {"Authorization": f"Bearer {TOKEN}"},
    "checks": {
        "positive_data_acceptance": {
            "expected-statuses": ["2xx", "400", "401", "404", "409", "413", "422"]},
        # more files than maxItems is refused as over the limit: 413, as documented
        "negative_data_rejection": {
            "expected-statuses": ["400", "401", "404", "405", "413", "415", "422"]}},
}))


@pytest.fixture(scope="module")
def served():
    svc = APP.extensions["edgefit"]
    # records with id 1 (the document's examples), so that reads also meet real data
    c = APP.test_client()
    h = {"Authorization": f"Bearer {TOKEN}"}
    c.post("/api/v1/samples", json={"name": "seed", "metadata": {"series": "a"}}, headers=h)
    c.post("/api/v1/samples/1/spectra", headers=h, data={
        "file": [(io.BytesIO(synthetic_csv()), "seed.csv")],
        "options": json.dumps({"bootstrap": 10})})
    c.post("/api/v1/fits", json={"spectrum_ids": [1]}, headers=h)
    assert svc.runner.wait_idle(120)
    assert c.get("/api/v1/jobs/1", headers=h).get_json()["state"] == "done"
    _EXECUTOR.run = False
    yield APP, TOKEN
    svc.close()
    shutil.rmtree(_DATA, ignore_errors=True)


@schema.parametrize()
@settings(max_examples=25, deadline=None, suppress_health_check=list(HealthCheck))
def test_api_conforms_to_its_openapi_document(case, served):
    _, token = served
    case.call_and_validate(headers={"Authorization": f"Bearer {token}"})


def test_document_lists_exactly_the_routes_the_app_serves(served):
    app, _ = served
    doc = app.test_client().get("/api/v1/openapi.json").get_json()
    served_routes = set()
    for rule in app.url_map.iter_rules():
        if rule.rule.startswith("/api/v1/"):
            path = rule.rule[len("/api/v1"):]
            for arg in rule.arguments:
                path = path.replace(f"<id:{arg}>", "{" + arg + "}")
            for method in rule.methods - {"HEAD", "OPTIONS"}:
                served_routes.add((method.lower(), path))
    documented = {(m, p) for p, ops in doc["paths"].items() for m in ops}
    assert documented == served_routes
    # every operation but the two open ones answers 401 in its document
    for path, ops in doc["paths"].items():
        for method, op in ops.items():
            assert ("401" in op["responses"]) == (path not in ("/health", "/openapi.json"))
