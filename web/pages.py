"""The web pages: sign in, upload, follow a job, samples, one sample, compare.

A Flask blueprint (no URL prefix) registered beside the ``/api/v1`` blueprint by
:func:`edgefit_web.create_app`. Like the API it only translates HTTP: forms into calls of
:mod:`edgefit.io` (reading uploads to show what was detected), :mod:`edgefit.archive` (storing),
:mod:`edgefit.jobs` (fitting, through the same job runner as the API) and
:mod:`edgefit.report` (drawing); nothing is computed here.

Safety on a shared lab network:

- **Sign in** with an API token (``edgefit token create``). The session is Flask's signed cookie
  (the secret key generated and stored in the data directory), ``HttpOnly`` and
  ``SameSite=Lax``; it holds the token's SHA-256 (never the token), checked against the active
  tokens on every request, so revoking a token signs its sessions out. Sessions end after
  ``PAGES_SESSION_HOURS`` (default 12) or at sign-out.
- **CSRF**: every form carries a random per-session token (``csrf_token``), checked on every
  POST (also accepted as the ``X-CSRF-Token`` header from the pages' own script); a missing or
  wrong one is refused with 400.
- Templates autoescape: names, metadata, file names and messages are data, never markup. A
  Content-Security-Policy allows scripts from the application only (plotly.js is served by
  the application from the installed plotly package; nothing comes from another host).
"""
from __future__ import annotations

import hashlib
import hmac
import re
import secrets
import time
from urllib.parse import urlencode

from flask import (Blueprint, Response, abort, current_app, flash, g, jsonify, redirect,
                   render_template, request, send_file, session, url_for)
from werkzeug.exceptions import HTTPException, RequestEntityTooLarge

from edgefit.errors import EdgefitError
from edgefit.jobs import READER_OPTIONS, check_options, reader_options
from edgefit.spectrum import QUANTITIES, X_UNITS

from . import api, service

bp = Blueprint("pages", __name__)

#: Endpoints open without signing in.
PUBLIC = {"pages.login", "pages.favicon"}
#: Endpoints answering JSON (a missing session gets 401 JSON, not a redirect).
JSON_ENDPOINTS = {"pages.job_status", "pages.inspect"}
#: Endpoints that store something: refused (403) to a read-only token's session.
WRITE_ENDPOINTS = {"pages.upload_post", "pages.refit"}
CSRF_FIELD = "csrf_token"
CSRF_HEADER = "X-CSRF-Token"
#: Samples per page of the samples list.
PAGE_SIZE = 50
#: Most samples of one comparison.
MAX_COMPARE = 500
#: The transition models a fit can be asked for, in words.
MODELS = (("auto", "automatic"), ("direct", "direct allowed"), ("indirect", "indirect allowed"),
          ("both", "direct + indirect"))
X_UNIT_WORDS = {"nm": "nm (wavelength)", "um": "µm (wavelength)", "ev": "eV (photon energy)",
                "cm-1": "cm⁻¹ (wavenumber)"}
#: Form fields of analysis options (the upload adds the reader's quantity and x unit).
ANALYSIS_FIELDS = ("thickness", "substrate_index", "model", "window", "urbach_window", "range")

_CSP_PAGES = ("default-src 'self'; script-src 'self'; style-src 'self' 'unsafe-inline'; "
              "img-src 'self' data: blob:; font-src 'self'; connect-src 'self'; "
              "frame-src 'self'; frame-ancestors 'self'; form-action 'self'; "
              "base-uri 'none'; object-src 'none'")
# The report is one self-contained page with its own inline script and style.
_CSP_REPORT = _CSP_PAGES.replace("script-src 'self'", "script-src 'self' 'unsafe-inline'")


class FormError(Exception):
    """A form value the user can fix: the message is shown above the form."""


# ---------------------------------------------------------------------------- set-up

@bp.record_once
def _configure(state):
    cfg = state.app.config
    cfg["SESSION_COOKIE_HTTPONLY"] = True
    if not cfg.get("SESSION_COOKIE_SAMESITE"):
        cfg["SESSION_COOKIE_SAMESITE"] = "Lax"
    if cfg.get("SESSION_COOKIE_NAME", "session") == "session":
        cfg["SESSION_COOKIE_NAME"] = "edgefit_session"
    cfg.setdefault("PAGES_SESSION_HOURS", 12)
    env = state.app.jinja_env
    env.globals.update(csrf_token=csrf_token, csrf_field=CSRF_FIELD)
    from edgefit.report import flag_title
    env.filters.update(pm=_pm, when=_when, window=_window_text, gap_kind=_gap_kind,
                       flag_title=flag_title)


def csrf_token() -> str:
    """This session's CSRF token (made on first use)."""
    token = session.get("csrf")
    if not token:
        token = session["csrf"] = secrets.token_urlsafe(32)
    return token


def _token_hash(token: str) -> str:
    return hashlib.sha256(token.encode("utf-8")).hexdigest()


def _signed_in() -> bool:
    """Whether the session belongs to a token that is still active and not expired (its
    record, ``id``, ``name``, ``kind``, is then in ``g.token``)."""
    presented = session.get("token_hash")
    since = session.get("since")
    if not isinstance(presented, str) or not isinstance(since, (int, float)):
        return False
    if time.time() - since > current_app.config["PAGES_SESSION_HOURS"] * 3600:
        return False
    g.token = service().archive.token_of_hash(presented)
    return g.token is not None


def _token_id():
    """The id of the signed-in token (recorded as ``created_by``)."""
    return (g.get("token") or {}).get("id")


def _safe_next(target: str | None) -> str | None:
    """A local path to go on to after signing in (never another host)."""
    if (not target or not target.startswith("/") or target.startswith("//")
            or "\\" in target or any(ord(c) < 32 for c in target)):
        return None
    return target


@bp.before_request
def _guard():
    if request.endpoint not in PUBLIC and not _signed_in():
        if session.get("token_hash"):
            session.clear()
            flash("Your session has ended (signed out, expired or the token was revoked). "
                  "Sign in again.", "info")
        if request.endpoint in JSON_ENDPOINTS:
            return jsonify(error={"code": "unauthorized", "message": "sign in first"}), 401
        nxt = request.full_path.rstrip("?") if request.method == "GET" else None
        return redirect(url_for("pages.login", next=nxt) if nxt and nxt != "/"
                        else url_for("pages.login"))
    if request.endpoint in WRITE_ENDPOINTS and (g.get("token") or {}).get("kind") == "read-only":
        abort(403, description="You are signed in with a read-only token: it can look at "
              "samples and fits but not store or fit anything. Sign in with a normal token.")
    if request.method == "POST":
        sent = request.form.get(CSRF_FIELD) or request.headers.get(CSRF_HEADER) or ""
        expected = session.get("csrf") or ""
        if not expected or not hmac.compare_digest(sent.encode(), expected.encode()):
            abort(400, description="The form could not be accepted: its security token is "
                  "missing or out of date (the page was open too long, you signed in "
                  "elsewhere, or it was sent from another site). Go back, reload the page "
                  "and send it again.")
    return None


@bp.after_request
def _headers(resp: Response):
    resp.headers.setdefault("Content-Security-Policy",
                            _CSP_REPORT if request.endpoint == "pages.report" else _CSP_PAGES)
    resp.headers.setdefault("X-Content-Type-Options", "nosniff")
    resp.headers.setdefault("Referrer-Policy", "same-origin")
    resp.headers.setdefault("X-Frame-Options", "SAMEORIGIN")
    if resp.mimetype == "text/html" or resp.mimetype == "application/json":
        resp.headers.setdefault("Cache-Control", "no-store")
    return resp


@bp.errorhandler(HTTPException)
def _error_page(exc: HTTPException):
    if request.endpoint in JSON_ENDPOINTS:
        return jsonify(error={"code": exc.name.lower().replace(" ", "-"),
                              "message": _limit_text(exc)}), exc.code
    return render_template("error.html", code=exc.code, title=exc.name,
                           message=_limit_text(exc)), exc.code


def _limit_text(exc: HTTPException) -> str:
    if isinstance(exc, RequestEntityTooLarge):
        limit = current_app.config.get("MAX_CONTENT_LENGTH")
        return (f"The upload is larger than the limit of {api._mb(limit)}. Send fewer or "
                "smaller files at a time." if limit else "The upload is too large.")
    if exc.code == 404:
        return exc.description if exc.description and "URL" not in exc.description \
            else "There is nothing at this address."
    return exc.description or exc.name


# ---------------------------------------------------------------------------- formatting

def _finite(v) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and v == v \
        and abs(v) != float("inf")


def _pm(value, err=None, unit=""):
    from edgefit.report import fmt_pm
    return fmt_pm(value, err, unit)


def _when(iso) -> str:
    """'2025-03-04 10:22 UTC' from an ISO time stamp of the archive."""
    m = re.match(r"(\d{4}-\d\d-\d\d)T(\d\d:\d\d)", str(iso or ""))
    return f"{m.group(1)} {m.group(2)} UTC" if m else str(iso or "—")


def _window_text(w) -> str:
    if isinstance(w, (list, tuple)) and len(w) == 2 and all(_finite(v) for v in w):
        return f"{w[0]:.3f}:{w[1]:.3f}"
    return str(w) if isinstance(w, str) and w else ""


def _gap_kind(kind) -> str:
    return {"direct": "direct", "indirect": "indirect"}.get(kind, str(kind or ""))


# ---------------------------------------------------------------------------- forms

def parse_metadata(text: str) -> dict:
    """``key=value`` lines (blank lines and ``#`` comments skipped) as a metadata dict."""
    meta = {}
    for n, raw in enumerate((text or "").splitlines(), 1):
        line = raw.strip()
        if not line or line.startswith("#"):
            continue
        key, sep, value = line.partition("=")
        if not sep or not key.strip():
            raise FormError(f"Metadata line {n} ({line[:80]!r}) must read key=value, for "
                            "example: Annealing temperature (C)=350")
        meta[key.strip()] = value.strip()
    try:
        return api._check_metadata(meta)
    except api.ApiError as exc:
        raise FormError(f"Metadata: {exc.message}") from None


def _sample_name(text: str | None) -> str | None:
    text = (text or "").strip()
    if not text:
        return None
    try:
        return api._check_name(text)
    except api.ApiError as exc:
        raise FormError(f"Sample name: {exc.message}") from None


def options_from_form(form, fields, *, blank_as_none=False) -> dict:
    """The option mapping of a form (the same keys as the REST ``options``), checked by
    :func:`edgefit.jobs.check_options`. Blank fields are left out, or set to None (not set,
    overriding an upload's default) with ``blank_as_none``."""
    out = {}
    for key in fields:
        value = (form.get(key) or "").strip()
        if not value or (key == "model" and value == "auto" and not blank_as_none):
            if blank_as_none:
                out[key] = None
            continue
        if key == "substrate_index":
            try:
                out[key] = float(value.replace(",", "."))
            except ValueError:
                raise FormError(f"Substrate index must be a number such as 1.52 (soda-lime "
                                f"glass) or 1.46 (fused silica), not {value!r}") from None
        else:
            out[key] = value
    try:
        check_options(out, reader=any(k in READER_OPTIONS for k in fields))
        reader_options(out)
    except EdgefitError as exc:
        raise FormError(str(exc)) from None
    return out


def _uploaded_files() -> list:
    files = [f for f in request.files.getlist("file") if f and f.filename]
    if not files:
        raise FormError("Choose at least one spectrum file (or drop files on the box).")
    limit = current_app.config["MAX_FILES"]
    if len(files) > limit:
        raise FormError(f"{len(files)} files at once is more than the limit of {limit}; "
                        "upload them in several parts.")
    return [(api._upload_name(f.filename), f.read()) for f in files]


_OFFER_RE = re.compile(r"pass --thickness (\S+) to use it")


def stated_thickness(spectrum) -> str | None:
    """The thickness a file states in its header, as the reader offers it ('540nm'), or
    None. The reader never applies it; the upload form can, when asked."""
    return next((m.group(1) for w in spectrum.warnings if (m := _OFFER_RE.search(w))), None)


def _detection(name: str, outcome) -> dict:
    """What the reader made of one file, for the upload page."""
    if isinstance(outcome, EdgefitError):
        return {"file": name, "ok": False, "message": str(outcome), "line": outcome.line,
                "fix": outcome.fix}
    spectra = []
    for s in outcome:
        offer = stated_thickness(s)
        spectra.append({"column": s.column, "quantity": s.quantity, "x_unit": s.x_unit,
                        "y_unit": s.y_unit, "points": s.points, "sample": s.sample,
                        "warnings": list(s.warnings), "thickness_offer": offer,
                        "x_range": [float(s.x.min()), float(s.x.max())] if s.points else None})
    return {"file": name, "ok": True, "spectra": spectra}


def _form_state(form) -> dict:
    return {k: form.get(k, "") for k in ("quantity", "x_unit", "sample_name", "metadata",
                                        "file_thickness", *ANALYSIS_FIELDS)}


# ---------------------------------------------------------------------------- sign in

@bp.route("/login", methods=["GET", "POST"])
def login():
    nxt = _safe_next(request.values.get("next"))
    if request.method == "GET":
        if _signed_in():
            return redirect(nxt or url_for("pages.samples"))
        return render_template("login.html", next=nxt)
    token = (request.form.get("token") or "").strip()
    if not service().archive.check_token(token):
        resp = Response(render_template(
            "login.html", next=nxt, error="That token is not valid: it may be mistyped, "
            "revoked, or belong to another data directory. Tokens start with ef_; create one "
            "with: edgefit token create --name YOUR-NAME"), status=401)
        resp.headers["WWW-Authenticate"] = 'Bearer realm="edgefit"'
        return resp
    session.clear()                     # a fresh session: no fixation of an old one
    session["token_hash"] = _token_hash(token)
    session["since"] = time.time()
    csrf_token()
    return redirect(nxt or url_for("pages.samples"), 303)


@bp.post("/logout")
def logout():
    session.clear()
    flash("Signed out.", "info")
    return redirect(url_for("pages.login"), 303)


@bp.get("/favicon.ico")
def favicon():
    """Our icon, for pages that name none (the report opened on its own)."""
    return current_app.send_static_file("favicon.svg")


@bp.get("/")
def home():
    return redirect(url_for("pages.samples"))


# ---------------------------------------------------------------------------- upload

def _upload_page(status=200, **extra):
    ctx = {"quantities": QUANTITIES, "x_units": [(u, X_UNIT_WORDS.get(u, u)) for u in X_UNITS],
           "models": MODELS, "form": {}, "max_files": current_app.config["MAX_FILES"],
           "max_mb": api._mb(current_app.config["MAX_CONTENT_LENGTH"] or 0)}
    ctx.update(extra)
    return render_template("upload.html", **ctx), status


@bp.get("/upload")
def upload():
    return _upload_page()


@bp.post("/upload/inspect")
def inspect():
    """What the reader detects in each file (quantity, units, points, warnings, or the
    reason it cannot be read), before anything is stored or fitted."""
    try:
        files = _uploaded_files()
        options = options_from_form(request.form, ("quantity", "x_unit"))
    except FormError as exc:
        return jsonify(error={"code": "bad-request", "message": str(exc)}), 400
    reader = reader_options(options)
    return jsonify(files=[_detection(name, api._read(data, name, reader))
                          for name, data in files])


@bp.post("/upload")
def upload_post():
    form = request.form
    try:
        files = _uploaded_files()
        options = options_from_form(form, ("quantity", "x_unit", *ANALYSIS_FIELDS))
        name = _sample_name(form.get("sample_name"))
        meta = parse_metadata(form.get("metadata", ""))
    except FormError as exc:
        return _upload_page(400, error=str(exc), form=_form_state(form))
    reader = reader_options(options)
    analysis = api._analysis_part(options)
    read = [(n, data, api._read(data, n, reader)) for n, data in files]
    too_large = next((o for _, _, o in read if isinstance(o, EdgefitError)
                      and o.code == "too-large"), None)
    if too_large is not None:
        return _upload_page(413, error=str(too_large), form=_form_state(form))
    failures = [{"source": n, "error": {"code": o.code, "message": str(o)}}
                for n, _, o in read if isinstance(o, EdgefitError)]
    good = [(n, data, o) for n, data, o in read if not isinstance(o, EdgefitError)]
    if not good:
        return _upload_page(422, form=_form_state(form),
                            detections=[_detection(n, o) for n, _, o in read],
                            error="No file could be read, so nothing was stored. The reader "
                                  "says why below.")
    svc = service()
    use_stated = bool(form.get("file_thickness")) and "thickness" not in options
    batch = []
    for n, data, spectra in good:
        svc.archive.raw.put(data)
        own = api._file_metadata(spectra)
        stated = stated_thickness(spectra[0]) if use_stated else None
        # a thickness the file states becomes this file's default option (the job's
        # options, which hold no thickness here, are laid over it when it is fitted)
        file_options = {**analysis, "thickness": stated} if stated else analysis
        batch.append({"sample": name or (api._sample_name_of(spectra)[:api.MAX_NAME]
                                         or "sample"),
                      "metadata": {**own, **meta},
                      "entries": api._entries(data, n, spectra, reader, file_options)})
    stored = svc.archive.db.add_batch(batch, analysis, failures, created_by=_token_id())
    svc.runner.submit(stored["job"]["id"])
    made = {s["id"] for s in stored["samples"] if not s["existing"]}
    joined = [s for s in stored["samples"] if s["existing"] and s["id"] not in made]
    if joined:
        names = ", ".join(dict.fromkeys(s["name"] for s in joined))
        flash(f"Added to existing sample(s): {names} (their metadata is kept as it was).",
              "info")
    return redirect(url_for("pages.job", job_id=stored["job"]["id"]), 303)


# ---------------------------------------------------------------------------- jobs

def _job_or_404(job_id) -> dict:
    job = service().archive.db.get_job(job_id)
    if job is None:
        abort(404, description=f"There is no job {job_id}.")
    return job


def _result_rows(results: list[dict]) -> list[dict]:
    from edgefit.report import summary_rows
    return summary_rows(results)


def job_items(job: dict) -> tuple[list[dict], list[dict]]:
    """The rows of a job: one per spectrum (its file, sample, detection, state, result
    numbers), and the files that could not be read."""
    db = service().archive.db
    fits = {}
    for fid in job["fit_ids"]:
        fit = db.get_fit(fid)
        if fit is not None:
            fits[fit["spectrum_id"]] = fit
    errors = {e["spectrum_id"]: e for e in job["errors"] if e["spectrum_id"] is not None}
    samples, items = {}, []
    for sid in dict.fromkeys(job["spectrum_ids"]):
        sp = db.get_spectrum(sid)
        if sp is None:
            continue
        if sp["sample_id"] not in samples:
            samples[sp["sample_id"]] = db.get_sample(sp["sample_id"])
        fit = fits.get(sid)
        row = _result_rows([fit["result"]])[0] if fit else None
        state = "fitted" if fit else ("failed" if sid in errors else
                                      ("waiting" if job["state"] in ("queued", "running")
                                       else "not fitted"))
        items.append({"spectrum": sp, "sample": samples[sp["sample_id"]], "fit": fit,
                      "row": row, "state": state, "error": errors.get(sid)})
    unread = [e for e in job["errors"] if e["spectrum_id"] is None]
    return items, unread


@bp.get("/jobs/<id:job_id>")
def job(job_id):
    job = _job_or_404(job_id)
    items, unread = job_items(job)
    return render_template("job.html", job=job, items=items, unread=unread,
                           final=job["state"] in ("done", "failed"))


@bp.get("/jobs/<id:job_id>/status")
def job_status(job_id):
    job = _job_or_404(job_id)
    return jsonify({k: job[k] for k in ("id", "kind", "state", "progress", "fit_ids",
                                        "errors", "reason")})


# ---------------------------------------------------------------------------- samples

def _sample_or_404(sample_id) -> dict:
    sample = service().archive.db.get_sample(sample_id)
    if sample is None:
        abort(404, description=f"There is no sample {sample_id}.")
    return sample


def _first_gap(s) -> float | None:
    gaps = ((s.get("latest_fit") or {}).get("gaps") or [])
    return next((g.get("eg_ev") for g in gaps if _finite(g.get("eg_ev"))), None)


def _eu(s) -> float | None:
    v = (s.get("latest_fit") or {}).get("eu_mev")
    return v if _finite(v) else None


SORTS = {"date": lambda s: s["created"], "name": lambda s: s["name"].casefold(),
         "gap": _first_gap, "eu": _eu}
SORT_WORDS = {"date": "date", "name": "name", "gap": "band gap", "eu": "Urbach energy"}


def _meta_text(v) -> str:
    """A metadata value as the text a researcher would type (350.0 → '350', True → 'true')."""
    if isinstance(v, bool) or v is None:
        return {True: "true", False: "false", None: ""}[v]
    return (f"{v:g}" if isinstance(v, float) else str(v)).casefold()


def _meta_match(sample: dict, text: str) -> bool:
    """``key=value`` (exact, as text) or free text found in a metadata key or value."""
    meta = sample.get("metadata") or {}
    key, sep, value = text.partition("=")
    if sep and key.strip():
        k = key.strip()
        return k in meta and _meta_text(meta[k]) == value.strip().casefold()
    needle = text.casefold()
    return any(needle in str(k).casefold() or needle in str(v).casefold()
               for k, v in meta.items())


def find_samples(q: str = "", meta: str = "", sort: str = "date", desc: bool = True):
    """Samples whose name contains ``q`` and whose metadata matches ``meta``, sorted;
    samples without the sort value (no fit yet) come last either way."""
    found, _ = service().archive.db.find_samples(name=q or None, limit=10 ** 9)
    if meta:
        found = [s for s in found if _meta_match(s, meta)]
    key = SORTS[sort]
    have = [s for s in found if key(s) is not None]
    have.sort(key=key, reverse=desc)
    return have + [s for s in found if key(s) is None]


def _int_param(name, default, lo=0):
    try:
        return max(lo, int(request.args.get(name, default)))
    except ValueError:
        return default


@bp.get("/samples")
def samples():
    q = (request.args.get("q") or "").strip()
    meta = (request.args.get("meta") or "").strip()
    sort = request.args.get("sort", "date")
    if sort not in SORTS:
        sort = "date"
    order = request.args.get("order", "desc" if sort in ("date",) else "asc")
    order = order if order in ("asc", "desc") else "desc"
    found = find_samples(q, meta, sort, order == "desc")
    page = _int_param("page", 1, 1)
    pages = max(1, -(-len(found) // PAGE_SIZE))
    page = min(page, pages)
    shown = found[(page - 1) * PAGE_SIZE: page * PAGE_SIZE]

    def link(**kw):
        args = {"q": q, "meta": meta, "sort": sort, "order": order, "page": page, **kw}
        return url_for("pages.samples") + "?" + urlencode({k: v for k, v in args.items()
                                                           if v not in ("", None)})

    def sort_link(col):
        flip = "asc" if (sort == col and order == "desc") else (
            "desc" if sort == col else ("desc" if col == "date" else "asc"))
        return link(sort=col, order=flip, page=1)

    return render_template("samples.html", samples=shown, total=len(found), q=q, meta=meta,
                           sort=sort, order=order, page=page, pages=pages, link=link,
                           sort_link=sort_link, sort_words=SORT_WORDS,
                           first_gap=_first_gap)


def _fit_options_text(options: dict) -> list[str]:
    """The options of a fit that were asked for, as short 'key value' texts."""
    out = []
    for k, v in (options or {}).items():
        if v is None or v == "" or k in ("bootstrap", "seed"):
            continue
        if isinstance(v, list):
            v = _window_text(v)
        out.append(f"{k.replace('_', ' ')} {v}")
    return out


def _refit_defaults(fit: dict | None) -> dict:
    """Re-fit form values from a fit: what was asked for, the automatic windows as hints."""
    if not fit:
        return {}
    asked = fit.get("options") or {}
    res = fit.get("result") or {}
    used = res.get("options") or {}
    thickness = asked.get("thickness") or (
        f"{asked['thickness_nm']:g}nm" if _finite(asked.get("thickness_nm")) else "")
    gaps = res.get("gaps") or []
    urbach = res.get("urbach") or {}
    return {
        "thickness": thickness,
        "substrate_index": asked.get("substrate_index") or "",
        "model": asked.get("model") or used.get("model") or "auto",
        "window": _window_text(asked.get("window") or asked.get("window_ev")),
        "urbach_window": _window_text(asked.get("urbach_window")
                                      or asked.get("urbach_window_ev")),
        "range": _window_text(asked.get("range") or asked.get("range_ev")),
        "window_hint": _window_text(gaps[0].get("window_ev")) if gaps else "",
        "reflectance": asked.get("reflectance_spectrum_id"),
        "substrate": asked.get("substrate_spectrum_id") or "",
        "urbach_hint": _window_text(urbach.get("window_ev")),
    }


@bp.get("/samples/<id:sample_id>")
def sample(sample_id):
    db = service().archive.db
    smp = _sample_or_404(sample_id)
    spectra = db.spectra_of(sample_id)
    by_id = {sp["id"]: sp for sp in spectra}
    history = sorted((f for sp in spectra for f in db.fits_of_spectrum(sp["id"])),
                     key=lambda f: f["id"], reverse=True)
    shown_id = _int_param("fit", history[0]["id"] if history else 0)
    shown = db.get_fit(shown_id) if any(f["id"] == shown_id for f in history) else None
    if shown is None and history:
        shown = db.get_fit(history[0]["id"])
    job_id = _int_param("job", 0)
    pending = db.get_job(job_id) if job_id else None
    if pending and not set(pending["spectrum_ids"]) & set(by_id):
        pending = None
    return render_template(
        "sample.html", sample=smp, spectra=spectra, by_id=by_id, history=history,
        shown=shown, row=_result_rows([shown["result"]])[0] if shown else None,
        pending=pending, models=MODELS, defaults=_refit_defaults(shown),
        reflectances=[sp for sp in spectra if sp["quantity"] == "reflectance"],
        options_text=_fit_options_text,
        refit_spectrum=shown["spectrum_id"] if shown else next(
            (sp["id"] for sp in spectra if sp["quantity"] != "reflectance"),
            spectra[0]["id"] if spectra else None))


def _companions(form, sample_id) -> dict:
    """The reflectance (a spectrum of this sample) and bare-substrate transmittance (any
    spectrum) to fit with, from the re-fit form."""
    db = service().archive.db
    out = {}
    for key, field, words in (("reflectance_spectrum_id", "reflectance", "reflectance"),
                              ("substrate_spectrum_id", "substrate", "bare substrate")):
        raw = (form.get(field) or "").strip().lstrip("#")
        if not raw:
            continue
        try:
            other = db.get_spectrum(int(raw)) if len(raw) < 17 else None
        except ValueError:
            other = None
        if other is None:
            raise FormError(f"there is no spectrum {raw!r} to use as the {words} (give the "
                            "number # shown in a sample's spectra table)")
        if key == "reflectance_spectrum_id" and (other["sample_id"] != sample_id
                                                 or other["quantity"] != "reflectance"):
            raise FormError(f"spectrum {raw} is not a reflectance of this sample")
        if key == "substrate_spectrum_id" and other["quantity"] != "transmittance":
            raise FormError(f"spectrum {raw} is not a transmittance, so it cannot be the bare "
                            "substrate's")
        out[key] = other["id"]
    return out


@bp.post("/samples/<id:sample_id>/refit")
def refit(sample_id):
    svc = service()
    _sample_or_404(sample_id)
    try:
        spectrum_id = int(request.form.get("spectrum_id", ""))
    except ValueError:
        abort(400, description="Choose which spectrum of the sample to fit.")
    spectrum = svc.archive.db.get_spectrum(spectrum_id)
    if spectrum is None or spectrum["sample_id"] != sample_id:
        abort(400, description=f"Spectrum {spectrum_id} is not a spectrum of this sample.")
    try:
        options = options_from_form(request.form, ANALYSIS_FIELDS, blank_as_none=True)
        options.update(_companions(request.form, sample_id))
    except FormError as exc:
        flash(f"The re-fit was not started: {exc}", "error")
        return redirect(url_for("pages.sample", sample_id=sample_id) + "#refit", 303)
    job = svc.archive.db.add_job("fit", [spectrum_id], options, created_by=_token_id())
    svc.runner.submit(job["id"])
    return redirect(url_for("pages.sample", sample_id=sample_id, job=job["id"]), 303)


@bp.get("/fits/<id:fit_id>/report")
def report(fit_id):
    fit = service().archive.db.get_fit(fit_id, data=True)
    if fit is None:
        abort(404, description=f"There is no fit {fit_id}.")
    return Response(api._report_html(fit, url_for("plotly_js")), mimetype="text/html")


@bp.get("/spectra/<id:spectrum_id>/raw")
def raw_file(spectrum_id):
    """The uploaded file, byte for byte, as a download (never shown as a page)."""
    svc = service()
    sp = svc.archive.db.get_spectrum(spectrum_id)
    if sp is None or not svc.archive.raw.exists(sp["sha256"]):
        abort(404, description=f"There is no stored file for spectrum {spectrum_id}.")
    return send_file(svc.archive.raw.path(sp["sha256"]), mimetype="application/octet-stream",
                     as_attachment=True, download_name=sp["file_name"] or "spectrum")


@bp.get("/samples/<id:sample_id>/export")
def export(sample_id):
    """The sample's zip (raw files, fit JSON, reports): the same as the REST export."""
    _sample_or_404(sample_id)
    return api.export_sample(sample_id)


# ---------------------------------------------------------------------------- compare

def comparison(sample_ids: list[int], job_id: int | None):
    """The results to compare: the latest fit of each spectrum of the chosen samples, or the
    fits of a job. Returns ``(results, links, missing)``: result dicts named by their sample
    and carrying the sample's metadata, the sample of each, and the samples without a fit."""
    db = service().archive.db
    picked = []                      # (sample, fit id)
    missing = []
    if job_id:
        job = _job_or_404(job_id)
        latest = {}                  # one row per spectrum: the job's newest fit of it
        for fid in job["fit_ids"]:           # in the order of the job's items
            fit = db.get_fit(fid)
            if fit is not None and fid > latest.get(fit["spectrum_id"], {"id": 0})["id"]:
                latest[fit["spectrum_id"]] = fit
        picked += [(db.get_sample(f["sample_id"]), f) for f in latest.values()]
    for sid in dict.fromkeys(sample_ids):
        smp = db.get_sample(sid)
        if smp is None:
            continue
        spectra = db.spectra_of(sid)
        found = False
        for sp in spectra:
            history = db.fits_of_spectrum(sp["id"])
            if history:
                picked.append((smp, db.get_fit(history[0]["id"])))
                found = True
        if not found:
            missing.append(smp)
    count = {}
    for smp, _ in picked:
        count[smp["id"]] = count.get(smp["id"], 0) + 1
    results, links = [], []
    for smp, fit in picked:
        name = smp["name"]
        column = fit["result"].get("column")
        if count[smp["id"]] > 1 and column:
            name = f"{name} / {column}"
        results.append({**fit["result"], "sample": name, "metadata": smp["metadata"]})
        links.append({"sample_id": smp["id"], "fit_id": fit["id"]})
    return results, links, missing


def _compare_args():
    ids = []
    for v in request.args.getlist("id"):
        try:
            ids.append(int(v))
        except ValueError:
            abort(400, description=f"Sample ids are whole numbers, not {v!r}.")
    job_id = _int_param("job", 0)
    if len(ids) > MAX_COMPARE:
        abort(413, description=f"At most {MAX_COMPARE} samples can be compared at once.")
    return ids, job_id or None


@bp.get("/compare")
def compare():
    from edgefit.report import numeric_metadata, trend_figure
    ids, job_id = _compare_args()
    if not ids and not job_id:
        found = find_samples(sort="name", desc=False)
        return render_template("compare.html", picker=found, first_gap=_first_gap,
                               rows=None)
    results, links, missing = comparison(ids, job_id)
    rows = _result_rows(results)
    keys = numeric_metadata(rows)
    key = request.args.get("key")
    if key not in keys:
        # a series value rather than the film's thickness, when there is one
        key = next((k for k in keys if "thick" not in k.lower()), keys[0] if keys else None)
    figure = trend_figure(rows, key) if key else None
    csv_query = urlencode([("id", i) for i in ids] + ([("job", job_id)] if job_id else []))
    return render_template("compare.html", picker=None, rows=list(zip(rows, links)),
                           missing=missing, keys=keys, key=key, figure=figure, ids=ids,
                           job_id=job_id, csv_href=url_for("pages.compare_csv") + "?"
                           + csv_query)


@bp.get("/compare.csv")
def compare_csv():
    from edgefit.report import summary_csv
    ids, job_id = _compare_args()
    if not ids and not job_id:
        abort(400, description="Choose samples (id=…) or a job (job=…) to compare.")
    results, _, _ = comparison(ids, job_id)
    return Response(summary_csv(_result_rows(results)), mimetype="text/csv",
                    headers={"Content-Disposition":
                             'attachment; filename="edgefit-comparison.csv"'})
