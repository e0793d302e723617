"""Every route of /api/v1 through Flask's test client: answers, errors, limits, auth refusals.

Spectra are synthetic (tests/service_support.py): a direct gap of known energy, so a fit made
through the service must give that gap back.
"""
import io
import json
import re
import zipfile

import pytest

from edgefit_web import create_app

from service_support import synthetic_csv

FAST = {"bootstrap": 20}


@pytest.fixture
def app(tmp_path):
    app = create_app({"DATA_DIR": str(tmp_path / "data"), "JOB_EXECUTOR": "thread",
                      "JOB_WORKERS": 2, "TESTING": True})
    yield app
    app.extensions["edgefit"].close()


@pytest.fixture
def svc(app):
    return app.extensions["edgefit"]


@pytest.fixture
def token(svc):
    return svc.archive.create_token("tests")


@pytest.fixture
def client(app, token):
    c = app.test_client()
    c.environ_base["HTTP_AUTHORIZATION"] = f"Bearer {token}"
    return c


def _error(resp, status, code=None):
    assert resp.status_code == status, resp.get_data(as_text=True)[:500]
    assert resp.is_json
    body = resp.get_json()
    assert set(body) == {"error"} and {"code", "message"} <= set(body["error"])
    assert body["error"]["message"]
    if code:
        assert body["error"]["code"] == code
    return body["error"]


def _sample(client, name="film", metadata=None):
    r = client.post("/api/v1/samples", json={"name": name, "metadata": metadata or {}})
    assert r.status_code == 201
    return r.get_json()


def _upload(client, sample_id, files, options=None):
    data = {"file": [(io.BytesIO(b), n) for n, b in files]}
    if options is not None:
        data["options"] = json.dumps(options)
    return client.post(f"/api/v1/samples/{sample_id}/spectra", data=data)


def _wait(client, svc, job_id):
    assert svc.runner.wait_idle(120)
    r = client.get(f"/api/v1/jobs/{job_id}")
    assert r.status_code == 200
    return r.get_json()


def _fit(client, svc, spectrum_ids, options=FAST):
    r = client.post("/api/v1/fits", json={"spectrum_ids": spectrum_ids, "options": options})
    assert r.status_code == 202, r.get_json()
    assert r.headers["Location"].endswith(f"/api/v1/jobs/{r.get_json()['job_id']}")
    return _wait(client, svc, r.get_json()["job_id"])


# ---------------------------------------------------------------------------- open routes

def test_health_and_openapi_need_no_token(app):
    c = app.test_client()
    r = c.get("/api/v1/health")
    assert r.status_code == 200 and r.get_json()["status"] == "ok"
    doc = c.get("/api/v1/openapi.json").get_json()
    assert doc["openapi"].startswith("3.") and "/samples/{sample_id}/spectra" in doc["paths"]


PROTECTED = [("get", "/api/v1/samples"), ("post", "/api/v1/samples"),
             ("get", "/api/v1/samples/1"), ("post", "/api/v1/samples/1/spectra"),
             ("post", "/api/v1/fits"), ("post", "/api/v1/batch"), ("get", "/api/v1/jobs/1"),
             ("get", "/api/v1/fits/1"), ("get", "/api/v1/fits/1/report"),
             ("get", "/api/v1/samples/1/export")]


@pytest.mark.parametrize("method,path", PROTECTED)
def test_every_other_route_refuses_without_a_valid_token(app, svc, method, path):
    good = svc.archive.create_token("someone")
    revoked = svc.archive.create_token("gone")
    svc.archive.db.revoke("gone")
    c = app.test_client()
    for headers in ({}, {"Authorization": "Bearer"}, {"Authorization": "Bearer wrong"},
                    {"Authorization": f"Basic {good}"}, {"Authorization": f"Bearer {revoked}"}):
        r = getattr(c, method)(path, headers=headers)
        _error(r, 401, "unauthorized")
        assert r.headers["WWW-Authenticate"].startswith("Bearer")
    r = getattr(c, method)(path, headers={"Authorization": f"bearer {good}"})
    assert r.status_code != 401


def test_unknown_routes_and_methods_answer_json(client):
    _error(client.get("/api/v1/nothing-here"), 404, "not-found")
    err = _error(client.delete("/api/v1/samples"), 405, "method-not-allowed")
    assert "DELETE" in err["message"]
    assert client.put("/api/v1/health").status_code == 405


# ---------------------------------------------------------------------------- samples

def test_create_and_find_samples(client):
    r = client.post("/api/v1/samples", json={"name": " ZTO-300 ", "metadata":
                                             {"anneal_c": 300, "series": "zto", "ok": True}})
    assert r.status_code == 201
    s = r.get_json()
    assert s["name"] == "ZTO-300" and s["metadata"]["anneal_c"] == 300
    assert r.headers["Location"].endswith(f"/api/v1/samples/{s['id']}")
    _sample(client, "ZTO-400", {"anneal_c": 400, "series": "zto"})
    _sample(client, "powder", {"series": "pc"})
    names = lambda q: [x["name"] for x in client.get("/api/v1/samples" + q).get_json()["samples"]]  # noqa: E731
    assert names("") == ["powder", "ZTO-400", "ZTO-300"]
    assert names("?name=zto") == ["ZTO-400", "ZTO-300"]
    assert names("?metadata=series=zto&metadata=anneal_c=300") == ["ZTO-300"]
    assert names("?metadata=ok=true") == ["ZTO-300"]
    assert names("?limit=1&offset=1") == ["ZTO-400"]
    assert client.get("/api/v1/samples?limit=1").get_json()["total"] == 3
    got = client.get(f"/api/v1/samples/{s['id']}").get_json()
    assert got["name"] == "ZTO-300" and got["spectra"] == []


@pytest.mark.parametrize("body", [
    None, [], {"metadata": {}}, {"name": ""}, {"name": "   "}, {"name": 5},
    {"name": "x" * 201}, {"name": "a", "metadata": []}, {"name": "a", "metadata": {"k": [1]}},
    {"name": "a", "metadata": {"k": {"n": 1}}}, {"name": "a", "colour": "red"},
    {"name": "a", "metadata": {f"k{i}": i for i in range(101)}},
    {"name": "a", "metadata": {"": 1}}, {"name": "a", "metadata": {"k": "v" * 2001}}])
def test_create_sample_refuses_bad_bodies(client, body):
    r = (client.post("/api/v1/samples", data="not json", content_type="text/plain")
         if body is None else client.post("/api/v1/samples", json=body))
    _error(r, 400, "bad-request")


@pytest.mark.parametrize("query", ["?limit=0", "?limit=x", "?offset=-1", "?limit=1001",
                                   "?offset=", "?metadata=novalue", "?metadata==v"])
def test_list_samples_refuses_bad_queries(client, query):
    _error(client.get("/api/v1/samples" + query), 400, "bad-request")


def test_missing_records_are_404(client):
    for path in ("/api/v1/samples/9", "/api/v1/jobs/9", "/api/v1/fits/9",
                 "/api/v1/fits/9/report", "/api/v1/samples/9/export",
                 "/api/v1/samples/99999999999999999999999", "/api/v1/samples/-1",
                 "/api/v1/samples/abc"):
        _error(client.get(path), 404, "not-found")
    _error(_upload(client, 9, [("a.csv", synthetic_csv())]), 404, "not-found")


# ---------------------------------------------------------------------------- spectra

def test_upload_stores_the_file_once_and_returns_its_summary(client, svc):
    s = _sample(client)
    data = synthetic_csv()
    r = _upload(client, s["id"], [("film.csv", data)], {"thickness": "500nm"})
    assert r.status_code == 201
    sp, = r.get_json()["spectra"]
    assert sp["points"] == 326 and sp["quantity"] == "transmittance" and sp["warnings"] == []
    assert sp["options"] == {"thickness": "500nm"} and sp["existing"] is False
    assert svc.archive.raw.get(sp["sha256"]) == data
    again = _upload(client, s["id"], [("renamed.csv", data)], {"thickness": "500nm"})
    assert again.get_json()["spectra"][0]["id"] == sp["id"]
    assert again.get_json()["spectra"][0]["existing"] is True
    other = _sample(client, "other")
    moved = _upload(client, other["id"], [("film.csv", data)]).get_json()["spectra"][0]
    assert moved["id"] != sp["id"] and moved["sha256"] == sp["sha256"]
    raw_files = [p for p in (svc.archive.data_dir / "raw").rglob("*") if p.is_file()]
    assert len(raw_files) == 1
    detail = client.get(f"/api/v1/samples/{s['id']}").get_json()
    assert [x["id"] for x in detail["spectra"]] == [sp["id"]]


def test_a_file_with_t_and_r_columns_stores_both_and_fits_t_with_its_r(client, svc):
    # the invented demo film with %T and %R columns (spectra_demo/, generated with tmm)
    from pathlib import Path
    data = (Path(__file__).resolve().parent.parent / "spectra_demo" /
            "film_CVN7-10_TR.csv").read_bytes()
    s = _sample(client)
    spectra = _upload(client, s["id"], [("film.csv", data)],
                      {"substrate_index": 1.52}).get_json()["spectra"]
    assert sorted(x["column"] for x in spectra) == ["%R", "%T"]
    assert len({x["id"] for x in spectra}) == 2
    again = _upload(client, s["id"], [("film.csv", data)], {"substrate_index": 1.52})
    assert all(x["existing"] for x in again.get_json()["spectra"])
    t = [x for x in spectra if x["column"] == "%T"][0]
    from edgefit.jobs import fit_task
    out = fit_task({"data": data, "name": "film.csv", "reader": t["reader"],
                    "column": t["column"], "options": {"substrate_index": 1.52}})
    res = out["result"]
    assert any("reflectance from the column '%R'" in f["message"] for f in res["flags"])
    assert res["film"]["thickness_source"] == "fringes"
    # in a batch the R column is stored but only the T is fitted (with its R)
    r = client.post("/api/v1/batch", data={"file": [(io.BytesIO(data), "film2.csv")],
                                          "options": json.dumps({"substrate_index": 1.52})})
    assert r.status_code == 202
    job = _wait(client, svc, r.get_json()["job_id"])
    assert job["progress"]["total"] == 1 and job["state"] == "done" and not job["errors"]


def test_an_unreadable_file_is_422_with_the_readers_message_and_nothing_stored(client, svc):
    s = _sample(client)
    r = _upload(client, s["id"], [("good.csv", synthetic_csv()),
                                  ("broken.csv", b"Wavelength (nm),%T\n400,50\n500,abc\n"
                                                 b"600,52\n700,53\n800,54\n900,55\n")])
    err = _error(r, 422, "bad-file")
    assert "broken.csv" in err["message"] and "line 3" in err["message"]
    assert err["file"] == "broken.csv" and err["line"] == 3 and err["fix"]
    assert client.get(f"/api/v1/samples/{s['id']}").get_json()["spectra"] == []
    assert not (svc.archive.data_dir / "raw").exists() or \
        not any(p.is_file() for p in (svc.archive.data_dir / "raw").rglob("*"))


def test_upload_needs_an_option_when_the_quantity_is_unknown_and_accepts_it(client):
    s = _sample(client)
    data = synthetic_csv(header="Wavelength (nm),signal")
    err = _error(_upload(client, s["id"], [("x.csv", data)]), 422, "needs-option")
    assert "--quantity" in err["message"]
    r = _upload(client, s["id"], [("x.csv", data)], {"quantity": "T", "y_unit": "percent"})
    assert r.status_code == 201
    assert r.get_json()["spectra"][0]["reader"] == {"quantity": "transmittance",
                                                    "y_unit": "percent"}


@pytest.mark.parametrize("options,word", [
    ("{not json", "JSON"), ("[1]", "object"), ('{"colour": 1}', "unknown option"),
    ('{"thickness": "400"}', "unit"), ('{"model": "maybe"}', "--model"),
    ('{"quantity": "light"}', "quantity"), ('{"thickness_nm": [1, 2]}', "number"),
    # an empty text is no value of an enum (found by the schema test): null means "not set"
    ('{"fringes": ""}', "empty"), ('{"model": " "}', "empty"),
    ('{"range": "2:1"}', "lower energy first")])
def test_upload_refuses_bad_options_with_400(client, options, word):
    s = _sample(client)
    r = client.post(f"/api/v1/samples/{s['id']}/spectra",
                    data={"file": [(io.BytesIO(synthetic_csv()), "a.csv")], "options": options})
    err = _error(r, 400, "bad-option")
    assert word in err["message"]


def test_upload_without_a_file_is_400(client):
    s = _sample(client)
    _error(client.post(f"/api/v1/samples/{s['id']}/spectra", data={"options": "{}"}), 400)


def test_upload_file_names_are_data_never_paths(client, svc):
    s = _sample(client)
    r = _upload(client, s["id"], [("../../../etc/evil\x07.csv", synthetic_csv())])
    sp = r.get_json()["spectra"][0]
    assert sp["file_name"] == "evil.csv"
    assert not (svc.archive.data_dir.parent / "etc").exists()
    assert svc.archive.raw.path(sp["sha256"]).is_file()


# ---------------------------------------------------------------------------- limits (413)

@pytest.fixture
def small_app(tmp_path):
    app = create_app({"DATA_DIR": str(tmp_path / "small"), "JOB_EXECUTOR": "inline",
                      "MAX_CONTENT_LENGTH": 64 * 1024, "MAX_POINTS": 100, "MAX_FILES": 3})
    yield app
    app.extensions["edgefit"].close()


def _small_client(small_app):
    c = small_app.test_client()
    token = small_app.extensions["edgefit"].archive.create_token("t")
    c.environ_base["HTTP_AUTHORIZATION"] = f"Bearer {token}"
    return c


def test_limits_answer_413_naming_the_limit(small_app):
    c = _small_client(small_app)
    s = _sample(c)
    err = _error(_upload(c, s["id"], [("big.csv", b"x" * 70 * 1024)]), 413, "too-large")
    assert "64 KB" in err["message"] or "0.0625 MB" in err["message"]
    err = _error(_upload(c, s["id"], [("long.csv", synthetic_csv(points=150))]), 413)
    assert "100" in err["message"]
    few = [(f"f{i}.csv", synthetic_csv(points=50, seed=i)) for i in range(4)]
    err = _error(_upload(c, s["id"], few), 413, "too-many-files")
    assert "limit of 3 files" in err["message"]
    _error(c.post("/api/v1/batch", data={"file": [(io.BytesIO(b), n) for n, b in few]}), 413)
    _error(c.post("/api/v1/batch", data={"file": [(io.BytesIO(synthetic_csv(points=150)),
                                                   "long.csv")]}), 413, "too-large")
    err = _error(c.post("/api/v1/fits", json={"spectrum_ids": [1, 2, 3, 4]}), 413)
    assert "limit of 3" in err["message"]
    assert c.get(f"/api/v1/samples/{s['id']}").get_json()["spectra"] == []


# ---------------------------------------------------------------------------- fits and jobs

def test_fit_job_gives_the_gap_and_a_refit_adds_to_the_history(client, svc):
    s = _sample(client)
    sp = _upload(client, s["id"], [("film.csv", synthetic_csv(2.05))],
                 {"thickness": "500nm"}).get_json()["spectra"][0]
    job = _fit(client, svc, [sp["id"]])
    assert job["state"] == "done" and job["progress"] == {"done": 1, "total": 1}
    assert job["errors"] == [] and job["kind"] == "fit"
    fit = client.get(f"/api/v1/fits/{job['fit_ids'][0]}").get_json()
    # synthetic truth: Eg = 2.05 eV; the stored upload option (thickness) was applied
    assert fit["gaps"][0]["eg_ev"] == pytest.approx(2.05, abs=0.02)
    assert fit["transition"] == "direct" and fit["film"]["thickness_nm"] == 500
    assert fit["spectrum_id"] == sp["id"] and fit["sample_id"] == s["id"]
    assert fit["requested_options"] == {"thickness": "500nm", **FAST}
    assert fit["options"]["thickness_nm"] == 500 and fit["version"] and fit["created"]
    assert "data" not in fit
    for key in ("source", "column", "sample", "tauc", "urbach", "flags"):
        assert key in fit
    refit = _fit(client, svc, [sp["id"]], {"model": "direct", "window": "2.10:2.40", **FAST})
    second = client.get(f"/api/v1/fits/{refit['fit_ids'][0]}").get_json()
    assert second["gaps"][0]["window_ev"][0] >= 2.10 and second["id"] != fit["id"]
    history = client.get(f"/api/v1/samples/{s['id']}").get_json()["spectra"][0]["fits"]
    assert [h["id"] for h in history] == [second["id"], fit["id"]]     # newest first
    listed = client.get("/api/v1/samples").get_json()["samples"][0]
    assert listed["fits_count"] == 2 and listed["latest_fit"]["id"] == second["id"]


def test_a_failing_spectrum_fails_its_item_not_the_job(client, svc):
    s = _sample(client)
    good = _upload(client, s["id"], [("t.csv", synthetic_csv(2.0))]).get_json()["spectra"][0]
    # the same kind of file read as a reflectance: no edge can come from R alone
    refl = _upload(client, s["id"], [("r.csv", synthetic_csv(2.2))],
                   {"quantity": "reflectance"}).get_json()["spectra"][0]
    job = _fit(client, svc, [refl["id"], good["id"]])
    assert job["state"] == "done" and job["progress"] == {"done": 2, "total": 2}
    assert len(job["fit_ids"]) == 1
    err, = job["errors"]
    assert err["item"] == 0 and err["spectrum_id"] == refl["id"] and err["source"] == "r.csv"
    assert err["code"] == "bad-option" and "reflectance" in err["message"]
    alone = _fit(client, svc, [refl["id"]])
    assert alone["state"] == "failed" and alone["reason"] == "no item could be fitted"


@pytest.mark.parametrize("body,status", [
    ({}, 400), ({"spectrum_ids": []}, 400), ({"spectrum_ids": "1"}, 400),
    ({"spectrum_ids": [0]}, 400), ({"spectrum_ids": [True]}, 400),
    ({"spectrum_ids": [1.5]}, 400), ({"spectrum_ids": [1], "options": []}, 400),
    ({"spectrum_ids": [1], "options": {"quantity": "absorbance"}}, 400),
    ({"spectrum_ids": [1], "options": {"bootstrap": -1}}, 400),
    ({"spectrum_ids": [1], "extra": 1}, 400),
    ({"spectrum_ids": [12345]}, 404),
    ({"spectrum_ids": [1], "options": {"reflectance_spectrum_id": 777}}, 404)])
def test_create_fits_refusals(client, body, status):
    s = _sample(client)
    _upload(client, s["id"], [("a.csv", synthetic_csv())])
    _error(client.post("/api/v1/fits", json=body), status)
    _error(client.post("/api/v1/fits", data="x", content_type="text/plain"), 400)


def test_batch_makes_one_sample_per_file_and_reports_unreadable_files(client, svc):
    files = [("ZTO-a.csv", synthetic_csv(2.0)),
             ("named.csv", synthetic_csv(2.3, seed=2, sample_line="Film <b>7</b>")),
             ("empty.csv", b"")]
    r = client.post("/api/v1/batch", data={"file": [(io.BytesIO(b), n) for n, b in files],
                                           "options": json.dumps(FAST)})
    assert r.status_code == 202
    body = r.get_json()
    assert [x["name"] for x in body["samples"]] == ["ZTO-a", "Film <b>7</b>"]
    assert body["errors"][0]["source"] == "empty.csv" and "empty" in body["errors"][0]["message"]
    job = _wait(client, svc, body["job_id"])
    assert job["kind"] == "batch" and job["state"] == "done"
    assert job["progress"] == {"done": 3, "total": 3} and len(job["fit_ids"]) == 2
    assert [(i["source"], i["state"]) for i in job["items"]] == [
        ("ZTO-a.csv", "done"), ("named.csv", "done"), ("empty.csv", "failed")]
    gaps = sorted(client.get(f"/api/v1/fits/{f}").get_json()["gaps"][0]["eg_ev"]
                  for f in job["fit_ids"])
    assert gaps == [pytest.approx(2.0, abs=0.02), pytest.approx(2.3, abs=0.02)]   # synthetic
    # pushed again: same samples, same spectra (stored once), new fits
    again = client.post("/api/v1/batch", data={"file": [(io.BytesIO(files[0][1]),
                                                         "ZTO-a.csv")]}).get_json()
    assert again["samples"][0] == {**body["samples"][0], "existing": True}
    assert again["spectra"][0]["id"] == body["spectra"][0]["id"]


def test_batch_of_unreadable_files_only_is_422(client):
    r = client.post("/api/v1/batch", data={"file": [(io.BytesIO(b""), "a.csv"),
                                                    (io.BytesIO(b"\x00\x01" * 50), "b.csv")]})
    err = _error(r, 422)
    assert "none of the 2 files" in err["message"]
    assert client.get("/api/v1/samples").get_json()["total"] == 0
    _error(client.post("/api/v1/batch", data={}), 400)
    _error(client.post("/api/v1/batch", data={"file": [(io.BytesIO(synthetic_csv()), "a.csv")],
                                              "options": '{"model": 3}'}), 400, "bad-option")


# ---------------------------------------------------------------------------- reports, export

@pytest.fixture
def fitted(client, svc):
    s = _sample(client, "<script>alert('x')</script> film")
    name = "<img src=x onerror=alert(1)>.csv"
    sp = _upload(client, s["id"], [(name, synthetic_csv(2.0))]).get_json()["spectra"][0]
    job = _fit(client, svc, [sp["id"]])
    return s, sp, job["fit_ids"][0]


def test_report_is_html_with_plotly_from_here_and_names_escaped(client, fitted):
    s, sp, fit_id = fitted
    r = client.get(f"/api/v1/fits/{fit_id}/report")
    assert r.status_code == 200 and r.mimetype == "text/html"
    csp = r.headers["Content-Security-Policy"]
    assert "default-src 'none'" in csp and "script-src 'self' 'unsafe-inline'" in csp
    page = r.get_data(as_text=True)
    # the file name is stored sanitised ("<" and ">" as "_"), the sample name as given: escaped
    assert "<img src=x onerror" not in page and "img src=x onerror=alert(1)_.csv" in page
    assert "<script>alert('x')</script>" not in page
    assert "Plotly" in page and len(page) > 1_000_000          # plotly.js inline
    assert not re.search(r'<(script|link|img)[^>]+(src|href)="(https?:)?//', page)
    r = client.get(f"/api/v1/fits/{fit_id}/report?plotly=app")
    page = r.get_data(as_text=True)
    assert '<script src="/assets/plotly.min.js">' in page and len(page) < 1_000_000
    js = client.get("/assets/plotly.min.js")
    assert js.status_code == 200 and js.mimetype == "text/javascript" and b"plotly" in js.data[:2000]
    js.close()
    _error(client.get(f"/api/v1/fits/{fit_id}/report?plotly=cdn"), 400)


def test_export_zip_holds_raw_files_fit_json_and_reports(client, svc, fitted):
    s, sp, fit_id = fitted
    r = client.get(f"/api/v1/samples/{s['id']}/export")
    assert r.status_code == 200 and r.mimetype == "application/zip"
    assert "attachment" in r.headers["Content-Disposition"]
    zf = zipfile.ZipFile(io.BytesIO(r.data))
    names = zf.namelist()
    assert all(".." not in n and not n.startswith("/") and "<" not in n for n in names)
    root = names[0].split("/")[0]
    manifest = json.loads(zf.read(f"{root}/sample.json"))
    assert manifest["name"] == s["name"]
    entry, = manifest["spectra"]
    assert zf.read(f"{root}/{entry['raw_file']}") == svc.archive.raw.get(sp["sha256"])
    fit_json = json.loads(zf.read(f"{root}/{entry['fits'][0]['json']}"))
    assert fit_json["id"] == fit_id and "data" in fit_json and fit_json["gaps"]
    report = zf.read(f"{root}/{entry['fits'][0]['report']}").decode()
    assert '<script src="plotly.min.js">' in report
    assert sum(n.endswith("plotly.min.js") for n in names) == 1
    assert zf.read(f"{root}/reports/plotly.min.js")[:200] == \
        client.get("/assets/plotly.min.js").data[:200]


def test_export_of_a_sample_without_fits(client):
    s = _sample(client, "empty")
    zf = zipfile.ZipFile(io.BytesIO(client.get(f"/api/v1/samples/{s['id']}/export").data))
    assert [n.split("/", 1)[1] for n in zf.namelist()] == ["sample.json"]


# ---------------------------------------------------------------------------- restart

def test_a_new_app_on_the_same_data_dir_keeps_everything_and_resumes_jobs(tmp_path):
    cfg = {"DATA_DIR": str(tmp_path / "d"), "JOB_EXECUTOR": "thread", "JOB_WORKERS": 1}
    first = create_app({**cfg, "RESUME_JOBS": False})
    svc = first.extensions["edgefit"]
    token = svc.archive.create_token("t")
    h = {"Authorization": f"Bearer {token}"}
    c = first.test_client()
    s = c.post("/api/v1/samples", json={"name": "kept"}, headers=h).get_json()
    sp = c.post(f"/api/v1/samples/{s['id']}/spectra", headers=h, data={
        "file": [(io.BytesIO(synthetic_csv()), "k.csv")]}).get_json()["spectra"][0]
    # a job acknowledged but never run (as if the process died before the pool got it)
    job = svc.archive.db.add_job("fit", [sp["id"]], FAST)
    key = first.config["SECRET_KEY"]
    svc.close()

    second = create_app(cfg)
    svc2 = second.extensions["edgefit"]
    assert svc2.resumed == [job["id"]] and second.config["SECRET_KEY"] == key
    c2 = second.test_client()
    assert c2.get(f"/api/v1/samples/{s['id']}", headers=h).get_json()["spectra"][0]["id"] == \
        sp["id"]
    assert svc2.runner.wait_idle(120)
    state = c2.get(f"/api/v1/jobs/{job['id']}", headers=h).get_json()
    # finished after the restart: the reason of its waiting is gone
    assert state["state"] == "done" and state["reason"] is None
    svc2.close()
