"""The /api/v1/tokens routes (admin tokens only: :data:`edgefit_web.api.ADMIN_ONLY`): create a
token for a person or instrument, list the tokens, revoke one. Tokens themselves:
:mod:`edgefit.tokens`."""
from __future__ import annotations

from flask import jsonify

from edgefit.errors import EdgefitError
from edgefit.tokens import MAX_TOKEN_NAME, TOKEN_KINDS

from . import service
from .api import ApiError, _by, _from_edgefit, _json_body, bp


# ---------------------------------------------------------------------------- tokens (admin)

@bp.post("/tokens")
def create_token():
    """A new token for a person or instrument: ``{"name", "kind"}`` (kind: admin, normal or
    read-only; default normal) → 201 with the token, shown only in this answer."""
    body = _json_body()
    unknown = sorted(set(body) - {"name", "kind"})
    if unknown:
        raise ApiError(400, "bad-request", f"unknown field(s) {', '.join(unknown)}: a token has "
                       "'name' and 'kind'")
    kind = body.get("kind", "normal")
    if kind not in TOKEN_KINDS:
        raise ApiError(400, "bad-option", f"'kind' must be one of {', '.join(TOKEN_KINDS)}, "
                       f"got {kind!r}")
    name = body.get("name")
    if not isinstance(name, str) or not name.strip() or len(name.strip()) > MAX_TOKEN_NAME:
        raise ApiError(400, "bad-request", f"'name' must be a text of 1 to {MAX_TOKEN_NAME} "
                       "characters: the person or instrument the token belongs to")
    token, record = service().archive.new_token(name, kind, _by())
    resp = jsonify({**record, "token": token})
    resp.status_code = 201
    return resp


@bp.get("/tokens")
def list_tokens():
    return {"tokens": service().archive.db.tokens()}


@bp.delete("/tokens/<id:token_id>")
def revoke_token(token_id):
    """Revoke another token. A token cannot revoke itself here, nor the last admin token go:
    either would lock the service's admins out (``edgefit token revoke`` on the server can)."""
    if token_id == _by():
        raise ApiError(409, "own-token", "a token cannot revoke itself over the API; revoke it "
                       "with another admin token, or with `edgefit token revoke` on the server")
    try:
        record = service().archive.db.revoke_id(token_id, keep_an_admin=True)
    except EdgefitError as exc:
        raise _from_edgefit(exc, 409) from None
    if record is None:
        raise ApiError(404, "not-found", f"no active token {token_id}")
    return record
