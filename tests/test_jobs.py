"""The job runner: fits over an executor, outcomes in the archive, resume after a restart."""
import concurrent.futures as cf
import pickle
import threading

import pytest

from edgefit.archive import Archive
from edgefit.errors import EdgefitError
from edgefit.jobs import JobRunner, check_options, fit_task, make_executor, reader_options

from service_support import synthetic_csv

FAST = {"bootstrap": 20}


def _store(archive, data, name="film.csv", sample="s"):
    from edgefit.io import parse_spectra
    spec = parse_spectra(data, name)[0]
    sha = archive.raw.put(data)
    s = archive.db.add_sample(sample, {})
    return archive.db.add_spectra(s["id"], [{
        "sha256": sha, "file_name": name, "size": len(data), "reader": {}, "options": {},
        "summary": {"quantity": spec.quantity, "x_unit": spec.x_unit, "y_unit": spec.y_unit,
                    "points": spec.points, "column": spec.column, "sample": spec.sample,
                    "warnings": spec.warnings, "metadata": spec.metadata}}])[0]


@pytest.fixture
def archive(tmp_path):
    a = Archive(tmp_path / "data")
    yield a
    a.close()


def test_fit_task_runs_the_pipeline_on_bytes():
    # synthetic truth: a direct gap at 2.10 eV
    out = fit_task({"data": synthetic_csv(2.10), "name": "f.csv", "reader": {},
                    "column": "%T", "options": {"thickness": "500nm", **FAST}})
    res = out["result"]
    assert res["transition"] == "direct"
    assert res["gaps"][0]["eg_ev"] == pytest.approx(2.10, abs=0.02)
    assert "data" in res and res["film"]["thickness_nm"] == 500
    pickle.dumps(out)                      # what a process pool sends back


def test_fit_task_returns_errors_instead_of_raising():
    bad = fit_task({"data": b"not a spectrum", "name": "x.csv", "options": {}})
    assert bad["error"]["code"] == "bad-file" and "x.csv" in bad["error"]["message"]
    opt = fit_task({"data": synthetic_csv(), "name": "x.csv", "options": {"model": "nope"}})
    assert opt["error"]["code"] == "bad-option" and "--model" in opt["error"]["message"]


def test_check_options_refuses_reader_options_at_fit_time_and_odd_types():
    assert check_options({"thickness": "0.4um", "model": "direct"}) == {
        "thickness_nm": pytest.approx(400.0), "model": "direct"}
    with pytest.raises(EdgefitError, match="upload"):
        check_options({"quantity": "absorbance"}, reader=False)
    for bad in ({"thickness_nm": [1]}, {"model": True}, {"reflectance_spectrum_id": "3"},
                {"no_such": 1}, []):
        with pytest.raises(EdgefitError):
            check_options(bad)
    assert reader_options({"quantity": "T", "x_unit": "µm", "column": 2, "model": "auto"}) == {
        "quantity": "transmittance", "x_unit": "um", "column": 2}


@pytest.mark.parametrize("kind", ["inline", "thread"])
def test_runner_fits_a_job_and_one_bad_item_fails_alone(archive, kind, tmp_path):
    good = _store(archive, synthetic_csv(1.9), "good.csv")
    other = _store(archive, synthetic_csv(2.3, seed=1), "other.csv")
    runner = JobRunner(archive, kind, max_workers=2)
    job = archive.db.add_job("fit", [good["id"], other["id"]], {"model": "oops"})
    bad_job = job["id"]
    job = archive.db.add_job("fit", [good["id"], other["id"]], FAST)
    runner.submit(bad_job)
    runner.submit(job["id"])
    assert runner.wait_idle(120)
    done = archive.db.get_job(job["id"])
    assert done["state"] == "done" and done["progress"] == {"done": 2, "total": 2}
    gaps = [archive.db.get_fit(f)["result"]["gaps"][0]["eg_ev"] for f in done["fit_ids"]]
    assert gaps == [pytest.approx(1.9, abs=0.02), pytest.approx(2.3, abs=0.02)]
    failed = archive.db.get_job(bad_job)
    assert failed["state"] == "failed" and len(failed["errors"]) == 2
    assert all(e["code"] == "bad-option" for e in failed["errors"])
    runner.shutdown()


def test_missing_raw_file_fails_the_item_with_a_reason(archive):
    sp = _store(archive, synthetic_csv())
    path = archive.raw.path(sp["sha256"])
    path.chmod(0o644)
    path.unlink()
    runner = JobRunner(archive, "inline")
    job = archive.db.add_job("fit", [sp["id"]], {})
    runner.submit(job["id"])
    assert runner.wait_idle(30)
    job = archive.db.get_job(job["id"])
    assert job["state"] == "failed" and job["errors"][0]["code"] == "raw-missing"
    assert "restore" in job["errors"][0]["message"]
    runner.shutdown()


class _HeldExecutor:
    """Accepts work and runs it only when released: an executor that is busy elsewhere."""

    def __init__(self):
        self.pending = []
        self.changed = threading.Condition()

    def submit(self, fn, *args):
        f = cf.Future()
        with self.changed:
            self.pending.append((f, fn, args))
            self.changed.notify_all()
        return f

    def release(self, n=None):
        with self.changed:
            batch, self.pending[:] = self.pending[:n], self.pending[len(self.pending[:n]):]
        for f, fn, args in batch:
            f.set_result(fn(*args))

    def wait_pending(self, n):
        with self.changed:
            assert self.changed.wait_for(lambda: len(self.pending) == n, 60), self.pending


def test_runner_limits_work_in_flight_and_keeps_later_jobs_queued(archive):
    sp = _store(archive, synthetic_csv())
    ex = _HeldExecutor()
    runner = JobRunner(archive, ex, in_flight=2)
    jobs = [archive.db.add_job("fit", [sp["id"]], FAST)["id"] for _ in range(3)]
    for j in jobs:
        runner.submit(j)
    assert len(ex.pending) == 2
    assert [archive.db.get_job(j)["state"] for j in jobs] == ["running", "running", "queued"]
    ex.release(1)                   # one finishes: the third job gets its turn
    ex.wait_pending(2)
    assert archive.db.get_job(jobs[0])["state"] == "done"
    assert archive.db.get_job(jobs[2])["state"] == "running"
    ex.release()
    assert runner.wait_idle(60)
    assert [archive.db.get_job(j)["state"] for j in jobs] == ["done"] * 3
    runner.shutdown()


def test_shutdown_leaves_unfinished_jobs_queued_and_resume_finishes_them(archive):
    sp = _store(archive, synthetic_csv())
    ex = _HeldExecutor()
    runner = JobRunner(archive, ex, in_flight=1)
    job = archive.db.add_job("fit", [sp["id"]] * 3, FAST)["id"]
    runner.submit(job)
    ex.release(1)                   # one item done; one handed out; one waiting
    ex.wait_pending(1)
    runner.shutdown(timeout=0.5)    # the handed-out item never comes back
    state = archive.db.get_job(job)
    assert state["state"] == "queued" and "next start" in state["reason"]
    assert state["progress"] == {"done": 1, "total": 3}

    # "the next start": a new runner over the same archive picks the job up
    again = Archive(archive.data_dir)
    runner2 = JobRunner(again, "inline")
    assert runner2.resume() == [job]
    assert runner2.wait_idle(60)
    state = again.db.get_job(job)
    assert state["state"] == "done" and state["progress"] == {"done": 3, "total": 3}
    assert len(state["fit_ids"]) == 3
    # finished: no reason of the restart is left on it (it kept "queued again after the
    # service restarted" before)
    assert state["reason"] is None
    runner2.shutdown()


def test_a_resumed_job_says_why_it_waits_until_it_is_done(archive):
    sp = _store(archive, synthetic_csv())
    job = archive.db.add_job("fit", [sp["id"]] * 2, FAST)["id"]
    archive.db.mark_job(job, "running")            # as a crash leaves it
    ex = _HeldExecutor()
    runner = JobRunner(archive, ex, in_flight=2)
    assert runner.resume() == [job]
    assert "restarted" in archive.db.get_job(job)["reason"]
    ex.wait_pending(2)
    ex.release()
    assert runner.wait_idle(60)
    state = archive.db.get_job(job)
    assert state["state"] == "done" and state["reason"] is None
    runner.shutdown()


def test_resume_closes_a_job_with_nothing_left(archive):
    sp = _store(archive, synthetic_csv())
    job = archive.db.add_job("fit", [sp["id"]], {})["id"]
    archive.db.finish_item(job, 0, error={"code": "x", "message": "y"})
    archive.db.mark_job(job, "running")            # as a crash could leave it
    assert JobRunner(archive, "inline").resume() == []
    assert archive.db.get_job(job)["state"] == "failed"


class _BrokenPool:
    def submit(self, fn, *args):
        f = cf.Future()
        f.set_exception(cf.BrokenExecutor("a worker died"))
        return f


def test_a_dying_worker_fails_its_item_with_the_reason(archive):
    sp = _store(archive, synthetic_csv())
    runner = JobRunner(archive, _BrokenPool())
    job = archive.db.add_job("fit", [sp["id"]], {})["id"]
    runner.submit(job)
    assert runner.wait_idle(30)
    err = archive.db.get_job(job)["errors"][0]
    assert err["code"] == "internal" and "a worker died" in err["message"]
    runner.shutdown()


def test_process_pool_runs_fits(archive):
    """Once with the default executor: a spawn process pool."""
    sps = [_store(archive, synthetic_csv(eg, seed=i), f"f{i}.csv")
           for i, eg in enumerate((1.8, 2.2))]
    runner = JobRunner(archive, "process", max_workers=2)
    job = archive.db.add_job("fit", [s["id"] for s in sps], FAST)["id"]
    runner.submit(job)
    assert runner.wait_idle(300)
    state = archive.db.get_job(job)
    assert state["state"] == "done", state
    assert isinstance(runner.executor, cf.ProcessPoolExecutor)
    eg = [archive.db.get_fit(f)["result"]["gaps"][0]["eg_ev"] for f in state["fit_ids"]]
    assert eg == [pytest.approx(1.8, abs=0.02), pytest.approx(2.2, abs=0.02)]
    runner.shutdown()


def test_make_executor_kinds():
    pool = make_executor("thread", 1)
    assert isinstance(pool, cf.ThreadPoolExecutor)
    pool.shutdown()
    ex = _HeldExecutor()
    assert make_executor(ex) is ex
    with pytest.raises(ValueError):
        make_executor("cluster")
    with pytest.raises(TypeError):
        make_executor(object())
