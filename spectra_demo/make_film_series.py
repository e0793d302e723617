"""Generate the film-on-glass demo series of edgefit from physics (fixed seed); write its manifest.

The scenario is invented: the "Corrie Vale Thin-Film Workshop" (a made-up workshop; no real
group, person, instrument or product) sputters a nitride semiconductor of invented composition,
code "CVN7", onto 1 mm soda-lime glass for 10, 20 and 30 minutes, and measures each film's
transmittance and reflectance at near-normal incidence on a UV-Vis-NIR spectrophotometer, plus a
bare piece of the same glass. The films are thick enough to show interference fringes; their
thickness is not written in the files: the fringes must give it. Every number below is a
synthetic truth, recorded here and in manifest_films.json.

Run ``python spectra_demo/make_film_series.py`` from anywhere; it needs the test dependency
``tmm`` (transfer-matrix method) at generation time only. The files it writes are committed,
so edgefit never needs tmm at run time.

Physics
-------
Photon energy E = hc/λ with hc from CODATA (``edgefit.optics.HC_EV_NM``, scipy.constants).

Film index: one-term Sellmeier form n² = 1 + S·λ²/(λ² − λ0²), which rises towards the gap
faster than a two-term Cauchy form (as real films do).

Film absorption: direct allowed edge joined to an Urbach tail (Tauc et al. 1966; Urbach 1953),

    α(E)·E = B·(E − Eg)^(1/2)               for E ≥ Et
    α(E)   = α(Et)·exp[(E − Et)/Eu]         for E < Et,

continuous in ln α and its slope at Et (Et² − Et·(Eg − Eu/2) − Eg·Eu = 0, positive root), and
k = αλ/(4π).

Glass: index 1.52 without dispersion (the value the analysis is told), k from a UV absorption
edge, α_glass = A·exp[(E − 3.9 eV)/0.08 eV]: 1 mm passes almost nothing below ~310 nm.

Measurement: air / film (coherent) / glass 1 mm (incoherent) / air, s-polarised at normal
incidence, computed with ``tmm.inc_tmm`` (S. J. Byrnes, arXiv:1603.02720): T and the total R
(both glass faces, all multiple reflections), as a spectrophotometer records them. Gaussian
noise, absolute, in %T and %R.
"""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from edgefit.optics import HC_EV_NM

HERE = Path(__file__).resolve().parent
SEED = 20240923
WORKSHOP = "Corrie Vale Thin-Film Workshop (invented for the edgefit demo)"
MATERIAL = "sputtered nitride semiconductor CVN7 (invented composition) on soda-lime glass"

SUBSTRATE_INDEX = 1.52
SUBSTRATE_THICKNESS_NM = 1.0e6
SELLMEIER_S, SELLMEIER_L0_NM = 4.0, 290.0
B_DIRECT = 1.5e5                 # cm⁻¹·eV^(1/2) (a sputtered, partly disordered film)
T_NOISE = 0.1                    # %T, absolute
R_NOISE = 0.1                    # %R, absolute

#: The deposition series: longer sputtering, thicker film; the thicker films are slightly
#: better ordered (gap up a little, tail sharper).
SERIES = [
    {"sample": "CVN7-10", "minutes": 10, "d_nm": 520.0, "eg": 2.18, "eu_mev": 75.0,
     "kind": "TR-columns", "files": {"t": "film_CVN7-10_TR.csv"}},
    {"sample": "CVN7-20", "minutes": 20, "d_nm": 1010.0, "eg": 2.20, "eu_mev": 62.0,
     "kind": "T+R-files", "files": {"t": "film_CVN7-20_T.csv", "r": "film_CVN7-20_R.csv"}},
    {"sample": "CVN7-30", "minutes": 30, "d_nm": 1490.0, "eg": 2.21, "eu_mev": 55.0,
     "kind": "T+substrate", "files": {"t": "film_CVN7-30_T.csv"}},
]
BARE_GLASS = "film_glass-bare_T.csv"


# ------------------------------------------------------------------------- physics

def film_index(wavelength_nm):
    lam2 = np.asarray(wavelength_nm, dtype=float) ** 2
    return np.sqrt(1 + SELLMEIER_S * lam2 / (lam2 - SELLMEIER_L0_NM ** 2))


def joining_energy_ev(eg_ev, eu_ev):
    """Et for the direct edge (r = 1/2): root of Et² − Et(Eg − Eu/2) − Eg·Eu = 0."""
    b = eg_ev - 0.5 * eu_ev
    return 0.5 * (b + np.sqrt(b * b + 4 * eg_ev * eu_ev))


def film_alpha_per_cm(energy_ev, eg_ev, eu_ev):
    e = np.asarray(energy_ev, dtype=float)
    et = joining_energy_ev(eg_ev, eu_ev)
    alpha_et = B_DIRECT * np.sqrt(et - eg_ev) / et
    above = B_DIRECT * np.sqrt(np.clip(e - eg_ev, 0, None)) / e
    return np.where(e >= et, above, alpha_et * np.exp(np.minimum(e - et, 0) / eu_ev))


def glass_k(wavelength_nm):
    lam = np.asarray(wavelength_nm, dtype=float)
    alpha = 30.0 * np.exp((HC_EV_NM / lam - 3.9) / 0.08)
    return alpha * lam * 1e-7 / (4 * np.pi)


def simulate(wavelength_nm, thickness_nm=None, eg_ev=None, eu_ev=None):
    """T and total R (fractions) of film on glass (or of bare glass when thickness is None)."""
    import tmm   # generation-time dependency only

    lam = np.asarray(wavelength_nm, dtype=float)
    ks = glass_k(lam)
    t = np.empty_like(lam)
    r = np.empty_like(lam)
    if thickness_nm is not None:
        n = film_index(lam)
        k = film_alpha_per_cm(HC_EV_NM / lam, eg_ev, eu_ev) * lam * 1e-7 / (4 * np.pi)
    for i, wl in enumerate(lam):
        glass = complex(SUBSTRATE_INDEX, ks[i])
        if thickness_nm is None:
            out = tmm.inc_tmm("s", [1, glass, 1], [np.inf, SUBSTRATE_THICKNESS_NM, np.inf],
                              ["i", "i", "i"], 0, wl)
        else:
            out = tmm.inc_tmm("s", [1, complex(n[i], k[i]), glass, 1],
                              [np.inf, thickness_nm, SUBSTRATE_THICKNESS_NM, np.inf],
                              ["i", "c", "i", "i"], 0, wl)
        t[i], r[i] = out["T"], out["R"]
    return t, r


# ------------------------------------------------------------------------- writers

def header(sample, minutes=None, what="film"):
    lines = [f"Lab: {WORKSHOP}", f"Sample: {sample}"]
    if what == "film":
        lines += [f"Material: {MATERIAL}", f"Sputter time (min): {minutes}"]
    else:
        lines += ["Material: bare soda-lime glass, 1 mm (same batch as the CVN7 films)"]
    lines += ["Instrument: UV-Vis-NIR spectrophotometer, near-normal incidence, 1 nm steps",
              "Reference: air (100 %T), calibrated mirror for %R", ""]
    return "\n".join(lines) + "\n"


def write_table(name, head, columns, rows):
    text = head + ",".join(columns) + "\n"
    text += "".join(",".join(row) + "\n" for row in rows)
    (HERE / name).write_text(text, encoding="utf-8", newline="\n")


def pct(values, rng, noise):
    return 100 * values + noise * rng.standard_normal(np.shape(values))


def main():
    rng = np.random.default_rng(SEED)
    lam = np.arange(300.0, 1800.0 + 0.5, 1.0)
    manifest = []
    for film in SERIES:
        eg, eu, d = film["eg"], film["eu_mev"] / 1000, film["d_nm"]
        t, r = simulate(lam, d, eg, eu)
        t_pct = pct(t, rng, T_NOISE)
        head = header(film["sample"], film["minutes"])
        files = film["files"]
        options = {"substrate_index": f"{SUBSTRATE_INDEX:g}"}
        extra = {}
        if film["kind"] == "TR-columns":
            r_pct = pct(r, rng, R_NOISE)
            write_table(files["t"], head, ["Wavelength (nm)", "%T", "%R"],
                        [(f"{w:.1f}", f"{a:.3f}", f"{b:.3f}")
                         for w, a, b in zip(lam, t_pct, r_pct)])
            extra["columns"] = {"transmittance": "%T", "reflectance": "%R"}
        elif film["kind"] == "T+R-files":
            write_table(files["t"], head, ["Wavelength (nm)", "%T"],
                        [(f"{w:.1f}", f"{a:.3f}") for w, a in zip(lam, t_pct)])
            # The reflectance accessory scans 1700 → 350 nm in 2 nm steps: another grid,
            # and a range shorter than the transmittance scan.
            lam_r = np.arange(1700.0, 350.0 - 1, -2.0)
            _, r2 = simulate(lam_r, d, eg, eu)
            write_table(files["r"], header(film["sample"], film["minutes"]),
                        ["Wavelength (nm)", "%R"],
                        [(f"{w:.1f}", f"{b:.3f}") for w, b in zip(lam_r, pct(r2, rng, R_NOISE))])
            options["reflectance"] = files["r"]
        else:
            write_table(files["t"], head, ["Wavelength (nm)", "%T"],
                        [(f"{w:.1f}", f"{a:.3f}") for w, a in zip(lam, t_pct)])
            options["substrate"] = BARE_GLASS
        n_true = {f"{w}nm": round(float(film_index(w)), 4) for w in (600, 800, 1000, 1550)}
        entry = {
            "file": files["t"],
            "options": options,
            "metadata": {"sample": film["sample"], "series": "CVN7 sputter-time series",
                         "Sputter time (min)": str(film["minutes"]), "lab": WORKSHOP},
            "truth": {"transition": "direct", "eg_direct_ev": eg, "eg_indirect_ev": None,
                      "eu_mev": film["eu_mev"], "thickness_nm": d, "n": n_true,
                      "substrate_index": SUBSTRATE_INDEX},
            "physics": (f"tmm inc_tmm air/film(coherent)/glass 1 mm (incoherent)/air, s-pol, "
                        f"normal incidence; n² = 1 + {SELLMEIER_S:g}λ²/(λ² − "
                        f"{SELLMEIER_L0_NM:g}²); direct allowed edge B = {B_DIRECT:g} "
                        f"cm^-1 eV^0.5 with Urbach tail; noise {T_NOISE:g} %T, {R_NOISE:g} %R"
                        " absolute"),
        }
        entry.update(extra)
        manifest.append(entry)

    t_bare, _ = simulate(lam)
    write_table(BARE_GLASS, header("GLASS-B2", what="glass"), ["Wavelength (nm)", "%T"],
                [(f"{w:.1f}", f"{a:.3f}") for w, a in zip(lam, pct(t_bare, rng, T_NOISE))])
    manifest.append({
        "file": BARE_GLASS, "role": "bare substrate for film_CVN7-30_T.csv",
        "options": {}, "metadata": {"sample": "GLASS-B2", "lab": WORKSHOP},
        "truth": {"substrate_index": SUBSTRATE_INDEX,
                  "substrate_transmittance_visible": round(2 * SUBSTRATE_INDEX
                                                           / (SUBSTRATE_INDEX ** 2 + 1), 4)},
        "physics": "tmm inc_tmm air/glass 1 mm (incoherent)/air; UV edge alpha = 30 "
                   "exp((E - 3.9 eV)/0.08 eV) cm^-1",
    })
    (HERE / "manifest_films.json").write_text(json.dumps(manifest, indent=2,
                                                         ensure_ascii=False) + "\n",
                                              encoding="utf-8", newline="\n")


if __name__ == "__main__":
    main()
