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

Tables (see :data:`MIGRATIONS`, applied in order; ``schema_version`` records the last one):

``samples(id, name, metadata, created)``
    ``metadata`` is a JSON object of scalar values (text, numbers, booleans, null).
``spectra(id, sample_id, sha256, file_name, size, reader, summary, options, created)``
    One row per spectrum read from a file (a file with several quantity columns gives several
    rows, each with its ``column``). ``reader`` holds the reader options the file was read with
    (quantity, x_unit, column); ``summary`` the parsed summary (quantity, x_unit, y_unit, points,
    column, sample, warnings, metadata); ``options`` the analysis options given at upload (the
    defaults of later fits of this spectrum). The same file uploaded again to the same sample with
    the same reader options returns the existing row (no duplicate); uploaded to another sample
    (or read with other reader options) it gets a new row that points to the same raw file.
``fits(id, spectrum_id, job_id, options, result, data, summary, version, created)``
    A re-fit adds a row; no fit is ever replaced. ``result`` is the result entry (the CLI/REST
    JSON), ``data`` the arrays the reports draw from, ``summary`` a few numbers for lists
    (transition, gaps, Urbach energy).
``jobs(id, kind, state, done, total, payload, reason, created, updated)`` and
``job_items(job_id, idx, spectrum_id, source, state, fit_id, error)``
    A job's inputs are in the archive (its payload and the spectra rows), so a job interrupted by
    a restart can be queued again. ``done`` counts finished items (fitted or failed).
``tokens(id, name, hash, created, revoked)``
    Only the SHA-256 of each API token is stored; checks compare in constant time.
"""
from __future__ import annotations

import abc
import contextlib
import datetime as _dt
import hashlib
import hmac
import json
import os
import secrets
import sqlite3
import tempfile
import threading
from pathlib import Path

from .errors import EdgefitError

#: Job states (the REST contract).
JOB_STATES = ("queued", "running", "done", "failed")
#: Prefix of API tokens, so that a leaked one is recognisable.
TOKEN_PREFIX = "ef_"


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


def _token_hash(token: str) -> str:
    return hashlib.sha256(token.encode("utf-8")).hexdigest()


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
    def add_sample(self, name: str, metadata: dict) -> dict: ...

    @abc.abstractmethod
    def get_sample(self, sample_id: int) -> dict | None: ...

    @abc.abstractmethod
    def find_samples(self, *, name: str | None = None, metadata: dict | None = None,
                     limit: int = 100, offset: int = 0) -> tuple[list[dict], int]: ...

    # spectra
    @abc.abstractmethod
    def add_spectra(self, sample_id: int, entries: list[dict]) -> list[dict]: ...

    @abc.abstractmethod
    def add_batch(self, files: list[dict], job_options: dict,
                  failures: list[dict]) -> dict: ...

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
    def add_job(self, kind: str, spectrum_ids: list[int], options: dict) -> dict: ...

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

    # tokens
    @abc.abstractmethod
    def add_token(self, name: str, token_hash: str) -> dict: ...

    @abc.abstractmethod
    def tokens(self) -> list[dict]: ...

    @abc.abstractmethod
    def revoke(self, name_or_id) -> int: ...

    @abc.abstractmethod
    def active_token_hashes(self) -> list[str]: ...

    @abc.abstractmethod
    def token_count(self) -> int: ...

    def close(self) -> None:
        """Release resources (nothing to do for per-operation connections)."""


# ---------------------------------------------------------------------------- SQLite

#: Schema migrations, applied in order; ``schema_version.version`` is the count applied.
#: Never edit a released entry: append a new one.
MIGRATIONS: list[str] = [
    # 1: the first schema
    """
    CREATE TABLE samples (
        id INTEGER PRIMARY KEY AUTOINCREMENT,
        name TEXT NOT NULL,
        metadata TEXT NOT NULL DEFAULT '{}',
        created TEXT NOT NULL
    );
    CREATE INDEX samples_name ON samples(name);
    CREATE TABLE spectra (
        id INTEGER PRIMARY KEY AUTOINCREMENT,
        sample_id INTEGER NOT NULL REFERENCES samples(id),
        sha256 TEXT NOT NULL,
        file_name TEXT NOT NULL,
        size INTEGER NOT NULL,
        reader TEXT NOT NULL,
        summary TEXT NOT NULL,
        options TEXT NOT NULL DEFAULT '{}',
        created TEXT NOT NULL,
        UNIQUE (sample_id, sha256, reader)
    );
    CREATE INDEX spectra_sample ON spectra(sample_id);
    CREATE INDEX spectra_sha ON spectra(sha256);
    CREATE TABLE jobs (
        id INTEGER PRIMARY KEY AUTOINCREMENT,
        kind TEXT NOT NULL,
        state TEXT NOT NULL,
        done INTEGER NOT NULL DEFAULT 0,
        total INTEGER NOT NULL,
        payload TEXT NOT NULL,
        reason TEXT,
        created TEXT NOT NULL,
        updated TEXT NOT NULL
    );
    CREATE INDEX jobs_state ON jobs(state);
    CREATE TABLE job_items (
        job_id INTEGER NOT NULL REFERENCES jobs(id),
        idx INTEGER NOT NULL,
        spectrum_id INTEGER REFERENCES spectra(id),
        source TEXT NOT NULL DEFAULT '',
        state TEXT NOT NULL,
        fit_id INTEGER,
        error TEXT,
        PRIMARY KEY (job_id, idx)
    );
    CREATE TABLE fits (
        id INTEGER PRIMARY KEY AUTOINCREMENT,
        spectrum_id INTEGER NOT NULL REFERENCES spectra(id),
        job_id INTEGER REFERENCES jobs(id),
        options TEXT NOT NULL,
        result TEXT NOT NULL,
        data TEXT,
        summary TEXT NOT NULL,
        version TEXT NOT NULL,
        created TEXT NOT NULL
    );
    CREATE INDEX fits_spectrum ON fits(spectrum_id);
    CREATE TABLE tokens (
        id INTEGER PRIMARY KEY AUTOINCREMENT,
        name TEXT NOT NULL,
        hash TEXT NOT NULL UNIQUE,
        created TEXT NOT NULL,
        revoked TEXT
    );
    """,
]


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


class SQLiteStorage(Storage):
    """:class:`Storage` in one SQLite file (WAL mode). Safe from many threads of one process
    and from several processes (SQLite's own locking; writers wait up to ``timeout_s``)."""

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
                "created": row["created"]}

    @staticmethod
    def _spectrum(row) -> dict:
        summary = _loads(row["summary"])
        return {"id": row["id"], "sample_id": row["sample_id"], "sha256": row["sha256"],
                "file_name": row["file_name"], "size": row["size"],
                "reader": _loads(row["reader"]), "options": _loads(row["options"]),
                "created": row["created"], **summary}

    @staticmethod
    def _fit_brief(row) -> dict:
        return {"id": row["id"], "spectrum_id": row["spectrum_id"], "job_id": row["job_id"],
                "options": _loads(row["options"]), "version": row["version"],
                "created": row["created"], **_loads(row["summary"])}

    # -- samples
    def add_sample(self, name, metadata):
        with self._tx() as con:
            return self._insert_sample(con, name, metadata)

    def _insert_sample(self, con, name, metadata):
        created = _now()
        cur = con.execute("INSERT INTO samples (name, metadata, created) VALUES (?, ?, ?)",
                          (name, _dumps(metadata or {}), created))
        return {"id": cur.lastrowid, "name": name, "metadata": dict(metadata or {}),
                "created": created}

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
    def add_spectra(self, sample_id, entries):
        """Add spectra rows to a sample in one transaction.

        ``entries``: dicts with sha256, file_name, size, reader, summary, options. A row that
        exists already (same sample, file bytes and reader options) is returned with
        ``"existing": True`` instead of being added again.
        """
        with self._tx() as con:
            if con.execute("SELECT 1 FROM samples WHERE id = ?", (sample_id,)).fetchone() is None:
                raise KeyError(sample_id)
            return [self._insert_spectrum(con, sample_id, e) for e in entries]

    def _insert_spectrum(self, con, sample_id, e):
        reader = json.dumps(e.get("reader") or {}, sort_keys=True, ensure_ascii=False)
        row = con.execute("SELECT * FROM spectra WHERE sample_id = ? AND sha256 = ? AND "
                          "reader = ?", (sample_id, e["sha256"], reader)).fetchone()
        if row is not None:
            return {**self._spectrum(row), "existing": True}
        created = _now()
        cur = con.execute(
            "INSERT INTO spectra (sample_id, sha256, file_name, size, reader, summary, options, "
            "created) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
            (sample_id, e["sha256"], e["file_name"], e["size"], reader, _dumps(e["summary"]),
             _dumps(e.get("options") or {}), created))
        row = con.execute("SELECT * FROM spectra WHERE id = ?", (cur.lastrowid,)).fetchone()
        return {**self._spectrum(row), "existing": False}

    def add_batch(self, files, job_options, failures):
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
                    sample = {**self._insert_sample(con, f["sample"], f.get("metadata") or {}),
                              "existing": False}
                else:
                    sample = {**self._sample(row), "existing": True}
                samples.append(sample)
                for e in f["entries"]:
                    sp = self._insert_spectrum(con, sample["id"], e)
                    spectra.append(sp)
                    if not e.get("companion"):      # an R column serves its file's T
                        items.append({"spectrum_id": sp["id"], "source": e["file_name"]})
            for bad in failures:
                items.append({"spectrum_id": None, "source": bad["source"], "error": bad["error"]})
            job = self._insert_job(con, "batch", items, job_options)
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
    def add_job(self, kind, spectrum_ids, options):
        with self._tx() as con:
            items = [{"spectrum_id": int(s), "source": ""} for s in spectrum_ids]
            for it in items:
                row = con.execute("SELECT file_name FROM spectra WHERE id = ?",
                                  (it["spectrum_id"],)).fetchone()
                if row is None:
                    raise KeyError(it["spectrum_id"])
                it["source"] = row["file_name"]
            return self._insert_job(con, kind, items, options)

    def _insert_job(self, con, kind, items, options):
        now = _now()
        failed = [it for it in items if it.get("error")]
        cur = con.execute("INSERT INTO jobs (kind, state, done, total, payload, created, updated) "
                          "VALUES (?, ?, ?, ?, ?, ?, ?)",
                          (kind, "queued", len(failed), len(items), _dumps({"options": options}),
                           now, now))
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
                "created": row["created"], "updated": row["updated"]}

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
                cur = con.execute(
                    "INSERT INTO fits (spectrum_id, job_id, options, result, data, summary, "
                    "version, created) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
                    (item["spectrum_id"], job_id, _dumps(options or {}), _dumps(result),
                     _dumps(data) if data is not None else None, _dumps(fit_summary(result)),
                     str(result.get("version", "")), now))
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

    # -- tokens
    def add_token(self, name, token_hash):
        with self._tx() as con:
            created = _now()
            cur = con.execute("INSERT INTO tokens (name, hash, created) VALUES (?, ?, ?)",
                              (name, token_hash, created))
            return {"id": cur.lastrowid, "name": name, "created": created, "revoked": None}

    def tokens(self):
        with self._tx(write=False) as con:
            return [{"id": r["id"], "name": r["name"], "created": r["created"],
                     "revoked": r["revoked"]}
                    for r in con.execute("SELECT id, name, created, revoked FROM tokens "
                                         "ORDER BY id")]

    def revoke(self, name_or_id):
        with self._tx() as con:
            key = str(name_or_id)
            cur = con.execute("UPDATE tokens SET revoked = ? WHERE revoked IS NULL AND "
                              "(name = ? OR CAST(id AS TEXT) = ?)", (_now(), key, key))
            return cur.rowcount

    def active_token_hashes(self):
        with self._tx(write=False) as con:
            return [r["hash"] for r in con.execute("SELECT hash FROM tokens WHERE revoked IS "
                                                   "NULL")]

    def token_count(self):
        with self._tx(write=False) as con:
            return con.execute("SELECT COUNT(*) FROM tokens").fetchone()[0]


def _as_text(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return "" if value is None else str(value)


# ---------------------------------------------------------------------------- the archive

class Archive:
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

    # -- tokens
    def create_token(self, name: str) -> str:
        """Create an API token named ``name``; return it (the only time it is visible)."""
        name = str(name).strip()
        if not name or len(name) > 100:
            raise EdgefitError("a token needs a name of 1 to 100 characters",
                               fix="edgefit token create --name NAME", code="bad-option")
        token = TOKEN_PREFIX + secrets.token_urlsafe(32)
        self.db.add_token(name, _token_hash(token))
        return token

    def check_token(self, token: str | None) -> bool:
        """Whether ``token`` is an active API token (constant-time comparison of hashes)."""
        if not token:
            return False
        presented = _token_hash(token)
        ok = False
        for h in self.db.active_token_hashes():
            ok |= hmac.compare_digest(presented, h)
        return ok

    def first_start_token(self) -> str | None:
        """On a data directory that never had a token, create one named ``first-start`` and
        return it (to be printed once); otherwise None."""
        if self.db.token_count():
            return None
        return self.create_token("first-start")

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


# ---------------------------------------------------------------------------- token commands

def create_token(data_dir, name: str) -> str:
    """Create an API token in the archive at ``data_dir`` (None: the default) and return it.

    Only its SHA-256 is stored: the returned token cannot be shown again.
    """
    return Archive(data_dir).create_token(name)


def list_tokens(data_dir) -> list[dict]:
    """The API tokens of the archive: ``id``, ``name``, ``created``, ``revoked`` (never the
    token or its hash)."""
    return Archive(data_dir).db.tokens()


def revoke_token(data_dir, name_or_id) -> bool:
    """Revoke the active token(s) with this name, or the token with this id. Returns whether
    any was revoked."""
    return Archive(data_dir).db.revoke(name_or_id) > 0
