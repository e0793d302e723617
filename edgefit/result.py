"""EdgeResult: everything a scientist reports about one spectrum, JSON-ready.

The field names of :meth:`EdgeResult.to_dict` are the contract of ``edgefit fit --json`` and of
``GET /api/v1/fits/{id}`` (see DEVELOPERS.md): units live in the names; fields may be added,
never renamed or removed.
"""
from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass, field

import numpy as np

from . import __version__
from .spectrum import Film, Flag

TRANSITIONS = ("direct-allowed", "indirect-allowed", "direct-forbidden", "indirect-forbidden")


def _clean(value):
    """Make numpy scalars/arrays and NaN JSON-ready (NaN and inf become None)."""
    if isinstance(value, dict):
        return {str(k): _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    if isinstance(value, np.ndarray):
        return _clean(value.tolist())
    if isinstance(value, (np.bool_, bool)):
        return bool(value)
    if isinstance(value, (np.integer,)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        v = float(value)
        return v if np.isfinite(v) else None
    return value


@dataclass
class EdgeResult:
    """The outcome of :func:`edgefit.analyse` for one spectrum.

    Attributes
    ----------
    source, sha256, column, sample : str
        Provenance of the spectrum.
    transition : str
        ``"direct"``, ``"indirect"``, ``"direct+indirect"`` or ``"ambiguous"``.
    gaps : list of dict
        Each reported gap: ``kind`` (direct/indirect), ``eg_ev``, ``eg_err_ev``, ``window_ev``,
        ``method`` and the ``uncertainty`` components.
    rejected_gaps : list of dict
        Tauc gaps that the checks after the window search showed not to be the absorption
        edge (each with its ``suspect`` flag code), replaced in ``gaps`` by the edge models
        fitted around the steepest rise of α.
    tauc : dict
        One entry per transition in :data:`TRANSITIONS` (None where no linear window exists).
    urbach : dict or None
        ``eu_mev``, ``eu_err_mev``, ``window_ev``, ``baseline``, ...
    edge_region : dict or None
        Where the first absorption edge was found (:mod:`edgefit.edge.locate`).
    verdict : dict
        The transition with its evidence (information criteria, linear ranges, residuals).
    models : dict
        Continuous edge-model fits per hypothesis.
    film : Film or None
    flags : list of Flag
    options : dict
        The options the analysis ran with (after defaults).
    data : dict
        Arrays for drawing: the measured spectrum, energy, α, trusted mask, model curves.
    """

    source: str = ""
    sha256: str = ""
    column: str = ""
    sample: str = ""
    quantity: str = ""
    alpha_kind: str = "absolute"
    transition: str = "ambiguous"
    gaps: list = field(default_factory=list)
    rejected_gaps: list = field(default_factory=list)
    tauc: dict = field(default_factory=dict)
    cody: dict | None = None
    tauc_direct_over_indirect: dict | None = None
    baseline: dict | None = None
    urbach: dict | None = None
    edge_region: dict | None = None
    verdict: dict = field(default_factory=dict)
    models: dict = field(default_factory=dict)
    e04_ev: float | None = None
    film: Film | None = None
    flags: list = field(default_factory=list)
    options: dict = field(default_factory=dict)
    metadata: dict = field(default_factory=dict)
    version: str = __version__
    created: str = field(default_factory=lambda: _dt.datetime.now(_dt.timezone.utc)
                         .isoformat(timespec="seconds"))
    data: dict = field(default_factory=dict)

    def flag(self, code: str, message: str) -> None:
        if not any(f.code == code and f.message == message for f in self.flags):
            self.flags.append(Flag(code, message))

    def to_dict(self, *, arrays: bool = False) -> dict:
        """JSON-ready dict. ``arrays=True`` adds the ``data`` block the reports draw from."""
        out = {
            "source": self.source, "sha256": self.sha256, "column": self.column,
            "sample": self.sample, "quantity": self.quantity, "alpha_kind": self.alpha_kind,
            "transition": self.transition, "gaps": self.gaps,
            "rejected_gaps": self.rejected_gaps, "tauc": self.tauc,
            "cody": self.cody, "tauc_direct_over_indirect": self.tauc_direct_over_indirect,
            "baseline": self.baseline, "urbach": self.urbach, "edge_region": self.edge_region,
            "verdict": self.verdict, "models": self.models, "e04_ev": self.e04_ev,
            "film": self.film.to_dict() if self.film is not None else None,
            "flags": [f.to_dict() for f in self.flags], "options": self.options,
            "metadata": self.metadata, "version": self.version, "created": self.created,
        }
        if arrays:
            out["data"] = self.data
        return _clean(out)
