"""Fit jobs of the archive, run over a concurrent.futures-style executor.

A job is a list of items (one spectrum each) stored in the archive (:mod:`edgefit.archive`).
:class:`JobRunner` feeds the pending items to an executor, a few at a time, and writes each
outcome back to the archive as it arrives: a new fit, or the item's error (a failing spectrum
fails its item, never the job). Because a job's inputs and progress live in the archive,
:meth:`JobRunner.resume` picks up the jobs a previous process left "queued" or "running".

The executor is pluggable: anything with ``submit(fn, *args) -> Future`` works (a
``ProcessPoolExecutor`` by default, a ``ThreadPoolExecutor`` in tests, a cluster client's
executor later). The work itself is :func:`fit_task`, a module-level function of plain,
picklable data: it parses the file's bytes and runs :func:`edgefit.analysis.analyse`, the same
pipeline as every other entry point.
"""
from __future__ import annotations

import collections
import concurrent.futures as cf
import logging
import multiprocessing
import os
import threading
import time
import traceback

from .analysis import READER_OPTIONS
from .errors import EdgefitError

log = logging.getLogger(__name__)

#: Options that name other spectra of the archive rather than analysis settings: the
#: reflectance measured on the same spot, and the bare substrate's transmittance.
COMPANION_OPTIONS = ("reflectance_spectrum_id", "substrate_spectrum_id")
#: Options of the reader (fixed when a file is uploaded: upload it again to read it otherwise)
#: are those of the library: edgefit.analysis.READER_OPTIONS.


#: The JSON types each option accepts in the REST API (its OpenAPI document is built from this
#: table); ``null`` always means "not set". Values are checked further by
#: :func:`edgefit.analysis.options_from_mapping`.
OPTION_TYPES = {
    "quantity": ("string",), "x_unit": ("string",), "y_unit": ("string",),
    "column": ("string", "integer"),
    "thickness": ("string",), "thickness_nm": ("number",), "substrate_index": ("number",),
    "model": ("string",), "tr_method": ("string",), "fringes": ("string",),
    "window": ("string", "array"), "window_ev": ("string", "array"),
    "urbach_window": ("string", "array"), "urbach_window_ev": ("string", "array"),
    "range": ("string", "array"), "range_ev": ("string", "array"),
    "bootstrap": ("integer",), "seed": ("integer",),
    "saturation_t": ("number",), "noise_floor_alpha_d": ("number",),
    "reflectance_spectrum_id": ("integer",), "substrate_spectrum_id": ("integer",),
}


def _json_type_ok(value, types) -> bool:
    if isinstance(value, bool):
        return False
    return (("string" in types and isinstance(value, str))
            or ("integer" in types and isinstance(value, int))
            or ("number" in types and isinstance(value, (int, float)))
            or ("array" in types and isinstance(value, list) and len(value) == 2
                and all(isinstance(v, (int, float)) and not isinstance(v, bool) for v in value)))


def check_options(options: dict, *, reader: bool = True) -> dict:
    """Check a mapping of options from the REST API or a job payload.

    Each value must have a JSON type of :data:`OPTION_TYPES` (or be null: not set; an empty
    text is refused, as the OpenAPI document's enums and patterns say). Returns the
    analysis keyword arguments (see :func:`edgefit.analysis.options_from_mapping`), with the
    reader's ``y_unit``; companion spectrum ids are left out. ``reader=False`` refuses the
    reader options (they apply when a file is read, not when a spectrum is fitted).

    Raises
    ------
    EdgefitError
        Code ``bad-option``.
    """
    from .analysis import options_from_mapping

    if not isinstance(options, dict):
        raise EdgefitError("options must be a JSON object", fix='e.g. {"thickness": "400nm"}',
                           code="bad-option")
    unknown = sorted(set(options) - set(OPTION_TYPES))
    if unknown:
        raise EdgefitError(f"unknown option(s) {', '.join(unknown)}",
                           fix="use " + ", ".join(sorted(OPTION_TYPES)), code="bad-option")
    plain = {}
    for key, value in options.items():
        if value is None:
            continue
        if isinstance(value, str) and not value.strip():
            raise EdgefitError(f"option {key} is an empty text", fix=f"leave {key} out, or give "
                               "it as null, to use its default", code="bad-option")
        types = OPTION_TYPES[key]
        if not _json_type_ok(value, types):
            wanted = " or ".join("two numbers" if t == "array" else f"a{'n' * (t[0] in 'ai')} "
                                 f"{t}" for t in types)
            raise EdgefitError(f"option {key} must be {wanted}, got {value!r}",
                               code="bad-option")
        if not reader and key in READER_OPTIONS:
            raise EdgefitError(f"the reader option {key} applies when a file is uploaded, not "
                               "when a spectrum is fitted",
                               fix=f"upload the file again with options {{\"{key}\": ...}}",
                               code="bad-option")
        if key not in COMPANION_OPTIONS:
            plain[key] = value
    y_unit = plain.pop("y_unit", None)
    out = options_from_mapping(plain)
    if y_unit not in (None, ""):
        out["y_unit"] = y_unit
    return out


def reader_options(options: dict) -> dict:
    """The reader's options (quantity, x_unit, column, y_unit) from an option mapping, in
    their canonical spelling, so that the same reading is recognised as the same."""
    from .io import normalise_quantity, normalise_x_unit, normalise_y_unit

    norm = {"quantity": normalise_quantity, "x_unit": normalise_x_unit,
            "y_unit": normalise_y_unit, "column": lambda v: v if isinstance(v, int) else str(v)}
    return {k: norm[k](options[k]) for k in READER_OPTIONS
            if options.get(k) not in (None, "")}


# ---------------------------------------------------------------------------- the work

def _read_one(data: bytes, name: str, reader: dict, column: str | None, max_points: int,
              *, paired: bool = False):
    """The spectrum of ``column`` in the file; with ``paired``, (spectrum, the reflectance
    column of the same file or None) as :func:`edgefit.analysis.pair_spectra` pairs them."""
    from .analysis import pair_spectra
    from .io import parse_spectra

    reader = dict(reader or {})
    if column is None:
        column = reader.get("column")
    # read every column (a reflectance column beside the transmittance pairs with it), then
    # pick the spectrum by its column
    if not isinstance(reader.get("column"), int):   # a column number is the reader's to resolve
        reader.pop("column", None)
    spectra = parse_spectra(data, name, max_points=max_points,
                            **{k: v for k, v in reader.items() if v is not None})
    pairs = pair_spectra(spectra) if paired else [(s, None) for s in spectra]
    if column is not None:
        for s, r in pairs:
            if s.column == column:
                return (s, r) if paired else s
        for s in spectra:             # e.g. an R column that serves the T of its file
            if s.column == column:
                return (s, None) if paired else s
    if len(spectra) == 1:
        return pairs[0] if paired else spectra[0]
    raise EdgefitError(f"the file holds {len(spectra)} spectra and none is the column "
                       f"'{column}'", file=name, fix="upload the file again", code="bad-file")


def fit_task(task: dict) -> dict:
    """Parse one archived file and analyse one of its spectra; runs in a worker.

    Parameters
    ----------
    task : dict
        ``data`` (bytes), ``name`` (file name), ``reader`` (quantity, x_unit, column),
        ``column`` (the spectrum's column label), ``max_points``, ``options`` (the option
        mapping, as accepted by :func:`check_options`), and optionally ``reflectance`` and
        ``substrate``: dicts with the same ``data``, ``name``, ``reader``, ``column``.

    Returns
    -------
    dict
        ``{"result": EdgeResult.to_dict(arrays=True)}`` or ``{"error": {"code", "message"}}``.
        Every failure is returned, never raised, so one spectrum never stops a batch.
    """
    from .analysis import analyse

    try:
        kwargs = check_options(task.get("options") or {}, reader=True)
        for k in READER_OPTIONS:
            kwargs.pop(k, None)
        spectrum, same_file_r = _read_one(task["data"], task["name"], task.get("reader") or {},
                                          task.get("column"), task.get("max_points", 200_000),
                                          paired=True)
        extra = {"reflectance": same_file_r} if same_file_r is not None else {}
        for role in ("reflectance", "substrate"):
            other = task.get(role)
            if other:
                extra[role] = _read_one(other["data"], other["name"], other.get("reader") or {},
                                        other.get("column"), task.get("max_points", 200_000))
        result = analyse(spectrum, **extra, **kwargs)
        return {"result": result.to_dict(arrays=True)}
    except EdgefitError as exc:
        return {"error": {"code": exc.code, "message": str(exc)}}
    except Exception as exc:  # noqa: BLE001 - a bug on one spectrum must not stop the others
        log.error("fit failed: %s", traceback.format_exc())
        return {"error": {"code": "internal", "message": f"the analysis failed unexpectedly "
                          f"({type(exc).__name__}: {exc}); please report this with the file"}}


# ---------------------------------------------------------------------------- executors

class InlineExecutor:
    """Runs each task at once in the calling thread (debugging, simple scripts)."""

    def submit(self, fn, /, *args, **kwargs):
        future = cf.Future()
        try:
            future.set_result(fn(*args, **kwargs))
        except BaseException as exc:  # noqa: BLE001
            future.set_exception(exc)
        return future

    def shutdown(self, wait=True, *, cancel_futures=False):
        pass


def _process_context():
    """Workers are forked from a clean single-threaded server process that has imported the
    analysis once (``forkserver``; ``spawn`` where there is none): never forked from a process
    with server threads, and quick to start after the first."""
    if "forkserver" in multiprocessing.get_all_start_methods():
        ctx = multiprocessing.get_context("forkserver")
        ctx.set_forkserver_preload(["edgefit.jobs", "edgefit.analysis", "edgefit.io"])
        return ctx
    return multiprocessing.get_context("spawn")


def _ready() -> bool:
    return True


def _watch_parent(parent_pid: int, every_s: float = 1.0) -> None:
    """Initializer of pool workers: leave when the process that made the pool is gone.

    A worker waits on a queue it also holds the writing end of, so it would never notice a
    server killed with SIGKILL and would stay behind forever (with the forkserver it keeps
    alive). POSIX only (``os.kill(pid, 0)`` only probes there)."""
    if os.name != "posix":
        return

    def watch():
        while True:
            time.sleep(every_s)
            try:
                os.kill(parent_pid, 0)
            except ProcessLookupError:
                os._exit(0)
            except PermissionError:     # the pid was reused by someone else's process
                os._exit(0)

    threading.Thread(target=watch, name="edgefit-watch-parent", daemon=True).start()


def make_executor(kind="process", max_workers: int | None = None):
    """An executor for :class:`JobRunner`: ``"process"`` (a process pool, see
    :func:`_process_context`), ``"thread"``, ``"inline"``, or an object with ``submit``
    used as it is."""
    if not isinstance(kind, str):
        if not hasattr(kind, "submit"):
            raise TypeError("an executor needs a submit(fn, *args) method returning a Future")
        return kind
    if kind == "process":
        return cf.ProcessPoolExecutor(max_workers=max_workers, mp_context=_process_context(),
                                      initializer=_watch_parent, initargs=(os.getpid(),))
    if kind == "thread":
        return cf.ThreadPoolExecutor(max_workers=max_workers, thread_name_prefix="edgefit-fit")
    if kind == "inline":
        return InlineExecutor()
    raise ValueError(f"unknown executor kind {kind!r}: process, thread or inline")


# ---------------------------------------------------------------------------- the runner

class JobRunner:
    """Runs the archive's fit jobs over an executor and records every outcome.

    Parameters
    ----------
    archive : edgefit.archive.Archive
    executor : str or executor, optional
        ``"process"`` (default), ``"thread"``, ``"inline"`` or an object with ``submit``. An
        executor passed in is not shut down by :meth:`shutdown`; one made here is.
    max_workers : int, optional
        Workers of an executor made here.
    max_points : int
        Limit of data rows per file, passed to the reader.
    in_flight : int, optional
        Items submitted to the executor at a time (default twice the workers, at least 2):
        the rest wait in the runner's queue, oldest job first, so a job is "queued" until
        its first item is handed to a worker.
    """

    def __init__(self, archive, executor="process", *, max_workers: int | None = None,
                 max_points: int = 200_000, in_flight: int | None = None):
        self.archive = archive
        self._kind = executor
        self._own = isinstance(executor, str)
        self._max_workers = max_workers
        self._executor = None if self._own else make_executor(executor)
        self.max_points = int(max_points)
        workers = max_workers or multiprocessing.cpu_count() or 1
        self.in_flight_limit = in_flight or max(2, 2 * workers)
        self._queue: collections.deque = collections.deque()
        self._queued_keys: set = set()
        self._running = 0
        self._lock = threading.Lock()
        self._idle = threading.Condition(self._lock)
        self._stopping = False
        self._local = threading.local()
        self._jobs: set = set()
        # Outcomes are written by one thread of our own, not by the executor's callback
        # thread (a process pool's manager thread should only move results).
        self._recorder = cf.ThreadPoolExecutor(max_workers=1, thread_name_prefix="edgefit-rec")

    # -- public
    def submit(self, job_id: int) -> None:
        """Queue the pending items of a stored job."""
        items = self.archive.db.pending_items(job_id)
        with self._lock:
            if self._stopping:
                return
            self._jobs.add(job_id)
            for it in items:
                key = (job_id, it["idx"])
                if key not in self._queued_keys:
                    self._queued_keys.add(key)
                    self._queue.append((job_id, it))
        self._pump()

    def resume(self) -> list[int]:
        """Queue again the jobs a previous process left "queued" or "running"; returns their
        ids. A job without pending items is closed as "done" or "failed"."""
        ids = []
        for job in self.archive.db.unfinished_jobs():
            if not self.archive.db.pending_items(job["id"]):
                self.archive.db.mark_job(job["id"], "done" if job["fit_ids"] else "failed",
                                         None if job["fit_ids"] else "no item could be fitted")
                continue
            self.archive.db.mark_job(job["id"], "queued",
                                     "queued again after the service restarted")
            self.submit(job["id"])
            ids.append(job["id"])
        return ids

    def warm_up(self) -> None:
        """Start the workers now rather than at the first job (returns at once)."""
        for _ in range(self._max_workers or multiprocessing.cpu_count() or 1):
            self.executor.submit(_ready)

    def wait_idle(self, timeout: float | None = None) -> bool:
        """Block until nothing is queued or running (or ``timeout`` seconds); True if idle."""
        with self._idle:
            return self._idle.wait_for(lambda: not self._queue and not self._running, timeout)

    def shutdown(self, timeout: float = 30.0) -> None:
        """Stop: hand out no more items, let those running finish (up to ``timeout`` seconds),
        close an executor made here, and leave unfinished jobs "queued" with a reason so that
        the next start resumes them."""
        with self._idle:
            self._stopping = True
            self._queue.clear()
            self._queued_keys.clear()
            self._idle.wait_for(lambda: not self._running, timeout)
        if self._own and self._executor is not None:
            self._executor.shutdown(wait=True, cancel_futures=True)
        self._recorder.shutdown(wait=True)
        for job_id in sorted(self._jobs):
            job = self.archive.db.get_job(job_id)
            if job and job["state"] in ("queued", "running"):
                self.archive.db.mark_job(job_id, "queued", "interrupted when the service "
                                         "stopped; it resumes at the next start")

    # -- plumbing
    @property
    def executor(self):
        if self._executor is None:
            self._executor = make_executor(self._kind, self._max_workers)
        return self._executor

    def _pump(self):
        if getattr(self._local, "pumping", False):
            return      # an inline executor finished an item inside submit(): the loop goes on
        self._local.pumping = True
        try:
            while True:
                with self._lock:
                    if self._stopping or not self._queue or \
                            self._running >= self.in_flight_limit:
                        return
                    job_id, item = self._queue.popleft()
                    self._queued_keys.discard((job_id, item["idx"]))
                    self._running += 1
                self._dispatch(job_id, item)
        finally:
            self._local.pumping = False

    def _dispatch(self, job_id, item):
        try:
            job = self.archive.db.get_job(job_id)
            if job is None or job["state"] not in ("queued", "running"):
                self._release()
                return
            task, options = self.build_task(item["spectrum_id"], job["options"])
            if job["state"] == "queued":
                self.archive.db.mark_job(job_id, "running")
        except EdgefitError as exc:
            self._record(job_id, item["idx"], {"error": {"code": exc.code, "message": str(exc)}},
                         None)
            return
        except Exception as exc:  # noqa: BLE001
            log.error("cannot start item %s of job %s: %s", item["idx"], job_id,
                      traceback.format_exc())
            self._record(job_id, item["idx"], {"error": {"code": "internal", "message":
                         f"the item could not be started ({type(exc).__name__}: {exc})"}}, None)
            return
        try:
            future = self.executor.submit(fit_task, task)
        except Exception as exc:  # noqa: BLE001 - e.g. a broken pool
            self._record(job_id, item["idx"], {"error": {"code": "internal", "message":
                         f"the worker pool refused the item ({type(exc).__name__}: {exc})"}},
                         options)
            self._renew_broken(exc)
            return
        future.add_done_callback(lambda f: self._done(job_id, item["idx"], options, f))

    def build_task(self, spectrum_id: int, job_options: dict) -> tuple[dict, dict]:
        """The :func:`fit_task` input for one spectrum: its raw bytes, reader options, and the
        options of its upload overlaid with the job's. Returns ``(task, options)``.

        Raises
        ------
        EdgefitError
            When the spectrum or its raw file is missing from the archive.
        """
        spec = self.archive.db.get_spectrum(spectrum_id)
        if spec is None:
            raise EdgefitError(f"spectrum {spectrum_id} is not in the archive",
                               code="not-found")
        options = {**(spec.get("options") or {}), **(job_options or {})}
        task = {**self._file_of(spec), "options": options, "max_points": self.max_points}
        for role in ("reflectance", "substrate"):
            other_id = options.get(f"{role}_spectrum_id")
            if other_id is not None:
                other = self.archive.db.get_spectrum(other_id)
                if other is None:
                    raise EdgefitError(f"the {role} spectrum {other_id} is not in the archive",
                                       fix=f"give {role}_spectrum_id of an uploaded spectrum",
                                       code="bad-option")
                task[role] = self._file_of(other)
        return task, options

    def _file_of(self, spec):
        if not self.archive.raw.exists(spec["sha256"]):
            raise EdgefitError(f"the raw file of spectrum {spec['id']} ({spec['file_name']}, "
                               f"sha256 {spec['sha256'][:12]}…) is missing from the archive",
                               fix="restore the data directory's raw/ folder from a backup",
                               code="raw-missing")
        return {"data": self.archive.raw.get(spec["sha256"]), "name": spec["file_name"],
                "reader": spec.get("reader") or {}, "column": spec.get("column")}

    def _done(self, job_id, idx, options, future):
        try:
            exc = future.exception()
        except cf.CancelledError:
            self._release()          # shut down before it ran: stays pending for the next start
            return
        if exc is not None:
            outcome = {"error": {"code": "internal", "message": "the worker failed "
                                 f"({type(exc).__name__}: {exc})"}}
            self._renew_broken(exc)
        else:
            outcome = future.result()
        try:
            self._recorder.submit(self._record, job_id, idx, outcome, options)
        except RuntimeError:        # the recorder is shut down: write from here
            self._record(job_id, idx, outcome, options)

    def _record(self, job_id, idx, outcome, options):
        try:
            self.archive.db.finish_item(job_id, idx, result=outcome.get("result"),
                                        error=outcome.get("error"), options=options)
        except Exception:  # noqa: BLE001 - a callback must never die silently
            log.error("cannot record item %s of job %s: %s", idx, job_id, traceback.format_exc())
        finally:
            self._release()
        self._pump()

    def _release(self):
        with self._idle:
            self._running -= 1
            self._idle.notify_all()

    def _renew_broken(self, exc):
        if self._own and isinstance(exc, cf.BrokenExecutor):
            with self._lock:
                old, self._executor = self._executor, None
            if old is not None:
                old.shutdown(wait=False, cancel_futures=True)
