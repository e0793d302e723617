"""API tokens of the archive: one per person or instrument, of three kinds.

- ``admin``: everything, and creating, listing and revoking tokens (over REST as well).
- ``normal``: reads and writes samples, spectra, fits and jobs.
- ``read-only``: reads only (dashboards); every write answers 403.

Only the SHA-256 of a token is stored; a token is compared against every active hash in
constant time. The token that created a token, sample, spectrum, job or fit is recorded in its
``created_by`` column (:mod:`edgefit.archive`, migration 2). The first token of an archive
(made at the first start of the service) is an admin token; tokens of an archive older than the
kinds became admin tokens when it was migrated.

:class:`TokenRecords` holds the SQL (mixed into :class:`edgefit.archive.SQLiteStorage`),
:class:`TokenKeeper` the archive-level operations (mixed into :class:`edgefit.archive.Archive`);
the functions at the end are what ``edgefit token ...`` runs.
"""
from __future__ import annotations

import hashlib
import hmac
import secrets

from .errors import EdgefitError

#: Kinds of token, most rights first.
TOKEN_KINDS = ("admin", "normal", "read-only")
#: Prefix of API tokens, so that a leaked one is recognisable.
TOKEN_PREFIX = "ef_"
MAX_TOKEN_NAME = 100


def token_hash(token: str) -> str:
    return hashlib.sha256(token.encode("utf-8")).hexdigest()


def check_kind(kind) -> str:
    """``kind`` if it is one of :data:`TOKEN_KINDS`, else EdgefitError ``bad-option``."""
    if kind not in TOKEN_KINDS:
        raise EdgefitError(f"unknown token kind {kind!r}",
                           fix="--kind " + "|".join(TOKEN_KINDS), code="bad-option")
    return kind


def _public(row) -> dict:
    return {"id": row["id"], "name": row["name"], "kind": row["kind"],
            "created": row["created"], "created_by": row["created_by"],
            "revoked": row["revoked"]}


class TokenRecords:
    """The token table's SQL (needs ``_tx`` and ``_now`` of the storage class)."""

    def add_token(self, name, token_hash, kind="normal", created_by=None):
        with self._tx() as con:
            cur = con.execute("INSERT INTO tokens (name, hash, created, kind, created_by) "
                              "VALUES (?, ?, ?, ?, ?)",
                              (name, token_hash, self._now(), kind, created_by))
            return _public(con.execute("SELECT * FROM tokens WHERE id = ?",
                                       (cur.lastrowid,)).fetchone())

    def tokens(self):
        with self._tx(write=False) as con:
            return [_public(r) for r in con.execute("SELECT * FROM tokens ORDER BY id")]

    def get_token(self, token_id):
        with self._tx(write=False) as con:
            row = con.execute("SELECT * FROM tokens WHERE id = ?", (token_id,)).fetchone()
            return _public(row) if row else None

    def revoke(self, name_or_id):
        with self._tx() as con:
            key = str(name_or_id)
            cur = con.execute("UPDATE tokens SET revoked = ? WHERE revoked IS NULL AND "
                              "(name = ? OR CAST(id AS TEXT) = ?)", (self._now(), key, key))
            return cur.rowcount

    def revoke_id(self, token_id, *, keep_an_admin=False):
        """Revoke one token by id; returns it, or None when there is no such active token.
        ``keep_an_admin``: refuse (EdgefitError ``last-admin``) to revoke the last active admin
        token."""
        with self._tx() as con:
            row = con.execute("SELECT * FROM tokens WHERE id = ? AND revoked IS NULL",
                              (token_id,)).fetchone()
            if row is None:
                return None
            if keep_an_admin and row["kind"] == "admin" and con.execute(
                    "SELECT COUNT(*) FROM tokens WHERE kind = 'admin' AND revoked IS NULL"
            ).fetchone()[0] <= 1:
                raise EdgefitError("this is the last active admin token; it cannot be revoked "
                                   "over the API", fix="create another admin token first, or "
                                   "use `edgefit token revoke` on the server",
                                   code="last-admin")
            con.execute("UPDATE tokens SET revoked = ? WHERE id = ?", (self._now(), token_id))
            return _public(con.execute("SELECT * FROM tokens WHERE id = ?",
                                       (token_id,)).fetchone())

    def active_tokens(self):
        """Active tokens with their hash: ``id``, ``name``, ``kind``, ``hash``."""
        with self._tx(write=False) as con:
            return [{"id": r["id"], "name": r["name"], "kind": r["kind"], "hash": r["hash"]}
                    for r in con.execute("SELECT id, name, kind, hash FROM tokens WHERE "
                                         "revoked IS NULL")]

    def active_token_hashes(self):
        return [t["hash"] for t in self.active_tokens()]

    def token_count(self):
        with self._tx(write=False) as con:
            return con.execute("SELECT COUNT(*) FROM tokens").fetchone()[0]


class TokenKeeper:
    """Token operations of an archive (needs ``self.db``, a storage with :class:`TokenRecords`)."""

    def new_token(self, name: str, kind: str = "normal",
                  created_by: int | None = None) -> tuple[str, dict]:
        """Create a token; returns (the token, shown only now; its record without the hash)."""
        name = str(name).strip()
        if not name or len(name) > MAX_TOKEN_NAME:
            raise EdgefitError(f"a token needs a name of 1 to {MAX_TOKEN_NAME} characters (the "
                               "person or instrument it belongs to)",
                               fix="edgefit token create --name NAME", code="bad-option")
        token = TOKEN_PREFIX + secrets.token_urlsafe(32)
        record = self.db.add_token(name, token_hash(token), check_kind(kind), created_by)
        return token, record

    def create_token(self, name: str, kind: str = "normal",
                     created_by: int | None = None) -> str:
        """Create an API token named ``name``; return it (the only time it is visible)."""
        return self.new_token(name, kind, created_by)[0]

    def token_for(self, token: str | None) -> dict | None:
        """The active token record (``id``, ``name``, ``kind``) of ``token``, or None. Every
        active hash is compared, in constant time."""
        if not token:
            return None
        return self.token_of_hash(token_hash(token))

    def token_of_hash(self, presented: str) -> dict | None:
        found = None
        for t in self.db.active_tokens():
            if hmac.compare_digest(presented, t["hash"]):
                found = {k: t[k] for k in ("id", "name", "kind")}
        return found

    def check_token(self, token: str | None) -> bool:
        """Whether ``token`` is an active API token."""
        return self.token_for(token) is not None

    def first_start_token(self) -> str | None:
        """On a data directory that never had a token, create an admin token named
        ``first-start`` and return it (to be printed once); otherwise None."""
        if self.db.token_count():
            return None
        return self.create_token("first-start", "admin")


# ---------------------------------------------------------------------------- token commands

def _archive(data_dir):
    from .archive import Archive
    return Archive(data_dir)


def create_token(data_dir, name: str, kind: str = "normal") -> str:
    """Create an API token in the archive at ``data_dir`` (None: the default) and return it.

    Only its SHA-256 is stored: the returned token cannot be shown again.
    """
    return _archive(data_dir).create_token(name, kind)


def list_tokens(data_dir) -> list[dict]:
    """The API tokens of the archive: ``id``, ``name``, ``kind``, ``created``, ``created_by``,
    ``revoked`` (never the token or its hash)."""
    return _archive(data_dir).db.tokens()


def revoke_token(data_dir, name_or_id) -> bool:
    """Revoke the active token(s) with this name, or the token with this id. Returns whether
    any was revoked."""
    return _archive(data_dir).db.revoke(name_or_id) > 0
