"""The REST API under /api/v1 (contract: docs/design.md; document: :mod:`edgefit_web.openapi`).

Only HTTP is translated here: requests into calls of :mod:`edgefit.archive`,
:mod:`edgefit.jobs`, :mod:`edgefit.io` and :mod:`edgefit.report`, and their outcomes or
:class:`~edgefit.errors.EdgefitError` into responses. Errors are always
``{"error": {"code", "message"}}`` (plus ``file``, ``line``, ``column``, ``fix`` when the
reader knows them).

Every route but /health and /openapi.json needs a token (401 without one). A read-only token gets
403 on every write (any method but GET and HEAD); the /tokens routes need an admin token (403
otherwise). What a token creates records its id (``created_by``).
"""
from __future__ import annotations

import io
import json
import logging
import math
import re
import traceback
import unicodedata
import zipfile

from flask import Blueprint, Response, current_app, g, jsonify, request, send_file, url_for
from werkzeug.exceptions import HTTPException, RequestEntityTooLarge
from werkzeug.routing import BaseConverter

from edgefit import __version__
from edgefit.errors import EdgefitError
from edgefit.jobs import READER_OPTIONS, check_options, reader_options

from . import service

log = logging.getLogger(__name__)

PREFIX = "/api/v1"
bp = Blueprint("api", __name__)

#: Routes open without a token.
PUBLIC = {"api.health", "api.openapi"}
#: Routes for admin tokens only.
ADMIN_ONLY = {"api.create_token", "api.list_tokens", "api.revoke_token"}
#: Limits of names and metadata (characters / entries).
MAX_NAME = 200
MAX_META_KEYS = 100
MAX_META_KEY = 100
MAX_META_VALUE = 2000
MAX_ID = 2 ** 53        # ids stay exact in JSON numbers and inside SQLite's integers
#: A report may run its own inline scripts and this server's plotly.js, and load nothing from
#: another host (checked in chromium: the plots draw under it).
REPORT_CSP = ("default-src 'none'; script-src 'self' 'unsafe-inline'; style-src 'self' "
              "'unsafe-inline'; img-src 'self' data: blob:; font-src 'self' data:; "
              "connect-src 'self'; frame-ancestors 'self'")


class IdConverter(BaseConverter):
    """A record id in a path: 1 to 16 digits (larger numbers cannot be ids: 404)."""

    regex = r"[0-9]{1,16}"

    def to_python(self, value):
        return int(value)

    def to_url(self, value):
        return str(int(value))


class ApiError(Exception):
    """An error response: HTTP status, machine code, message (and optional details)."""

    def __init__(self, status: int, code: str, message: str, **details):
        super().__init__(message)
        self.status, self.code, self.message, self.details = status, code, message, details


def error_body(code: str, message: str, **details) -> dict:
    err = {"code": code, "message": message}
    err.update({k: v for k, v in details.items() if v is not None})
    return {"error": err}


def _respond_error(status, code, message, headers=None, **details):
    resp = jsonify(error_body(code, message, **details))
    resp.status_code = status
    if status == 401:
        resp.headers["WWW-Authenticate"] = 'Bearer realm="edgefit"'
    for k, v in (headers or {}).items():
        resp.headers[k] = v
    return resp


def _from_edgefit(exc: EdgefitError, status: int) -> ApiError:
    return ApiError(status, exc.code, str(exc), file=exc.file, line=exc.line,
                    column=None if exc.column is None else str(exc.column), fix=exc.fix)


def _mb(n: int) -> str:
    return f"{n / 1024 / 1024:g} MB"


def http_error(exc: HTTPException):
    """JSON for any HTTP error under /api/ (404 of unknown routes, 405, 413, ...)."""
    code = re.sub(r"[^a-z0-9]+", "-", (exc.name or "error").lower()).strip("-")
    message = exc.description or exc.name
    if isinstance(exc, RequestEntityTooLarge):
        limit = current_app.config.get("MAX_CONTENT_LENGTH")
        code = "too-large"
        message = (f"the request is larger than the upload limit of {_mb(limit)}"
                   if limit else "the request is too large")
    elif exc.code == 404:
        code, message = "not-found", f"no such resource: {request.path}"
    elif exc.code == 405:
        code = "method-not-allowed"
        message = f"{request.method} is not allowed on {request.path}"
    headers = {}
    if exc.code == 405 and getattr(exc, "valid_methods", None):
        headers["Allow"] = ", ".join(exc.valid_methods)
    return _respond_error(exc.code or 500, code, message, headers=headers)


@bp.errorhandler(ApiError)
def _api_error(exc: ApiError):
    return _respond_error(exc.status, exc.code, exc.message, **exc.details)


@bp.errorhandler(Exception)
def _unexpected(exc: Exception):
    if isinstance(exc, HTTPException):
        return http_error(exc)
    log.error("unexpected error on %s %s: %s", request.method, request.path,
              traceback.format_exc())
    return _respond_error(500, "internal", f"unexpected server error ({type(exc).__name__}); "
                          "the server log has the details")


@bp.before_request
def _require_token():
    if request.endpoint in PUBLIC:
        return None
    header = request.headers.get("Authorization", "")
    scheme, _, token = header.partition(" ")
    if scheme.lower() != "bearer" or not token.strip():
        raise ApiError(401, "unauthorized", "this route needs an API token: send the header "
                       "'Authorization: Bearer <token>' (create one with `edgefit token create "
                       "--name NAME`)")
    g.token = service().archive.token_for(token.strip())
    if g.token is None:
        raise ApiError(401, "unauthorized", "the API token is not valid (unknown or revoked)")
    if request.endpoint in ADMIN_ONLY and g.token["kind"] != "admin":
        raise ApiError(403, "forbidden", f"the token '{g.token['name']}' is a {g.token['kind']} "
                       "token; managing tokens needs an admin token")
    if request.method not in ("GET", "HEAD", "OPTIONS") and g.token["kind"] == "read-only":
        raise ApiError(403, "forbidden", f"the token '{g.token['name']}' is read-only: it can "
                       "read, not write; use a normal token (an admin can create one)")
    return None


def _by() -> int | None:
    """The id of the request's token, recorded as ``created_by``."""
    return g.token["id"]


@bp.after_request
def _headers(resp: Response):
    resp.headers.setdefault("X-Content-Type-Options", "nosniff")
    if request.endpoint not in PUBLIC:
        resp.headers.setdefault("Cache-Control", "no-store")
    return resp


# ---------------------------------------------------------------------------- helpers

def _json_body() -> dict:
    data = request.get_json(silent=True)
    if not isinstance(data, dict):
        raise ApiError(400, "bad-request", "the body must be a JSON object sent with "
                       "'Content-Type: application/json'")
    return data


def _check_finite(value, where):
    if isinstance(value, float) and not math.isfinite(value):
        raise ApiError(400, "bad-request", f"{where} must be a finite number")


def _check_name(name) -> str:
    if not isinstance(name, str) or not name.strip():
        raise ApiError(400, "bad-request", "'name' must be a non-empty text")
    name = name.strip()
    if len(name) > MAX_NAME:
        raise ApiError(400, "bad-request", f"'name' is longer than {MAX_NAME} characters")
    return name


def _check_metadata(meta) -> dict:
    if meta is None:
        return {}
    if not isinstance(meta, dict):
        raise ApiError(400, "bad-request", "'metadata' must be a JSON object of key: value "
                       "pairs (values: text, numbers, true/false or null)")
    if len(meta) > MAX_META_KEYS:
        raise ApiError(400, "bad-request", f"'metadata' has more than {MAX_META_KEYS} entries")
    for k, v in meta.items():
        if not k or len(k) > MAX_META_KEY:
            raise ApiError(400, "bad-request", f"metadata keys must have 1 to {MAX_META_KEY} "
                           "characters")
        if isinstance(v, (dict, list)):
            raise ApiError(400, "bad-request", f"metadata '{k}' must be a text, a number, "
                           "true/false or null, not a list or object")
        if isinstance(v, str) and len(v) > MAX_META_VALUE:
            raise ApiError(400, "bad-request", f"metadata '{k}' is longer than "
                           f"{MAX_META_VALUE} characters")
        _check_finite(v, f"metadata '{k}'")
    return dict(meta)


def _form_options() -> dict:
    text = request.form.get("options")
    if text is None or not text.strip():
        return {}
    try:
        options = json.loads(text)
    except ValueError as exc:
        raise ApiError(400, "bad-option", f"the 'options' field is not valid JSON ({exc})")
    if not isinstance(options, dict):
        raise ApiError(400, "bad-option", "the 'options' field must be a JSON object, e.g. "
                       '{"thickness": "400nm"}')
    return options


def _checked(options: dict, *, reader: bool) -> None:
    try:
        check_options(options, reader=reader)
        if reader:
            reader_options(options)
    except EdgefitError as exc:
        raise _from_edgefit(exc, 400) from None


#: Characters a stored file name never keeps: what Windows forbids in names, and separators.
_NAME_UNSAFE_RE = re.compile(r'[<>:"|?*\\/]+')


def _upload_name(filename: str | None) -> str:
    """The file's own name, safe to store, show and put in a zip: no path of the client (a path
    that is absolute or climbs with ``..`` keeps its last component; in any other name the
    separators become ``_``), no control or format characters (U+202E right-to-left override and the
    other bidi controls, zero-width characters), ``<>:"|?*`` as ``_``, no ``..``, at most 200
    characters. ``<script>x</script>.csv`` becomes ``script_x_script_.csv``."""
    name = unicodedata.normalize("NFC", filename or "")
    name = "".join(c for c in name if unicodedata.category(c) not in ("Cc", "Cf", "Cs", "Co"))
    parts = re.split(r"[\\/]+", name)
    path = bool(re.match(r"^(?:[\\/]|[A-Za-z]:)", name)) or any(p.strip() == ".." for p in parts)
    parts = [p for p in parts if p.strip() not in ("", ".", "..")]
    name = parts[-1] if path and parts else "_".join(parts)
    name = _NAME_UNSAFE_RE.sub("_", name)
    name = re.sub(r"\.{2,}", ".", re.sub(r"_{2,}", "_", name)).strip(" ._")
    return name[:200] or "upload"


def _uploads() -> list:
    files = [f for f in request.files.getlist("file")]
    if not files:
        raise ApiError(400, "bad-request", "no file: send one or more files in the multipart "
                       "form field 'file'")
    limit = current_app.config["MAX_FILES"]
    if len(files) > limit:
        raise ApiError(413, "too-many-files", f"{len(files)} files in one request, more than "
                       f"the limit of {limit} files; send them in several requests")
    return files


def _read(data: bytes, name: str, reader: dict):
    """Parse an upload: its spectra, or the EdgefitError saying why it cannot be read."""
    from edgefit.io import parse_spectra
    slots = service().parse_slots
    if not slots.acquire(timeout=current_app.config["PARSE_WAIT_S"]):
        raise ApiError(503, "busy", "the server is reading other uploads; send the files again "
                       "in a minute", headers={"Retry-After": "30"})
    try:
        return parse_spectra(data, name, max_points=current_app.config["MAX_POINTS"], **reader)
    except EdgefitError as exc:
        return exc
    except Exception as exc:  # noqa: BLE001 - a reader bug must still answer as the file's
        log.error("reader failed on %s: %s", name, traceback.format_exc())
        return EdgefitError(f"the file could not be read ({type(exc).__name__}: {exc})",
                            file=name, fix="check the file, or report it", code="bad-file")
    finally:
        slots.release()


def _read_uploads():
    """The multipart upload of this request: ``(options, reader options, [(file name, bytes,
    spectra or EdgefitError), ...])``; bad options raise 400 before any file is read."""
    files = _uploads()
    options = _form_options()
    _checked(options, reader=True)
    reader = reader_options(options)
    out = []
    for f in files:
        name = _upload_name(f.filename)
        data = f.read()
        out.append((name, data, _read(data, name, reader)))
    return options, reader, out


def _status_of(exc: EdgefitError) -> int:
    return 413 if exc.code == "too-large" else 422


def _entries(data: bytes, name: str, spectra, reader: dict, options: dict) -> list[dict]:
    from edgefit.archive import sha256_hex
    sha = sha256_hex(data)
    out = []
    # a reflectance column beside a transmittance column is that spot's R: stored, and used
    # when the T is fitted (edgefit.analysis.pair_spectra), but not fitted on its own
    has_t = any(x.quantity == "transmittance" for x in spectra)
    for s in spectra:
        # several spectra in one file: the column is part of how each was read, so two columns
        # of the same bytes are two rows, not one duplicate
        out.append({"sha256": sha, "file_name": name, "size": len(data),
                    "reader": {**reader, "column": s.column} if len(spectra) > 1
                    else dict(reader),
                    "options": options,
                    "summary": {"quantity": s.quantity, "x_unit": s.x_unit, "y_unit": s.y_unit,
                                "points": s.points, "column": s.column, "sample": s.sample,
                                "warnings": list(s.warnings), "metadata": dict(s.metadata),
                                **({"role": "reflectance of the transmittance in this file"}
                                   if has_t and s.quantity == "reflectance" else {})},
                    "companion": has_t and s.quantity == "reflectance"})
    return out


def _analysis_part(options: dict) -> dict:
    return {k: v for k, v in options.items() if k not in READER_OPTIONS}


def _spectrum_out(sp: dict) -> dict:
    keys = ("id", "sample_id", "sha256", "file_name", "size", "quantity", "x_unit", "y_unit",
            "points", "column", "sample", "warnings", "metadata", "reader", "options", "created",
            "created_by")
    out = {k: sp.get(k) for k in keys}
    if "existing" in sp:
        out["existing"] = sp["existing"]
    return out


def _sample_name_of(spectra) -> str:
    s = spectra[0]
    if len(spectra) > 1 and s.sample.endswith(f" / {s.column}"):
        return s.sample[: -len(f" / {s.column}")]
    return s.sample


def _file_metadata(spectra) -> dict:
    meta = {k: v for k, v in spectra[0].metadata.items() if k != "comment"}
    return {str(k)[:MAX_META_KEY]: str(v)[:MAX_META_VALUE]
            for k, v in list(meta.items())[:MAX_META_KEYS] if k}


def _id_list(values, field) -> list[int]:
    if not isinstance(values, list) or not values:
        raise ApiError(400, "bad-request", f"'{field}' must be a non-empty list of ids")
    out = []
    for v in values:
        if isinstance(v, bool) or not isinstance(v, int) or not 1 <= v <= MAX_ID:
            raise ApiError(400, "bad-request", f"'{field}' must hold positive whole numbers, "
                           f"got {v!r}")
        out.append(v)
    return out


def _fit_entry(fit: dict) -> dict:
    """The REST form of a fit: the result entry plus the archive's fields."""
    out = dict(fit["result"])
    out.update({"id": fit["id"], "spectrum_id": fit["spectrum_id"],
                "sample_id": fit["sample_id"], "job_id": fit["job_id"],
                "created": fit["created"], "created_by": fit["created_by"],
                "version": fit["version"],
                "requested_options": fit["options"]})
    out.setdefault("options", fit["options"])
    return out


# ---------------------------------------------------------------------------- routes

@bp.get("/health")
def health():
    return {"status": "ok", "version": __version__}


@bp.get("/openapi.json")
def openapi():
    from .openapi import build_openapi
    return jsonify(build_openapi(current_app.config))


@bp.post("/samples")
def create_sample():
    body = _json_body()
    unknown = sorted(set(body) - {"name", "metadata"})
    if unknown:
        raise ApiError(400, "bad-request", f"unknown field(s) {', '.join(unknown)}: a sample "
                       "has 'name' and 'metadata'")
    if "metadata" in body and body["metadata"] is None:
        raise ApiError(400, "bad-request", "'metadata' must be a JSON object (leave it out for "
                       "none)")
    sample = service().archive.db.add_sample(_check_name(body.get("name")),
                                             _check_metadata(body.get("metadata")), _by())
    resp = jsonify({**sample, "spectra_count": 0, "fits_count": 0, "latest_fit": None})
    resp.status_code = 201
    resp.headers["Location"] = url_for("api.get_sample", sample_id=sample["id"])
    return resp


def _int_arg(name, default, lo, hi):
    raw = request.args.get(name)
    if raw is None:
        return default
    try:
        value = int(raw)
    except ValueError:
        raise ApiError(400, "bad-request", f"'{name}' must be a whole number, got {raw!r}")
    if not lo <= value <= hi:
        raise ApiError(400, "bad-request", f"'{name}' must lie in {lo}..{hi}, got {value}")
    return value


@bp.get("/samples")
def list_samples():
    name = request.args.get("name") or None
    meta = {}
    for item in request.args.getlist("metadata"):
        key, sep, value = item.partition("=")
        if not sep or not key:
            raise ApiError(400, "bad-request", f"metadata filter {item!r} must read key=value")
        meta[key] = value
    limit = _int_arg("limit", 100, 1, 1000)
    offset = _int_arg("offset", 0, 0, 10 ** 9)
    page, total = service().archive.db.find_samples(name=name, metadata=meta or None,
                                                    limit=limit, offset=offset)
    return {"samples": page, "total": total, "limit": limit, "offset": offset}


def _sample_or_404(sample_id):
    sample = service().archive.db.get_sample(sample_id)
    if sample is None:
        raise ApiError(404, "not-found", f"no sample {sample_id}")
    return sample


@bp.get("/samples/<id:sample_id>")
def get_sample(sample_id):
    db = service().archive.db
    sample = _sample_or_404(sample_id)
    spectra = []
    for sp in db.spectra_of(sample_id):
        spectra.append({**_spectrum_out(sp), "fits": db.fits_of_spectrum(sp["id"])})
    return {**sample, "spectra": spectra}


@bp.post("/samples/<id:sample_id>/spectra")
def upload_spectra(sample_id):
    svc = service()
    _sample_or_404(sample_id)
    options, reader, uploads = _read_uploads()
    # Every file is read before anything is stored: one unreadable file, nothing stored.
    parsed = []
    for name, data, spectra in uploads:
        if isinstance(spectra, EdgefitError):
            raise _from_edgefit(spectra, _status_of(spectra))
        parsed.append((name, data, spectra))
    entries = []
    for name, data, spectra in parsed:
        svc.archive.raw.put(data)
        entries += _entries(data, name, spectra, reader, _analysis_part(options))
    try:
        rows = svc.archive.db.add_spectra(sample_id, entries, _by())
    except KeyError:
        raise ApiError(404, "not-found", f"no sample {sample_id}") from None
    resp = jsonify({"spectra": [_spectrum_out(r) for r in rows]})
    resp.status_code = 201
    return resp


@bp.post("/fits")
def create_fits():
    svc = service()
    body = _json_body()
    unknown = sorted(set(body) - {"spectrum_ids", "options"})
    if unknown:
        raise ApiError(400, "bad-request", f"unknown field(s) {', '.join(unknown)}: send "
                       "'spectrum_ids' and 'options'")
    ids = _id_list(body.get("spectrum_ids"), "spectrum_ids")
    limit = current_app.config["MAX_FILES"]
    if len(ids) > limit:
        raise ApiError(413, "too-many-spectra", f"{len(ids)} spectra in one job, more than the "
                       f"limit of {limit}; send several jobs")
    options = body.get("options", {})
    if not isinstance(options, dict):
        raise ApiError(400, "bad-option", "'options' must be a JSON object")
    _checked(options, reader=False)
    for key in ("reflectance_spectrum_id", "substrate_spectrum_id"):
        other = options.get(key)
        if other is not None and (other < 1 or other > MAX_ID
                                  or svc.archive.db.get_spectrum(other) is None):
            raise ApiError(404, "not-found", f"no spectrum {other} ({key})")
    missing = [i for i in dict.fromkeys(ids) if svc.archive.db.get_spectrum(i) is None]
    if missing:
        raise ApiError(404, "not-found", "no spectrum " + ", ".join(map(str, missing)))
    try:
        job = svc.archive.db.add_job("fit", ids, options, _by())
    except KeyError as exc:         # deleted between the check and the job: cannot happen today
        raise ApiError(404, "not-found", f"no spectrum {exc.args[0]}") from None
    svc.runner.submit(job["id"])
    return _accepted(job)


def _accepted(job, **extra):
    resp = jsonify({"job_id": job["id"], "state": job["state"], "progress": job["progress"],
                    **extra})
    resp.status_code = 202
    resp.headers["Location"] = url_for("api.get_job", job_id=job["id"])
    return resp


@bp.post("/batch")
def create_batch():
    svc = service()
    options, reader, uploads = _read_uploads()
    analysis = _analysis_part(options)
    good, failures = [], []
    for name, data, spectra in uploads:
        if isinstance(spectra, EdgefitError):
            if spectra.code == "too-large":
                raise _from_edgefit(spectra, 413)
            failures.append({"source": name, "error": {"code": spectra.code,
                                                       "message": str(spectra)}})
        else:
            good.append((name, data, spectra))
    if not good:
        first = failures[0]["error"]
        raise ApiError(422, first["code"], (f"none of the {len(failures)} files could be read; "
                       if len(failures) > 1 else "") + first["message"])
    batch_files = []
    for name, data, spectra in good:
        svc.archive.raw.put(data)
        batch_files.append({"sample": _sample_name_of(spectra)[:MAX_NAME] or "sample",
                            "metadata": _file_metadata(spectra),
                            "entries": _entries(data, name, spectra, reader, analysis)})
    stored = svc.archive.db.add_batch(batch_files, analysis, failures, _by())
    svc.runner.submit(stored["job"]["id"])
    return _accepted(stored["job"],
                     samples=[{"id": s["id"], "name": s["name"], "existing": s["existing"]}
                              for s in stored["samples"]],
                     spectra=[_spectrum_out(s) for s in stored["spectra"]],
                     errors=stored["job"]["errors"])


@bp.get("/jobs/<id:job_id>")
def get_job(job_id):
    job = service().archive.db.get_job(job_id)
    if job is None:
        raise ApiError(404, "not-found", f"no job {job_id}")
    return job


def _fit_or_404(fit_id, data=False):
    fit = service().archive.db.get_fit(fit_id, data=data)
    if fit is None:
        raise ApiError(404, "not-found", f"no fit {fit_id}")
    return fit


@bp.get("/fits/<id:fit_id>")
def get_fit(fit_id):
    return _fit_entry(_fit_or_404(fit_id))


def _report_html(fit: dict, plotly_js: str) -> str:
    from edgefit.report import build_report
    return build_report({**_fit_entry(fit), "data": fit.get("data") or {}}, plotly_js=plotly_js)


@bp.get("/fits/<id:fit_id>/report")
def get_report(fit_id):
    mode = request.args.get("plotly", "inline")
    if mode not in ("inline", "app"):
        raise ApiError(400, "bad-request", f"'plotly' must be inline or app, got {mode!r}")
    fit = _fit_or_404(fit_id, data=True)
    plotly_js = "inline" if mode == "inline" else url_for("plotly_js")
    resp = Response(_report_html(fit, plotly_js), mimetype="text/html")
    resp.headers["Content-Security-Policy"] = REPORT_CSP
    return resp


def _zip_name(text: str) -> str:
    return re.sub(r"[^A-Za-z0-9._-]+", "_", text).strip("._")[:80] or "file"


@bp.get("/samples/<id:sample_id>/export")
def export_sample(sample_id):
    """A zip of the sample: raw uploads, every fit's JSON (with arrays) and its report, one
    plotly.min.js shared by the reports, and ``sample.json`` listing it all."""
    from .assets import plotly_js_path
    svc = service()
    db = svc.archive.db
    sample = _sample_or_404(sample_id)
    root = f"sample-{sample_id}-{_zip_name(sample['name'])}"
    manifest = {**sample, "exported_by": f"edgefit {__version__}", "spectra": []}
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as zf:
        raw_done = {}
        for sp in db.spectra_of(sample_id):
            if sp["sha256"] not in raw_done:
                path = f"raw/{sp['id']}_{_zip_name(sp['file_name'])}"
                zf.writestr(f"{root}/{path}", svc.archive.raw.get(sp["sha256"]))
                raw_done[sp["sha256"]] = path
            entry = {**_spectrum_out(sp), "raw_file": raw_done[sp["sha256"]], "fits": []}
            for brief in db.fits_of_spectrum(sp["id"]):
                fit = db.get_fit(brief["id"], data=True)
                full = {**_fit_entry(fit), "data": fit.get("data") or {}}
                json_path = f"fits/fit-{fit['id']}.json"
                report_path = f"reports/fit-{fit['id']}.html"
                zf.writestr(f"{root}/{json_path}", json.dumps(full, ensure_ascii=False, indent=1))
                zf.writestr(f"{root}/{report_path}", _report_html(fit, "plotly.min.js"))
                entry["fits"].append({**brief, "json": json_path, "report": report_path})
            manifest["spectra"].append(entry)
        if any(e["fits"] for e in manifest["spectra"]):
            zf.write(plotly_js_path(), f"{root}/reports/plotly.min.js")
        zf.writestr(f"{root}/sample.json", json.dumps(manifest, ensure_ascii=False, indent=1))
    buf.seek(0)
    return send_file(buf, mimetype="application/zip", as_attachment=True,
                     download_name=f"{root}.zip")


from . import api_tokens  # noqa: E402,F401  (the /tokens routes, on this blueprint)
