"""Uploads through the REST API: the stored file name is safe (reproducers of the probe), reader
messages arrive as 422 with their fix, and no more than MAX_PARSES uploads are parsed at once."""
from __future__ import annotations

import io
import threading
import time

import pytest

from edgefit_web import create_app
from edgefit_web.api import _upload_name

from service_support import synthetic_csv


@pytest.fixture
def make_client(tmp_path):
    apps = []

    def make(**config):
        app = create_app({"DATA_DIR": str(tmp_path / f"data{len(apps)}"), "JOB_EXECUTOR": "thread",
                          "JOB_WORKERS": 1, "TESTING": True, "RESUME_JOBS": False, **config})
        apps.append(app)
        token = app.extensions["edgefit"].archive.create_token("tests")
        c = app.test_client()
        c.environ_base["HTTP_AUTHORIZATION"] = f"Bearer {token}"
        return app, c

    yield make
    for app in apps:
        app.extensions["edgefit"].close()


@pytest.mark.parametrize("given, stored", [
    ("<script>x</script>.csv", "script_x_script_.csv"),     # was "script>.csv"
    ("film\u202egsc.csv", "filmgsc.csv"),                    # right-to-left override dropped
    ("a\u2066b\u2069\u200f.csv", "ab.csv"),                  # other bidi controls, too
    ("../../etc/passwd", "passwd"),
    ("data/film.csv", "data_film.csv"),
    ("..\\..\\boot.ini", "boot.ini"),
    ("C:\\Users\\me\\film.csv", "film.csv"),                 # a browser's full path: its name
    ("/home/me/film.csv", "film.csv"),
    ("film..csv", "film.csv"),
    ("..", "upload"),
    ("", "upload"),
    ("tab\tand\x00nul.csv", "tabandnul.csv"),
    ("ZTO-300 (anneal) T.csv", "ZTO-300 (anneal) T.csv"),    # ordinary names unchanged
    ("Probe_α_β.txt", "Probe_α_β.txt"),
])
def test_upload_names_are_sanitised(given, stored):
    name = _upload_name(given)
    assert name == stored
    assert ".." not in name and "/" not in name and "\\" not in name and "<" not in name


def test_the_stored_file_name_is_the_sanitised_one(make_client):
    _, client = make_client()
    sample = client.post("/api/v1/samples", json={"name": "s"}).get_json()
    r = client.post(f"/api/v1/samples/{sample['id']}/spectra",
                    data={"file": (io.BytesIO(synthetic_csv()),
                                   "<script>x</script>\u202e.csv")},
                    content_type="multipart/form-data")
    assert r.status_code == 201, r.get_data(as_text=True)
    assert r.get_json()["spectra"][0]["file_name"] == "script_x_script_.csv"


def test_a_unicode_space_separated_upload_is_read(make_client):
    _, client = make_client()
    data = synthetic_csv().decode().replace(",", "\u00a0").encode("latin-1")
    sample = client.post("/api/v1/samples", json={"name": "s"}).get_json()
    r = client.post(f"/api/v1/samples/{sample['id']}/spectra",
                    data={"file": (io.BytesIO(data), "nbsp.txt")},
                    content_type="multipart/form-data")
    assert r.status_code == 201, r.get_data(as_text=True)
    assert r.get_json()["spectra"][0]["points"] > 300


@pytest.mark.parametrize("limit", [1, 2])
def test_at_most_max_parses_uploads_are_parsed_at_once(make_client, monkeypatch, limit):
    import edgefit.io
    app, _ = make_client(MAX_PARSES=limit)
    real = edgefit.io.parse_spectra
    lock, state = threading.Lock(), {"now": 0, "most": 0, "calls": 0}

    def counting(*args, **kw):
        with lock:
            state["now"] += 1
            state["calls"] += 1
            state["most"] = max(state["most"], state["now"])
        try:
            time.sleep(0.05)        # hold the slot so that other requests pile up (not timed)
            return real(*args, **kw)
        finally:
            with lock:
                state["now"] -= 1

    monkeypatch.setattr(edgefit.io, "parse_spectra", counting)
    token = app.extensions["edgefit"].archive.create_token("load")
    sample = app.test_client().post("/api/v1/samples", json={"name": "s"},
                                    headers={"Authorization": f"Bearer {token}"}).get_json()
    codes = []

    def upload(i):
        c = app.test_client()
        r = c.post(f"/api/v1/samples/{sample['id']}/spectra",
                   headers={"Authorization": f"Bearer {token}"},
                   data={"file": [(io.BytesIO(synthetic_csv(seed=i * 2 + k)), f"f{i}-{k}.csv")
                                  for k in range(2)]},
                   content_type="multipart/form-data")
        codes.append(r.status_code)

    threads = [threading.Thread(target=upload, args=(i,)) for i in range(6)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert codes == [201] * 6
    assert state["calls"] == 12
    assert 1 <= state["most"] <= limit
