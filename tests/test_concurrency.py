"""Several clients at once against a real server on loopback: uploads, batches and fit jobs
interleaved; afterwards every record is there exactly once. Bounded: 8 client threads, a fixed
number of requests each, every wait bounded by a count of polls."""
import concurrent.futures as cf
import json
import time

import pytest
import requests

from service_support import ServerProcess, synthetic_csv

pytestmark = pytest.mark.server

CLIENTS = 6           # each: a sample, two uploads, a fit job
SAME_BATCH = 4        # clients pushing the same file in a batch at the same moment
OPTIONS = {"bootstrap": 10}


@pytest.fixture
def server(tmp_path):
    srv = ServerProcess(tmp_path / "data", tmp_path / "server.log", workers=2).start()
    yield srv
    srv.kill()


def _session(token):
    s = requests.Session()
    s.headers["Authorization"] = f"Bearer {token}"
    return s


def _poll(s, url, job_id, polls=1500):
    for _ in range(polls):
        job = s.get(f"{url}/jobs/{job_id}", timeout=60).json()
        if job["state"] in ("done", "failed"):
            return job
        time.sleep(0.1)
    raise AssertionError(f"job {job_id} unfinished after {polls} polls: {job}")


def _client(url, token, k):
    """One lab client: its own sample, two files (one sent twice), one fit of both."""
    s = _session(token)
    sample = s.post(f"{url}/samples", json={"name": f"client-{k}", "metadata": {"k": k}},
                    timeout=60).json()
    a = synthetic_csv(1.8 + 0.05 * k, seed=k)
    b = synthetic_csv(2.6 - 0.05 * k, seed=100 + k)
    ids = []
    for name, data in (("a.csv", a), ("b.csv", b), ("a-again.csv", a)):
        r = s.post(f"{url}/samples/{sample['id']}/spectra", files=[("file", (name, data))],
                   timeout=60)
        assert r.status_code == 201, r.text
        ids.append(r.json()["spectra"][0]["id"])
    assert ids[2] == ids[0]                           # the same bytes: the same spectrum
    r = s.post(f"{url}/fits", json={"spectrum_ids": ids[:2], "options": OPTIONS}, timeout=60)
    assert r.status_code == 202
    return {"sample": sample["id"], "spectra": ids[:2], "job": r.json()["job_id"],
            "truth": (1.8 + 0.05 * k, 2.6 - 0.05 * k)}


def _same_batch(url, token, _k):
    s = _session(token)
    r = s.post(f"{url}/batch", files=[("file", ("same.csv", synthetic_csv(2.0, seed=7)))],
               data={"options": json.dumps(OPTIONS)}, timeout=60)
    assert r.status_code == 202, r.text
    body = r.json()
    return {"sample": body["samples"][0]["id"], "spectrum": body["spectra"][0]["id"],
            "job": body["job_id"]}


def test_concurrent_clients_lose_and_duplicate_nothing(server):
    url, token = server.url, server.first_token()
    with cf.ThreadPoolExecutor(max_workers=CLIENTS + SAME_BATCH) as pool:
        clients = [pool.submit(_client, url, token, k) for k in range(CLIENTS)]
        batches = [pool.submit(_same_batch, url, token, k) for k in range(SAME_BATCH)]
        clients = [f.result(timeout=600) for f in clients]
        batches = [f.result(timeout=600) for f in batches]

    s = _session(token)
    # every client's job finished with its own two fits, each fit of the right spectrum
    all_fit_ids = []
    for c in clients:
        job = _poll(s, url, c["job"])
        assert job["state"] == "done" and job["errors"] == [], job
        assert len(job["fit_ids"]) == 2
        for spectrum_id, fit_id, eg in zip(c["spectra"], job["fit_ids"], c["truth"]):
            fit = s.get(f"{url}/fits/{fit_id}", timeout=60).json()
            assert fit["spectrum_id"] == spectrum_id and fit["sample_id"] == c["sample"]
            assert fit["gaps"][0]["eg_ev"] == pytest.approx(eg, abs=0.02)   # synthetic truth
        all_fit_ids += job["fit_ids"]
        detail = s.get(f"{url}/samples/{c['sample']}", timeout=60).json()
        assert sorted(x["id"] for x in detail["spectra"]) == sorted(c["spectra"])
        assert [len(x["fits"]) for x in detail["spectra"]] == [1, 1]

    # the same file in simultaneous batches: one sample, one spectrum, one fit per batch
    assert len({b["sample"] for b in batches}) == 1
    assert len({b["spectrum"] for b in batches}) == 1
    for b in batches:
        job = _poll(s, url, b["job"])
        assert job["state"] == "done" and len(job["fit_ids"]) == 1
        all_fit_ids += job["fit_ids"]
    fits_of_same = s.get(f"{url}/samples/{batches[0]['sample']}",
                         timeout=60).json()["spectra"][0]["fits"]
    assert len(fits_of_same) == SAME_BATCH

    # no fit id twice, and the archive holds exactly these samples
    assert len(all_fit_ids) == len(set(all_fit_ids)) == 2 * CLIENTS + SAME_BATCH
    listing = s.get(f"{url}/samples?limit=1000", timeout=60).json()
    names = sorted(x["name"] for x in listing["samples"])
    assert names == sorted([f"client-{k}" for k in range(CLIENTS)] + ["same"])
    assert server.terminate() == 0
