"""Per-token access: admin, normal and read-only tokens over REST (401/403 cases on every write
route), the /tokens routes, created_by on every record, the CLI's --kind, the first-start admin
token and the web pages' refusal of a read-only session."""
from __future__ import annotations

import io
import json

import pytest

from edgefit.cli import main as cli_main
from edgefit.errors import EdgefitError
from edgefit_web import create_app

from service_support import synthetic_csv

FAST = {"bootstrap": 10}


@pytest.fixture
def app(tmp_path):
    app = create_app({"DATA_DIR": str(tmp_path / "data"), "JOB_EXECUTOR": "inline",
                      "TESTING": True, "RESUME_JOBS": False})
    yield app
    app.extensions["edgefit"].close()


@pytest.fixture
def tokens(app):
    a = app.extensions["edgefit"].archive
    return {kind: a.create_token(f"{kind} holder", kind)
            for kind in ("admin", "normal", "read-only")}


def call(app, method, path, token=None, **kw):
    headers = {"Authorization": f"Bearer {token}"} if token else {}
    return app.test_client().open(f"/api/v1{path}", method=method, headers=headers, **kw)


def _error(resp, status, code):
    assert resp.status_code == status, resp.get_data(as_text=True)[:300]
    body = resp.get_json()
    assert body["error"]["code"] == code and body["error"]["message"]
    return body["error"]


def _upload_form(name="f.csv"):
    return {"data": {"file": [(io.BytesIO(synthetic_csv()), name)],
                     "options": json.dumps(FAST)},
            "content_type": "multipart/form-data"}


def _seed(app, token):
    """A sample with a spectrum and a fit, made with ``token``: their ids."""
    s = call(app, "POST", "/samples", token, json={"name": "s"}).get_json()
    sp = call(app, "POST", f"/samples/{s['id']}/spectra", token,
              **_upload_form()).get_json()["spectra"][0]
    job = call(app, "POST", "/fits", token, json={"spectrum_ids": [sp["id"]],
                                                   "options": FAST}).get_json()
    assert app.extensions["edgefit"].runner.wait_idle(120)
    return s["id"], sp["id"], job["job_id"]


# Every write route of the API, with a valid body (sample 1 and spectrum 1 exist).
WRITES = [
    ("POST", "/samples", lambda: {"json": {"name": "x"}}),
    ("POST", "/samples/1/spectra", _upload_form),
    ("POST", "/fits", lambda: {"json": {"spectrum_ids": [1], "options": FAST}}),
    ("POST", "/batch", _upload_form),
    ("POST", "/tokens", lambda: {"json": {"name": "other"}}),
    ("DELETE", "/tokens/1", dict),
]


@pytest.mark.parametrize("method, path, body", WRITES, ids=[f"{m} {p}" for m, p, _ in WRITES])
def test_read_only_token_gets_403_on_every_write_and_nothing_changes(app, tokens, method, path,
                                                                      body):
    _seed(app, tokens["normal"])
    before = app.extensions["edgefit"].archive.db.find_samples()[1]
    err = _error(call(app, method, path, tokens["read-only"], **body()), 403, "forbidden")
    assert "read-only" in err["message"] or "admin" in err["message"]
    assert app.extensions["edgefit"].archive.db.find_samples()[1] == before
    # and without a token, or with a revoked one, 401
    _error(call(app, method, path, None, **body()), 401, "unauthorized")
    _error(call(app, method, path, tokens["read-only"] + "x", **body()), 401, "unauthorized")


def test_read_only_token_reads_everything(app, tokens):
    sample_id, spectrum_id, job_id = _seed(app, tokens["normal"])
    ro = tokens["read-only"]
    fit_id = call(app, "GET", f"/jobs/{job_id}", ro).get_json()["fit_ids"][0]
    for path in ("/samples", f"/samples/{sample_id}", f"/jobs/{job_id}", f"/fits/{fit_id}",
                 f"/fits/{fit_id}/report", f"/samples/{sample_id}/export"):
        assert call(app, "GET", path, ro).status_code == 200, path


@pytest.mark.parametrize("kind", ["normal", "read-only"])
def test_only_an_admin_token_manages_tokens(app, tokens, kind):
    for method, path, kw in (("GET", "/tokens", {}), ("POST", "/tokens", {"json": {"name": "n"}}),
                             ("DELETE", "/tokens/1", {})):
        _error(call(app, method, path, tokens[kind], **kw), 403, "forbidden")


def test_admin_creates_lists_and_revokes_tokens(app, tokens):
    admin = tokens["admin"]
    r = call(app, "POST", "/tokens", admin, json={"name": "uv-vis robot", "kind": "read-only"})
    assert r.status_code == 201
    made = r.get_json()
    assert made["token"].startswith("ef_") and made["kind"] == "read-only"
    admin_id = app.extensions["edgefit"].archive.token_for(admin)["id"]
    assert made["created_by"] == admin_id and made["name"] == "uv-vis robot"
    listed = call(app, "GET", "/tokens", admin).get_json()["tokens"]
    assert [t["name"] for t in listed] == ["admin holder", "normal holder", "read-only holder",
                                           "uv-vis robot"]
    assert all("hash" not in t and "token" not in t for t in listed)
    assert call(app, "GET", "/samples", made["token"]).status_code == 200
    r = call(app, "DELETE", f"/tokens/{made['id']}", admin)
    assert r.status_code == 200 and r.get_json()["revoked"]
    _error(call(app, "GET", "/samples", made["token"]), 401, "unauthorized")
    _error(call(app, "DELETE", f"/tokens/{made['id']}", admin), 404, "not-found")


@pytest.mark.parametrize("body", [{"name": ""}, {"name": "x", "kind": "root"},
                                  {"name": "x", "extra": 1}, {"kind": "admin"}])
def test_token_creation_refuses_bad_bodies(app, tokens, body):
    _error(call(app, "POST", "/tokens", tokens["admin"], json=body), 400,
           "bad-option" if body.get("kind") == "root" else "bad-request")


def test_an_admin_cannot_lock_the_admins_out(app, tokens):
    a = app.extensions["edgefit"].archive
    admin = tokens["admin"]
    own = a.token_for(admin)["id"]
    _error(call(app, "DELETE", f"/tokens/{own}", admin), 409, "own-token")
    other = call(app, "POST", "/tokens", admin, json={"name": "second", "kind": "admin"})
    second = other.get_json()
    assert call(app, "DELETE", f"/tokens/{own}", second["token"]).status_code == 200
    # the second admin is now the last one: the API refuses to revoke it (the CLI can)
    with pytest.raises(EdgefitError, match="last active admin"):
        a.db.revoke_id(second["id"], keep_an_admin=True)
    assert a.token_for(second["token"])["kind"] == "admin"


def test_what_each_token_creates_is_recorded(app, tokens):
    a = app.extensions["edgefit"].archive
    normal_id = a.token_for(tokens["normal"])["id"]
    admin_id = a.token_for(tokens["admin"])["id"]
    sample_id, spectrum_id, job_id = _seed(app, tokens["normal"])
    db = a.db
    assert db.get_sample(sample_id)["created_by"] == normal_id
    assert db.get_spectrum(spectrum_id)["created_by"] == normal_id
    job = db.get_job(job_id)
    assert job["created_by"] == normal_id
    fit = db.get_fit(job["fit_ids"][0])
    assert fit["created_by"] == normal_id                         # the fit of the job's token
    # and through REST
    assert call(app, "GET", f"/samples/{sample_id}", tokens["normal"]).get_json()[
        "created_by"] == normal_id
    assert call(app, "GET", f"/fits/{fit['id']}", tokens["normal"]).get_json()[
        "created_by"] == normal_id
    # a batch by the admin
    r = call(app, "POST", "/batch", tokens["admin"], **_upload_form("b.csv"))
    assert r.status_code == 202
    body = r.get_json()
    assert app.extensions["edgefit"].runner.wait_idle(120)
    assert db.get_job(body["job_id"])["created_by"] == admin_id
    assert all(s["created_by"] == admin_id for s in body["spectra"])
    new = [s for s in body["samples"] if not s["existing"]]
    assert new and all(db.get_sample(s["id"])["created_by"] == admin_id for s in new)


def test_first_start_token_is_admin(app):
    a = app.extensions["edgefit"].archive
    token = a.first_start_token()
    assert a.token_for(token)["kind"] == "admin"
    assert a.first_start_token() is None


def test_cli_creates_tokens_of_each_kind(tmp_path, capsys):
    data = str(tmp_path / "d")
    for kind in ("admin", "normal", "read-only"):
        assert cli_main(["token", "create", "--name", f"{kind}-1", "--kind", kind,
                         "--data-dir", data]) == 0
        out = capsys.readouterr().out
        assert f"new {kind} API token for '{kind}-1'" in out and "ef_" in out
    assert cli_main(["token", "create", "--name", "plain", "--data-dir", data]) == 0
    assert "new normal API token" in capsys.readouterr().out
    assert cli_main(["token", "list", "--data-dir", data]) == 0
    listing = capsys.readouterr().out.splitlines()
    assert [line.split()[2] for line in listing] == ["admin", "normal", "read-only", "normal"]
    with pytest.raises(SystemExit) as exit_:
        cli_main(["token", "create", "--name", "x", "--kind", "root", "--data-dir", data])
    assert exit_.value.code == 2


def test_a_read_only_session_cannot_upload_on_the_pages(app, tokens):
    c = app.test_client()
    login = c.get("/login")
    assert login.status_code == 200
    import re
    csrf = re.search(r'name="csrf_token" value="([^"]+)"', login.get_data(as_text=True))
    form = {"token": tokens["read-only"], **({"csrf_token": csrf.group(1)} if csrf else {})}
    assert c.post("/login", data=form).status_code in (302, 303)
    assert c.get("/samples").status_code == 200
    with c.session_transaction() as sess:
        csrf_token = sess["csrf"]
    r = c.post("/upload", data={"csrf_token": csrf_token,
                                "file": [(io.BytesIO(synthetic_csv()), "f.csv")]},
               content_type="multipart/form-data")
    assert r.status_code == 403
    assert "read-only" in r.get_data(as_text=True)
    assert app.extensions["edgefit"].archive.db.find_samples()[1] == 0
