"""The archive: samples, spectra, fits, jobs and API tokens, kept for years.

The archive only stores; it never fits and never draws. Its pieces:

- **Raw files**: every uploaded file is kept byte for byte under
  ``<data_dir>/raw/<sha256[:2]>/<sha256>``, written atomically (temporary file, fsync, rename),
  made read-only, and never overwritten or deleted. A file name from an upload never becomes a
  path: files are addressed by their hash only. The same bytes uploaded twice are stored once.
- **Records** in SQL, behind the :class:`Storage` interface: callers (the job runner, the web
  layer, the CLI's token commands) use its methods and never write SQL themselves, so another SQL
  database can follow by writing another class. :class:`SQLiteStorage` is the default (WAL mode,
  one short-lived connection per operation, so it is safe from many threads).

Tables (see :data:`edgefit.archive_schema.MIGRATIONS`, applied in order; ``schema_version``
records the last one):

``samples(id, name, metadata, created, created_by)``
    ``metadata`` is a JSON object of scalar values (text, numbers, booleans, null).
``spectra(id, sample_id, sha256, file_name, size, reader, summary, options, created,
created_by)``
    One row per spectrum read from a file (a file with several quantity columns gives several
    rows, each with its ``column``). ``reader`` holds the reader options the file was read with
    (quantity, x_unit, column); ``summary`` the parsed summary (quantity, x_unit, y_unit, points,
    column, sample, warnings, metadata); ``options`` the analysis options given at upload (the
    defaults of later fits of this spectrum). The same file uploaded again to the same sample with
    the same reader options returns the existing row (no duplicate); uploaded to another sample
    (or read with other reader options) it gets a new row that points to the same raw file.
``fits(id, spectrum_id, job_id, options, result, data, summary, version, created,
created_by)``
    A re-fit adds a row; no fit is ever replaced. ``result`` is the result entry (the CLI/REST
    JSON), ``data`` the arrays the reports draw from, ``summary`` a few numbers for lists
    (transition, gaps, Urbach energy).
``jobs(id, kind, state, done, total, payload, reason, created, updated, created_by)`` and
``job_items(job_id, idx, spectrum_id, source, state, fit_id, error)``
    A job's inputs are in the archive (its payload and the spectra rows), so a job interrupted by
    a restart can be queued again. ``done`` counts finished items (fitted or failed).
``tokens(id, name, hash, created, revoked, kind, created_by)``
    Only the SHA-256 of each API token is stored; checks compare in constant time. ``kind`` is
    admin, normal or read-only (:mod:`edgefit.tokens`). ``created_by`` in every table is the id
    of the token that made the row (NULL for the CLI's own writes and rows older than the
    column); a fit is made by the token of its job.
"""
from __future__ import annotations

import abc
import contextlib
import datetime as _dt
import hashlib
import json
import os
import secrets
import sqlite3
import tempfile
import threading
from pathlib import Path

from .archive_schema import MIGRATIONS
from .errors import EdgefitError
from .tokens import (TOKEN_KINDS, TOKEN_PREFIX, TokenKeeper, TokenRecords,  # noqa: F401
                     create_token, list_tokens, revoke_token)

#: Job states (the REST contract).
JOB_STATES = ("queued", "running", "done", "failed")


def default_data_dir() -> Path:
    """The per-user data directory of edgefit (``platformdirs.user_data_dir("edgefit")``)."""
    import platformdirs
    return Path(platformdirs.user_data_dir("edgefit", appauthor=False))


def _now() -> str:
    return _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="milliseconds")


def _dumps(value) -> str:
    # allow_nan=False: NaN is not JSON; results are cleaned by EdgeResult.to_dict already.
    return json.dumps(value, ensure_ascii=False, allow_nan=False, separators=(",", ":"))


def _loads(text):
    return None if text is None else json.loads(text)


def sha256_hex(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


# ---------------------------------------------------------------------------- raw files

class RawStore:
    """Raw uploads by content hash under ``<data_dir>/raw``: written once, never changed."""

    def __init__(self, root):
        self.root = Path(root)

    def path(self, sha256: str) -> Path:
        if len(sha256) != 64 or any(c not in "0123456789abcdef" for c in sha256):
            raise ValueError(f"not a SHA-256 hex digest: {sha256!r}")
        return self.root / sha256[:2] / sha256

    def put(self, data: bytes) -> str:
        """Store ``data`` (if not already there) and return its SHA-256."""
        sha = sha256_hex(data)
        target = self.path(sha)
        if target.exists():
            return sha
        target.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=".incoming-")
        try:
            with os.fdopen(fd, "wb") as fh:
                fh.write(data)
                fh.flush()
                os.fsync(fh.fileno())
            os.chmod(tmp, 0o444)
            if target.exists():         # another writer got there first: same bytes
                os.unlink(tmp)
            else:
                os.replace(tmp, target)
        except BaseException:
            with contextlib.suppress(FileNotFoundError):
                os.unlink(tmp)
            raise
        return sha

    def get(self, sha256: str) -> bytes:
        return self.path(sha256).read_bytes()

    def exists(self, sha256: str) -> bool:
        return self.path(sha256).exists()


# ---------------------------------------------------------------------------- interface

class Storage(abc.ABC):
    """What the rest of edgefit needs from the records database.

    Every method is one transaction. Records come back as plain dicts (JSON columns decoded).
    ``SQLiteStorage`` implements it; another SQL database needs another subclass, no caller
    changes.
    """

    # samples
    @abc.abstractmethod
    def add_sample(self, name: str, metadata: dict, created_by: int | None = None) -> dict: ...

    @abc.abstractmethod
    def get_sample(self, sample_id: int) -> dict | None: ...

    @abc.abstractmethod
    def find_samples(self, *, name: str | None = None, metadata: dict | None = None,
                     limit: int = 100, offset: int = 0) -> tuple[list[dict], int]: ...

    # spectra
    @abc.abstractmethod
    def add_spectra(self, sample_id: int, entries: list[dict],
                    created_by: int | None = None) -> list[dict]: ...

    @abc.abstractmethod
    def add_batch(self, files: list[dict], job_options: dict, failures: list[dict],
                  created_by: int | None = None) -> dict: ...

    @abc.abstractmethod
    def get_spectrum(self, spectrum_id: int) -> dict | None: ...

    @abc.abstractmethod
    def spectra_of(self, sample_id: int) -> list[dict]: ...

    # fits
    @abc.abstractmethod
    def get_fit(self, fit_id: int, *, data: bool = False) -> dict | None: ...

    @abc.abstractmethod
    def fits_of_spectrum(self, spectrum_id: int) -> list[dict]: ...

    # jobs
    @abc.abstractmethod
    def add_job(self, kind: str, spectrum_ids: list[int], options: dict,
                created_by: int | None = None) -> dict: ...

    @abc.abstractmethod
    def get_job(self, job_id: int) -> dict | None: ...

    @abc.abstractmethod
    def pending_items(self, job_id: int) -> list[dict]: ...

    @abc.abstractmethod
    def mark_job(self, job_id: int, state: str, reason: str | None = None) -> None: ...

    @abc.abstractmethod
    def finish_item(self, job_id: int, idx: int, *, result: dict | None = None,
                    error: dict | None = None, options: dict | None = None) -> dict: ...

    @abc.abstractmethod
    def unfinished_jobs(self) -> list[dict]: ...

    # tokens (edgefit.tokens.TokenRecords implements them in SQL)
    @abc.abstractmethod
    def add_token(self, name: str, token_hash: str, kind: str = "normal",
                  created_by: int | None = None) -> dict: ...

    @abc.abstractmethod
    def tokens(self) -> list[dict]: ...

    @abc.abstractmethod
    def get_token(self, token_id: int) -> dict | None: ...

    @abc.abstractmethod
    def revoke(self, name_or_id) -> int: ...

    @abc.abstractmethod
    def revoke_id(self, token_id: int, *, keep_an_admin: bool = False) -> dict | None: ...

    @abc.abstractmethod
    def active_tokens(self) -> list[dict]: ...

    @abc.abstractmethod
    def token_count(self) -> int: ...

    def close(self) -> None:
        """Release resources (nothing to do for per-operation connections)."""


# ---------------------------------------------------------------------------- SQLite

def fit_summary(result: dict) -> dict:
    """The few numbers of a result that lists and tables show (transition, gaps, Urbach)."""
    urbach = result.get("urbach") or {}
    return {
        "transition": result.get("transition"),
        "gaps": [{"kind": g.get("kind"), "eg_ev": g.get("eg_ev"), "eg_err_ev": g.get("eg_err_ev")}
                 for g in result.get("gaps") or []],
        "eu_mev": urbach.get("eu_mev"),
        "eu_err_mev": urbach.get("eu_err_mev"),
        "flags": [f.get("code") for f in result.get("flags") or []],
    }


class SQLiteStorage(TokenRecords, Storage):
    """:class:`Storage` in one SQLite file (WAL mode). Safe from many threads of one process
    and from several processes (SQLite's own locking; writers wait up to ``timeout_s``)."""

    _now = staticmethod(_now)

    def __init__(self, path, *, timeout_s: float = 30.0):
        self.path = str(path)
        self.timeout_s = timeout_s
        self._migrate_lock = threading.Lock()
        with self._connect() as con:
            con.execute("PRAGMA journal_mode=WAL")
        self._migrate()

    # -- connection plumbing
    @contextlib.contextmanager
    def _connect(self):
        con = sqlite3.connect(self.path, timeout=self.timeout_s, isolation_level=None)
        try:
            con.row_factory = sqlite3.Row
            con.execute("PRAGMA foreign_keys=ON")
            con.execute("PRAGMA synchronous=NORMAL")
            yield con
        finally:
            con.close()

    @contextlib.contextmanager
    def _tx(self, write: bool = True):
        """One transaction: ``BEGIN IMMEDIATE`` for writes (no lock upgrade deadlocks)."""
        with self._connect() as con:
            con.execute("BEGIN IMMEDIATE" if write else "BEGIN")
            try:
                yield con
            except BaseException:
                con.execute("ROLLBACK")
                raise
            con.execute("COMMIT")

    def _migrate(self):
        with self._migrate_lock, self._tx() as con:
            con.execute("CREATE TABLE IF NOT EXISTS schema_version (version INTEGER NOT NULL)")
            row = con.execute("SELECT version FROM schema_version").fetchone()
            current = row["version"] if row else 0
            if current > len(MIGRATIONS):
                raise EdgefitError(f"the archive {self.path} has schema version {current}, newer "
                                   f"than this edgefit knows ({len(MIGRATIONS)})",
                                   fix="upgrade edgefit", code="archive-too-new")
            for step in MIGRATIONS[current:]:
                for statement in step.split(";"):
                    if statement.strip():
                        con.execute(statement)
            if row is None:
                con.execute("INSERT INTO schema_version (version) VALUES (?)", (len(MIGRATIONS),))
            else:
                con.execute("UPDATE schema_version SET version = ?", (len(MIGRATIONS),))

    def schema_version(self) -> int:
        with self._tx(write=False) as con:
            return con.execute("SELECT version FROM schema_version").fetchone()["version"]

    # -- rows to dicts
    @staticmethod
    def _sample(row) -> dict:
        return {"id": row["id"], "name": row["name"], "metadata": _loads(row["metadata"]),
                "created": row["created"], "created_by": row["created_by"]}

    @staticmethod
    def _spectrum(row) -> dict:
        summary = _loads(row["summary"])
        return {"id": row["id"], "sample_id": row["sample_id"], "sha256": row["sha256"],
                "file_name": row["file_name"], "size": row["size"],
                "reader": _loads(row["reader"]), "options": _loads(row["options"]),
                "created": row["created"], "created_by": row["created_by"], **summary}

    @staticmethod
    def _fit_brief(row) -> dict:
        return {"id": row["id"], "spectrum_id": row["spectrum_id"], "job_id": row["job_id"],
                "options": _loads(row["options"]), "version": row["version"],
                "created": row["created"], "created_by": row["created_by"],
                **_loads(row["summary"])}

    # -- samples
    def add_sample(self, name, metadata, created_by=None):
        with self._tx() as con:
            return self._insert_sample(con, name, metadata, created_by)

    def _insert_sample(self, con, name, metadata, created_by=None):
        created = _now()
        cur = con.execute("INSERT INTO samples (name, metadata, created, created_by) VALUES "
                          "(?, ?, ?, ?)", (name, _dumps(metadata or {}), created, created_by))
        return {"id": cur.lastrowid, "name": name, "metadata": dict(metadata or {}),
                "created": created, "created_by": created_by}

    def get_sample(self, sample_id):
        with self._tx(write=False) as con:
            row = con.execute("SELECT * FROM samples WHERE id = ?", (sample_id,)).fetchone()
            return self._sample(row) if row else None

    def find_samples(self, *, name=None, metadata=None, limit=100, offset=0):
        """Samples whose name contains ``name`` (case-insensitive) and whose metadata has every
        ``key: value`` of ``metadata`` (values compared as text). Newest first; returns
        ``(page, total)``; each sample carries counts and its latest fit's summary."""
        sql, args = "SELECT * FROM samples", []
        if name:
            escaped = name.replace("\\", "\\\\").replace("%", "\\%").replace("_", "\\_")
            sql += " WHERE name LIKE ? ESCAPE '\\'"
            args.append(f"%{escaped}%")
        sql += " ORDER BY id DESC"
        with self._tx(write=False) as con:
            rows = [self._sample(r) for r in con.execute(sql, args)]
            if metadata:
                rows = [s for s in rows if all(k in s["metadata"] and _as_text(s["metadata"][k])
                                               == str(v) for k, v in metadata.items())]
            total = len(rows)
            page = rows[offset:offset + limit]
            for s in page:
                s.update(self._counts(con, s["id"]))
            return page, total

    def _counts(self, con, sample_id):
        n_spec = con.execute("SELECT COUNT(*) FROM spectra WHERE sample_id = ?",
                             (sample_id,)).fetchone()[0]
        n_fit, = con.execute("SELECT COUNT(*) FROM fits JOIN spectra ON fits.spectrum_id = "
                             "spectra.id WHERE spectra.sample_id = ?", (sample_id,)).fetchone()
        last = con.execute("SELECT fits.* FROM fits JOIN spectra ON fits.spectrum_id = spectra.id "
                           "WHERE spectra.sample_id = ? ORDER BY fits.id DESC LIMIT 1",
                           (sample_id,)).fetchone()
        return {"spectra_count": n_spec, "fits_count": n_fit,
                "latest_fit": self._fit_brief(last) if last else None}

    # -- spectra
    def add_spectra(self, sample_id, entries, created_by=None):
        """Add spectra rows to a sample in one transaction.

        ``entries``: dicts with sha256, file_name, size, reader, summary, options. A row that
        exists already (same sample, file bytes and reader options) is returned with
        ``"existing": True`` instead of being added again.
        """
        with self._tx() as con:
            if con.execute("SELECT 1 FROM samples WHERE id = ?", (sample_id,)).fetchone() is None:
                raise KeyError(sample_id)
            return [self._insert_spectrum(con, sample_id, e, created_by) for e in entries]

    def _insert_spectrum(self, con, sample_id, e, created_by=None):
        reader = json.dumps(e.get("reader") or {}, sort_keys=True, ensure_ascii=False)
        row = con.execute("SELECT * FROM spectra WHERE sample_id = ? AND sha256 = ? AND "
                          "reader = ?", (sample_id, e["sha256"], reader)).fetchone()
        if row is not None:
            return {**self._spectrum(row), "existing": True}
        created = _now()
        cur = con.execute(
            "INSERT INTO spectra (sample_id, sha256, file_name, size, reader, summary, options, "
            "created, created_by) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
            (sample_id, e["sha256"], e["file_name"], e["size"], reader, _dumps(e["summary"]),
             _dumps(e.get("options") or {}), created, created_by))
        row = con.execute("SELECT * FROM spectra WHERE id = ?", (cur.lastrowid,)).fetchone()
        return {**self._spectrum(row), "existing": False}

    def add_batch(self, files, job_options, failures, created_by=None):
        """Store a batch and its fit job in one transaction.

        ``files``: dicts with ``sample`` (name), ``metadata`` and ``entries`` (as for
        :meth:`add_spectra`). Each file goes to the oldest sample of that exact name, created when
        there is none. ``failures``: files that could not be read (``source``, ``error``): they
        become failed items of the job. Returns ``{"job": …, "samples": […], "spectra": […]}``.
        """
        with self._tx() as con:
            samples, spectra, items = [], [], []
            for f in files:
                row = con.execute("SELECT * FROM samples WHERE name = ? ORDER BY id LIMIT 1",
                                  (f["sample"],)).fetchone()
                if row is None:
                    sample = {**self._insert_sample(con, f["sample"], f.get("metadata") or {},
                                                    created_by), "existing": False}
                else:
                    sample = {**self._sample(row), "existing": True}
                samples.append(sample)
                for e in f["entries"]:
                    sp = self._insert_spectrum(con, sample["id"], e, created_by)
                    spectra.append(sp)
                    if not e.get("companion"):      # an R column serves its file's T
                        items.append({"spectrum_id": sp["id"], "source": e["file_name"]})
            for bad in failures:
                items.append({"spectrum_id": None, "source": bad["source"], "error": bad["error"]})
            job = self._insert_job(con, "batch", items, job_options, created_by)
            return {"job": job, "samples": samples, "spectra": spectra}

    def get_spectrum(self, spectrum_id):
        with self._tx(write=False) as con:
            row = con.execute("SELECT * FROM spectra WHERE id = ?", (spectrum_id,)).fetchone()
            return self._spectrum(row) if row else None

    def spectra_of(self, sample_id):
        with self._tx(write=False) as con:
            return [self._spectrum(r) for r in
                    con.execute("SELECT * FROM spectra WHERE sample_id = ? ORDER BY id",
                                (sample_id,))]

    # -- fits
    def get_fit(self, fit_id, *, data=False):
        """The fit: its archive fields plus ``result`` (and ``data`` when asked)."""
        with self._tx(write=False) as con:
            row = con.execute("SELECT fits.*, spectra.sample_id FROM fits JOIN spectra ON "
                              "fits.spectrum_id = spectra.id WHERE fits.id = ?",
                              (fit_id,)).fetchone()
            if row is None:
                return None
            out = {**self._fit_brief(row), "sample_id": row["sample_id"],
                   "result": _loads(row["result"])}
            if data:
                out["data"] = _loads(row["data"])
            return out

    def fits_of_spectrum(self, spectrum_id):
        """The fit history of a spectrum, newest first (summaries, no result JSON)."""
        with self._tx(write=False) as con:
            return [self._fit_brief(r) for r in
                    con.execute("SELECT * FROM fits WHERE spectrum_id = ? ORDER BY id DESC",
                                (spectrum_id,))]

    # -- jobs
    def add_job(self, kind, spectrum_ids, options, created_by=None):
        with self._tx() as con:
            items = [{"spectrum_id": int(s), "source": ""} for s in spectrum_ids]
            for it in items:
                row = con.execute("SELECT file_name FROM spectra WHERE id = ?",
                                  (it["spectrum_id"],)).fetchone()
                if row is None:
                    raise KeyError(it["spectrum_id"])
                it["source"] = row["file_name"]
            return self._insert_job(con, kind, items, options, created_by)

    def _insert_job(self, con, kind, items, options, created_by=None):
        now = _now()
        failed = [it for it in items if it.get("error")]
        cur = con.execute("INSERT INTO jobs (kind, state, done, total, payload, created, updated, "
                          "created_by) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
                          (kind, "queued", len(failed), len(items), _dumps({"options": options}),
                           now, now, created_by))
        job_id = cur.lastrowid
        con.executemany(
            "INSERT INTO job_items (job_id, idx, spectrum_id, source, state, error) VALUES "
            "(?, ?, ?, ?, ?, ?)",
            [(job_id, i, it["spectrum_id"], it["source"], "failed" if it.get("error") else
              "pending", _dumps(it["error"]) if it.get("error") else None)
             for i, it in enumerate(items)])
        if len(failed) == len(items):
            con.execute("UPDATE jobs SET state = 'failed', reason = ? WHERE id = ?",
                        ("no item could be fitted", job_id))
        return self._job(con, job_id)

    def _job(self, con, job_id):
        row = con.execute("SELECT * FROM jobs WHERE id = ?", (job_id,)).fetchone()
        if row is None:
            return None
        items = con.execute("SELECT * FROM job_items WHERE job_id = ? ORDER BY idx",
                            (job_id,)).fetchall()
        errors = []
        for it in items:
            if it["error"]:
                err = _loads(it["error"])
                errors.append({"item": it["idx"], "spectrum_id": it["spectrum_id"],
                               "source": it["source"], "code": err.get("code", "error"),
                               "message": err.get("message", "")})
        payload = _loads(row["payload"])
        return {"id": row["id"], "kind": row["kind"], "state": row["state"],
                "progress": {"done": row["done"], "total": row["total"]},
                "fit_ids": [it["fit_id"] for it in items if it["fit_id"] is not None],
                "errors": errors,
                "spectrum_ids": [it["spectrum_id"] for it in items
                                 if it["spectrum_id"] is not None],
                "items": [{"item": it["idx"], "spectrum_id": it["spectrum_id"],
                           "source": it["source"], "state": it["state"],
                           "fit_id": it["fit_id"]} for it in items],
                "options": payload.get("options", {}), "reason": row["reason"],
                "created": row["created"], "updated": row["updated"],
                "created_by": row["created_by"]}

    def get_job(self, job_id):
        with self._tx(write=False) as con:
            return self._job(con, job_id)

    def pending_items(self, job_id):
        """Items of a job still to fit: ``idx``, ``spectrum_id`` and ``source``."""
        with self._tx(write=False) as con:
            return [{"idx": r["idx"], "spectrum_id": r["spectrum_id"], "source": r["source"]}
                    for r in con.execute("SELECT * FROM job_items WHERE job_id = ? AND state = "
                                         "'pending' ORDER BY idx", (job_id,))]

    def mark_job(self, job_id, state, reason=None):
        if state not in JOB_STATES:
            raise ValueError(state)
        # a finished job keeps no reason of an earlier state ("queued again after ...")
        keep = "COALESCE(?, reason)" if state in ("queued", "running") else "?"
        with self._tx() as con:
            con.execute(f"UPDATE jobs SET state = ?, reason = {keep}, updated = ? WHERE id = ?",
                        (state, reason, _now(), job_id))

    def finish_item(self, job_id, idx, *, result=None, error=None, options=None):
        """Record the outcome of one item: a new fit (``result``, the full result dict with its
        ``data`` block) or an ``error`` ({"code", "message"}). Counts progress; when the last
        item is finished the job is "done" (at least one fit) or "failed". Idempotent: an item
        already finished is left as it is. Returns the job."""
        with self._tx() as con:
            item = con.execute("SELECT * FROM job_items WHERE job_id = ? AND idx = ?",
                               (job_id, idx)).fetchone()
            if item is None:
                raise KeyError((job_id, idx))
            if item["state"] != "pending":
                return self._job(con, job_id)
            now = _now()
            if result is not None:
                result = dict(result)
                data = result.pop("data", None)
                # a fit is made by the token that made its job
                cur = con.execute(
                    "INSERT INTO fits (spectrum_id, job_id, options, result, data, summary, "
                    "version, created, created_by) VALUES (?, ?, ?, ?, ?, ?, ?, ?, (SELECT "
                    "created_by FROM jobs WHERE id = ?))",
                    (item["spectrum_id"], job_id, _dumps(options or {}), _dumps(result),
                     _dumps(data) if data is not None else None, _dumps(fit_summary(result)),
                     str(result.get("version", "")), now, job_id))
                con.execute("UPDATE job_items SET state = 'done', fit_id = ? WHERE job_id = ? "
                            "AND idx = ?", (cur.lastrowid, job_id, idx))
            else:
                con.execute("UPDATE job_items SET state = 'failed', error = ? WHERE job_id = ? "
                            "AND idx = ?", (_dumps(error or {"code": "error", "message": ""}),
                                            job_id, idx))
            con.execute("UPDATE jobs SET done = done + 1, updated = ? WHERE id = ?", (now, job_id))
            row = con.execute("SELECT done, total FROM jobs WHERE id = ?", (job_id,)).fetchone()
            if row["done"] >= row["total"]:
                fitted = con.execute("SELECT COUNT(*) FROM job_items WHERE job_id = ? AND state = "
                                     "'done'", (job_id,)).fetchone()[0]
                if fitted:
                    con.execute("UPDATE jobs SET state = 'done', reason = NULL WHERE id = ?",
                                (job_id,))
                else:
                    con.execute("UPDATE jobs SET state = 'failed', reason = ? WHERE id = ?",
                                ("no item could be fitted", job_id))
            else:
                con.execute("UPDATE jobs SET state = 'running' WHERE id = ? AND state = 'queued'",
                            (job_id,))
            return self._job(con, job_id)

    def unfinished_jobs(self):
        """Jobs left "queued" or "running" (oldest first), e.g. by a previous server process."""
        with self._tx(write=False) as con:
            ids = [r["id"] for r in con.execute("SELECT id FROM jobs WHERE state IN ('queued', "
                                                "'running') ORDER BY id")]
            return [self._job(con, i) for i in ids]


def _as_text(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return "" if value is None else str(value)


# ---------------------------------------------------------------------------- the archive

class Archive(TokenKeeper):
    """A data directory: the records (:class:`Storage`) and the raw files (:class:`RawStore`).

    ``Archive(data_dir)`` creates the directory, the SQLite database ``archive.sqlite3`` (WAL)
    and ``raw/`` when they do not exist, and applies pending schema migrations.
    """

    DB_NAME = "archive.sqlite3"

    def __init__(self, data_dir=None, *, storage: Storage | None = None):
        self.data_dir = Path(data_dir) if data_dir is not None else default_data_dir()
        self.data_dir.mkdir(parents=True, exist_ok=True)
        self.raw = RawStore(self.data_dir / "raw")
        self.db = storage if storage is not None else SQLiteStorage(self.data_dir / self.DB_NAME)

    def close(self):
        self.db.close()

    def secret_key(self) -> str:
        """The secret key for signed sessions: generated on first use and kept in
        ``<data_dir>/secret_key`` (readable by the owner only)."""
        path = self.data_dir / "secret_key"
        try:
            return path.read_text().strip()
        except FileNotFoundError:
            pass
        key = secrets.token_hex(32)
        fd, tmp = tempfile.mkstemp(dir=self.data_dir, prefix=".secret-")
        with os.fdopen(fd, "w") as fh:
            fh.write(key + "\n")
        os.chmod(tmp, 0o600)
        try:
            os.link(tmp, path)          # atomic; fails if another process won the race
        except FileExistsError:
            pass
        finally:
            os.unlink(tmp)
        return path.read_text().strip()
