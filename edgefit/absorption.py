"""From a measured spectrum to absorption: α (or α·d, or F(R∞)) on an ascending energy axis,
the mask of points that can be trusted, the noise of ln α, and the film data (substrate,
interference fringes, reflectance)."""
from __future__ import annotations

import numpy as np

from . import optics
from .errors import EdgefitError
from .filters import median, percentile, running_median
from .options import AnalysisOptions, _range_text
from .spectrum import QUANTITIES, X_UNITS, Absorption, Film, Flag, Spectrum

#: Noise floors for data with no visible noise (synthetic or tabulated): a reading resolution
#: of 1e-5 in T, R or A, and 1e-4 in ln α (common practice, no source).
MIN_ABS_NOISE = 1e-5
MIN_REL_NOISE = 1e-4
#: The smallest absorption coefficient a transmission measurement can see [cm⁻¹]: α·d = 1e-3
#: for a 1 cm thick sample (common practice, no source)
MIN_MEASURABLE_ALPHA = 1e-3
#: The largest transmittance a stray-light plateau can have (2 %; common practice, no source).
MAX_STRAY_LIGHT_T = 0.02


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
        # below MIN_MEASURABLE_ALPHA no transmission measurement sees absorption (a 1 cm
        # sample would absorb 0.1 %): a table's values there are a model's, not the edge's
        floor = np.isfinite(alpha) & (alpha > 0) & (alpha < MIN_MEASURABLE_ALPHA)
        trusted = np.isfinite(alpha) & (alpha >= MIN_MEASURABLE_ALPHA)
        if floor.any():
            flags.append(Flag("noise-floor", f"{int(floor.sum())} points with α below "
                              f"{MIN_MEASURABLE_ALPHA:g} cm⁻¹ ({_range_text(energy[floor])}: "
                              "below what a transmission measurement of a 1 cm sample can see) "
                              "are excluded"))
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
