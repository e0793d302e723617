"""Generate the core demo scenario of edgefit from physics (fixed seed); write its manifest.

The scenario is invented: the "Larkspur Optical Films Lab" (a made-up lab; no real group,
person or product) grows a zinc–tin-oxide film series annealed at three temperatures, a thick
film of the same oxide, an oxide photocatalyst powder, a two-phase vanadate film and a reference
crystal, and exports them from its instruments in four text dialects. Every number below is a
synthetic truth recorded here and in manifest_core.json.

Run ``python spectra_demo/make_demo.py`` from the repository root (or from anywhere) to write
the files beside this script.

Physics
-------
Photon energy E = hc/λ with hc from CODATA (``edgefit.optics.HC_EV_NM``, scipy.constants).

Continuous absorption edge for one transition of exponent r (r = 1/2 direct allowed, r = 2
indirect allowed), Tauc et al. (1966), Davis & Mott (1970), Urbach (1953):

    α(E)·E = B·(E − Eg)^r                     for E ≥ Et   (power law)
    α(E)   = α(Et)·exp[(E − Et)/Eu]           for E < Et   (Urbach tail)

joined so that ln α and its slope are continuous at Et. The slope of ln α above Et is
d ln α/dE = r/(E − Eg) − 1/E; setting it equal to 1/Eu at Et gives the quadratic
Et² − Et·(Eg + (r − 1)·Eu) − Eg·Eu = 0, whose positive root is

    Et = [Eg + (r−1)Eu + √((Eg + (r−1)Eu)² + 4·Eg·Eu)] / 2      (≈ Eg + r·Eu).

Measured quantities:
  transmittance      T = (1 − L)·exp(−α·d)   (L: residual reflection loss after referencing
                     to the bare substrate, wavelength-independent; Beer–Lambert)
  absorbance         A = α·d / ln 10          (decadic)
  diffuse reflectance (Kubelka & Munk 1931): F = K/S ∝ α, R∞ = 1 + F − √(F² + 2F)
                     (``edgefit.optics.kubelka_munk_inverse``)
  stray light        T_read = T + s (s: the instrument's stray-light floor)
Noise is Gaussian: absolute in T, R or A unless said relative.
"""
from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from edgefit.optics import HC_EV_NM, kubelka_munk_inverse

HERE = Path(__file__).resolve().parent
SEED = 20240611
LAB = "Larkspur Optical Films Lab (invented for the edgefit demo)"
R_LOSS = 0.01                   # residual reflection loss L of the film series


# ------------------------------------------------------------------------- physics

def joining_energy_ev(eg_ev: float, eu_ev: float, r: float) -> float:
    """Et where the power law meets the Urbach tail with equal ln α and slope (see above)."""
    b = eg_ev + (r - 1.0) * eu_ev
    return 0.5 * (b + np.sqrt(b * b + 4.0 * eg_ev * eu_ev))


def edge_alpha_per_cm(energy_ev, eg_ev: float, eu_ev: float, b: float, r: float):
    """α [cm⁻¹] of the continuous edge: B(E − Eg)^r / E above Et, Urbach tail below.

    ``b`` is B in cm⁻¹·eV^(1−r).
    """
    e = np.asarray(energy_ev, dtype=float)
    et = joining_energy_ev(eg_ev, eu_ev, r)
    alpha_et = b * (et - eg_ev) ** r / et
    above = b * np.clip(e - eg_ev, 0.0, None) ** r / e
    tail = alpha_et * np.exp(np.minimum(e - et, 0.0) / eu_ev)
    return np.where(e >= et, above, tail)


def wavelength_grid_nm(lo=250.0, hi=900.0, step=1.0):
    """A spectrophotometer's wavelength grid (ascending)."""
    return np.round(np.arange(lo, hi + step / 2, step), 6)


# ------------------------------------------------------------------------- writers

def fmt(v, digits):
    return f"{v:.{digits}f}"


def write_text(name: str, text: str, encoding: str, newline: str = "\n") -> None:
    (HERE / name).write_bytes(text.replace("\n", newline).encode(encoding))


def manifest_entry(p, *, series, transition, eg_direct=None, eg_indirect=None, eu_mev,
                   quantity, x_unit, y_unit, points, physics, thickness_nm=None,
                   metadata=None, file_metadata=None, **truth_extra):
    """One manifest entry: options as CLI strings, truths, what the reader must detect."""
    truth = {"transition": transition, "eg_direct_ev": eg_direct, "eg_indirect_ev": eg_indirect,
             "eu_mev": eu_mev}
    if thickness_nm is not None:
        truth["thickness_nm"] = thickness_nm
    truth.update(truth_extra)
    return {
        "file": p["file"],
        "options": {"thickness": f"{thickness_nm:g}nm"} if thickness_nm else {},
        "metadata": {"sample": p["sample"], "series": series, **(metadata or {})},
        "truth": truth,
        "detected": {"quantity": quantity, "x_unit": x_unit, "y_unit": y_unit,
                     "points": int(points)},
        "file_metadata": file_metadata or {"Sample": p["sample"]},
        "physics": physics,
    }


# ------------------------------------------------------------------------- the scenario

#: The zinc–tin-oxide anneal series: direct allowed gap; annealing raises the gap and
#: sharpens the tail; the film densifies (thinner).
SERIES = [
    {"file": "LK-ZTO-300_T.csv", "sample": "LK-ZTO-300", "anneal_c": 300, "eg": 3.20,
     "eu_mev": 60.0, "d_nm": 540.0, "dialect": "comma"},
    {"file": "LK-ZTO-400_T.csv", "sample": "LK-ZTO-400", "anneal_c": 400, "eg": 3.25,
     "eu_mev": 47.0, "d_nm": 515.0, "dialect": "semicolon-latin1"},
    {"file": "LK-ZTO-500_T.txt", "sample": "LK-ZTO-500", "anneal_c": 500, "eg": 3.30,
     "eu_mev": 35.0, "d_nm": 490.0, "dialect": "tab-energy"},
]
B_DIRECT = 4.0e5                # cm⁻¹·eV^(1/2), oxide films
T_NOISE = 0.002                 # 0.2 % T, absolute

POWDER = {"file": "LK-PC7_DRS.dat", "sample": "LK-PC7", "eg": 3.10, "eu_mev": 65.0,
          "b": 29.0,            # F(R∞) amplitude, F·E = b(E − Eg)² [eV]
          "f_background": 0.004}  # weak sub-gap absorption: R∞ ≈ 91 % below the edge
R_NOISE = 0.002                 # 0.2 % R, absolute

TWO_ONSET = {"file": "LK-BVO-2_A.csv", "sample": "LK-BVO-2", "d_nm": 220.0,
             "eg_ind": 2.40, "eu_ind_mev": 45.0, "b_ind": 1.5e5,       # cm⁻¹·eV⁻¹
             "eg_dir": 2.85, "eu_dir_mev": 30.0, "b_dir": 6.0e5}       # cm⁻¹·eV^(1/2)
A_NOISE = 0.001                 # absolute, in absorbance

THICK = {"file": "LK-ZTO-550-thick_T.dat", "sample": "LK-ZTO-550-thick", "eg": 3.27,
         "eu_mev": 40.0, "d_nm": 1200.0, "stray": 5e-4, "rel_noise": 0.01, "abs_noise": 5e-5}

REFERENCE = {"file": "LK-REF-A1_alpha.txt", "sample": "LK-REF-A1", "eg": 3.36,
             "eu_mev": 18.0, "b": 6.0e5, "background": 1.0, "rel_noise": 0.01,
             "abs_noise": 0.3}


def make_series(rng, entry):
    lam = wavelength_grid_nm()
    e = HC_EV_NM / lam
    alpha = edge_alpha_per_cm(e, entry["eg"], entry["eu_mev"] / 1e3, B_DIRECT, 0.5)
    t = (1 - R_LOSS) * np.exp(-alpha * entry["d_nm"] * 1e-7)
    t = t + rng.normal(0.0, T_NOISE, t.size)
    meta_lines = [("Lab", LAB), ("Sample", entry["sample"]),
                  ("Material", "zinc tin oxide film on fused silica"),
                  ("Annealing temperature (C)", str(entry["anneal_c"])),
                  ("Thickness", f"{entry['d_nm']:g} nm"),
                  ("Reference", "bare substrate in the reference beam")]
    d = entry["dialect"]
    if d == "comma":
        head = [f"{k}: {v}" for k, v in meta_lines] + ["", "Wavelength (nm),%T"]
        rows = [f"{fmt(x, 1)},{fmt(100 * y, 3)}" for x, y in zip(lam, t)]
        write_text(entry["file"], "\n".join(head + rows) + "\n", "utf-8", "\r\n")
        detected = {"quantity": "transmittance", "x_unit": "nm", "y_unit": "percent"}
    elif d == "semicolon-latin1":
        # A European export: key;value lines, a Latin-1 degree sign and micro sign, decimal
        # comma, thickness in µm, and the scan running from long to short wavelength.
        pairs = [(k, v) for k, v in meta_lines if k != "Thickness"]
        pairs += [("Thickness (µm)", f"{entry['d_nm'] / 1e3:.3f}".replace(".", ",")),
                  ("Messtemperatur", "23 °C"), ("Scan", "900 nm → 250 nm")]
        head = [f"{k};{v}" for k, v in pairs] + ["", "Wellenlänge (nm);T (%)"]
        rows = [f"{fmt(x, 1)};{fmt(100 * y, 3)}".replace(".", ",")
                for x, y in zip(lam[::-1], t[::-1])]
        text = "\n".join(head + rows) + "\n"
        text = text.replace("→", "->")          # not in Latin-1
        write_text(entry["file"], text, "latin-1", "\r\n")
        detected = {"quantity": "transmittance", "x_unit": "nm", "y_unit": "percent"}
    else:   # tab-separated, photon-energy axis, T as a fraction
        head = [f"{k}: {v}" for k, v in meta_lines] + ["hv (eV)\tT"]
        order = np.argsort(e)
        rows = [f"{fmt(e[i], 5)}\t{fmt(t[i], 5)}" for i in order]
        write_text(entry["file"], "\n".join(head + rows) + "\n", "utf-8")
        detected = {"quantity": "transmittance", "x_unit": "ev", "y_unit": "fraction"}
    anneal = {"Annealing temperature (C)": str(entry["anneal_c"])}
    return manifest_entry(
        entry, series="LK-ZTO anneal series", transition="direct", eg_direct=entry["eg"],
        eu_mev=entry["eu_mev"], thickness_nm=entry["d_nm"], points=lam.size, **detected,
        metadata=anneal, file_metadata=anneal,
        physics=f"direct allowed (r=1/2), B={B_DIRECT:g} cm^-1 eV^0.5, "
                f"T=(1-{R_LOSS})exp(-alpha d), noise {T_NOISE * 100:g} %T absolute")


def make_powder(rng):
    p = POWDER
    lam = wavelength_grid_nm(250, 800)
    e = HC_EV_NM / lam
    f_km = edge_alpha_per_cm(e, p["eg"], p["eu_mev"] / 1e3, p["b"], 2.0)   # F = K/S ∝ α
    f_km = f_km + p["f_background"]
    r = kubelka_munk_inverse(f_km) + rng.normal(0.0, R_NOISE, lam.size)
    head = ["# Diffuse reflectance of a powder against a white reflectance standard",
            f"# Lab: {LAB}", f"# Sample: {p['sample']}",
            "# Material: oxide photocatalyst powder, batch 7, pressed in a powder cell",
            "# Accessory: integrating sphere", "#",
            "# Wavelength (nm)    R_diffuse (%)"]
    rows = [f"{fmt(x, 1):>8}  {fmt(100 * y, 3):>9}" for x, y in zip(lam, r)]
    write_text(p["file"], "\n".join(head + rows) + "\n", "ascii")
    return manifest_entry(
        p, series="LK-PC photocatalyst powders", transition="indirect", eg_indirect=p["eg"],
        eu_mev=p["eu_mev"], quantity="diffuse-reflectance", x_unit="nm", y_unit="percent",
        points=lam.size,
        physics=f"indirect allowed (r=2), F(R)*E={p['b']:g}(E-Eg)^2 above Et, plus a "
                f"constant F={p['f_background']:g} (sub-gap absorption); R=KM inverse, "
                f"noise {R_NOISE * 100:g} %R absolute")


def make_two_onset(rng):
    p = TWO_ONSET
    lam = wavelength_grid_nm(300, 850)
    e = HC_EV_NM / lam
    alpha = (edge_alpha_per_cm(e, p["eg_ind"], p["eu_ind_mev"] / 1e3, p["b_ind"], 2.0)
             + edge_alpha_per_cm(e, p["eg_dir"], p["eu_dir_mev"] / 1e3, p["b_dir"], 0.5))
    a = alpha * p["d_nm"] * 1e-7 / np.log(10) + rng.normal(0.0, A_NOISE, lam.size)
    head = [f"Lab,{LAB}", f"Sample,{p['sample']}",
            "Material,vanadate film with a minority phase (two absorption onsets)",
            f"Thickness,{p['d_nm']:g} nm", "Mode,absorbance against the bare substrate", "",
            "Wavelength (nm),Abs"]
    rows = [f"{fmt(x, 1)},{fmt(y, 5)}" for x, y in zip(lam, a)]
    write_text(p["file"], "\n".join(head + rows) + "\n", "utf-8")
    return manifest_entry(
        p, series="LK-BVO vanadate films", transition="direct+indirect",
        eg_direct=p["eg_dir"], eg_indirect=p["eg_ind"], eu_mev=p["eu_ind_mev"],
        eu_direct_mev=p["eu_dir_mev"], thickness_nm=p["d_nm"], quantity="absorbance",
        x_unit="nm", y_unit="absorbance", points=lam.size,
        file_metadata={"Thickness": f"{p['d_nm']:g} nm"},
        physics=f"alpha = indirect(r=2, B={p['b_ind']:g}) + direct(r=1/2, B={p['b_dir']:g}),"
                f" each with its Urbach tail; A = alpha d/ln10, noise {A_NOISE:g} absolute")


def make_thick(rng):
    p = THICK
    lam = wavelength_grid_nm()
    e = HC_EV_NM / lam
    alpha = edge_alpha_per_cm(e, p["eg"], p["eu_mev"] / 1e3, B_DIRECT, 0.5)
    t_true = (1 - R_LOSS) * np.exp(-alpha * p["d_nm"] * 1e-7) + p["stray"]
    t = t_true + rng.normal(0.0, 1.0, lam.size) * (p["rel_noise"] * t_true + p["abs_noise"])
    saturated = int(np.sum((1 - R_LOSS) * np.exp(-alpha * p["d_nm"] * 1e-7) < 1e-3))
    head = ["# quick scan, high speed, wide slit (noisy)", f"# Lab: {LAB}",
            f"# Sample: {p['sample']}", "# Material: zinc tin oxide, thick film, annealed 550 C",
            f"# Thickness: {p['d_nm']:g} nm", "# lambda/nm   %T"]
    rows = [f"{fmt(x, 1)}  {fmt(100 * y, 4)}" for x, y in zip(lam, t)]
    write_text(p["file"], "\n".join(head + rows) + "\n", "ascii")
    return manifest_entry(
        p, series="LK-ZTO thick films", transition="direct", eg_direct=p["eg"],
        eu_mev=p["eu_mev"], thickness_nm=p["d_nm"], saturated_points=saturated,
        stray_light_t=p["stray"], quantity="transmittance", x_unit="nm", y_unit="percent",
        points=lam.size,
        physics=f"direct allowed (r=1/2), B={B_DIRECT:g}; T read = (1-{R_LOSS})exp(-alpha d)"
                f" + {p['stray']:g} stray light; noise {p['rel_noise'] * 100:g} % relative +"
                f" {p['abs_noise']:g} absolute")


def make_reference(rng):
    p = REFERENCE
    nu = np.arange(20000.0, 35000.0 + 1, 25.0)            # cm⁻¹
    e = HC_EV_NM * nu * 1e-7
    alpha = edge_alpha_per_cm(e, p["eg"], p["eu_mev"] / 1e3, p["b"], 0.5) + p["background"]
    alpha = alpha + rng.normal(0.0, 1.0, nu.size) * (p["rel_noise"] * alpha + p["abs_noise"])
    head = [f"Lab: {LAB}", f"Sample: {p['sample']}",
            "Material: reference oxide crystal; absorption coefficient from a modelled "
            "ellipsometry fit", "Wavenumber (cm-1)\talpha (1/cm)"]
    rows = [f"{nu_:.0f}\t{a:.5g}" for nu_, a in zip(nu, alpha)]
    write_text(p["file"], "\n".join(head + rows) + "\n", "utf-8")
    return manifest_entry(
        p, series="LK-REF reference crystals", transition="direct", eg_direct=p["eg"],
        eu_mev=p["eu_mev"], quantity="absorption-coefficient", x_unit="cm-1", y_unit="per_cm",
        points=nu.size,
        physics=f"direct allowed (r=1/2), B={p['b']:g}, + {p['background']:g} cm^-1 "
                f"background; noise {p['rel_noise'] * 100:g} % relative + "
                f"{p['abs_noise']:g} cm^-1")


def main() -> list:
    rng = np.random.default_rng(SEED)
    entries = [make_series(rng, s) for s in SERIES]
    entries += [make_powder(rng), make_two_onset(rng), make_thick(rng), make_reference(rng)]
    (HERE / "manifest_core.json").write_text(json.dumps(entries, indent=2, ensure_ascii=False)
                                             + "\n", encoding="utf-8")
    print(f"wrote {len(entries)} spectra and manifest_core.json to {HERE}")
    return entries


if __name__ == "__main__":
    main()
