"""A real server (waitress, process pool) in a subprocess on 127.0.0.1: the user's path through
the API, then SIGTERM and SIGKILL with work in flight, and restarts that lose nothing."""
import io
import json
import signal
import subprocess
import sys
import time
import zipfile

import pytest
import requests

from service_support import DEMO_DIR, ServerProcess, synthetic_csv

pytestmark = pytest.mark.server

ZTO = ["LK-ZTO-300_T.csv", "LK-ZTO-400_T.csv", "LK-ZTO-500_T.txt"]


def _truths():
    manifest = json.loads((DEMO_DIR / "manifest_core.json").read_text())
    return {m["metadata"]["sample"]: m["truth"] for m in manifest}


def _poll(session, url, job_id, want=("done", "failed"), polls=1200):
    """Poll a job until it reaches one of ``want`` (bounded by a count of polls)."""
    for _ in range(polls):
        job = session.get(f"{url}/jobs/{job_id}").json()
        if job["state"] in want:
            return job
        time.sleep(0.1)
    raise AssertionError(f"job {job_id} still {job['state']} after {polls} polls: {job}")


@pytest.fixture
def server(tmp_path):
    srv = ServerProcess(tmp_path / "data", tmp_path / "server.log", workers=2)
    yield srv
    srv.kill()


def test_upload_fit_poll_results_report_export_then_restarts(server, tmp_path):
    server.start()
    token = server.first_token()
    assert token, server.output
    url = server.url
    # a stranger gets 401; health is open
    assert requests.get(f"{url}/health", timeout=30).json()["status"] == "ok"
    r = requests.get(f"{url}/samples", timeout=30)
    assert r.status_code == 401 and r.json()["error"]["code"] == "unauthorized"
    s = requests.Session()
    s.headers["Authorization"] = f"Bearer {token}"

    # a batch of demo files, as an instrument would push it
    files = [("file", (name, (DEMO_DIR / name).read_bytes())) for name in ZTO]
    r = s.post(f"{url}/batch", files=files, data={"options": json.dumps({"bootstrap": 30})},
               timeout=60)
    assert r.status_code == 202, r.text
    batch = r.json()
    assert [x["name"] for x in batch["samples"]] == ["LK-ZTO-300", "LK-ZTO-400", "LK-ZTO-500"]
    job = _poll(s, url, batch["job_id"])
    assert job["state"] == "done" and job["progress"] == {"done": 3, "total": 3}, job
    truths = _truths()
    results = {}
    for fit_id in job["fit_ids"]:
        fit = s.get(f"{url}/fits/{fit_id}", timeout=30).json()
        results[fit["sample"]] = fit
        # synthetic truth of the invented demo scenario (spectra_demo/manifest_core.json);
        # 0.03 eV: the demo's noise and Urbach tail, well inside published spread (±0.04 eV)
        assert fit["transition"] == truths[fit["sample"]]["transition"]
        assert fit["gaps"][0]["eg_ev"] == pytest.approx(
            truths[fit["sample"]]["eg_direct_ev"], abs=0.03)
    sample_id = batch["samples"][0]["id"]
    sample = s.get(f"{url}/samples/{sample_id}", timeout=30).json()
    assert sample["metadata"]["Annealing temperature (C)"] == "300"

    report = s.get(f"{url}/fits/{job['fit_ids'][0]}/report", timeout=60)
    assert report.status_code == 200 and report.headers["Content-Type"].startswith("text/html")
    assert "Plotly" in report.text
    export = s.get(f"{url}/samples/{sample_id}/export", timeout=60)
    zf = zipfile.ZipFile(io.BytesIO(export.content))
    raw = [n for n in zf.namelist() if "/raw/" in n]
    assert len(raw) == 1 and zf.read(raw[0]) == (DEMO_DIR / ZTO[0]).read_bytes()

    # a job with work in flight, then SIGTERM: running fits finish, the rest waits
    spectra = [sp["id"] for sp in batch["spectra"]] * 3     # 9 items, 4 handed out at a time
    r = s.post(f"{url}/fits", json={"spectrum_ids": spectra, "options": {"bootstrap": 800}},
               timeout=30)
    assert r.status_code == 202
    interrupted = r.json()["job_id"]
    _poll(s, url, interrupted, want=("running", "done"))
    assert server.terminate() == 0
    assert "stopped" in server.read_output()
    with pytest.raises(requests.ConnectionError):
        s.get(f"{url}/health", timeout=5)           # down

    # restart: no new token, everything acknowledged is there, the job resumes and finishes
    server.start()
    assert server.first_token() is None
    url = server.url
    assert f"resumed 1 unfinished job(s): {interrupted}" in server.output or \
        s.get(f"{url}/jobs/{interrupted}").json()["state"] == "done"
    for fit_id, fit in zip(job["fit_ids"], results.values()):
        assert s.get(f"{url}/fits/{fit_id}", timeout=30).json()["gaps"] == fit["gaps"]
    done = _poll(s, url, interrupted)
    assert done["state"] == "done" and len(done["fit_ids"]) == len(spectra), done
    assert len(set(done["fit_ids"])) == len(spectra)                  # no item fitted twice
    assert done["reason"] is None       # finished: no reason of its waiting is left on it

    # SIGKILL with a job running: nothing acknowledged is lost, the job is re-queued
    r = s.post(f"{url}/samples/{sample_id}/spectra", timeout=30,
               files=[("file", ("extra.csv", synthetic_csv(2.2)))])
    assert r.status_code == 201
    extra = r.json()["spectra"][0]["id"]
    r = s.post(f"{url}/fits", json={"spectrum_ids": [extra] * 5, "options": {"bootstrap": 800}},
               timeout=30)
    killed = r.json()["job_id"]
    _poll(s, url, killed, want=("running",))
    server.proc.send_signal(signal.SIGKILL)
    server.proc.wait(30)
    server.kill()
    server.start()
    url = server.url
    assert f"resumed 1 unfinished job(s): {killed}" in server.output
    after = _poll(s, url, killed)
    assert after["state"] == "done" and after["progress"] == {"done": 5, "total": 5}
    assert after["reason"] is None      # resumed, finished: the restart's reason is gone
    fit = s.get(f"{url}/fits/{after['fit_ids'][0]}", timeout=30).json()
    assert fit["gaps"][0]["eg_ev"] == pytest.approx(2.2, abs=0.02)     # synthetic truth
    names = {x["file_name"] for x in s.get(f"{url}/samples/{sample_id}").json()["spectra"]}
    assert names == {ZTO[0], "extra.csv"}
    assert server.terminate() == 0


def test_serve_refuses_a_non_loopback_address_without_the_flag(tmp_path):
    r = subprocess.run([sys.executable, "-m", "edgefit_web.serve", "--host", "0.0.0.0",
                        "--data-dir", str(tmp_path / "d")], capture_output=True, text=True,
                       timeout=120)
    assert r.returncode == 2
    assert "--allow-remote" in r.stderr and "0.0.0.0" in r.stderr
    assert not (tmp_path / "d").exists()            # refused before anything was created


def test_serve_is_a_subcommand_of_edgefit():
    r = subprocess.run([sys.executable, "-m", "edgefit", "serve", "--help"],
                       capture_output=True, text=True, timeout=120)
    assert r.returncode == 0, r.stderr
    for option in ("--host", "--port", "--data-dir", "--allow-remote"):
        assert option in r.stdout


def test_serve_says_when_the_port_is_taken(tmp_path):
    import socket
    with socket.socket() as taken:
        taken.bind(("127.0.0.1", 0))
        taken.listen()
        port = taken.getsockname()[1]
        r = subprocess.run([sys.executable, "-m", "edgefit_web.serve", "--port", str(port),
                            "--data-dir", str(tmp_path / "d")], capture_output=True, text=True,
                           timeout=120)
    assert r.returncode == 2
    assert f"cannot listen on 127.0.0.1:{port}" in r.stderr and "--port" in r.stderr
    assert "API token" not in r.stdout          # no token printed for a server that never ran
