"""Every option of the analysis: :class:`AnalysisOptions`, and the checked conversion of
option values as the command line and the REST API give them (:func:`options_from_mapping`)."""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from .errors import EdgefitError

MODELS = ("auto", "direct", "indirect", "both")
#: Options that go to the reader (edgefit.io.read_spectra), not to the analysis.
READER_OPTIONS = ("quantity", "x_unit", "y_unit", "column")
#: Noise floors for data with no visible noise (synthetic or tabulated): a reading resolution
#: of 1e-5 in T, R or A, and 1e-4 in ln α (common practice, no source).
TR_METHODS = ("auto", "total", "exact", "simple", "hishikawa")


@dataclass
class AnalysisOptions:
    """Every option of the analysis, with its default.

    Attributes
    ----------
    thickness_nm : float, optional
        Film thickness [nm]; without it α is relative (α·d) unless fringes give a thickness.
    substrate_index : float, optional
        Refractive index of a transparent substrate (fringe analysis; substrate model).
    tr_method : str
        How T and R become α: "total" (incoherent slab, the measured R of both faces),
        "exact" (incoherent slab, single-face R), "simple" ((1−R)²/T), "hishikawa" ((1−R)/T);
        "auto" takes "hishikawa" for a film on a substrate, "total" otherwise.
    model : str
        "auto" decides; "direct", "indirect" or "both" impose the hypothesis.
    window_ev : (float, float), optional
        Manual Tauc window [eV] for the imposed (or decided) transition.
    urbach_window_ev : (float, float), optional
        Manual Urbach window [eV].
    range_ev : (float, float), optional
        Energy range analysed [eV]: only points inside it enter the edge analysis (the
        conversion to α, the fringe analysis and the noise estimates still see every point).
    saturation_t : float
        Transmittance (fraction) at or below which a reading is stray light: excluded.
    noise_floor_alpha_d : float
        α·d below which the signal is under the noise: excluded.
    saturation_r_diffuse : float
        Diffuse reflectance (fraction) at or below which Kubelka–Munk is not trusted.
    bootstrap : int
        Bootstrap resamples per fitted line (fixed seed: reproducible to the last digit).
    seed : int
        Seed of the bootstrap.
    fringes : str
        "auto" analyses interference fringes of transmittance spectra, "off" skips it.
    """

    thickness_nm: float | None = None
    substrate_index: float | None = None
    tr_method: str = "auto"
    model: str = "auto"
    window_ev: tuple | None = None
    urbach_window_ev: tuple | None = None
    range_ev: tuple | None = None
    saturation_t: float = 1e-3
    noise_floor_alpha_d: float = 0.01
    saturation_r_diffuse: float = 0.005
    bootstrap: int = 200
    seed: int = 0
    fringes: str = "auto"

    def to_dict(self) -> dict:
        # the fields are numbers, strings, None and (lo, hi) windows that are never changed
        # in place: a flat copy will do (dataclasses.asdict deep-copies, slowly)
        return {f.name: getattr(self, f.name) for f in dataclasses.fields(self)}


def _parse_window(text, name):
    if text is None or text == "":
        return None
    if isinstance(text, (list, tuple)) and len(text) == 2:
        lo, hi = text
    else:
        parts = str(text).replace(",", ":").split(":")
        if len(parts) != 2:
            raise EdgefitError(f"{name} must be LO:HI in eV, got {text!r}",
                               fix=f"write e.g. {name} 1.60:1.85", code="bad-option")
        lo, hi = parts
    try:
        lo, hi = float(lo), float(hi)
    except ValueError:
        raise EdgefitError(f"{name} must be two numbers in eV, got {text!r}",
                           fix=f"write e.g. {name} 1.60:1.85", code="bad-option") from None
    if not (0 < lo < hi):
        raise EdgefitError(f"{name} needs 0 < LO < HI, got {lo}:{hi}",
                           fix="give the lower energy first", code="bad-option")
    return (lo, hi)


def options_from_mapping(values: dict) -> dict:
    """Check and convert option values from the CLI or the REST API into keyword arguments of
    :func:`analyse` (strings allowed: ``"400nm"``, ``"1.6:1.9"``, ``"1.52"``).

    Reader options (quantity, x_unit, column) are returned as they are for the reader.
    """
    from .io import parse_length_nm

    out = {}
    known = {"quantity", "x_unit", "y_unit", "column", "thickness", "thickness_nm",
             "substrate_index", "tr_method", "model", "window", "window_ev", "urbach_window",
             "urbach_window_ev", "range", "range_ev", "bootstrap", "seed", "fringes",
             "saturation_t", "noise_floor_alpha_d"}
    unknown = sorted(set(values) - known)
    if unknown:
        raise EdgefitError(f"unknown option(s) {', '.join(unknown)}",
                           fix="use " + ", ".join(sorted(known)), code="bad-option")
    for k, v in values.items():
        if v is None or v == "":
            continue
        if k in READER_OPTIONS:
            out[k] = v
        elif k in ("thickness", "thickness_nm"):
            d = parse_length_nm(str(v)) if k == "thickness" else _positive(v, "thickness_nm")
            if not 1.0 <= d <= 1e7:
                raise EdgefitError(f"a thickness of {d:g} nm is not plausible for a film or "
                                   "slab", fix="give a thickness between 1 nm and 10 mm, with "
                                   "its unit, e.g. --thickness 450nm", code="bad-option")
            out["thickness_nm"] = d
        elif k == "substrate_index":
            s = _positive(v, "--substrate-index")
            if not 1.0 < s < 5.0:
                raise EdgefitError(f"--substrate-index {s} is not a plausible substrate index",
                                   fix="give e.g. 1.52 for soda-lime glass, 1.46 for fused silica",
                                   code="bad-option")
            out["substrate_index"] = s
        elif k in ("window", "window_ev"):
            out["window_ev"] = _parse_window(v, "--window")
        elif k in ("urbach_window", "urbach_window_ev"):
            out["urbach_window_ev"] = _parse_window(v, "--urbach-window")
        elif k in ("range", "range_ev"):
            out["range_ev"] = _parse_window(v, "--range")
        elif k == "model":
            if v not in MODELS:
                raise EdgefitError(f"--model {v!r} is not one of {', '.join(MODELS)}",
                                   fix="use --model auto to let edgefit decide", code="bad-option")
            out["model"] = v
        elif k == "tr_method":
            if v not in TR_METHODS:
                raise EdgefitError(f"tr_method {v!r} is not one of {', '.join(TR_METHODS)}",
                                   code="bad-option")
            out["tr_method"] = v
        elif k == "fringes":
            if v not in ("auto", "off"):
                raise EdgefitError(f"fringes {v!r} must be auto or off", code="bad-option")
            out["fringes"] = v
        elif k in ("bootstrap", "seed"):
            try:
                iv = int(v)
            except (TypeError, ValueError):
                raise EdgefitError(f"{k} must be a whole number, got {v!r}",
                                   code="bad-option") from None
            if iv < 0 or (k == "bootstrap" and iv > 5000):
                raise EdgefitError(f"{k} {iv} out of range", fix="use 0..5000", code="bad-option")
            out[k] = iv
        else:
            f = _positive(v, k)
            if f >= 1.0:
                raise EdgefitError(f"{k} {f:g} must be below 1 (a fraction)", code="bad-option")
            out[k] = f
    return out


def _positive(v, name):
    try:
        f = float(v)
    except (TypeError, ValueError):
        raise EdgefitError(f"{name} must be a number, got {v!r}", code="bad-option") from None
    if not np.isfinite(f) or f <= 0:
        raise EdgefitError(f"{name} must be positive, got {v!r}", code="bad-option")
    return f


# --------------------------------------------------------------------------- conversion

def _range_text(e):
    return f"{e.min():.2f}–{e.max():.2f} eV" if e.size else ""
