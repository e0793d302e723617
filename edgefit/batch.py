"""Many spectra at once, over a concurrent.futures-style executor.

A process pool by default; any object with ``submit(fn, *args) -> Future`` works (a thread
pool in tests, a Dask distributed client's executor on a cluster). Each task runs the one
pipeline (:func:`edgefit.analysis.analyse`) in a worker; a file that fails is reported with
its reason and does not stop the others.
"""
from __future__ import annotations

import os
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass, field
from pathlib import Path

from .errors import EdgefitError

SUFFIXES = {".csv", ".txt", ".tsv", ".dat", ".asc", ".prn", ".sp"}


@dataclass
class BatchItem:
    """The outcome for one input file: result dicts (with arrays) or an error message."""

    path: str
    results: list = field(default_factory=list)
    error: str | None = None


def fit_path(path: str, reader: dict, options: dict, reflectance: str | None = None,
             substrate: str | None = None) -> list:
    """Read ``path`` and analyse every spectrum in it; JSON-ready dicts with arrays.

    Module-level so that a process pool can pickle it.
    """
    from .analysis import analyse, pair_spectra
    from .io import read_spectra
    refl = read_spectra(reflectance)[0] if reflectance else None
    subs = read_spectra(substrate)[0] if substrate else None
    return [analyse(spec, reflectance=r, substrate=subs, **options).to_dict(arrays=True)
            for spec, r in pair_spectra(read_spectra(path, **reader), refl)]


def collect_files(inputs) -> list[str]:
    """Expand directories into their spectrum files (sorted); keep files as given."""
    files = []
    for item in inputs:
        p = Path(item)
        if p.is_dir():
            files += sorted(str(f) for f in p.iterdir()
                            if f.is_file() and f.suffix.lower() in SUFFIXES)
        elif p.is_file():
            files.append(str(p))
        else:
            raise EdgefitError(f"no such file or directory: {item}", code="bad-file",
                               fix="check the path")
    if not files:
        raise EdgefitError("no spectrum files found (looked for "
                           + ", ".join(sorted(SUFFIXES)) + ")", code="bad-file")
    return files


def run_batch(files, *, reader: dict | None = None, options: dict | None = None,
              reflectance: str | None = None, substrate: str | None = None,
              executor=None, max_workers: int | None = None, progress=None) -> list[BatchItem]:
    """Fit every file; returns one :class:`BatchItem` per file, in input order.

    Parameters
    ----------
    files : list of str
        Spectrum files.
    executor : concurrent.futures.Executor, optional
        Where the work runs; a process pool of ``max_workers`` (default: CPU count) if None.
    progress : callable, optional
        Called as ``progress(done, total)`` after each file.
    """
    reader, options = reader or {}, options or {}
    own = executor is None
    if own:
        executor = ProcessPoolExecutor(max_workers=max_workers or os.cpu_count() or 1)
    items = {f: BatchItem(path=f) for f in files}
    try:
        futures = {executor.submit(fit_path, f, reader, options, reflectance, substrate): f
                   for f in files}
        for done, fut in enumerate(as_completed(futures), 1):
            item = items[futures[fut]]
            try:
                item.results = fut.result()
            except EdgefitError as exc:
                item.error = str(exc)
            except Exception as exc:  # a defect in one file must not stop the batch
                item.error = f"{Path(item.path).name}: analysis failed ({type(exc).__name__}: {exc})"
            if progress:
                progress(done, len(files))
    finally:
        if own:
            executor.shutdown()
    return [items[f] for f in files]
