"""The one pipeline: a Spectrum (plus options) in, an EdgeResult out.

The CLI, the batch runner, the REST service and the demo all call :func:`analyse`: the
measured spectrum becomes absorption (:mod:`edgefit.absorption`), whose edge is analysed in
stages (:mod:`edgefit.edge.stages`).
"""
from __future__ import annotations

import os

import numpy as np

from .absorption import to_absorption
from .edge.stages import analyse_edge
from .errors import EdgefitError
from .options import (MODELS, READER_OPTIONS, TR_METHODS, AnalysisOptions,  # noqa: F401
                      _range_text, options_from_mapping)
from .result import EdgeResult
from .spectrum import Absorption, Flag, Spectrum


def analyse(spectrum: Spectrum, *, reflectance: Spectrum | None = None,
            substrate: Spectrum | None = None, **options) -> EdgeResult:
    """Analyse one spectrum: absorption, Tauc gaps, Urbach energy, verdict, flags.

    Parameters
    ----------
    spectrum : Spectrum
        The measured spectrum (from :func:`edgefit.read_spectra`).
    reflectance : Spectrum, optional
        Reflectance measured on the same spot (for transmittance spectra).
    substrate : Spectrum, optional
        Transmittance of the bare substrate, measured the same way.
    **options
        Fields of :class:`AnalysisOptions` (``thickness_nm``, ``model``, ``window_ev``, ...).

    Returns
    -------
    EdgeResult

    Examples
    --------
    >>> import edgefit
    >>> spec = edgefit.read_spectra("spectra_demo/some_file.csv")[0]   # doctest: +SKIP
    >>> res = edgefit.analyse(spec, thickness_nm=450)                  # doctest: +SKIP
    >>> res.transition, res.gaps[0]["eg_ev"]                           # doctest: +SKIP
    """
    for k in READER_OPTIONS:
        options.pop(k, None)     # reader options: already applied when the file was read
    try:
        opts = AnalysisOptions(**options)
    except TypeError as exc:
        raise EdgefitError(f"unknown option: {exc}", code="bad-option") from None
    res = EdgeResult(source=spectrum.source, sha256=spectrum.sha256, column=spectrum.column,
                     sample=spectrum.sample, quantity=spectrum.quantity,
                     metadata=dict(spectrum.metadata))
    res.options = opts.to_dict()
    if reflectance is not None:
        res.options["reflectance"] = {"source": reflectance.source, "sha256": reflectance.sha256}
    if substrate is not None:
        res.options["substrate"] = {"source": substrate.source, "sha256": substrate.sha256}
    for w in spectrum.warnings:
        res.flag("reader", w)

    ab = to_absorption(spectrum, opts, reflectance=reflectance, substrate=substrate)
    if opts.range_ev is not None:
        _limit_range(ab, opts.range_ev, spectrum.source)
    res.alpha_kind = ab.alpha_kind
    res.film = ab.film
    for f in ab.flags:
        res.flag(f.code, f.message)
    res.data = {"measured": {"x": spectrum.x, "y": spectrum.y, "x_unit": spectrum.x_unit,
                             "y_unit": spectrum.y_unit, "quantity": spectrum.quantity},
                "energy_ev": ab.energy_ev, "alpha": ab.alpha, "trusted": ab.trusted,
                "alpha_kind": ab.alpha_kind, "alpha_label": ab.alpha_label,
                "conversion": ab.method}
    if ab.drawing:
        res.data["film"] = ab.drawing
    analyse_edge(res, ab, opts)
    return res


def _limit_range(ab: Absorption, range_ev, source) -> None:
    """Leave the points outside the analysis range (--range) out of the edge analysis."""
    lo, hi = range_ev
    inside = (ab.energy_ev >= lo) & (ab.energy_ev <= hi)
    if not inside.any():
        raise EdgefitError(f"--range {lo:g}:{hi:g} eV holds no point of the data "
                           f"({_range_text(ab.energy_ev)})", file=source,
                           fix="give a range inside the data, in eV", code="bad-option")
    left_out = int(np.count_nonzero(ab.trusted & ~inside))
    ab.trusted = ab.trusted & inside
    ab.flags.append(Flag("range-limited", f"the edge analysis uses {lo:g}–{hi:g} eV only "
                         f"(--range): {left_out} trusted points outside it are left out"))


def pair_spectra(spectra: list, reflectance: Spectrum | None = None) -> list:
    """What to analyse in one file: (spectrum, its reflectance) pairs.

    A reflectance column beside a transmittance column of the same file is the reflectance of
    that spot: it is paired with the transmittance (one T column, or T and R columns taken in
    order) and not analysed on its own. A reflectance file given separately (``reflectance``)
    takes precedence (the file's R columns are then left out, with a note). A file holding only
    reflectance is left as it is (the analysis then says what to do).
    """
    ts = [s for s in spectra if s.quantity == "transmittance"]
    rs = [s for s in spectra if s.quantity == "reflectance"]
    if ts and rs and reflectance is not None:
        # the file's own R columns give way to the reflectance file, and are not analysed alone
        for t in ts:
            if len(ts) == 1 and t.sample.endswith(f" / {t.column}"):
                t.sample = t.sample[:-len(f" / {t.column}")]   # one spectrum left in the file
            t.warnings.append("the reflectance column(s) " + ", ".join(f"'{r.column}'" for r in rs)
                              + " of this file are not used: the reflectance file given "
                              "separately is")
        return [(s, reflectance if s.quantity == "transmittance" else None) for s in spectra
                if s.quantity != "reflectance"]
    if not ts or not rs or reflectance is not None:
        return [(s, reflectance if s.quantity == "transmittance" else None) for s in spectra]
    if len(rs) not in (1, len(ts)):
        raise EdgefitError(f"{len(ts)} transmittance and {len(rs)} reflectance columns: cannot "
                           "tell which R belongs to which T", file=spectra[0].source,
                           fix="choose one with --column and give --reflectance FILE",
                           code="bad-file")
    out = []
    for k, t in enumerate(ts):
        r = rs[0] if len(rs) == 1 else rs[k]
        suffix = f" / {t.column}"
        if len(ts) == 1 and t.sample.endswith(suffix):
            t.sample = t.sample[:-len(suffix)]      # the R column named it, not a second sample
        t.warnings.append(f"reflectance from the column '{r.column}' of the same file is used "
                          "for the T+R correction")
        out.append((t, r))
    return out + [(s, None) for s in spectra if s.quantity not in ("transmittance",
                                                                   "reflectance")]


def analyse_file(path, *, quantity=None, x_unit=None, y_unit=None, column=None,
                 reflectance=None, substrate=None, **options) -> list[EdgeResult]:
    """Read a file and analyse every spectrum in it (same options for each).

    ``reflectance`` and ``substrate`` are Spectrum objects or paths of files whose first
    spectrum is taken, as the command line does.
    """
    from .io import read_spectra
    if isinstance(reflectance, (str, os.PathLike)):
        reflectance = read_spectra(reflectance)[0]
    if isinstance(substrate, (str, os.PathLike)):
        substrate = read_spectra(substrate)[0]
    specs = read_spectra(path, quantity=quantity, x_unit=x_unit, y_unit=y_unit, column=column)
    return [analyse(s, reflectance=r, substrate=substrate, **options)
            for s, r in pair_spectra(specs, reflectance)]
