"""The web pages through Flask's test client: sign-in, CSRF, every page and form, escaping.

Spectra are synthetic (tests/service_support.py: %T of a direct-gap film whose α follows the
library's edge model with a known gap), so a fit made through the pages must give that gap
back; the demo file of the browser test is not needed here.
"""
from __future__ import annotations

import contextlib
import csv
import io
import json
import re
from urllib.parse import urlencode

import pytest
from markupsafe import escape

from edgefit_web import create_app

from service_support import DEMO_DIR, synthetic_csv

XSS = "<script>alert(1)</script>"
XSS_META = '<img src=x onerror="alert(2)">'
XSS_FILE = "<svg onload=alert(3)>.csv"     # no "/": a file name never becomes a path


@contextlib.contextmanager
def pages_app(data_dir, **config):
    """An isolated application (its own archive, fits on threads) and its service."""
    app = create_app({"DATA_DIR": str(data_dir), "JOB_EXECUTOR": "thread", "JOB_WORKERS": 2,
                      "TESTING": True, **config})
    try:
        yield app, app.extensions["edgefit"]
    finally:
        app.extensions["edgefit"].close()


@pytest.fixture
def served(tmp_path):
    with pages_app(tmp_path / "data") as pair:
        yield pair


@pytest.fixture
def app(served):
    return served[0]


@pytest.fixture
def svc(served):
    return served[1]


@pytest.fixture
def token(svc):
    return svc.archive.create_token("pages-tests")


def csrf_of(resp) -> str:
    m = re.search(r'name="csrf_token" value="([^"]+)"', resp.get_data(as_text=True))
    assert m, "no CSRF field on the page"
    return m.group(1)


class Browser:
    """A test client that signs in and remembers the page's CSRF token."""

    def __init__(self, app, svc):
        self.client = app.test_client()
        self.svc = svc
        self.csrf = None

    def sign_in(self, token, next_=None):
        r = self.client.get("/login")
        data = {"csrf_token": csrf_of(r), "token": token}
        if next_:
            data["next"] = next_
        r = self.client.post("/login", data=data)
        self.csrf = None
        if r.status_code == 303:
            page = self.client.get("/upload")
            self.csrf = csrf_of(page) if page.status_code == 200 else None
        return r

    def get(self, path, **kw):
        return self.client.get(path, **kw)

    def post(self, path, data=None, *, csrf=True, **kw):
        data = dict(data or {})
        if csrf and self.csrf:
            data.setdefault("csrf_token", self.csrf)
        return self.client.post(path, data=data, **kw)

    def upload(self, files, **fields):
        data = {"file": [(io.BytesIO(b), n) for n, b in files], **fields}
        return self.post("/upload", data, content_type="multipart/form-data")

    def upload_and_wait(self, files, **fields):
        r = self.upload(files, **fields)
        assert r.status_code == 303, r.get_data(as_text=True)[:2000]
        job_id = int(r.headers["Location"].rsplit("/", 1)[1])
        assert self.svc.runner.wait_idle(120)
        return job_id


@pytest.fixture
def web(app, svc, token):
    b = Browser(app, svc)
    assert b.sign_in(token).status_code == 303
    return b


def text_of(resp) -> str:
    return resp.get_data(as_text=True)


def sample_ids(svc):
    page, _ = svc.archive.db.find_samples(limit=1000)
    return {s["name"]: s["id"] for s in page}


# ---------------------------------------------------------------------------- sign in

PAGES = ["/", "/samples", "/upload", "/compare", "/compare.csv?id=1", "/samples/1",
         "/samples/1/export", "/jobs/1", "/fits/1/report", "/spectra/1/raw"]


@pytest.mark.parametrize("path", PAGES)
def test_every_page_needs_sign_in(app, path):
    r = app.test_client().get(path)
    assert r.status_code == 302
    assert r.headers["Location"].startswith("/login")


def test_sign_in_redirect_remembers_the_page(app):
    r = app.test_client().get("/samples?q=ZTO")
    assert r.headers["Location"] == "/login?next=/samples?q%3DZTO"


def test_json_status_and_posts_need_sign_in(app):
    c = app.test_client()
    r = c.get("/jobs/1/status")
    assert r.status_code == 401 and r.get_json()["error"]["code"] == "unauthorized"
    for path in ("/upload", "/upload/inspect", "/samples/1/refit", "/logout"):
        r = c.post(path, data={})
        assert r.status_code in (302, 401), path
    assert c.post("/upload", data={}).headers["Location"] == "/login"


def test_login_page_is_a_labelled_form(app):
    r = app.test_client().get("/login")
    body = text_of(r)
    assert r.status_code == 200
    assert '<label for="token">API token</label>' in body
    assert 'id="token" name="token" type="password"' in body
    assert csrf_of(r)
    assert "Sign out" not in body            # no navigation before signing in


def test_wrong_token_is_refused(app, svc, token):
    b = Browser(app, svc)
    for wrong in ("ef_wrong", "", token + "x", token[:-1]):
        r = b.sign_in(wrong)
        assert r.status_code == 401, wrong
        assert "That token is not valid" in text_of(r)
        assert b.get("/samples").status_code == 302


def test_right_token_signs_in_with_a_safe_cookie(app, svc, token):
    b = Browser(app, svc)
    r = b.sign_in(token)
    assert r.status_code == 303 and r.headers["Location"] == "/samples"
    cookie = r.headers["Set-Cookie"]
    assert cookie.startswith("edgefit_session=")
    assert "HttpOnly" in cookie and "SameSite=Lax" in cookie
    assert token not in cookie                  # only a hash of it is in the session
    assert b.get("/samples").status_code == 200


def test_sign_in_goes_on_to_local_pages_only(app, svc, token):
    assert Browser(app, svc).sign_in(token, "/upload").headers["Location"] == "/upload"
    for evil in ("//elsewhere.example/x", "https://elsewhere.example/", "/\\elsewhere"):
        r = Browser(app, svc).sign_in(token, evil)
        assert r.headers["Location"] == "/samples", evil


def test_sign_out_ends_the_session(web):
    r = web.post("/logout")
    assert r.status_code == 303 and r.headers["Location"] == "/login"
    assert web.get("/samples").status_code == 302
    assert "Signed out." in text_of(web.get("/login"))


def test_revoking_the_token_ends_its_sessions(web, svc):
    assert web.get("/samples").status_code == 200
    assert svc.archive.db.revoke("pages-tests") == 1
    r = web.get("/samples")
    assert r.status_code == 302 and r.headers["Location"].startswith("/login")
    assert "Your session has ended" in text_of(web.get("/login"))


def test_sessions_expire(tmp_path):
    with pages_app(tmp_path / "d", PAGES_SESSION_HOURS=0) as (app, svc):
        b = Browser(app, svc)
        assert b.sign_in(svc.archive.create_token("t")).status_code == 303
        assert b.get("/samples").status_code == 302       # 0 hours: over at once


# ---------------------------------------------------------------------------- CSRF

def test_login_without_csrf_is_refused(app, token):
    c = app.test_client()
    c.get("/login")
    r = c.post("/login", data={"token": token})
    assert r.status_code == 400
    assert "security token is missing or out of date" in text_of(r)
    assert c.get("/samples").status_code == 302


def test_posts_with_a_missing_or_wrong_csrf_token_are_refused(web, svc):
    files = {"file": (io.BytesIO(synthetic_csv(2.0)), "film.csv")}
    for token in (None, "", "not-the-token", web.csrf + "x"):
        data = dict(files) if token is None else {**files, "csrf_token": token}
        data["file"] = (io.BytesIO(synthetic_csv(2.0)), "film.csv")
        r = web.post("/upload", data, csrf=False, content_type="multipart/form-data")
        assert r.status_code == 400, token
    assert sample_ids(svc) == {}                         # nothing stored
    assert web.post("/logout", csrf=False).status_code == 400
    assert web.get("/samples").status_code == 200        # still signed in
    r = web.post("/upload/inspect", {"file": (io.BytesIO(b"x"), "a.csv")}, csrf=False,
                 content_type="multipart/form-data")
    assert r.status_code == 400 and "security token" in r.get_json()["error"]["message"]


def test_csrf_header_is_accepted_for_the_pages_script(web):
    r = web.client.post("/upload/inspect", headers={"X-CSRF-Token": web.csrf},
                        data={"file": (io.BytesIO(synthetic_csv(2.0)), "film.csv")},
                        content_type="multipart/form-data")
    assert r.status_code == 200


def test_csrf_token_is_renewed_at_sign_in(app, svc, token):
    b = Browser(app, svc)
    before = csrf_of(b.get("/login"))
    b.sign_in(token)
    assert b.csrf and b.csrf != before
    assert b.post("/logout", {"csrf_token": before}, csrf=False).status_code == 400


def test_refit_without_csrf_is_refused(web, svc):
    web.upload_and_wait([("film.csv", synthetic_csv(2.0))], thickness="500nm")
    sid = sample_ids(svc)["film"]
    r = web.post(f"/samples/{sid}/refit", {"spectrum_id": "1", "window": "2.0:2.3"},
                 csrf=False)
    assert r.status_code == 400
    assert len(svc.archive.db.fits_of_spectrum(1)) == 1


# ---------------------------------------------------------------------------- upload

def test_upload_page_has_labelled_controls(web):
    body = text_of(web.get("/upload"))
    for field, label in (("file", None), ("quantity", "Quantity"), ("x_unit", "x axis"),
                         ("thickness", "Film thickness"),
                         ("substrate_index", "Substrate refractive index"),
                         ("sample_name", "Sample name"), ("metadata", "Metadata"),
                         ("model", "Transition"), ("window", "Tauc window"),
                         ("range", "Energy range analysed")):
        assert f'<label for="{field}"' in body, field
        assert f'id="{field}" name="{field}"' in body, field
        if label:
            assert re.search(rf'<label for="{field}"[^>]*>{re.escape(label)}', body), field
    assert 'enctype="multipart/form-data"' in body and "multiple" in body
    assert 'name="csrf_token"' in body


def test_inspect_reports_what_the_reader_detects(web):
    data = synthetic_csv(2.0, sample_line="film A") \
        .replace(b"Sample: film A\n", b"Sample: film A\nThickness: 500 nm\n")
    r = web.post("/upload/inspect", {"file": [(io.BytesIO(data), "a.csv"),
                                              (io.BytesIO(b"just words\nno table\n"), "b.txt")]},
                 content_type="multipart/form-data")
    assert r.status_code == 200
    good, bad = r.get_json()["files"]
    spec = good["spectra"][0]
    assert good["ok"] and spec["quantity"] == "transmittance" and spec["x_unit"] == "nm"
    assert spec["y_unit"] == "percent" and spec["points"] == 326
    assert spec["thickness_offer"] == "500nm"
    assert spec["x_range"] == [350.0, 1000.0]
    assert not bad["ok"] and bad["message"].startswith("b.txt")
    # a quantity chosen on the form is the reader's
    r = web.post("/upload/inspect", {"file": (io.BytesIO(data), "a.csv"),
                                     "quantity": "reflectance"},
                 content_type="multipart/form-data")
    assert r.get_json()["files"][0]["spectra"][0]["quantity"] == "reflectance"


def test_upload_fits_and_shows_the_gap(web, svc):
    # synthetic truth: a direct gap at 2.10 eV
    job_id = web.upload_and_wait([("film-A.csv", synthetic_csv(2.10))], thickness="500nm",
                                 metadata="Annealing temperature (C)=350\nSeries=S1")
    r = web.get(f"/jobs/{job_id}")
    body = text_of(r)
    assert r.status_code == 200
    assert "1 of 1 spectrum fitted" in body
    assert "transmittance · nm · percent · 326 points" in body
    eg = float(re.search(r'<td class="num">(\d\.\d+) ± ', body).group(1))
    assert abs(eg - 2.10) < 0.02       # synthetic truth; 0.02 eV covers the window choice
    assert 'http-equiv="refresh"' not in body              # finished: no refreshing
    sid = sample_ids(svc)["film-A"]
    assert svc.archive.db.get_sample(sid)["metadata"] == {"Annealing temperature (C)": "350",
                                                          "Series": "S1"}
    status = web.get(f"/jobs/{job_id}/status").get_json()
    assert status["state"] == "done" and status["progress"] == {"done": 1, "total": 1}


def test_a_running_job_refreshes_itself_without_script(web, svc, app):
    db = svc.archive.db
    sample = db.add_sample("waiting", {})
    sha = svc.archive.raw.put(synthetic_csv(2.0))
    sp = db.add_spectra(sample["id"], [{"sha256": sha, "file_name": "w.csv", "size": 1,
                                        "reader": {}, "options": {},
                                        "summary": {"quantity": "transmittance",
                                                    "x_unit": "nm", "y_unit": "percent",
                                                    "points": 326, "column": "%T",
                                                    "sample": "waiting", "warnings": [],
                                                    "metadata": {}}}])[0]
    job = db.add_job("fit", [sp["id"]], {})           # stored, never handed to the runner
    body = text_of(web.get(f"/jobs/{job['id']}"))
    assert '<noscript><meta http-equiv="refresh" content="3"></noscript>' in body
    assert "Fitting 1 spectrum…" in body and "waiting for a worker" in body
    assert f'data-job-status="/jobs/{job["id"]}/status"' in body


def test_one_sample_name_for_all_files_of_an_upload(web, svc):
    web.upload_and_wait([("t.csv", synthetic_csv(2.0)),
                         ("t2.csv", synthetic_csv(2.0, seed=3))], sample_name="film B")
    ids = sample_ids(svc)
    assert list(ids) == ["film B"]
    assert len(svc.archive.db.spectra_of(ids["film B"])) == 2


def test_unreadable_file_shows_the_readers_message_escaped(web, svc):
    bad = b"Wavelength (nm),%T\n400,50\n410,<b>x</b>\n420,52\n430,53\n440,54\n450,55\n"
    r = web.upload([("bad<i>.csv", bad)])
    body = text_of(r)
    assert r.status_code == 422
    assert "No file could be read, so nothing was stored" in body
    from edgefit.io import parse_spectra
    from edgefit.errors import EdgefitError
    with pytest.raises(EdgefitError) as exc:
        parse_spectra(bad, "bad_i_.csv")          # the upload's name as stored (sanitised)
    assert exc.value.line is not None and exc.value.fix         # names the line and the fix
    assert str(escape(str(exc.value))) in body                   # verbatim, escaped
    assert "<b>x</b>" not in body and "bad<i>" not in body
    assert sample_ids(svc) == {}


def test_good_and_bad_files_together(web, svc):
    job_id = web.upload_and_wait([("good.csv", synthetic_csv(2.0)),
                                  ("empty.csv", b"")])
    body = text_of(web.get(f"/jobs/{job_id}"))
    assert "Files that could not be read" in body and "empty.csv" in body
    assert "1 of 1 spectrum fitted, 1 file unreadable" in body
    assert list(sample_ids(svc)) == ["good"]


@pytest.mark.parametrize("fields, message", [
    ({"thickness": "thick"}, "--thickness"),
    ({"substrate_index": "glass"}, "Substrate index must be a number"),
    ({"substrate_index": "9"}, "not a plausible substrate index"),
    ({"window": "3.6"}, "--window"),
    ({"quantity": "colour"}, "unknown quantity"),
    ({"metadata": "just a line"}, "Metadata line 1"),
    ({"sample_name": "x" * 201}, "longer than 200"),
])
def test_bad_form_values_are_explained_and_nothing_is_stored(web, svc, fields, message):
    r = web.upload([("film.csv", synthetic_csv(2.0))], **fields)
    assert r.status_code == 400
    assert message in text_of(r)
    assert sample_ids(svc) == {}
    # what was typed is kept in the form
    key, value = next(iter(fields.items()))
    if key not in ("quantity", "metadata") and len(value) < 50:
        assert f'value="{value}"' in text_of(r)


def test_upload_without_a_file(web):
    r = web.post("/upload", {"file": (io.BytesIO(b""), "")},
                 content_type="multipart/form-data")
    assert r.status_code == 400 and "Choose at least one spectrum file" in text_of(r)


def test_too_large_an_upload_gets_413_with_the_limit(tmp_path):
    with pages_app(tmp_path / "d", MAX_CONTENT_LENGTH=4096) as (app, svc):
        b = Browser(app, svc)
        b.sign_in(svc.archive.create_token("t"))
        r = b.upload([("big.csv", synthetic_csv(2.0) * 3)])
        assert r.status_code == 413
        assert "larger than the limit of 0.00390625 MB" in text_of(r)
        assert sample_ids(svc) == {}


# ---------------------------------------------------------------------------- sample page

@pytest.fixture
def fitted(web, svc):
    """One sample 'film-A' (synthetic direct gap 2.10 eV), fitted once."""
    web.upload_and_wait([("film-A.csv", synthetic_csv(2.10))], thickness="500nm",
                        metadata="Annealing temperature (C)=350")
    return sample_ids(svc)["film-A"]


def test_sample_page_shows_metadata_spectra_history_and_report(web, fitted):
    body = text_of(web.get(f"/samples/{fitted}"))
    assert "<dt>Annealing temperature (C)</dt><dd>350</dd>" in body
    assert "film-A.csv" in body and "326" in body
    eg = float(re.search(r'data-gap-ev="([\d.]+)"', body).group(1))
    assert abs(eg - 2.10) < 0.02                             # synthetic truth
    assert body.count('aria-current="true"') == 1            # one fit, shown
    fit_id = int(re.search(r'src="/fits/(\d+)/report"', body).group(1))
    assert '<iframe class="report-frame"' in body
    assert 'value="500nm"' in body                           # re-fit form starts from it
    r = web.get(f"/fits/{fit_id}/report")
    assert r.status_code == 200 and r.mimetype == "text/html"
    report = text_of(r)
    assert '<script src="/assets/plotly.min.js"></script>' in report
    assert not re.search(r"""<script[^>]+src=["']?(https?:)?//""", report)


def test_refit_with_a_manual_window_adds_a_fit(web, svc, fitted):
    spec = svc.archive.db.spectra_of(fitted)[0]
    first = svc.archive.db.fits_of_spectrum(spec["id"])[0]
    r = web.post(f"/samples/{fitted}/refit", {"spectrum_id": str(spec["id"]),
                                              "window": "2.15:2.40", "model": "direct",
                                              "thickness": "500nm"})
    assert r.status_code == 303
    assert re.fullmatch(rf"/samples/{fitted}\?job=\d+", r.headers["Location"])
    assert svc.runner.wait_idle(120)
    history = svc.archive.db.fits_of_spectrum(spec["id"])
    assert [f["id"] for f in history][1:] == [first["id"]]           # old one kept
    newest = svc.archive.db.get_fit(history[0]["id"])
    assert newest["options"]["window"] == "2.15:2.40"
    lo, hi = newest["result"]["gaps"][0]["window_ev"]
    assert 2.15 <= lo < hi <= 2.40
    body = text_of(web.get(r.headers["Location"]))
    assert f"The re-fit is stored as fit {history[0]['id']}" in body
    rows = re.findall(r"<tr[^>]*>\s*<td>#(\d+)", body)
    assert rows == [str(history[0]["id"]), str(first["id"])]         # newest first
    assert "window 2.15:2.40" in body
    # the older fit can still be shown
    body = text_of(web.get(f"/samples/{fitted}?fit={first['id']}"))
    assert f'src="/fits/{first["id"]}/report"' in body


def test_refit_over_an_energy_range_keeps_its_window_inside_it(web, svc, fitted):
    spec = svc.archive.db.spectra_of(fitted)[0]
    r = web.post(f"/samples/{fitted}/refit", {"spectrum_id": str(spec["id"]),
                                              "range": "1.9:2.6"})
    assert r.status_code == 303 and svc.runner.wait_idle(120)
    newest = svc.archive.db.get_fit(svc.archive.db.fits_of_spectrum(spec["id"])[0]["id"])
    assert newest["options"]["range"] == "1.9:2.6"
    lo, hi = newest["result"]["gaps"][0]["window_ev"]
    assert 1.9 <= lo < hi <= 2.6
    assert "range-limited" in {f["code"] for f in newest["result"]["flags"]}
    body = text_of(web.get(r.headers["Location"]))
    assert "range 1.9:2.6" in body and 'value="1.9:2.6"' in body


def test_refit_with_the_reflectance_of_the_same_spot(web, svc):
    # demo scenario (spectra_demo/manifest_films.json): CVN7-20, T and R of one film on glass
    # (n 1.52), direct allowed Eg 2.20 eV (synthetic truth, modelled with tmm)
    job_id = web.upload_and_wait([(n, (DEMO_DIR / n).read_bytes()) for n in
                                  ("film_CVN7-20_T.csv", "film_CVN7-20_R.csv")],
                                 sample_name="CVN7-20", substrate_index="1.52")
    job = svc.archive.db.get_job(job_id)
    assert len(job["fit_ids"]) == 1 and len(job["errors"]) == 1       # R alone cannot be fitted
    assert "cannot give the absorption edge" in text_of(web.get(f"/jobs/{job_id}"))
    sid = sample_ids(svc)["CVN7-20"]
    t, r = sorted(svc.archive.db.spectra_of(sid), key=lambda sp: sp["quantity"] != "transmittance")
    body = text_of(web.get(f"/samples/{sid}"))
    assert f'<option value="{r["id"]}" >#{r["id"]} film_CVN7-20_R.csv</option>' in body
    resp = web.post(f"/samples/{sid}/refit", {"spectrum_id": str(t["id"]),
                                              "reflectance": str(r["id"]),
                                              "substrate_index": "1.52"})
    assert resp.status_code == 303 and "job=" in resp.headers["Location"]
    assert svc.runner.wait_idle(120)
    newest = svc.archive.db.get_fit(svc.archive.db.fits_of_spectrum(t["id"])[0]["id"])
    assert newest["options"]["reflectance_spectrum_id"] == r["id"]
    gap = newest["result"]["gaps"][0]
    # 0.05 eV: the tolerance the demo tests give a T+R film with fringes (synthetic truth)
    assert gap["kind"] == "direct" and abs(gap["eg_ev"] - 2.20) < 0.05
    # a transmittance is no reflectance; an unknown substrate spectrum is refused
    for field, value, words in (("reflectance", str(t["id"]), "not a reflectance"),
                                ("substrate", "999", "there is no spectrum '999'"),
                                ("substrate", str(r["id"]), "is not a transmittance")):
        resp = web.post(f"/samples/{sid}/refit", {"spectrum_id": str(t["id"]), field: value})
        assert resp.status_code == 303 and resp.headers["Location"].endswith("#refit")
        assert str(escape(words)) in text_of(web.get(f"/samples/{sid}")), field


def test_the_thickness_a_file_states_is_used_only_when_asked(web, svc):
    data = synthetic_csv(2.0, sample_line="T-film").replace(
        b"Sample: T-film\n", b"Sample: T-film\nThickness: 480 nm\n")
    web.upload_and_wait([("a.csv", data)])
    web.upload_and_wait([("b.csv", data.replace(b"T-film", b"U-film"))], file_thickness="1")
    films = {}
    for name, sid in sample_ids(svc).items():
        sp = svc.archive.db.spectra_of(sid)[0]
        fit = svc.archive.db.get_fit(svc.archive.db.fits_of_spectrum(sp["id"])[0]["id"])
        films[name] = (sp["options"].get("thickness"), (fit["result"]["film"] or {}))
    assert films["T-film"][0] is None
    assert films["T-film"][1].get("thickness_source") != "user"
    assert films["U-film"][0] == "480nm"
    assert films["U-film"][1]["thickness_nm"] == 480.0
    assert films["U-film"][1]["thickness_source"] == "user"


def test_refit_with_a_bad_window_is_explained(web, svc, fitted):
    spec = svc.archive.db.spectra_of(fitted)[0]
    r = web.post(f"/samples/{fitted}/refit", {"spectrum_id": str(spec["id"]),
                                              "window": "high:low"})
    assert r.status_code == 303 and r.headers["Location"].endswith("#refit")
    assert "The re-fit was not started" in text_of(web.get(f"/samples/{fitted}"))
    assert len(svc.archive.db.fits_of_spectrum(spec["id"])) == 1


def test_refit_of_another_samples_spectrum_is_refused(web, svc, fitted):
    other = svc.archive.db.add_sample("other", {})
    r = web.post(f"/samples/{other['id']}/refit", {"spectrum_id": "1"})
    assert r.status_code == 400 and "not a spectrum of this sample" in text_of(r)


def test_unknown_records_get_404_pages(web):
    for path in ("/samples/999", "/jobs/999", "/fits/999/report", "/spectra/999/raw",
                 "/samples/999/export"):
        r = web.get(path)
        assert r.status_code == 404, path
        assert "Not found" in text_of(r)


def test_raw_file_is_a_download_never_a_page(web, svc):
    data = synthetic_csv(2.0)
    web.upload_and_wait([("<x>.csv", data)])
    r = web.get("/spectra/1/raw")
    assert r.status_code == 200 and r.data == data
    assert r.mimetype == "application/octet-stream"
    assert r.headers["Content-Disposition"].startswith("attachment")
    assert r.headers["X-Content-Type-Options"] == "nosniff"


def test_export_is_the_samples_zip(web, fitted):
    r = web.get(f"/samples/{fitted}/export")
    assert r.status_code == 200 and r.mimetype == "application/zip"
    import zipfile
    names = zipfile.ZipFile(io.BytesIO(r.data)).namelist()
    assert any(n.endswith("sample.json") for n in names)
    assert any(n.endswith("film-A.csv") for n in names)


def test_pages_send_a_strict_content_security_policy(web, fitted):
    csp = web.get("/samples").headers["Content-Security-Policy"]
    assert "script-src 'self';" in csp and "frame-ancestors 'self'" in csp
    assert "https:" not in csp and "*" not in csp
    report_csp = web.get("/fits/1/report").headers["Content-Security-Policy"]
    assert "default-src 'self'" in report_csp and "http" not in report_csp


# ---------------------------------------------------------------------------- samples list

@pytest.fixture
def series(web, svc):
    """Three synthetic films of an anneal series: gaps 2.30, 2.10, 2.20 eV (synthetic truths)
    and Urbach energies 50, 30, 40 meV, uploaded in that order."""
    for name, eg, eu, temp in (("S-300", 2.30, 0.050, 300), ("S-400", 2.10, 0.030, 400),
                               ("S-500", 2.20, 0.040, 500)):
        web.upload_and_wait([(f"{name}.csv", synthetic_csv(eg, eu_ev=eu))],
                            thickness="500nm",
                            metadata=f"Annealing temperature (C)={temp}\nSeries=anneal")
    return sample_ids(svc)


def listed(resp):
    return re.findall(r'<td class="name"><a href="/samples/\d+">([^<]+)</a>', text_of(resp))


def test_samples_sorted_by_gap_urbach_energy_and_date(web, series):
    assert listed(web.get("/samples")) == ["S-500", "S-400", "S-300"]       # newest first
    assert listed(web.get("/samples?sort=date&order=asc")) == ["S-300", "S-400", "S-500"]
    assert listed(web.get("/samples?sort=gap&order=asc")) == ["S-400", "S-500", "S-300"]
    assert listed(web.get("/samples?sort=gap&order=desc")) == ["S-300", "S-500", "S-400"]
    assert listed(web.get("/samples?sort=eu&order=asc")) == ["S-400", "S-500", "S-300"]
    assert listed(web.get("/samples?sort=name&order=asc")) == ["S-300", "S-400", "S-500"]
    body = text_of(web.get("/samples?sort=gap&order=asc"))
    assert 'aria-sort="ascending"' in body


def test_samples_without_a_fit_sort_last(web, svc, series):
    svc.archive.db.add_sample("A-unfitted", {})
    for order in ("asc", "desc"):
        assert listed(web.get(f"/samples?sort=gap&order={order}"))[-1] == "A-unfitted"


def test_samples_search_by_name_and_metadata(web, series):
    assert listed(web.get("/samples?q=s-4")) == ["S-400"]
    assert listed(web.get("/samples?meta=Annealing+temperature+(C)%3D500")) == ["S-500"]
    assert sorted(listed(web.get("/samples?meta=anneal"))) == ["S-300", "S-400", "S-500"]
    r = web.get("/samples?q=nothing-like-it")
    assert listed(r) == [] and "No sample matches" in text_of(r)


# ---------------------------------------------------------------------------- compare

def test_compare_shows_table_trend_and_csv(web, series):
    ids = [series["S-300"], series["S-500"]]
    r = web.get(f"/compare?id={ids[0]}&id={ids[1]}")
    body = text_of(r)
    assert r.status_code == 200
    assert re.findall(r'<td class="name"><a href="/samples/\d+\?fit=\d+">([^<]+)</a>', body) \
        == ["S-300", "S-500"]
    assert '<option value="Annealing temperature (C)" selected>' in body
    figure = json.loads(re.search(r'<script type="application/json" id="trend-figure">(.*?)'
                                  r"</script>", body, re.S).group(1))
    eg = next(t for t in figure["data"] if t["name"].startswith("Eg direct"))
    assert eg["x"] == [300.0, 500.0]
    # synthetic truths 2.30 and 2.20 eV; 0.02 eV covers the window choice
    assert eg["y"][0] == pytest.approx(2.30, abs=0.02)
    assert eg["y"][1] == pytest.approx(2.20, abs=0.02)
    assert '<script src="/assets/plotly.min.js"></script>' in body
    r = web.get(f"/compare.csv?id={ids[0]}&id={ids[1]}")
    assert r.mimetype == "text/csv" and "attachment" in r.headers["Content-Disposition"]
    rows = list(csv.DictReader(io.StringIO(text_of(r))))
    assert [row["sample"] for row in rows] == ["S-300", "S-500"]
    assert float(rows[0]["eg_direct_ev"]) == pytest.approx(eg["y"][0], rel=1e-5)
    assert rows[1]["meta:Annealing temperature (C)"] == "500"


def test_compare_a_job(web, svc):
    job_id = web.upload_and_wait([("a.csv", synthetic_csv(2.0, sample_line="J-1")),
                                  ("b.csv", synthetic_csv(2.2, sample_line="J-2"))],
                                 metadata="Dose=1")
    body = text_of(web.get(f"/compare?job={job_id}"))
    assert f"of job {job_id}" in body
    assert re.findall(r'<td class="name"><a href="/samples/\d+\?fit=\d+">([^<]+)</a>', body) \
        == ["J-1", "J-2"]
    assert '<option value="Dose" selected>' in body    # the metadata given at upload
    rows = list(csv.DictReader(io.StringIO(text_of(web.get(f"/compare.csv?job={job_id}")))))
    assert len(rows) == 2


def test_compare_without_a_choice_offers_a_picker(web, series):
    body = text_of(web.get("/compare"))
    assert body.count('type="checkbox" name="id"') == 3
    assert '<label for="job">' in body
    assert web.get("/compare.csv").status_code == 400


def test_compare_lists_unfitted_samples_apart(web, svc, series):
    lone = svc.archive.db.add_sample("lonely", {})
    body = text_of(web.get(f"/compare?id={series['S-300']}&id={lone['id']}"))
    assert "Not fitted yet, so not in the table" in body and "lonely" in body


# ---------------------------------------------------------------------------- escaping

def test_names_and_metadata_are_data_never_markup(web, svc):
    job_id = web.upload_and_wait([(XSS_FILE, synthetic_csv(2.0))],
                                 sample_name=XSS, metadata=f"{XSS_META}={XSS}\nT=1")
    sid = sample_ids(svc)[XSS]
    other = web.upload_and_wait([("b.csv", synthetic_csv(2.1))], metadata="T=2")
    pages = [f"/jobs/{job_id}", "/samples", f"/samples/{sid}", f"/compare?id={sid}&id=2",
             f"/compare?job={other}", "/compare", "/samples?" + urlencode({"q": XSS}),
             "/fits/1/report"]
    for path in pages:
        body = text_of(web.get(path))
        assert XSS not in body and XSS_META not in body, path
        assert "<svg" not in body and "<img" not in body, path
    body = text_of(web.get(f"/samples/{sid}"))
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in body
    assert "svg onload=alert(3)_.csv" in body         # the file name as stored (sanitised)
