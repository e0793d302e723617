"""The archive: schema and migrations, raw files by hash, records, jobs, tokens, secret key."""
import hashlib
import os
import sqlite3
import stat

import pytest

from edgefit import archive as arch
from edgefit.archive import Archive, SQLiteStorage
from edgefit.errors import EdgefitError


def _entry(data: bytes, name="a.csv", column="%T", reader=None):
    return {"sha256": hashlib.sha256(data).hexdigest(), "file_name": name, "size": len(data),
            "reader": reader or {}, "options": {},
            "summary": {"quantity": "transmittance", "x_unit": "nm", "y_unit": "percent",
                        "points": 10, "column": column, "sample": "a", "warnings": [],
                        "metadata": {}}}


def _result(eg=2.0):
    return {"transition": "direct", "gaps": [{"kind": "direct", "eg_ev": eg, "eg_err_ev": 0.01}],
            "urbach": {"eu_mev": 30.0, "eu_err_mev": 1.0}, "flags": [], "version": "0.1.0",
            "data": {"energy_ev": [1.0, 2.0]}}


@pytest.fixture
def archive(tmp_path):
    a = Archive(tmp_path / "data")
    yield a
    a.close()


def test_new_archive_has_wal_and_current_schema(archive):
    assert archive.db.schema_version() == len(arch.MIGRATIONS)
    con = sqlite3.connect(archive.data_dir / Archive.DB_NAME)
    assert con.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    tables = {r[0] for r in con.execute("SELECT name FROM sqlite_master WHERE type='table'")}
    con.close()
    assert {"schema_version", "samples", "spectra", "fits", "jobs", "job_items",
            "tokens"} <= tables


def test_migrations_apply_in_order_from_an_older_schema(tmp_path, monkeypatch):
    path = tmp_path / "a.sqlite3"
    n = len(arch.MIGRATIONS)
    SQLiteStorage(path)                       # the current version
    monkeypatch.setattr(arch, "MIGRATIONS", arch.MIGRATIONS + [
        "ALTER TABLE samples ADD COLUMN colour TEXT; CREATE TABLE extra (x INTEGER)"])
    db = SQLiteStorage(path)                  # opening applies the new step, once
    assert db.schema_version() == n + 1
    con = sqlite3.connect(path)
    cols = [r[1] for r in con.execute("PRAGMA table_info(samples)")]
    con.close()
    assert "colour" in cols
    assert SQLiteStorage(path).schema_version() == n + 1     # re-opening applies nothing again


def test_archive_newer_than_the_code_is_refused(tmp_path):
    path = tmp_path / "a.sqlite3"
    SQLiteStorage(path)
    con = sqlite3.connect(path)
    con.execute("UPDATE schema_version SET version = 99")
    con.commit()
    con.close()
    with pytest.raises(EdgefitError, match="newer than this edgefit"):
        SQLiteStorage(path)


def test_raw_files_stored_once_by_hash_read_only(archive):
    data = b"Wavelength (nm),%T\n400,50\n"
    sha = archive.raw.put(data)
    assert sha == hashlib.sha256(data).hexdigest()
    path = archive.raw.path(sha)
    assert path == archive.data_dir / "raw" / sha[:2] / sha
    assert path.read_bytes() == data
    assert not os.stat(path).st_mode & (stat.S_IWUSR | stat.S_IWGRP | stat.S_IWOTH)
    mtime = os.stat(path).st_mtime_ns
    assert archive.raw.put(data) == sha        # again: nothing rewritten
    assert os.stat(path).st_mtime_ns == mtime
    assert [p.name for p in path.parent.iterdir()] == [sha]   # no temporary files left


def test_raw_store_refuses_anything_but_a_hash_as_a_name(archive):
    for bad in ("../../etc/passwd", "a" * 63, "G" * 64):
        with pytest.raises(ValueError):
            archive.raw.path(bad)


def test_samples_find_by_name_and_metadata(archive):
    db = archive.db
    a = db.add_sample("ZTO film 300", {"anneal_c": 300, "series": "zto"})
    b = db.add_sample("ZTO film 400", {"anneal_c": 400, "series": "zto"})
    db.add_sample("powder 100%_x", {"series": "pc"})
    page, total = db.find_samples(name="zto")
    assert total == 2 and [s["id"] for s in page] == [b["id"], a["id"]]   # newest first
    page, total = db.find_samples(metadata={"anneal_c": "300"})
    assert [s["name"] for s in page] == ["ZTO film 300"]
    page, total = db.find_samples(name="100%_")            # LIKE wildcards are literal
    assert total == 1
    assert db.find_samples(name="0%")[1] == 1
    assert db.find_samples(name="_")[1] == 1
    page, total = db.find_samples(limit=1, offset=1)
    assert total == 3 and len(page) == 1
    assert page[0]["spectra_count"] == 0 and page[0]["latest_fit"] is None


def test_same_file_same_sample_is_one_row_other_sample_new_row(archive):
    db = archive.db
    s1, s2 = db.add_sample("one", {}), db.add_sample("two", {})
    data = b"same bytes"
    first = db.add_spectra(s1["id"], [_entry(data)])[0]
    again = db.add_spectra(s1["id"], [_entry(data)])[0]
    assert again["id"] == first["id"] and again["existing"] and not first["existing"]
    other = db.add_spectra(s2["id"], [_entry(data)])[0]
    assert other["id"] != first["id"] and other["sha256"] == first["sha256"]
    reread = db.add_spectra(s1["id"], [_entry(data, reader={"quantity": "absorbance"})])[0]
    assert reread["id"] not in (first["id"], other["id"])       # another reading: a new row
    assert len(db.spectra_of(s1["id"])) == 2
    with pytest.raises(KeyError):
        db.add_spectra(999, [_entry(data)])


def test_job_lifecycle_and_refits_add_fits(archive):
    db = archive.db
    s = db.add_sample("s", {})
    sp = db.add_spectra(s["id"], [_entry(b"x")])[0]
    job = db.add_job("fit", [sp["id"], sp["id"]], {"model": "direct"})
    assert job["state"] == "queued" and job["progress"] == {"done": 0, "total": 2}
    assert [i["idx"] for i in db.pending_items(job["id"])] == [0, 1]
    job = db.finish_item(job["id"], 0, result=_result(2.0), options={"model": "direct"})
    assert job["state"] == "running" and job["progress"]["done"] == 1
    again = db.finish_item(job["id"], 0, result=_result(9.9))   # idempotent
    assert again["fit_ids"] == job["fit_ids"]
    job = db.finish_item(job["id"], 1, error={"code": "bad-file", "message": "broken"})
    assert job["state"] == "done" and job["progress"] == {"done": 2, "total": 2}
    assert job["errors"] == [{"item": 1, "spectrum_id": sp["id"], "source": "a.csv",
                              "code": "bad-file", "message": "broken"}]
    assert [(i["item"], i["state"], i["fit_id"]) for i in job["items"]] == [
        (0, "done", job["fit_ids"][0]), (1, "failed", None)]
    fit = db.get_fit(job["fit_ids"][0], data=True)
    assert fit["result"]["gaps"][0]["eg_ev"] == 2.0 and "data" not in fit["result"]
    assert fit["data"] == {"energy_ev": [1.0, 2.0]}
    assert fit["sample_id"] == s["id"] and fit["options"] == {"model": "direct"}
    # a re-fit adds a fit; the history is newest first and keeps the old one
    job2 = db.add_job("fit", [sp["id"]], {})
    db.finish_item(job2["id"], 0, result=_result(2.1))
    history = db.fits_of_spectrum(sp["id"])
    assert [f["gaps"][0]["eg_ev"] for f in history] == [2.1, 2.0]
    assert db.find_samples()[0][0]["latest_fit"]["gaps"][0]["eg_ev"] == 2.1


def test_job_with_only_failures_is_failed(archive):
    db = archive.db
    s = db.add_sample("s", {})
    sp = db.add_spectra(s["id"], [_entry(b"x")])[0]
    job = db.add_job("fit", [sp["id"]], {})
    job = db.finish_item(job["id"], 0, error={"code": "bad-option", "message": "no"})
    assert job["state"] == "failed" and job["reason"] == "no item could be fitted"
    with pytest.raises(KeyError):
        db.add_job("fit", [12345], {})


def test_batch_reuses_a_sample_of_the_same_name(archive):
    db = archive.db
    files = [{"sample": "film", "metadata": {"k": "v"}, "entries": [_entry(b"1", "film.csv")]}]
    first = db.add_batch(files, {}, [])
    second = db.add_batch(files, {}, [{"source": "bad.csv",
                                       "error": {"code": "bad-file", "message": "no"}}])
    assert first["samples"][0]["id"] == second["samples"][0]["id"]
    assert second["samples"][0]["existing"] and not first["samples"][0]["existing"]
    assert second["spectra"][0]["existing"]
    job = second["job"]
    assert job["progress"] == {"done": 1, "total": 2} and job["errors"][0]["source"] == "bad.csv"
    assert db.get_sample(first["samples"][0]["id"])["metadata"] == {"k": "v"}


def test_tokens_store_only_hashes_and_revoke(tmp_path):
    data_dir = tmp_path / "d"
    token = arch.create_token(data_dir, "lab laptop")
    assert token.startswith("ef_") and len(token) > 40
    raw = (data_dir / Archive.DB_NAME).read_bytes()
    assert token.encode() not in raw
    a = Archive(data_dir)
    assert a.check_token(token) and not a.check_token(token + "x") and not a.check_token("")
    assert not a.check_token(None)
    listed = arch.list_tokens(data_dir)
    assert listed == [{"id": 1, "name": "lab laptop", "kind": "normal",
                       "created": listed[0]["created"], "created_by": None, "revoked": None}]
    second = arch.create_token(data_dir, "robot")
    assert arch.revoke_token(data_dir, "lab laptop") is True
    assert arch.revoke_token(data_dir, "lab laptop") is False      # already revoked
    assert not a.check_token(token) and a.check_token(second)
    assert arch.revoke_token(data_dir, "2") is True                 # by id
    assert not a.check_token(second)
    with pytest.raises(EdgefitError, match="name"):
        arch.create_token(data_dir, "  ")


def test_first_start_token_only_on_a_new_archive(archive):
    token = archive.first_start_token()
    assert token and archive.check_token(token)
    assert archive.first_start_token() is None
    archive.db.revoke("first-start")
    assert archive.first_start_token() is None     # revoked on purpose: not re-created


def test_secret_key_generated_once_and_private(archive):
    key = archive.secret_key()
    assert len(key) == 64
    assert archive.secret_key() == key
    assert Archive(archive.data_dir).secret_key() == key
    mode = os.stat(archive.data_dir / "secret_key").st_mode
    assert not mode & (stat.S_IRWXG | stat.S_IRWXO)


def test_default_data_dir_is_per_user():
    import platformdirs
    assert arch.default_data_dir() == arch.Path(platformdirs.user_data_dir("edgefit",
                                                                           appauthor=False))


def test_a_finished_job_keeps_no_reason_of_its_waiting(tmp_path):
    from edgefit.archive import Archive
    db = Archive(tmp_path / "d").db
    sample = db.add_sample("s", {})
    (sp,) = db.add_spectra(sample["id"], [{"sha256": "a" * 64, "file_name": "f.csv", "size": 1,
                                           "reader": {}, "options": {}, "summary": {}}])
    job = db.add_job("fit", [sp["id"]], {})["id"]
    db.mark_job(job, "queued", "queued again after the service restarted")
    assert db.get_job(job)["reason"].startswith("queued again")
    db.mark_job(job, "running")
    assert db.get_job(job)["reason"].startswith("queued again")     # still waiting: kept
    db.mark_job(job, "done")
    assert db.get_job(job)["reason"] is None


def test_an_archive_from_before_token_kinds_migrates_its_tokens_to_admin(tmp_path, monkeypatch):
    data = tmp_path / "old"
    data.mkdir()
    path = data / Archive.DB_NAME
    with monkeypatch.context() as m:
        m.setattr(arch, "MIGRATIONS", arch.MIGRATIONS[:1])      # the schema before the kinds
        SQLiteStorage(path)
    con = sqlite3.connect(path)
    with con:
        con.execute("INSERT INTO tokens (name, hash, created) VALUES ('robot', ?, 'then')",
                    (arch.sha256_hex(b"ef_old"),))
        con.execute("INSERT INTO samples (name, metadata, created) VALUES ('s', '{}', 'then')")
    con.close()
    a = Archive(data)
    assert a.db.schema_version() == len(arch.MIGRATIONS)
    (tok,) = a.db.tokens()
    assert tok["name"] == "robot" and tok["kind"] == "admin" and tok["created_by"] is None
    assert a.token_for("ef_old") == {"id": tok["id"], "name": "robot", "kind": "admin"}
    assert a.db.get_sample(1)["created_by"] is None
