"""The data that flows through the pipeline: what was measured and what physics made of it."""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

#: Quantities a spectrum can hold (CLI and REST spelling).
QUANTITIES = ("transmittance", "reflectance", "absorbance", "absorption-coefficient",
              "diffuse-reflectance")
#: Units of the x axis.
X_UNITS = ("nm", "um", "ev", "cm-1")
#: Units of the y values: ``fraction`` (0..1), ``percent`` (0..100), ``absorbance`` (decadic),
#: ``per_cm`` (absorption coefficient), ``per_um``/``per_m`` converted on reading.
Y_UNITS = ("fraction", "percent", "absorbance", "per_cm")


@dataclass
class Spectrum:
    """One measured curve as the instrument exported it.

    Attributes
    ----------
    x : ndarray
        Abscissa values in ``x_unit``, sorted ascending (duplicates averaged by the reader).
    y : ndarray
        Ordinate values in ``y_unit``.
    x_unit : str
        One of :data:`X_UNITS`.
    quantity : str
        One of :data:`QUANTITIES`.
    y_unit : str
        One of :data:`Y_UNITS`.
    source : str
        File name (no directory).
    sha256 : str
        SHA-256 of the file's bytes.
    column : str
        Column header (or ``"column N"``) the values came from.
    metadata : dict
        ``key: value`` lines found above the table, as text. Never applied silently.
    warnings : list of str
        Things the reader tolerated (duplicate x values averaged, rows skipped, ...).
    sample : str
        Sample name: from metadata if the file names one, else the file stem (plus the column
        when a file holds several quantity columns).
    """

    x: np.ndarray
    y: np.ndarray
    x_unit: str
    quantity: str
    y_unit: str
    source: str = ""
    sha256: str = ""
    column: str = ""
    metadata: dict = field(default_factory=dict)
    warnings: list = field(default_factory=list)
    sample: str = ""

    def __post_init__(self):
        self.x = np.asarray(self.x, dtype=float)
        self.y = np.asarray(self.y, dtype=float)
        if self.x.shape != self.y.shape or self.x.ndim != 1:
            raise ValueError("x and y must be 1-D arrays of the same length")

    @property
    def points(self) -> int:
        return int(self.x.size)


@dataclass
class Flag:
    """A quality flag: a stable ``code`` and a plain-words ``message``."""

    code: str
    message: str

    def to_dict(self) -> dict:
        return {"code": self.code, "message": self.message}


@dataclass
class Film:
    """What is known of the film: thickness, refractive index, and how it was found."""

    thickness_nm: float | None = None
    thickness_err_nm: float | None = None
    thickness_source: str = "none"   # "user", "fringes", "none"
    n_at: dict = field(default_factory=dict)   # {"500nm": 2.31, ...}
    method: str = ""
    extrema: dict = field(default_factory=dict)  # {"maxima_nm": [...], "minima_nm": [...]}
    extra: dict = field(default_factory=dict)    # envelopes and other drawing data

    def to_dict(self) -> dict:
        out = {"thickness_nm": self.thickness_nm, "thickness_err_nm": self.thickness_err_nm,
               "thickness_source": self.thickness_source, "n": dict(self.n_at),
               "method": self.method, "extrema": self.extrema}
        out.update(self.extra)
        return out


@dataclass
class Absorption:
    """The absorption spectrum that the edge analysis works on.

    Attributes
    ----------
    energy_ev : ndarray
        Photon energy [eV], strictly ascending.
    alpha : ndarray
        Absorption coefficient [cm⁻¹] when ``alpha_kind == "absolute"``; otherwise a quantity
        proportional to it: ``"relative"`` is α·d (dimensionless, no thickness known) and
        ``"kubelka-munk"`` is F(R∞) = K/S.
    alpha_kind : str
        ``"absolute"``, ``"relative"`` or ``"kubelka-munk"``.
    trusted : ndarray of bool
        Points that may be fitted (not saturated, not below the noise floor, finite, > 0).
    ln_alpha_sd : ndarray
        Measurement noise of ln α (one standard deviation), propagated from the noise of the
        measured quantity (estimated from the data).
    flags : list of Flag
        What the conversion found (saturation excluded, noise floor, substrate edge, ...).
    film : Film or None
        Thickness and index when known.
    method : str
        How α was obtained, e.g. ``"-ln(T)/d"``.
    """

    energy_ev: np.ndarray
    alpha: np.ndarray
    alpha_kind: str
    trusted: np.ndarray
    ln_alpha_sd: np.ndarray | None = None
    flags: list = field(default_factory=list)
    film: Film | None = None
    method: str = ""
    drawing: dict = field(default_factory=dict)   # fringe envelopes etc. for the report

    @property
    def alpha_label(self) -> str:
        return {"absolute": "α [cm⁻¹]", "relative": "α·d (relative, no thickness)",
                "kubelka-munk": "F(R∞) Kubelka–Munk"}[self.alpha_kind]
