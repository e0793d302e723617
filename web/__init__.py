"""The edgefit web service (installed as the import package ``edgefit_web``).

``create_app(test_config=None)`` builds the Flask application: the archive in the data
directory, the job runner, the ``/api/v1`` blueprint (:mod:`edgefit_web.api`) and JSON errors
under ``/api/``. The web layer only translates HTTP into calls of the edgefit library; pages
(templates, static files, their own blueprint) can be registered beside the API in
:func:`create_app` without touching it.

Configuration keys (``test_config`` or ``app.config``):

``DATA_DIR``
    The data directory (default: ``$EDGEFIT_DATA_DIR`` or the per-user data directory).
``MAX_CONTENT_LENGTH``
    Largest request body in bytes (default 20 MB): larger uploads get 413.
``MAX_POINTS``
    Most data rows per spectrum file (passed to the reader): more get 413.
``MAX_FILES``
    Most files per upload or batch, and spectra per fit job (default 200): more get 413.
``JOB_EXECUTOR``
    ``"process"`` (default), ``"thread"``, ``"inline"`` or an executor object (``submit``).
``JOB_WORKERS``
    Workers of the pool (default: the number of CPUs).
``MAX_PARSES``
    Most uploads parsed at the same time (default 2); further requests wait for a slot, up to
    ``PARSE_WAIT_S`` seconds (default 120), then get 503. With the reader's peak memory of about
    10x the file, this bounds the memory of parsing to ``MAX_PARSES x 10 x MAX_CONTENT_LENGTH``.
``RESUME_JOBS``
    Queue again at start the jobs a previous process left unfinished (default True).
``SECRET_KEY``
    For signed sessions; by default generated once and kept in ``DATA_DIR/secret_key``.
"""
from __future__ import annotations

import os
import threading

from flask import Flask, request
from werkzeug.exceptions import HTTPException

from edgefit.archive import Archive, default_data_dir
from edgefit.io import MAX_POINTS
from edgefit.jobs import JobRunner

DEFAULTS = {
    "MAX_CONTENT_LENGTH": 20 * 1024 * 1024,
    "MAX_POINTS": MAX_POINTS,
    "MAX_FILES": 200,
    "JOB_EXECUTOR": "process",
    "JOB_WORKERS": None,
    "RESUME_JOBS": True,
    "MAX_PARSES": 2,
    "PARSE_WAIT_S": 120.0,
}


class Service:
    """What the application holds: the archive, the job runner, the limits."""

    def __init__(self, app: Flask):
        self.archive = Archive(app.config["DATA_DIR"])
        self.runner = JobRunner(self.archive, app.config["JOB_EXECUTOR"],
                                max_workers=app.config["JOB_WORKERS"],
                                max_points=app.config["MAX_POINTS"])
        self.parse_slots = threading.BoundedSemaphore(max(1, int(app.config["MAX_PARSES"])))
        self.resumed: list[int] = []
        self._closed = False

    def close(self, timeout: float = 30.0) -> None:
        """Stop the job runner (running items finish; the rest resume at the next start)."""
        if not self._closed:
            self._closed = True
            self.runner.shutdown(timeout)
            self.archive.close()


def service(app: Flask | None = None) -> Service:
    from flask import current_app
    return (app or current_app).extensions["edgefit"]


def create_app(test_config: dict | None = None) -> Flask:
    """The Flask application. ``test_config`` overrides the configuration (see module doc)."""
    app = Flask(__name__)
    app.config.from_mapping(DEFAULTS)
    app.config["DATA_DIR"] = os.environ.get("EDGEFIT_DATA_DIR") or str(default_data_dir())
    if test_config:
        app.config.update(test_config)
    app.json.sort_keys = False

    svc = Service(app)
    app.extensions["edgefit"] = svc
    if not app.config.get("SECRET_KEY"):
        app.config["SECRET_KEY"] = svc.archive.secret_key()

    from . import api
    app.url_map.converters["id"] = api.IdConverter
    app.register_blueprint(api.bp, url_prefix=api.PREFIX)
    from . import pages
    app.register_blueprint(pages.bp)

    @app.errorhandler(HTTPException)
    def _http_error(exc: HTTPException):
        if request.path.startswith("/api/"):
            return api.http_error(exc)
        return exc

    @app.get("/assets/plotly.min.js")
    def plotly_js():
        """plotly.js from the installed plotly package (reports and pages use it; no CDN)."""
        from .assets import plotly_response
        return plotly_response()

    if app.config["RESUME_JOBS"]:
        svc.resumed = svc.runner.resume()
    return app
