"""Interactive reports: Plotly figures and HTML pages drawn from an analysis result.

Everything here *draws* a result dict (``EdgeResult.to_dict(arrays=True)``): nothing is fitted.
The only computations are those of drawing: the Tauc ordinate of the measured α through
:func:`edgefit.edge.tauc.tauc_ordinate`, the fitted straight lines from their stored slope and
intercept, residuals of the data about those lines, and ln α.

Public functions
----------------
figures(result)                     the panels of one report as plain Plotly figure dicts
build_report(result, plotly_js=)    one report as an HTML string
write_report(result, path, ...)     the same, written to a file
summary_rows(results), summary_csv  the batch table as dicts and as CSV text
trend_figure(rows, key)             Eg and Eu against a numeric metadata value
build_summary(rows, ...)            the batch summary page as an HTML string
write_batch(results, out_dir, ...)  reports, one shared plotly.min.js, summary.html, summary.csv

plotly.js always comes from the installed ``plotly`` package, never from a network: inline
(one self-contained file) or as a relative path to one shared copy (batch output, archive).
"""
from __future__ import annotations

import csv
import html
import io
import json
import math
import re
from pathlib import Path

import numpy as np

from .edge.tauc import ORDINATE_LABEL, cody_ordinate, tauc_ordinate

__all__ = ["PALETTE", "PLOTLY_JS_NAME", "figures", "build_report", "write_report",
           "summary_rows", "summary_csv", "trend_figure", "numeric_metadata",
           "build_summary", "write_batch", "plotly_js_source"]

#: File name of the shared plotly.js copy written beside batch reports.
PLOTLY_JS_NAME = "plotly.min.js"

#: Colour roles. Chosen for colour-vision deficiencies: the pairs that must be told apart
#: (data against fit, trusted against excluded, one model against another) differ in lightness
#: and along the blue–orange axis, and every line also differs in dash or marker shape.
PALETTE = {
    "data": "#1d4f91",          # trusted points: deep blue
    "excluded": "#a7a7a7",      # excluded points: grey, open markers
    "fit": "#d8660b",           # fitted straight lines: orange
    "window": "rgba(232, 160, 40, 0.20)",     # the fitted window: light amber
    "stretch": "rgba(80, 80, 80, 0.09)",      # other linear stretches: light grey
    "spread": "#8a2f6b",        # Eg of each acceptable window: dark magenta ticks
    "model_direct": "#c2470a",
    "model_indirect": "#13857a",
    "model_direct+indirect": "#5b3a99",
    "baseline": "#13857a",
    "upper": "#c2470a",
    "lower": "#13857a",
    "ink": "#1f2933",
    "grid": "#e3e1da",
}

_MODEL_DASH = {"direct": "solid", "indirect": "dash", "direct+indirect": "dot"}
_PRIMARY = ("direct-allowed", "indirect-allowed")
_SECONDARY = ("direct-forbidden", "indirect-forbidden")
_TRANSITION_WORDS = {
    "direct-allowed": "direct allowed", "indirect-allowed": "indirect allowed",
    "direct-forbidden": "direct forbidden", "indirect-forbidden": "indirect forbidden",
    "cody": "Cody (constant dipole matrix element)",
}
_ALPHA_SYMBOL = {"absolute": "α", "relative": "αd", "kubelka-munk": "F"}
_ALPHA_UNIT = {"absolute": "cm⁻¹", "relative": "", "kubelka-munk": ""}
_MAX_RUG = 120          # acceptable windows drawn as ticks (evenly subsampled beyond this)
_SIG_X, _SIG_Y = 6, 4   # significant digits kept for drawing (x: energy, wavelength; y: values)


# ============================================================================ small helpers

def _esc(value) -> str:
    """HTML-escape any value (names, metadata and messages are data, never markup)."""
    return html.escape("" if value is None else str(value), quote=True)


def _get(d, *keys, default=None):
    """d[k1][k2]... tolerating None blocks and missing keys."""
    for k in keys:
        if not isinstance(d, dict):
            return default
        d = d.get(k)
    return default if d is None else d


def _arr(values) -> np.ndarray:
    """A float array (None → NaN)."""
    if values is None:
        return np.zeros(0)
    return np.array([np.nan if v is None else v for v in values], dtype=float) \
        if isinstance(values, list) else np.asarray(values, dtype=float)


def _finite(x) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool) and math.isfinite(x)


def _acceptable_rows(entry: dict) -> list:
    """The listed acceptable windows [lo, hi, Eg] of a Tauc entry with finite numbers."""
    return [w for w in entry.get("acceptable_windows") or []
            if isinstance(w, list) and len(w) >= 3 and all(_finite(v) for v in w[:3])]


def _windows_drawn(entry: dict) -> tuple[int, int]:
    """(ticks drawn, acceptable windows of the stretch): the result lists an even selection
    when there are many, the plot draws at most ``_MAX_RUG`` of those, and the spread is over
    all of them (a stretch of one window lists none)."""
    listed = len(_acceptable_rows(entry))
    total = int((entry.get("uncertainty") or {}).get("n_windows") or 0)
    return min(listed, _MAX_RUG), max(total, listed)


def _drawn_of(entry: dict) -> str:
    """The legend's count of acceptable windows: " (12)", or "(100 of 553)" on a line of its
    own (the legend does not wrap) when fewer are drawn than the stretch has."""
    drawn, total = _windows_drawn(entry)
    return f"<br>({drawn} of {total})" if total > drawn else f" ({drawn})"


def _decimals(err, floor=2, ceil=5) -> int:
    """Decimals that show two significant digits of ``err``."""
    if not _finite(err) or err <= 0:
        return max(floor, 3)
    return int(min(ceil, max(floor, 1 - math.floor(math.log10(err)))))


def fmt_pm(value, err, unit="", *, floor=2, ceil=5) -> str:
    """'1.6001 ± 0.0018 eV' (the error with two significant digits); '—' when unknown;
    without an error, four significant digits ('1500 nm', '1.600 eV')."""
    if not _finite(value):
        return "—"
    if not _finite(err) or err <= 0:
        return f"{_sig4(value)} {unit}".strip()
    dec = _decimals(err, floor, ceil)
    if round(err, dec) == 0:          # never print "± 0"
        dec = _decimals(err, floor, 12)
    text = f"{value:.{dec}f}"
    if _finite(err):
        text += f" ± {err:.{dec}f}"
    return f"{text} {unit}".strip()


def _sig4(value) -> str:
    if abs(value) >= 1000:
        return f"{value:.0f}"
    return f"{value:.4g}" if abs(value) >= 1e-3 else f"{value:.3g}"


def _mev(value_ev) -> str:
    """An energy in eV written in meV with two significant digits ('0.041 meV', '13 meV')."""
    v = value_ev * 1e3
    return f"{v:.2g} meV" if abs(v) < 10 else f"{v:.0f} meV"


def _fmt_window(w, unit="eV") -> str:
    if not isinstance(w, (list, tuple)) or len(w) != 2 or not all(_finite(v) for v in w):
        return "—"
    return f"{w[0]:.3f}–{w[1]:.3f} {unit}"


def _list(values):
    """Plain list for a figure dict: NaN/inf become None."""
    return [None if not np.isfinite(v) else float(v) for v in np.asarray(values, dtype=float)]


def _power_suffix(label: str) -> str:
    """'(αhν)^(1/2)' → '^(1/2)'; '(αhν)²' → '²'."""
    return label[label.index(")") + 1:] if ")" in label else ""


def ordinate_title(transition: str, alpha_kind: str = "absolute") -> str:
    """Axis title of a Tauc (or Cody) ordinate with its unit."""
    label = ORDINATE_LABEL[transition].replace("α", _ALPHA_SYMBOL.get(alpha_kind, "α"))
    unit = _ALPHA_UNIT.get(alpha_kind, "")
    base = ("cm⁻¹/eV" if unit else "1/eV") if transition == "cody" else \
        (f"{unit}·eV" if unit else "eV")
    return f"{label} [({base}){_power_suffix(ORDINATE_LABEL[transition])}]"


def _alpha_title(data) -> str:
    return data.get("alpha_label") or {"absolute": "α [cm⁻¹]", "relative": "α·d (relative)",
                                       "kubelka-munk": "F(R∞) Kubelka–Munk"}.get(
        data.get("alpha_kind"), "α")


def _alpha_hover_unit(kind) -> str:
    return " cm⁻¹" if kind == "absolute" else ""


_X_TITLE = {"nm": "Wavelength λ [nm]", "um": "Wavelength λ [µm]", "ev": "Photon energy hν [eV]",
            "cm-1": "Wavenumber ν̃ [cm⁻¹]"}
_X_HOVER = {"nm": ("λ", " nm"), "um": ("λ", " µm"), "ev": ("hν", " eV"), "cm-1": ("ν̃", " cm⁻¹")}
_Q_WORD = {"transmittance": "Transmittance T", "reflectance": "Reflectance R",
           "absorbance": "Absorbance A (decadic)", "absorption-coefficient": "α",
           "diffuse-reflectance": "Diffuse reflectance R∞"}
_Y_UNIT = {"fraction": "fraction", "percent": "%", "absorbance": "", "per_cm": "cm⁻¹"}

E_TITLE = "Photon energy hν [eV]"


def _axis(title, **kw) -> dict:
    ax = {"title": {"text": title}, "showline": True, "linecolor": "#8b8f94", "mirror": True,
          "ticks": "outside", "gridcolor": PALETTE["grid"], "zeroline": False,
          "exponentformat": "power", "automargin": True}
    ax.update(kw)
    return ax


def _layout(title, xaxis, yaxis, *, height=420, **kw) -> dict:
    lay = {"title": {"text": title, "x": 0.01, "xanchor": "left", "font": {"size": 15}},
           "xaxis": xaxis, "yaxis": yaxis, "height": height, "autosize": True,
           "margin": {"l": 78, "r": 22, "t": 46, "b": 58},
           "paper_bgcolor": "white", "plot_bgcolor": "white",
           "font": {"family": "system-ui, -apple-system, 'Segoe UI', Roboto, sans-serif",
                    "size": 12, "color": PALETTE["ink"]},
           "legend": {"orientation": "h", "x": 0, "y": -0.2, "yanchor": "top",
                      "font": {"size": 11}, "entrywidthmode": "fraction", "entrywidth": 0.5},
           "hovermode": "closest", "shapes": [], "annotations": []}
    lay.update(kw)
    return lay


def _vband(x0, x1, fill, *, yref="y domain", layer="below", name=None) -> dict:
    shape = {"type": "rect", "xref": "x", "yref": yref, "x0": x0, "x1": x1, "y0": 0, "y1": 1,
             "fillcolor": fill, "line": {"width": 0}, "layer": layer}
    if name:
        shape["name"] = name
    return shape


def _note(text, *, x=0.5, y=0.5) -> dict:
    return {"text": text, "xref": "paper", "yref": "paper", "x": x, "y": y, "showarrow": False,
            "font": {"size": 13, "color": "#6b7280"}, "bgcolor": "rgba(255,255,255,0.85)"}


def _callout(x, y, text, ax, ay, **kw) -> dict:
    """A boxed value with a leader line to the point (x, y) in data coordinates."""
    ann = {"x": x, "y": y, "xref": "x", "yref": "y", "text": text, "showarrow": True,
           "arrowhead": 0, "ax": ax, "ay": ay, "bgcolor": "rgba(255,255,255,0.9)",
           "bordercolor": "#c9c6bd", "font": {"size": 13}}
    ann.update(kw)
    return ann


def _window_label(lo, hi, text, yref) -> dict:
    """A label centred above the window [lo, hi]."""
    return {"x": (lo + hi) / 2, "y": 1, "xref": "x", "yref": yref, "yanchor": "bottom",
            "showarrow": False, "text": text, "font": {"size": 11, "color": PALETTE["fit"]}}


def _trusted_arrays(result):
    """(energy, alpha, trusted mask) of the data block, or None."""
    data = result.get("data") or {}
    e, a = _arr(data.get("energy_ev")), _arr(data.get("alpha"))
    if e.size == 0 or e.size != a.size:
        return None
    t = data.get("trusted")
    mask = np.asarray([bool(v) for v in t], dtype=bool) if t is not None and len(t) == e.size \
        else np.isfinite(a)
    return e, a, mask


def _data_traces(e, values, ok, hover, *, excluded=True) -> list[dict]:
    """The trusted points as a line and the excluded ones as open grey markers, both on the
    full energy grid (NaN elsewhere): one shared x array, and few SVG nodes for long spectra."""
    v = np.asarray(values, dtype=float)
    out = [{"type": "scatter", "mode": "lines", "name": "trusted points", "x": _list(e),
            "y": _list(np.where(ok, v, np.nan)), "connectgaps": False,
            "line": {"color": PALETTE["data"], "width": 1.6},
            "hovertemplate": hover + "<extra>trusted</extra>"}]
    if excluded and (~ok & np.isfinite(v)).any():
        out.append({"type": "scatter", "mode": "markers",
                    "name": "excluded (saturated or below noise)", "x": _list(e),
                    "y": _list(np.where(~ok, v, np.nan)),
                    "marker": {"color": PALETTE["excluded"], "size": 5, "symbol": "circle-open"},
                    "hovertemplate": hover + "<extra>excluded</extra>"})
    return out


# ============================================================================ figures

def figure_measured(result) -> dict | None:
    """The measured spectrum as imported (file order, file units)."""
    m = _get(result, "data", "measured")
    if not m:
        return None
    x, y = _arr(m.get("x")), _arr(m.get("y"))
    xu, yu, q = m.get("x_unit", ""), m.get("y_unit", ""), m.get("quantity", "")
    yword = _Q_WORD.get(q, q or "value")
    yunit = _Y_UNIT.get(yu, yu)
    ytitle = f"{yword} [{yunit}]" if yunit else yword
    xs, xunit = _X_HOVER.get(xu, ("x", f" {xu}"))
    trace = {"type": "scatter", "mode": "lines", "name": "as measured", "x": _list(x),
             "y": _list(y), "line": {"color": PALETTE["data"], "width": 1.5},
             "hovertemplate": f"{xs} %{{x:.5g}}{xunit}<br>{_esc(yword)} %{{y:.4g}}"
                              f"{' ' + yunit if yunit and yunit != 'fraction' else ''}"
                              "<extra></extra>"}
    lay = _layout(f"Measured spectrum, as imported ({x.size} points)",
                  _axis(_X_TITLE.get(xu, xu)), _axis(ytitle), height=380)
    lay["showlegend"] = False
    return {"data": [trace], "layout": lay}


def figure_alpha(result) -> dict | None:
    """α(E) on a log axis: trusted and excluded points, the continuous edge models, windows."""
    arrs = _trusted_arrays(result)
    if arrs is None:
        return None
    e, a, ok = arrs
    data = result["data"]
    kind = data.get("alpha_kind") or result.get("alpha_kind", "absolute")
    unit = _alpha_hover_unit(kind)
    pos = np.isfinite(a) & (a > 0)
    data_traces = _data_traces(e, np.where(pos, a, np.nan), ok,
                               f"hν %{{x:.4f}} eV<br>α %{{y:.4g}}{unit}")
    for rank, tr in enumerate(data_traces):
        tr["legendrank"] = 100 + rank
    traces = []              # the models first, so that the data line is drawn over them
    models = result.get("models") or {}
    for hyp, curve in (data.get("models") or {}).items():
        me, ma = _arr(_get(curve, "energy_ev")), _arr(_get(curve, "alpha"))
        if me.size == 0 or me.size != ma.size:
            continue
        bic = _get(models, hyp, "bic")
        name = f"{hyp} edge model" + (f" (BIC {bic:.0f})" if _finite(bic) else "")
        traces.append({"type": "scatter", "mode": "lines", "name": name, "x": _list(me),
                       "y": _list(np.where(ma > 0, ma, np.nan)),
                       "line": {"color": PALETTE.get(f"model_{hyp}", PALETTE["ink"]),
                                "width": 2.5, "dash": _MODEL_DASH.get(hyp, "dashdot")},
                       "hovertemplate": f"hν %{{x:.4f}} eV<br>model α %{{y:.4g}}{unit}"
                                        f"<extra>{_esc(hyp)}</extra>", "legendrank": 200})
    traces.extend(data_traces)
    lay = _layout("Absorption coefficient and continuous edge models",
                  _axis(E_TITLE), _axis(_alpha_title(data) + "  (log scale)", type="log", dtick=1),
                  height=420)
    good = a[ok & pos]
    if good.size:
        top = np.nanmax(a[pos])
        lay["yaxis"]["range"] = [math.log10(max(good.min() / 5, top * 1e-7)),
                                 math.log10(top * 2)]
        # open on the trusted range and a margin around it (autoscale shows everything)
        et = e[ok & pos]
        pad = 0.3 * max(et.max() - et.min(), 0.2)
        lay["xaxis"]["range"] = [max(float(e.min()), et.min() - pad),
                                 min(float(e.max()), et.max() + pad)]
    urb = result.get("urbach")
    if urb and isinstance(urb.get("window_ev"), list):
        lo, hi = urb["window_ev"]
        lay["shapes"].append(_vband(lo, hi, "rgba(19, 133, 122, 0.13)", name="urbach-window"))
        lay["annotations"].append({"x": (lo + hi) / 2, "y": 1, "xref": "x", "yref": "paper",
                                   "text": "Urbach", "showarrow": False, "yanchor": "bottom",
                                   "font": {"size": 10, "color": PALETTE["model_indirect"]}})
    for g in result.get("gaps") or []:
        w, eg = g.get("window_ev"), g.get("eg_ev")
        if isinstance(w, list) and len(w) == 2:
            lay["shapes"].append(_vband(w[0], w[1], PALETTE["window"],
                                        name=f"window-{g.get('kind')}"))
        if _finite(eg):
            lay["shapes"].append({"type": "line", "xref": "x", "yref": "paper", "x0": eg,
                                  "x1": eg, "y0": 0, "y1": 1,
                                  "line": {"color": PALETTE["fit"], "width": 1.2,
                                           "dash": "dot"}})
            lay["annotations"].append({"x": eg, "y": 0.02, "xref": "x", "yref": "paper",
                                       "text": f"E<sub>g</sub> {g.get('kind', '')}",
                                       "showarrow": False, "xanchor": "right",
                                       "textangle": -90, "yanchor": "bottom",
                                       "font": {"size": 10, "color": PALETTE["fit"]}})
    e04 = result.get("e04_ev")
    if kind == "absolute" and _finite(e04):
        traces.append({"type": "scatter", "mode": "markers", "name": "E04 (α = 10⁴ cm⁻¹)",
                       "x": [e04], "y": [1e4],
                       "marker": {"symbol": "diamond", "size": 9, "color": PALETTE["ink"]},
                       "hovertemplate": "E04 %{x:.4f} eV<extra></extra>"})
    return {"data": traces, "layout": lay}


def _ordinate(e, a, transition):
    if transition == "cody":
        return cody_ordinate(e, a)
    return tauc_ordinate(e, a, transition)


def _tauc_entry(result, transition):
    return result.get("cody") if transition == "cody" else _get(result, "tauc", transition)


def _over_indirect(result):
    """(entry, energy, α) of the direct Tauc form on α minus the fitted indirect edge (two
    onsets), when the result carries it; else None."""
    entry = result.get("tauc_direct_over_indirect")
    d = _get(result, "data", "direct_over_indirect") or {}
    e, a = _arr(d.get("energy_ev")), _arr(d.get("alpha"))
    if not entry or e.size == 0 or e.size != a.size:
        return None
    return entry, e, a


def figure_tauc(result, transition: str, *, over_indirect: bool = False) -> dict | None:
    """Tauc plot of one hypothesis (or the Cody plot with ``transition="cody"``).

    Top: the ordinate of the trusted points, the fitted line (solid in its window, dashed in
    its extrapolation to the axis), the window shaded, other linear stretches in grey, the
    sub-gap baseline when the gap is its intersection, and ticks under the axis at the Eg of
    every acceptable window (hover: the window). Bottom: the residuals in the window.
    ``over_indirect=True`` draws the direct allowed form of α minus the fitted indirect edge
    (two onsets) from ``tauc_direct_over_indirect`` and ``data.direct_over_indirect``.
    """
    kind = _get(result, "data", "alpha_kind") or result.get("alpha_kind", "absolute")
    if over_indirect:
        got = _over_indirect(result)
        if got is None:
            return None
        entry, e, a = got
        ok = np.isfinite(a) & (a > 0)
    else:
        arrs = _trusted_arrays(result)
        if arrs is None:
            return None
        e, a, ok = arrs
        entry = _tauc_entry(result, transition)
        # the Tauc lines were fitted to α less the sub-gap baseline: draw what was fitted
        base = (result.get("edge_region") or {}).get("baseline_subtracted") or 0.0
        if base:
            a = a - base
            ok = ok & (a > 0)
    y = np.where(ok, _ordinate(e, a, transition), np.nan)
    label = ORDINATE_LABEL[transition].replace("α", _ALPHA_SYMBOL.get(kind, "α"))
    ytitle = ordinate_title(transition, kind)
    words = _TRANSITION_WORDS.get(transition, transition)
    title = (f"Cody plot {label}" if transition == "cody"
             else f"Tauc plot, {words}: {label}")
    if over_indirect:
        title = f"Tauc plot, direct allowed, of α minus the indirect edge: {label}"
    yunit = ytitle[ytitle.index("[") + 1:-1]
    traces = _data_traces(e, y, ok, f"hν %{{x:.4f}} eV<br>{label} %{{y:.4g}} {yunit}",
                          excluded=False)
    traces[0]["name"] = "data (trusted points)"
    lay = _layout(title, _axis("", domain=[0, 1], anchor="y", showticklabels=False),
                  _axis(ytitle, domain=[0.34, 1]), height=540)
    lay["xaxis2"] = _axis(E_TITLE, matches="x", anchor="y2", domain=[0, 1])
    lay["yaxis2"] = _axis("residual", domain=[0, 0.22], anchor="x2", zeroline=True,
                          zerolinecolor="#8b8f94")
    lay["legend"]["y"] = -0.14
    if entry is None or not _finite(entry.get("eg_ev")) or not _finite(entry.get("slope")):
        stopped = _stopped_early(result, transition)
        lay["annotations"].append(_note(f"not searched: {stopped}" if stopped else
                                        f"no linear window found for the {words} form",
                                        y=0.75))
        lay["yaxis2"]["visible"] = False
        lay["xaxis"]["showticklabels"] = True
        lay["xaxis"]["title"] = {"text": E_TITLE}
        lay["yaxis"]["domain"] = [0, 1]
        return {"data": traces, "layout": lay}

    eg, slope, icpt = entry["eg_ev"], entry["slope"], entry["intercept"]
    err = entry.get("eg_err_ev")
    lo, hi = entry["window_ev"]
    width = hi - lo
    in_win = (e >= lo) & (e <= hi)          # contiguous: e ascends
    fit_top = slope * hi + icpt
    ywin = y[in_win & np.isfinite(y)]
    ymax = 1.45 * max(fit_top, float(ywin.max()) if ywin.size else fit_top)
    if not (np.isfinite(ymax) and ymax > 0):
        ymax = float(np.nanmax(y)) if np.isfinite(y).any() else 1.0
    pad = max(0.2, 0.6 * width)
    x0 = max(float(e[ok].min()), min(eg, lo) - pad)
    x1 = min(float(e[ok].max()), hi + pad)
    x0 = min(x0, eg - 0.08 * (x1 - min(eg, lo)))      # the intercept always in view
    lay["xaxis"]["range"] = [x0, x1]
    lay["yaxis"]["range"] = [-0.12 * ymax, ymax]
    # the chosen window and other linear stretches
    lay["shapes"].append(_vband(lo, hi, PALETTE["window"], name="window"))
    for st in entry.get("stretches") or []:
        w = st.get("window_ev")
        if not isinstance(w, list) or len(w) != 2 or (abs(w[0] - lo) < 1e-9
                                                       and abs(w[1] - hi) < 1e-9):
            continue
        lay["shapes"].append(_vband(w[0], w[1], PALETTE["stretch"], name="stretch"))
        if _finite(st.get("eg_ev")):
            lay["annotations"].append({"x": (w[0] + w[1]) / 2, "y": 0.98, "xref": "x",
                                       "yref": "y domain", "showarrow": False,
                                       "text": f"other linear stretch<br>→ {st['eg_ev']:.3f} eV",
                                       "font": {"size": 10, "color": "#5b6270"}})
    lay["shapes"].append({"type": "line", "xref": "x", "yref": "y", "x0": x0, "x1": x1,
                          "y0": 0, "y1": 0, "line": {"color": "#8b8f94", "width": 1}})
    traces.insert(0, {"type": "scatter", "mode": "lines", "name": "fit in the window",
                   "x": [lo, hi], "y": [slope * lo + icpt, fit_top],
                   "line": {"color": PALETTE["fit"], "width": 4}, "hoverinfo": "skip"})
    ext_from = min(eg, lo)
    traces.insert(1, {"type": "scatter", "mode": "lines", "name": "extrapolation to the axis",
                   "x": [ext_from, lo], "y": [slope * ext_from + icpt, slope * lo + icpt],
                   "line": {"color": PALETTE["fit"], "width": 2, "dash": "dash"},
                   "hoverinfo": "skip"})
    # acceptable windows: one tick per window at its Eg
    acc = _acceptable_rows(entry)
    n_acc = len(acc)
    if n_acc:
        pick = np.unique(np.linspace(0, n_acc - 1, min(n_acc, _MAX_RUG)).round().astype(int))
        sub = [acc[i] for i in pick]
        traces.append({"type": "scatter", "mode": "markers",
                       "name": "Eg per acceptable window" + _drawn_of(entry),
                       "x": [round(w[2], 4) for w in sub], "y": [-0.06 * ymax] * len(sub),
                       "customdata": [[round(w[0], 3), round(w[1], 3)] for w in sub],
                       "marker": {"symbol": "line-ns-open", "size": 14, "opacity": 0.45,
                                  "line": {"color": PALETTE["spread"], "width": 1.5},
                                  "color": PALETTE["spread"]},
                       "hovertemplate": "window %{customdata[0]:.3f}–%{customdata[1]:.3f} eV"
                                        "<br>→ Eg %{x:.4f} eV<extra></extra>"})
    eg_text = fmt_pm(eg, err, "eV")
    marker = {"type": "scatter", "mode": "markers", "name": f"Eg = {eg_text}",
              "x": [eg], "y": [0], "marker": {"symbol": "diamond", "size": 11,
                                             "color": PALETTE["ink"]},
              "hovertemplate": f"Eg {eg_text}<extra>axis intercept</extra>"}
    if _finite(err):
        marker["error_x"] = {"type": "constant", "value": err, "color": PALETTE["ink"],
                             "thickness": 1.5, "width": 5}
    traces.append(marker)
    lay["annotations"].append(_callout(eg, 0, f"<b>E<sub>g</sub> = {eg_text}</b>", 30, -70,
                                       xanchor="left"))
    label = f"fitted window {lo:.3f}–{hi:.3f} eV"
    if entry.get("set_aside"):
        label = (f"window {lo:.3f}–{hi:.3f} eV, set aside: "
                 f"{_FLAG_TITLES.get(entry['set_aside'], entry['set_aside']).lower()}")
    lay["annotations"].append(_window_label(lo, hi, label, "y domain"))
    # sub-gap baseline (Makuła et al. 2018) when the gap is the intersection with it
    base = result.get("baseline")
    if base and base.get("transition") == transition and _finite(base.get("eg_ev")) \
            and _finite(base.get("baseline_slope")):
        bx0 = (base.get("baseline_window_ev") or [base["eg_ev"] - 0.1])[0]
        bx1 = base["eg_ev"]
        bs, bi = base["baseline_slope"], base["baseline_intercept"]
        traces.append({"type": "scatter", "mode": "lines", "name": "sub-gap baseline",
                       "x": [bx0, bx1], "y": [bs * bx0 + bi, bs * bx1 + bi],
                       "line": {"color": PALETTE["baseline"], "width": 2, "dash": "dashdot"},
                       "hoverinfo": "skip"})
        traces.append({"type": "scatter", "mode": "markers",
                       "name": f"Eg at the baseline = {bx1:.3f} eV", "x": [bx1],
                       "y": [bs * bx1 + bi],
                       "marker": {"symbol": "star", "size": 12, "color": PALETTE["baseline"]},
                       "hovertemplate": "Eg (baseline intersection) %{x:.4f} eV<extra></extra>"})
    # residuals in the window
    resid = y[in_win] - (slope * e[in_win] + icpt)
    traces.append({"type": "scatter", "mode": "markers", "name": "residual in the window",
                   "x": _list(e[in_win]), "y": _list(resid), "xaxis": "x2", "yaxis": "y2",
                   "marker": {"color": PALETTE["fit"], "size": 4}, "showlegend": False,
                   "hovertemplate": f"hν %{{x:.4f}} eV<br>residual %{{y:.3g}} {yunit}"
                                    "<extra></extra>"})
    lay["shapes"].append(_vband(lo, hi, PALETTE["window"], yref="y2 domain",
                                name="window-residuals"))
    return {"data": traces, "layout": lay}


def figure_urbach(result) -> dict | None:
    """ln α against E with the Urbach fit and its window."""
    arrs = _trusted_arrays(result)
    if arrs is None:
        return None
    e, a, ok = arrs
    kind = _get(result, "data", "alpha_kind") or result.get("alpha_kind", "absolute")
    pos = np.isfinite(a) & (a > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        ln = np.where(pos, np.log(np.where(pos, a, 1.0)), np.nan)
    sym = {"absolute": "ln α  (α in cm⁻¹)", "relative": "ln(α·d)",
           "kubelka-munk": "ln F(R∞)"}.get(kind, "ln α")
    traces = _data_traces(e, ln, ok, "hν %{x:.4f} eV<br>ln α %{y:.4g}")
    lay = _layout("Urbach plot: ln α against photon energy", _axis(E_TITLE), _axis(sym),
                  height=420)
    urb = result.get("urbach")
    if not urb or not _finite(urb.get("slope_per_ev")) or not isinstance(urb.get("window_ev"),
                                                                          list):
        lay["annotations"].append(_note("no exponential (Urbach) region was found", y=0.85))
        return {"data": traces, "layout": lay}
    lo, hi = urb["window_ev"]
    m, c = urb["slope_per_ev"], urb.get("ln_alpha_intercept", 0.0)
    w = hi - lo
    x0, x1 = lo - max(0.15, 1.5 * w), hi + max(0.25, 2 * w)
    sel = ok & pos & (e >= x0) & (e <= x1)
    if sel.any():
        y0, y1 = float(np.nanmin(ln[sel])), float(np.nanmax(ln[sel]))
        lay["yaxis"]["range"] = [y0 - 0.08 * (y1 - y0 + 1e-9), y1 + 0.12 * (y1 - y0 + 1e-9)]
        lay["xaxis"]["range"] = [max(x0, float(e.min())), min(x1, float(e.max()))]
    lay["shapes"].append(_vband(lo, hi, PALETTE["window"], name="window"))
    eu_text = fmt_pm(urb.get("eu_mev"), urb.get("eu_err_mev"), "meV", floor=1, ceil=3)
    # the tail on its fitted sub-gap baseline b: ln(b + exp(m·E + c))
    b = ((urb.get("baseline") or {}).get("alpha") or 0.0) if isinstance(urb.get("baseline"),
                                                                        dict) else 0.0

    def curve(x0_, x1_):
        xs = np.linspace(x0_, x1_, 40)
        return xs.tolist(), np.log(b + np.exp(m * xs + c)).tolist()
    xs, ys = curve(lo, hi)
    traces.append({"type": "scatter", "mode": "lines", "name": f"Urbach fit, Eu = {eu_text}"
                   + (" (on its baseline)" if b else ""), "x": xs, "y": ys,
                   "line": {"color": PALETTE["fit"], "width": 3}, "hoverinfo": "skip"})
    xs, ys = curve(lo - 0.5 * w, hi + 0.5 * w)
    traces.append({"type": "scatter", "mode": "lines", "name": "fit extended",
                   "x": xs, "y": ys,
                   "line": {"color": PALETTE["fit"], "width": 1.5, "dash": "dash"},
                   "hoverinfo": "skip"})
    mid_e = (lo + hi) / 2
    lay["annotations"].append(_callout(mid_e, float(np.log(b + np.exp(m * mid_e + c))),
                                       f"<b>E<sub>u</sub> = {eu_text}</b>", -70, -50))
    lay["annotations"].append(_window_label(lo, hi, f"window {lo:.3f}–{hi:.3f} eV", "paper"))
    return {"data": traces, "layout": lay}


def _extrema_records(ext, kind_wanted):
    """Extrema of one kind ("max" or "min") as dicts with at least ``wavelength_nm``: from a
    list of records (``kind``, ``used``, ``t_upper``/``t_lower``, ``order``, ``d_nm``, ...) or
    from ``{"maxima_nm": [...], "minima_nm": [...]}``."""
    out = []
    if isinstance(ext, dict):
        for lam in ext.get("maxima_nm" if kind_wanted == "max" else "minima_nm") or []:
            if _finite(lam):
                out.append({"wavelength_nm": lam})
    elif isinstance(ext, list):
        for x in ext:
            if not isinstance(x, dict) or not _finite(x.get("wavelength_nm")):
                continue
            k = x.get("kind")
            is_max = k in ("max", "maximum") or (_finite(k) and k > 0)
            if is_max == (kind_wanted == "max"):
                out.append(x)
    return out


def _film_drawing(result):
    """Whatever fringe data the result carries, on one wavelength grid: the drawing block
    ``data.film`` (wavelength_nm, t, tm_upper, tm_lower, fringe_free_t, extrema records) with
    the ``film`` block as a fallback, and the measured spectrum when that is T against λ."""
    film = result.get("film") or {}
    dfilm = _get(result, "data", "film") or {}
    src = {**{k: v for k, v in film.items() if v is not None},
           **{k: v for k, v in dfilm.items() if v is not None}}
    m = _get(result, "data", "measured") or {}
    lam = _arr(src["wavelength_nm"]) if src.get("wavelength_nm") is not None else None
    t = _arr(src["t"]) if src.get("t") is not None else None
    if t is None and m.get("quantity") == "transmittance" and m.get("x_unit") in ("nm", "um"):
        mx = _arr(m.get("x")) * (1e3 if m.get("x_unit") == "um" else 1.0)
        my = _arr(m.get("y")) * (0.01 if m.get("y_unit") == "percent" else 1.0)
        if lam is None or (mx.size == lam.size and np.allclose(mx, lam)):
            lam, t = mx, my
    if lam is not None and t is not None and t.size != lam.size:
        t = None

    def on_grid(key):
        v = src.get(key)
        if v is None or lam is None:
            return None
        v = _arr(v)
        return v if v.size == lam.size else None

    ext = src.get("extrema")
    return {"lam": lam, "t": t, "upper": on_grid("tm_upper"), "lower": on_grid("tm_lower"),
            "free": on_grid("fringe_free_t"), "maxima": _extrema_records(ext, "max"),
            "minima": _extrema_records(ext, "min"), "film": film}


def figure_fringes(result) -> dict | None:
    """Interference fringes: measured T, the envelopes T_M and T_m, the extrema used."""
    fd = _film_drawing(result)
    if fd["upper"] is None and fd["lower"] is None and not fd["maxima"] and not fd["minima"]:
        return None
    lam, t = fd["lam"], fd["t"]
    traces = []
    if t is not None:
        traces.append({"type": "scatter", "mode": "lines", "name": "measured T", "x": _list(lam),
                       "y": _list(t), "line": {"color": PALETTE["data"], "width": 1.3},
                       "hovertemplate": "λ %{x:.1f} nm<br>T %{y:.4f}<extra></extra>"})
    for key, name, dash in (("upper", "upper envelope T<sub>M</sub>", "solid"),
                            ("lower", "lower envelope T<sub>m</sub>", "dash"),
                            ("free", "fringe-free √(T<sub>M</sub>T<sub>m</sub>)", "dot")):
        v = fd[key]
        if v is not None:
            colour = PALETTE["upper"] if key == "upper" else (
                PALETTE["lower"] if key == "lower" else PALETTE["ink"])
            traces.append({"type": "scatter", "mode": "lines", "name": name, "x": _list(lam),
                           "y": _list(v), "line": {"color": colour, "width": 1.8, "dash": dash},
                           "hovertemplate": f"λ %{{x:.1f}} nm<br>{name} %{{y:.4f}}"
                                            "<extra></extra>"})
    fin = None
    if t is not None and lam is not None:
        order = np.argsort(lam)
        ls, ts = lam[order], t[order]
        fin = np.isfinite(ts)
    for recs, name, sym, tkey in ((fd["maxima"], "maxima", "triangle-up", "t_upper"),
                                  (fd["minima"], "minima", "triangle-down", "t_lower")):
        for flag, label, fill in ((True, f"{name} used", sym),
                                  (False, f"{name} not used", sym + "-open")):
            sel = [r for r in recs if bool(r.get("used", True)) == flag]
            if not sel:
                continue
            xs = [float(r["wavelength_nm"]) for r in sel]
            ys = [r[tkey] if _finite(r.get(tkey)) else
                  (float(np.interp(x, ls[fin], ts[fin])) if fin is not None and fin.any()
                   else None) for r, x in zip(sel, xs)]
            if all(v is None for v in ys):
                continue
            info = [[r.get("order"), r.get("d_nm"), r.get("n_refined") or r.get("n_envelope")]
                    for r in sel]
            traces.append({"type": "scatter", "mode": "markers", "name": label, "x": xs,
                           "y": ys, "customdata": info,
                           "marker": {"symbol": fill, "size": 9,
                                      "color": PALETTE["upper"] if name == "maxima"
                                      else PALETTE["lower"]},
                           "hovertemplate": f"{name[:-1]}um λ %{{x:.1f}} nm<br>T %{{y:.4f}}"
                                            "<br>order %{customdata[0]}<br>d %{customdata[1]:.1f}"
                                            " nm<br>n %{customdata[2]:.3f}<extra></extra>"})
    film = fd["film"]
    bits = []
    if _finite(film.get("thickness_nm")):
        bits.append("d = " + fmt_pm(film["thickness_nm"], film.get("thickness_err_nm"), "nm",
                                    floor=0, ceil=0))
    for k, v in list((film.get("n") or {}).items())[:3]:
        if _finite(v):
            bits.append(f"n({_esc(k)}) = {v:.3f}")
    lay = _layout("Interference fringes and their envelopes", _axis("Wavelength λ [nm]"),
                  _axis("Transmittance T [fraction]"), height=420)
    if bits:
        lay["annotations"].append({"text": "<br>".join(bits), "xref": "paper",
                                   "yref": "paper", "x": 0.99, "y": 0.04, "xanchor": "right",
                                   "yanchor": "bottom", "showarrow": False, "align": "right",
                                   "bgcolor": "rgba(255,255,255,0.9)", "font": {"size": 12}})
    return {"data": traces, "layout": lay}


def figures(result: dict) -> list[dict]:
    """The panels of a report, in page order.

    Each panel is ``{"id", "title", "caption", "group", "figure"}`` where ``figure`` is a plain
    Plotly figure dict (``data``, ``layout``) and ``group`` is ``"main"`` or ``"secondary"``
    (the forbidden transitions and the Cody plot, shown collapsed).
    """
    panels = []
    gaps = result.get("gaps") or []

    def reported(tr, entry):
        return any(g.get("transition") == tr and entry and _finite(g.get("eg_ev"))
                   and g.get("window_ev") == entry.get("window_ev")
                   and (abs(g["eg_ev"] - (entry.get("eg_ev") or math.inf)) < 1e-9
                        or g.get("eg_axis_intercept_ev") == entry.get("eg_ev")) for g in gaps)

    def tauc_caption(entry):
        drawn, total = _windows_drawn(entry)
        u = entry.get("uncertainty") or {}
        if total >= 2:
            windows = (f"{total} acceptable windows, ticks under the axis"
                       + (f" ({drawn} drawn)" if total > drawn else ""))
        else:
            windows = "one acceptable window" if total == 1 else ""
        spread = (f"window spread of Eg {u['window_spread_ev'] * 1e3:.1f} meV ("
                  + ("over the acceptable windows and " if total >= 2 else "")
                  + "when either end moves by one point)"
                  if _finite(u.get("window_spread_ev")) else "")
        return (f"Fitted window {_fmt_window(entry.get('window_ev'))} "
                f"({entry.get('n_points', '?')} points, {entry.get('window_choice', '')}). "
                f"Eg = {fmt_pm(entry.get('eg_ev'), entry.get('eg_err_ev'), 'eV')}"
                + "".join(f"; {t}" for t in (windows, spread) if t)
                + ". Residuals below: look for curvature.")

    def add(pid, title, caption, fig, group="main"):
        if fig is not None:
            panels.append({"id": pid, "title": title, "caption": caption, "group": group,
                           "figure": fig})

    for tr in _PRIMARY + _SECONDARY + ("cody",):
        entry = _tauc_entry(result, tr)
        if tr == "cody" and entry is None:
            continue
        words = _TRANSITION_WORDS[tr]
        if entry:
            cap = tauc_caption(entry)
            if reported(tr, entry):
                cap = "Reported gap. " + cap
        else:
            cap = f"The {words} form has no linear stretch: the data do not follow it."
        title = "Cody plot" if tr == "cody" else f"Tauc, {words}"
        add(f"tauc-{tr}", title, cap, figure_tauc(result, tr),
            "main" if tr in _PRIMARY else "secondary")
        over = _over_indirect(result) if tr == "direct-allowed" else None
        if over is not None:
            cap = ("Two onsets: the direct edge stands on the indirect absorption, so its Tauc "
                   "form is taken of α minus the fitted indirect edge. " + tauc_caption(over[0]))
            if reported(tr, over[0]):
                cap = "Reported gap. " + cap
            add("tauc-direct-over-indirect", "Tauc, direct allowed, over the indirect edge", cap,
                figure_tauc(result, tr, over_indirect=True))
        elif tr == "direct-allowed" and panels and panels[-1]["id"] == "tauc-direct-allowed" \
                and any("minus the fitted indirect" in str(g.get("method")) for g in gaps):
            panels[-1]["caption"] += (" The reported direct gap comes from α minus the fitted "
                                      "indirect edge, which this result does not carry to draw.")
    add("alpha", "Absorption coefficient",
        "Filled: points the analysis trusts; open grey: excluded (saturated or under the noise "
        "floor). Lines: the continuous edge models compared by BIC. Amber: Tauc windows; "
        "teal: Urbach window.", figure_alpha(result))
    add("urbach", "Urbach tail",
        "ln α is straight where the tail is exponential; Eu is the inverse slope.",
        figure_urbach(result))
    add("fringes", "Interference fringes",
        "Envelopes through the fringe extrema give thickness and refractive index "
        "(Swanepoel 1983). Open markers: extrema not used.", figure_fringes(result))
    add("measured", "Measured spectrum",
        "The data as read from the file, before any conversion.", figure_measured(result))
    return sorted(panels, key=lambda p: p["group"] != "main")


# ============================================================================ serialisation

def _is_num_list(v) -> bool:
    return (isinstance(v, list) and len(v) >= 16
            and all(x is None or (isinstance(x, (int, float)) and not isinstance(x, bool))
                    for x in v))


def _num_text(v, sig) -> str:
    """Shortest JSON text of ``v`` rounded to ``sig`` significant digits ('12340', not
    '1.234e+04'; '1.2e-5', not '1.2e-05')."""
    s = format(v, f".{sig}g")
    if "e" not in s:
        return s
    mant, exp = s.split("e")
    exp = int(exp)
    if 0 < exp < 15:
        alt = str(int(round(float(s))))
        if len(alt) <= len(mant) + 2 + len(str(exp)):
            return alt
    return f"{mant}e{exp}"


def _num_json(values, sig) -> str:
    out = []
    for v in values:
        out.append("null" if v is None or not math.isfinite(v) else _num_text(v, sig))
    return "[" + ",".join(out) + "]"


def _uniform(values):
    """(start, step) when ``values`` is an evenly spaced grid (to 1e-9 of its span)."""
    if len(values) < 16 or any(v is None for v in values):
        return None
    a = np.asarray(values, dtype=float)
    step = (a[-1] - a[0]) / (a.size - 1)
    if step == 0 or not np.isfinite(step):
        return None
    if np.max(np.abs(a - (a[0] + step * np.arange(a.size)))) > 1e-9 * abs(a[-1] - a[0]):
        return None
    return float(a[0]), float(step)


def _safe_json(obj) -> str:
    """JSON that can sit inside a <script> element (no '<', '>', '&' left raw)."""
    text = json.dumps(obj, ensure_ascii=False, separators=(",", ":"), allow_nan=False)
    return text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026") \
        .replace("\u2028", "\\u2028").replace("\u2029", "\\u2029")


def _pack(figs: list[dict]) -> str:
    """One JSON payload for all figures, compact enough to keep a standalone report of a
    2,000-point spectrum under 5 MB with plotly.js inside.

    Long numeric arrays are rounded for drawing and stored once in a table that traces refer
    to: ``{"$a": i}`` (array i), ``{"$s": [i, start, n]}`` (a contiguous slice of it, e.g. the
    energies of a window), ``{"$r": [start, step, n]}`` (an evenly spaced grid). Resolution:
    x to 1e-6 of its largest magnitude; y on a linear axis to 1e-4 of the axis span (its range,
    or the array's largest magnitude); y on a log axis to 4 significant digits. Rounded arrays
    travel as integers in units of 10^e (``{"e": e, "v": [...]}``), as their successive
    differences when that is shorter (``"d": 1``), blanks left out and given as run lengths
    absent, present, absent, ... (``"g": [...]``); log-axis arrays as ``{"v": [...]}``.
    """
    entries, index, first = [], {}, []

    def store(key, entry, ints=None):
        if key not in index:
            index[key] = len(entries)
            entries.append(entry)
            pos = {}
            for i, n in enumerate(ints or ()):
                pos.setdefault(n, i)
            first.append((key[0], key[1], ints, pos))
        return {"$a": index[key]}

    def quantise(values, exp):
        return tuple(None if v is None or not math.isfinite(v) else int(round(v / 10.0 ** exp))
                     for v in values)

    def int_entry(ints, exp):
        entry = {"e": exp}
        if None in ints:      # blanks travel as run lengths: absent, present, absent, ...
            runs, present, count = [], False, 0
            for n in ints:
                if (n is not None) != present:
                    runs.append(count)
                    present, count = not present, 0
                count += 1
            runs.append(count)
            entry["g"] = "[" + ",".join(map(str, runs)) + "]"
            ints = [n for n in ints if n is not None]
        plain = ",".join(map(str, ints))
        entry["v"] = "[" + plain + "]"
        if ints:
            diffs = [ints[0]] + [b - a for a, b in zip(ints, ints[1:])]
            dtext = ",".join(map(str, diffs))
            if len(dtext) < len(plain):
                entry.update(d=1, v="[" + dtext + "]")
        return entry

    def largest(values):
        return max((abs(v) for v in values if v is not None and math.isfinite(v)), default=0.0)

    def intern_x(values):
        grid = _uniform(values)
        if grid is not None:
            return {"$r": [grid[0], grid[1], len(values)]}
        top = largest(values)
        if top == 0:
            return values
        exp = math.floor(math.log10(top)) - (_SIG_X - 1)
        ints = quantise(values, exp)
        key = ("x", exp, ints)
        if key in index:
            return {"$a": index[key]}
        for j, (kind, e, other, pos) in enumerate(first):
            i = pos.get(ints[0]) if kind == "x" and e == exp else None
            if i is not None and other[i:i + len(ints)] == ints:
                return {"$s": [j, i, len(ints)]}
        return store(key, int_entry(ints, exp), ints)

    def intern_y(values, axis):
        if axis.get("type") == "log":
            text = _num_json(values, _SIG_Y)
            return store(("log", 0, text), {"v": text})
        rng = axis.get("range")
        if isinstance(rng, list) and len(rng) == 2 and all(_finite(v) for v in rng):
            span = abs(rng[1] - rng[0])
        else:
            span = largest(values)
        if span == 0:
            return values
        exp = math.floor(math.log10(span)) - _SIG_Y
        ints = quantise(values, exp)
        return store(("y", exp, ints), int_entry(ints, exp))

    out = []
    for f in figs:
        data = []
        layout = f["figure"]["layout"]
        for tr in f["figure"]["data"]:
            tr = dict(tr)
            if _is_num_list(tr.get("x")):
                tr["x"] = intern_x(tr["x"])
            if _is_num_list(tr.get("y")):
                ax = layout.get("yaxis" + str(tr.get("yaxis", "y"))[1:]) or {}
                tr["y"] = intern_y(tr["y"], ax)
            data.append(tr)
        out.append({"id": f["id"], "data": data, "layout": layout})
    table = ",".join("{" + ",".join(f'"{k}":{v}' for k, v in e.items()) + "}" for e in entries)
    return '{"arrays":[' + table + '],"figures":' + _safe_json(out) + "}"


_DRAW_JS = r"""
(function () {
  "use strict";
  var payload = JSON.parse(document.getElementById("ef-payload").textContent);
  var A = payload.arrays.map(function (t) {
    if (t.e === undefined) { return t.v; }
    var v = t.v, vals = new Array(v.length), acc = 0, i, j, k;
    var scale = Math.pow(10, Math.abs(t.e)), up = t.e >= 0;
    for (i = 0; i < v.length; i++) {
      acc = t.d ? acc + v[i] : v[i];
      vals[i] = up ? acc * scale : acc / scale;
    }
    if (!t.g) { return vals; }
    var out = [];
    for (j = 0, k = 0; j < t.g.length; j++) {
      for (i = 0; i < t.g[j]; i++) { out.push(j % 2 ? vals[k++] : null); }
    }
    return out;
  });
  function resolve(o) {
    if (Array.isArray(o)) { return o.map(resolve); }
    if (o && typeof o === "object") {
      if (Object.prototype.hasOwnProperty.call(o, "$a")) { return A[o.$a]; }
      if (Object.prototype.hasOwnProperty.call(o, "$s")) {
        return A[o.$s[0]].slice(o.$s[1], o.$s[1] + o.$s[2]);
      }
      if (Object.prototype.hasOwnProperty.call(o, "$r")) {
        var g = o.$r, out = new Array(g[2]);
        for (var i = 0; i < g[2]; i++) { out[i] = g[0] + g[1] * i; }
        return out;
      }
      var r = {};
      Object.keys(o).forEach(function (k) { r[k] = resolve(o[k]); });
      return r;
    }
    return o;
  }
  var config = {responsive: true, displaylogo: false, scrollZoom: false,
                modeBarButtonsToRemove: ["lasso2d", "select2d"],
                toImageButtonOptions: {format: "svg", filename: payload.filename || "edgefit"}};
  function missing() {
    document.querySelectorAll(".ef-plot").forEach(function (div) {
      div.innerHTML = '<p class="ef-noplot">The plots need plotly.js, which was not found: ' +
        'keep the file <code>' + (payload.plotly || "plotly.min.js") + '</code> beside this ' +
        'report (the numbers above do not need it).</p>';
    });
  }
  function resizeAll() {
    document.querySelectorAll(".js-plotly-plot").forEach(function (d) {
      if (d.offsetWidth > 0) { window.Plotly.Plots.resize(d); }
    });
  }
  function draw() {
    if (typeof window.Plotly === "undefined") { missing(); return; }
    payload.figures.forEach(function (f) {
      var div = document.getElementById(f.id);
      if (div) { window.Plotly.newPlot(div, resolve(f.data), f.layout, config); }
    });
    document.querySelectorAll("details").forEach(function (d) {
      d.addEventListener("toggle", function () { if (d.open) { resizeAll(); } });
    });
    var opened = [];
    window.addEventListener("beforeprint", function () {
      document.querySelectorAll("details:not([open])").forEach(function (d) {
        d.open = true; opened.push(d);
      });
      resizeAll();
    });
    window.addEventListener("afterprint", function () {
      opened.forEach(function (d) { d.open = false; }); opened = []; resizeAll();
    });
  }
  if (document.readyState === "loading") {
    document.addEventListener("DOMContentLoaded", draw);
  } else { draw(); }
})();
"""


def plotly_js_source() -> str:
    """plotly.js (minified) as shipped by the installed ``plotly`` package."""
    from plotly.offline import get_plotlyjs
    return get_plotlyjs()


def _plotly_tag(plotly_js: str) -> str:
    if plotly_js == "inline":
        return "<script>" + plotly_js_source() + "</script>"
    if re.match(r"^[a-z][a-z0-9+.-]*:", plotly_js, re.I) or plotly_js.startswith("//"):
        raise ValueError(f"plotly_js must be 'inline' or a relative path, got {plotly_js!r}: "
                         "reports never load scripts from a network")
    return f'<script src="{_esc(plotly_js)}"></script>'


# ============================================================================ the page

CSS = """
:root { --ink:#1f2933; --muted:#5d6673; --paper:#f4f3ee; --card:#ffffff; --line:#d9d6cc;
        --accent:#d8660b; --blue:#1d4f91; --teal:#13857a; --violet:#5b3a99; --warn:#9a4a00; }
* { box-sizing: border-box; }
html { background: var(--paper); }
body { margin: 0 auto; max-width: 1260px; padding: 20px 22px 48px; color: var(--ink);
       font: 14px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, sans-serif; }
a { color: var(--blue); }
code, .mono { font-family: ui-monospace, "SFMono-Regular", Menlo, Consolas, monospace;
              font-size: 12.5px; }
.ef-head { display: grid; grid-template-columns: 1fr auto; gap: 6px 24px; align-items: end;
           border-bottom: 3px solid var(--ink); padding-bottom: 12px; margin-bottom: 16px; }
.ef-kicker { font-size: 12px; letter-spacing: .08em; text-transform: uppercase;
             color: var(--muted); }
.ef-head h1 { margin: 2px 0 0; font-size: 26px; line-height: 1.15; word-break: break-word; }
.ef-sub { color: var(--muted); word-break: break-all; }
.ef-back { font-size: 13px; }
.ef-verdict { justify-self: end; text-align: right; }
.ef-badge { display: inline-block; padding: 5px 14px; border-radius: 999px; font-weight: 650;
            font-size: 15px; color: #fff; background: var(--ink); }
.ef-badge.v-direct { background: var(--blue); }
.ef-badge.v-indirect { background: var(--teal); }
.ef-badge.v-direct-indirect { background: var(--violet); }
.ef-badge.v-ambiguous { background: #fff; color: var(--warn); border: 2px solid var(--warn); }
.ef-grid { display: grid; grid-template-columns: repeat(3, minmax(0, 1fr)); gap: 14px; }
.ef-card { background: var(--card); border: 1px solid var(--line); border-radius: 6px;
           padding: 12px 14px; min-width: 0; }
.ef-card h2 { margin: 0 0 8px; font-size: 12px; letter-spacing: .07em; text-transform: uppercase;
              color: var(--muted); }
.ef-card.wide { grid-column: span 2; }
.ef-card.full { grid-column: 1 / -1; }
.ef-big { font-size: 21px; font-weight: 650; font-variant-numeric: tabular-nums; }
.ef-gap { padding: 6px 0 8px; border-bottom: 1px dashed var(--line); }
.ef-gap:last-child { border-bottom: 0; }
.ef-kind { font-weight: 650; }
.ef-small { color: var(--muted); font-size: 12.5px; }
.ef-cand { color: var(--warn); font-weight: 600; }
table { border-collapse: collapse; width: 100%; }
th, td { text-align: left; padding: 3px 8px 3px 0; vertical-align: top;
         border-bottom: 1px solid #eeece6; font-variant-numeric: tabular-nums; }
th { font-weight: 600; color: var(--muted); font-size: 12.5px; }
td.num, th.num { text-align: right; }
.ef-flags { list-style: none; margin: 0; padding: 0; }
.ef-flags li { padding: 5px 0 5px 10px; border-left: 3px solid var(--accent); margin-bottom: 6px;
               background: #fff8f0; }
.ef-flags li.note { border-left-color: #9aa1ab; background: #f6f6f4; }
.ef-flags b { display: block; font-size: 12.5px; }
.ef-panels { display: grid; grid-template-columns: repeat(2, minmax(0, 1fr)); gap: 14px;
             margin-top: 18px; }
.ef-panel { margin: 0; background: var(--card); border: 1px solid var(--line); border-radius: 6px;
            padding: 8px 8px 4px; min-width: 0; }
.ef-panel.full { grid-column: 1 / -1; }
.ef-panel figcaption { padding: 2px 6px 6px; color: var(--muted); font-size: 12.5px; }
.ef-panel figcaption b { color: var(--ink); }
.ef-plot { width: 100%; min-height: 200px; }
.ef-noplot { padding: 40px 16px; color: var(--warn); }
details.ef-more { margin-top: 16px; }
details.ef-more > summary { cursor: pointer; font-weight: 600; padding: 8px 0; }
.ef-caution { margin-top: 18px; padding: 12px 16px; border: 1px solid #e4c9a3;
              background: #fffaf2; border-radius: 6px; }
.ef-caution h2 { margin: 0 0 6px; font-size: 14px; }
.ef-caution ul { margin: 0; padding-left: 20px; }
.ef-prov { margin-top: 18px; }
.ef-foot { margin-top: 22px; color: var(--muted); font-size: 12px; }
.ef-summary-table td:first-child { min-width: 150px; }
.ef-summary-table th button { all: unset; cursor: pointer; color: var(--ink); font-weight: 650; }
.ef-summary-table th button:focus-visible { outline: 2px solid var(--blue); }
.ef-summary-table th[aria-sort="ascending"] button::after { content: " ▲"; font-size: 10px; }
.ef-summary-table th[aria-sort="descending"] button::after { content: " ▼"; font-size: 10px; }
.ef-summary-table tbody tr:hover { background: #f3f6fb; }
.ef-tag { display: inline-block; font-size: 11px; padding: 1px 6px; margin: 1px 2px 1px 0;
          border-radius: 3px; background: #fdecd9; color: #6a3300; white-space: nowrap; }
.ef-tag.note { background: #ecedef; color: #3b4450; }
.ef-controls { display: flex; gap: 10px; align-items: center; margin: 6px 0 4px; }
select { font: inherit; padding: 3px 6px; }
@media (max-width: 900px) {
  .ef-grid, .ef-panels { grid-template-columns: minmax(0, 1fr); }
  .ef-card.wide { grid-column: auto; }
}
@media print {
  html, body { background: #fff; }
  body { max-width: none; padding: 0; font-size: 11px; }
  .ef-grid { grid-template-columns: repeat(3, minmax(0, 1fr)); }
  .ef-panels { grid-template-columns: minmax(0, 1fr); }
  .ef-panel, .ef-card, .ef-caution, tr { break-inside: avoid; }
  .ef-panel { border: 0; padding: 0; }
  .modebar, .ef-back, .ef-controls { display: none !important; }
  a { color: inherit; text-decoration: none; }
  @page { margin: 14mm; }
}
"""

CAUTION_ITEMS = (
    "A Tauc gap is an estimate that depends on the assumed transition and on the fitted "
    "window: check that the shaded window sits on the straight part of the edge and that the "
    "residuals show no curvature.",
    "The ± value is one standard deviation combining the fit, a bootstrap and the spread of Eg "
    "over all acceptable windows; it does not cover a wrong choice of transition.",
    "An error in the film thickness scales α, not the gap: Eg and Eu do not depend on it; "
    "absolute α and E04 do.",
    "Known limits of Tauc analysis: excitonic absorption near the edge, heavy doping "
    "(Burstein–Moss shift), quantum confinement, strong band tails and sub-gap absorption "
    "(defects, second phases) all bias or invalidate the straight-line extrapolation.",
)

_FLAG_TITLES = {
    "noise-floor": "Points under the noise floor excluded",
    "saturation-excluded": "Saturated points excluded",
    "few-points-in-window": "Few points in the fitted window",
    "edge-near-data-end": "Edge close to the end of the data",
    "exciton-suspected": "Excitonic peak suspected",
    "verdict-uncertain": "Transition type undecided",
    "higher-transition": "Window above the absorption edge",
    "model-disagrees": "Tauc line and edge model disagree",
    "steeper-edge-above": "Window below the real edge",
    "absorption-falls-above": "Absorption falls above the window",
    "edge-at-steepest-rise": "Gaps from the edge models at the steepest rise",
    "reflection-losses": "Reflection counted as absorption",
    "subgap-absorption": "Sub-gap absorption",
    "no-urbach-region": "No Urbach tail found",
    "gap-from-model": "Gap taken from the edge model",
    "no-linear-window": "No linear Tauc window",
    "too-few-points": "Too few trusted points",
    "no-absorption-edge": "No absorption edge in the data",
    "weak-edge-contrast": "Weak absorption contrast",
    "reader": "While reading the file",
    "fringes-found": "Interference fringes analysed",
    "range-limited": "Analysis limited to an energy range",
}
_NOTE_FLAGS = {"noise-floor", "saturation-excluded", "reader", "fringes-found",
               "range-limited"}


#: Flags with which the edge analysis stops before any window search
_STOPPING_FLAGS = ("no-absorption-edge", "too-few-points")


def _stopped_early(result, transition=None) -> str | None:
    """Why the edge analysis stopped before searching the windows (of ``transition``, or of
    any form), in lower-case words, or None."""
    codes = {f.get("code") for f in result.get("flags") or []}
    stop = next((c for c in _STOPPING_FLAGS if c in codes), None)
    if stop:
        return flag_title(stop).lower()
    if "no-linear-window" in codes and transition in ("direct-forbidden", "indirect-forbidden",
                                                      "cody"):
        return "no allowed Tauc form has a linear window"
    return None


def flag_title(code: str) -> str:
    """Plain-words title of a flag code."""
    return _FLAG_TITLES.get(code) or (str(code).replace("-", " ").replace("_", " ")
                                      .capitalize() or "Note")


def _verdict_class(t) -> str:
    return "v-" + re.sub(r"[^a-z]+", "-", str(t or "ambiguous").lower()).strip("-")


def _gaps_html(result) -> str:
    gaps = result.get("gaps") or []
    if not gaps:
        return '<p class="ef-small">No gap could be reported (see the flags).</p>'
    out = []
    for g in gaps:
        u = g.get("uncertainty") or {}
        comp = []
        if _finite(u.get("fit_stderr_ev")):
            comp.append(f"fit {_mev(u['fit_stderr_ev'])}")
        if _finite(u.get("bootstrap_sd_ev")):
            comp.append(f"bootstrap {_mev(u['bootstrap_sd_ev'])}")
        if _finite(u.get("window_spread_ev")):
            comp.append(f"window spread {_mev(u['window_spread_ev'])} over "
                        f"{u.get('n_windows', '?')} windows")
        cand = ' <span class="ef-cand">candidate</span>' if g.get("candidate") else ""
        axis = ""
        if _finite(g.get("eg_axis_intercept_ev")):
            axis = (f'<div class="ef-small">axis intercept would give '
                    f'{g["eg_axis_intercept_ev"]:.3f} eV</div>')
        out.append(
            f'<div class="ef-gap"><span class="ef-kind">{_esc(g.get("kind", "?"))} gap</span>'
            f'{cand}<div class="ef-big">E<sub>g</sub> = '
            f'{_esc(fmt_pm(g.get("eg_ev"), g.get("eg_err_ev"), "eV"))}</div>'
            f'<div class="ef-small">window {_esc(_fmt_window(g.get("window_ev")))} · '
            f'{_esc(g.get("method", ""))}</div>'
            + (f'<div class="ef-small">± from: {_esc("; ".join(comp))}</div>' if comp else "")
            + axis + "</div>")
    return "".join(out)


_EVIDENCE_NAMES = {"magnitude": "magnitude of α", "straightness": "straight Tauc span",
                   "edge_models": "edge models (ΔBIC)"}


def _verdict_html(result) -> str:
    v = result.get("verdict") or {}
    ev = v.get("evidence") or {}
    items = ev.get("items") or {}
    rows = [f"<tr><td>{_esc(_EVIDENCE_NAMES.get(k, k))}</td>"
            f"<td>{_esc(it.get('favours') or 'neither')}</td>"
            f"<td>{_esc(it.get('strength') or '—')}</td><td>{_esc(it.get('text', ''))}</td></tr>"
            for k, it in items.items() if isinstance(it, dict)]
    table = ("<table><thead><tr><th>evidence</th><th>favours</th><th>strength</th><th></th>"
             "</tr></thead><tbody>" + "".join(rows) + "</tbody></table>") if rows else ""
    strength = v.get("strength")
    return (f'<p><span class="ef-badge {_verdict_class(v.get("transition"))}">'
            f'{_esc(v.get("transition") or result.get("transition") or "—")}</span>'
            + (f' <span class="ef-small">{_esc(strength)} evidence</span>' if strength else "")
            + f'</p><p>{_esc(v.get("reason", ""))}</p>'
            f'<details><summary class="ef-small">all evidence</summary>{table}</details>'
            '<p class="ef-small">Each item favours a kind with a strength; the magnitude of α, '
            'where α is absolute, counts three times (the README of edgefit gives the '
            'weights). ΔBIC: the difference of the Bayesian information criterion of the '
            'continuous edge models (above about 10 is decisive).</p>')


def _urbach_html(result) -> str:
    u = result.get("urbach")
    stopped = _stopped_early(result)
    parts = []
    if u and _finite(u.get("eu_mev")):
        unc = u.get("uncertainty") or {}
        parts.append(f'<div class="ef-big">E<sub>u</sub> = '
                     f'{_esc(fmt_pm(u["eu_mev"], u.get("eu_err_mev"), "meV", floor=1, ceil=3))}'
                     f'</div><div class="ef-small">window {_esc(_fmt_window(u.get("window_ev")))}'
                     + (f' · {u["decades"]:.1f} decades of α' if _finite(u.get("decades"))
                        else "")
                     + (f' · spread over {unc.get("n_windows")} windows'
                        if unc.get("n_windows") else "") + "</div>")
    elif stopped:
        parts.append(f'<p class="ef-small">Not searched: {_esc(stopped)}.</p>')
    else:
        parts.append('<p class="ef-small">No exponential tail was found below the edge.</p>')
    e04 = result.get("e04_ev")
    if _finite(e04):
        parts.append(f'<div style="margin-top:8px"><b>E04</b> = {e04:.3f} eV '
                     '<span class="ef-small">(where α = 10⁴ cm⁻¹)</span></div>')
    conv = _get(result, "data", "conversion")
    if conv:
        parts.append(f'<div class="ef-small" style="margin-top:8px">α from: {_esc(conv)}</div>')
    if result.get("alpha_kind") and result.get("alpha_kind") != "absolute":
        parts.append(f'<div class="ef-small">α is {_esc(result["alpha_kind"])}: known only up '
                     'to a factor (gaps and Eu are unaffected).</div>')
    return "".join(parts)


def _film_html(result) -> str:
    f = result.get("film")
    if not f:
        return '<p class="ef-small">No film thickness known (α is relative).</p>' \
            if result.get("alpha_kind") == "relative" else \
            '<p class="ef-small">Not a film measurement, or no thickness given.</p>'
    parts = []
    if _finite(f.get("thickness_nm")):
        src = {"user": "given by the user", "fringes": "from the interference fringes"}.get(
            f.get("thickness_source"), f.get("thickness_source") or "")
        parts.append(f'<div class="ef-big">d = '
                     f'{_esc(fmt_pm(f["thickness_nm"], f.get("thickness_err_nm"), "nm", floor=0, ceil=0))}'
                     f'</div><div class="ef-small">{_esc(src)}</div>')
    else:
        parts.append('<p class="ef-small">Thickness unknown.</p>')
    n = {k: v for k, v in (f.get("n") or {}).items() if _finite(v)}
    if n:
        parts.append('<div style="margin-top:6px"><b>n</b> = '
                     + ", ".join(f'<span style="white-space:nowrap">{v:.3f} at {_esc(k)}</span>'
                                 for k, v in n.items()) + "</div>")
    c = f.get("cauchy")
    if isinstance(c, dict) and _finite(c.get("a")) and _finite(c.get("b_nm2")):
        parts.append(f'<div class="ef-small">Cauchy n(λ) = {c["a"]:.3f} + '
                     f'{c["b_nm2"]:.4g} nm²/λ²</div>')
    if f.get("method"):
        parts.append(f'<div class="ef-small">{_esc(f["method"])}</div>')
    return "".join(parts)


def _flags_html(result) -> str:
    flags = result.get("flags") or []
    if not flags:
        return '<p class="ef-small">No quality flags.</p>'
    items = []
    for fl in flags:
        code = fl.get("code", "") if isinstance(fl, dict) else str(fl)
        msg = fl.get("message", "") if isinstance(fl, dict) else ""
        cls = "note" if code in _NOTE_FLAGS else "warn"
        items.append(f'<li class="{cls}"><b>{_esc(flag_title(code))}</b>{_esc(msg)} '
                     f'<span class="ef-small">[{_esc(code)}]</span></li>')
    return '<ul class="ef-flags">' + "".join(items) + "</ul>"


def _flatten(d, prefix=""):
    out = []
    for k, v in (d or {}).items():
        key = f"{prefix}{k}"
        if isinstance(v, dict):
            out.extend(_flatten(v, key + "."))
        else:
            out.append((key, v))
    return out


def _value_text(v) -> str:
    if v is None:
        return "—"
    if isinstance(v, float):
        return f"{v:.6g}"
    if isinstance(v, (list, tuple)):
        return ", ".join(_value_text(x) for x in v)
    return str(v)


def _provenance_html(result) -> str:
    rows = [("file", result.get("source")), ("sha256", result.get("sha256")),
            ("column", result.get("column")), ("quantity", result.get("quantity")),
            ("edgefit version", result.get("version")), ("analysed", result.get("created"))]
    prov = "".join(f"<tr><th>{_esc(k)}</th><td class='mono'>{_esc(v or '—')}</td></tr>"
                   for k, v in rows)
    meta = result.get("metadata") or {}
    meta_html = ("<table>" + "".join(f"<tr><th>{_esc(k)}</th><td>{_esc(_value_text(v))}</td>"
                                     "</tr>" for k, v in meta.items()) + "</table>") \
        if meta else '<p class="ef-small">The file carries no metadata lines.</p>'
    opts = _flatten(result.get("options") or {})
    opt_html = "<table>" + "".join(f"<tr><th class='mono'>{_esc(k)}</th>"
                                   f"<td class='mono'>{_esc(_value_text(v))}</td></tr>"
                                   for k, v in opts) + "</table>"
    return (f'<div class="ef-grid ef-prov">'
            f'<section class="ef-card"><h2>Provenance</h2><table>{prov}</table></section>'
            f'<section class="ef-card"><h2>File metadata</h2>{meta_html}</section>'
            f'<section class="ef-card"><h2>Options of the analysis</h2>'
            f'<details><summary class="ef-small">{len(opts)} options</summary>{opt_html}'
            f'</details></section></div>')


def _panels_html(panels) -> str:
    def one(p, full=False):
        return (f'<figure class="ef-panel{" full" if full else ""}">'
                f'<div class="ef-plot" id="{_esc(p["id"])}" role="img" '
                f'style="height:{int(p["figure"]["layout"].get("height", 420))}px" '
                f'aria-label="{_esc(p["title"])}"></div>'
                f'<figcaption><b>{_esc(p["title"])}.</b> {_esc(p["caption"])}</figcaption>'
                "</figure>")
    main = [p for p in panels if p["group"] == "main"]
    sec = [p for p in panels if p["group"] != "main"]
    html_main = '<section class="ef-panels">' + "".join(one(p) for p in main) + "</section>"
    html_sec = ""
    if sec:
        html_sec = ('<details class="ef-more"><summary>Other forms: forbidden transitions'
                    + (" and the Cody plot" if any(p["id"] == "tauc-cody" for p in sec) else "")
                    + f' ({len(sec)} plots)</summary><section class="ef-panels">'
                    + "".join(one(p) for p in sec) + "</section></details>")
    return html_main + html_sec


def _page(title, body, plotly_tag, payload, script) -> str:
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
            f"<meta name=\"generator\" content=\"edgefit\"><title>{_esc(title)}</title>"
            f"<style>{CSS}</style></head><body>{body}"
            f"{plotly_tag}"
            f'<script type="application/json" id="ef-payload">{payload}</script>'
            f"<script>{script}</script></body></html>\n")


def _payload_with(packed: str, extra: dict) -> str:
    return packed[:-1] + "," + _safe_json(extra)[1:]


def build_report(result: dict, *, plotly_js: str = "inline", summary_href: str | None = None
                 ) -> str:
    """The interactive report of one analysis result, as an HTML string.

    Parameters
    ----------
    result : dict
        ``EdgeResult.to_dict(arrays=True)`` (without the ``data`` block only the summary is
        shown).
    plotly_js : str
        ``"inline"`` embeds plotly.js from the installed plotly package (one self-contained
        file); otherwise a relative path to a shared copy, e.g. ``"plotly.min.js"`` or
        ``"../plotly.min.js"``. Absolute URLs are refused: reports never use a network.
    summary_href : str, optional
        Relative link back to a batch summary page.
    """
    tag = _plotly_tag(plotly_js)
    panels = figures(result)
    sample = result.get("sample") or result.get("source") or "spectrum"
    sub = " · ".join(_esc(x) for x in (result.get("source"), result.get("column") and
                                        f"column {result['column']}",
                                        result.get("quantity")) if x)
    back = (f'<a class="ef-back" href="{_esc(summary_href)}">← batch summary</a>'
            if summary_href else "")
    v = result.get("verdict") or {}
    transition = v.get("transition") or result.get("transition") or "—"
    no_data = "" if panels else (
        '<p class="ef-noplot">This result carries no arrays to draw (it was saved without '
        'its data block), so only the numbers are shown.</p>')
    body = (
        f'<header class="ef-head"><div><div class="ef-kicker">edgefit · absorption-edge '
        f'report {back}</div><h1>{_esc(sample)}</h1><div class="ef-sub">{sub}</div></div>'
        f'<div class="ef-verdict"><div class="ef-kicker">transition</div>'
        f'<span class="ef-badge {_verdict_class(transition)}">{_esc(transition)}</span></div>'
        "</header>"
        '<div class="ef-grid">'
        f'<section class="ef-card"><h2>Band gap{"s" if len(result.get("gaps") or []) > 1 else ""}'
        f'</h2>{_gaps_html(result)}</section>'
        f'<section class="ef-card"><h2>Verdict and evidence</h2>{_verdict_html(result)}</section>'
        f'<section class="ef-card"><h2>Urbach tail</h2>{_urbach_html(result)}'
        f'<h2 style="margin-top:14px">Film</h2>{_film_html(result)}</section>'
        f'<section class="ef-card full"><h2>Quality flags</h2>{_flags_html(result)}</section>'
        "</div>"
        + no_data + _panels_html(panels)
        + '<aside class="ef-caution"><h2>Read with care</h2><ul>'
        + "".join(f"<li>{_esc(c)}</li>" for c in CAUTION_ITEMS) + "</ul></aside>"
        + _provenance_html(result)
        + f'<p class="ef-foot">Drawn by edgefit {_esc(result.get("version", ""))} from the '
          'stored result; the report computes no fit of its own. Hover a plot for read-outs; '
          'drag to zoom, double-click to reset.</p>')
    fname = re.sub(r"[^A-Za-z0-9_.-]+", "_", str(sample))[:60] or "edgefit"
    payload = _payload_with(_pack(panels), {"filename": fname,
                                            "plotly": plotly_js if plotly_js != "inline"
                                            else "plotly.min.js"})
    return _page(f"{sample} · edgefit report", body, tag, payload, _DRAW_JS)


def write_report(result: dict, path, *, standalone: bool = True,
                 plotly_js: str | None = None, summary_href: str | None = None) -> Path:
    """Write one report. ``standalone=True`` embeds plotly.js (one self-contained file);
    ``standalone=False`` refers to ``plotly_js`` (default ``plotly.min.js`` beside the report)
    and writes that shared copy there when it is missing. Returns the path written."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    if standalone:
        src = "inline"
    else:
        src = plotly_js or PLOTLY_JS_NAME
        _ensure_plotly_copy(path.parent / src)
    path.write_text(build_report(result, plotly_js=src, summary_href=summary_href),
                    encoding="utf-8")
    return path


def _ensure_plotly_copy(target: Path) -> Path:
    js = plotly_js_source()
    target = Path(target)
    if not target.exists() or target.stat().st_size != len(js.encode("utf-8")):
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_text(js, encoding="utf-8")
    return target


# ============================================================================ batch summary

SUMMARY_COLUMNS = (
    "sample", "source", "column", "transition",
    "eg_direct_ev", "eg_direct_err_ev", "direct_window_lo_ev", "direct_window_hi_ev",
    "eg_indirect_ev", "eg_indirect_err_ev", "indirect_window_lo_ev", "indirect_window_hi_ev",
    "eu_mev", "eu_err_mev", "e04_ev", "thickness_nm", "thickness_err_nm", "flags", "report",
)


def summary_rows(results: list[dict], *, report_paths: list | None = None) -> list[dict]:
    """One flat row per result for the batch table (and the CSV).

    Keys are :data:`SUMMARY_COLUMNS`; ``flags`` is a list of codes, ``flag_messages`` the
    plain-words messages, ``candidate`` True when the gaps are candidates of an ambiguous
    verdict, ``metadata`` the file's metadata dict, ``report`` the report's relative path
    (from ``report_paths``) or None.
    """
    rows = []
    for i, r in enumerate(results):
        row = {k: None for k in SUMMARY_COLUMNS}
        row.update(sample=r.get("sample") or r.get("source") or f"spectrum {i + 1}",
                   source=r.get("source"), column=r.get("column"),
                   transition=(r.get("verdict") or {}).get("transition") or r.get("transition"))
        cand = False
        for g in r.get("gaps") or []:
            kind = g.get("kind")
            if kind not in ("direct", "indirect") or row[f"eg_{kind}_ev"] is not None:
                continue
            row[f"eg_{kind}_ev"] = g.get("eg_ev")
            row[f"eg_{kind}_err_ev"] = g.get("eg_err_ev")
            w = g.get("window_ev") or [None, None]
            row[f"{kind}_window_lo_ev"], row[f"{kind}_window_hi_ev"] = (w + [None, None])[:2]
            cand = cand or bool(g.get("candidate"))
        u = r.get("urbach") or {}
        row["eu_mev"], row["eu_err_mev"] = u.get("eu_mev"), u.get("eu_err_mev")
        row["e04_ev"] = r.get("e04_ev")
        f = r.get("film") or {}
        row["thickness_nm"], row["thickness_err_nm"] = f.get("thickness_nm"), \
            f.get("thickness_err_nm")
        flags = [fl for fl in r.get("flags") or [] if isinstance(fl, dict)]
        row["flags"] = [fl.get("code", "") for fl in flags]
        row["flag_messages"] = [fl.get("message", "") for fl in flags]
        row["candidate"] = cand
        row["metadata"] = dict(r.get("metadata") or {})
        row["report"] = str(report_paths[i]) if report_paths and report_paths[i] else None
        rows.append(row)
    return rows


def _csv_value(v):
    if v is None:
        return ""
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, float):
        return "" if not math.isfinite(v) else f"{v:.6g}"
    text = "; ".join(str(x) for x in v) if isinstance(v, (list, tuple)) else str(v)
    # no line breaks inside a cell: the writer leaves a bare "\r" unquoted (a spreadsheet starts
    # a new row there), and a line-by-line reader splits even a quoted "\n"
    if "\r" in text or "\n" in text:
        text = " ".join(text.replace("\r\n", "\n").replace("\r", "\n").split("\n"))
    # a cell a spreadsheet would run as a formula (=, +, -, @ first, also after spaces, no-break
    # spaces or tabs: str.lstrip takes all Unicode whitespace) is kept as text
    if (text.lstrip()[:1] in ("=", "+", "-", "@") or text[:1] == "\t") \
            and not _NUMBER.fullmatch(text.strip()):
        return "'" + text
    return text


def summary_csv(rows: list[dict]) -> str:
    """The batch table as CSV text (comma separated, one header line, metadata keys as extra
    columns after the fixed ones)."""
    meta_keys = []
    for row in rows:
        for k in row.get("metadata") or {}:
            if k not in meta_keys:
                meta_keys.append(k)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(list(SUMMARY_COLUMNS) + [f"meta:{k}" for k in meta_keys])
    for row in rows:
        w.writerow([_csv_value(row.get(k)) for k in SUMMARY_COLUMNS]
                   + [_csv_value((row.get("metadata") or {}).get(k)) for k in meta_keys])
    return buf.getvalue()


_NUMBER = re.compile(r"^\s*([-+]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][-+]?\d+)?)")


def _as_number(v):
    """A metadata value as a number: '350', '350 C', '1,5' → float; otherwise None."""
    if isinstance(v, bool):
        return None
    if isinstance(v, (int, float)):
        return float(v) if math.isfinite(v) else None
    m = _NUMBER.match(str(v)) if v is not None else None
    if not m:
        return None
    try:
        return float(m.group(1).replace(",", "."))
    except ValueError:
        return None


def numeric_metadata(rows: list[dict]) -> list[str]:
    """Metadata keys that hold a number for at least two rows (candidates for a trend)."""
    counts = {}
    for row in rows:
        for k, v in (row.get("metadata") or {}).items():
            if _as_number(v) is not None:
                counts[k] = counts.get(k, 0) + 1
    return [k for k, n in counts.items() if n >= 2]


def trend_figure(rows: list[dict], key: str) -> dict:
    """Eg (by kind, with error bars) and Eu (right axis) against the metadata value ``key``."""
    pts = []
    for row in rows:
        x = _as_number((row.get("metadata") or {}).get(key))
        if x is not None:
            pts.append((x, row))
    pts.sort(key=lambda p: p[0])
    traces = []
    for kind, colour, sym in (("direct", PALETTE["model_direct"], "circle"),
                              ("indirect", PALETTE["model_indirect"], "square")):
        sel = [(x, r) for x, r in pts if _finite(r.get(f"eg_{kind}_ev"))]
        if not sel:
            continue
        traces.append({
            "type": "scatter", "mode": "lines+markers", "name": f"Eg {kind} [eV]",
            "x": [x for x, _ in sel], "y": [r[f"eg_{kind}_ev"] for _, r in sel],
            "error_y": {"type": "data", "array": [r.get(f"eg_{kind}_err_ev") or 0
                                                  for _, r in sel],
                        "visible": True, "color": colour, "thickness": 1.2, "width": 4},
            "text": [_esc(r.get("sample")) for _, r in sel],
            "marker": {"color": colour, "size": 9, "symbol": sym},
            "line": {"color": colour, "width": 1.5, "dash": _MODEL_DASH[kind]},
            "hovertemplate": f"%{{text}}<br>{_esc(key)} %{{x:.4g}}<br>Eg {kind} %{{y:.4f}} eV"
                             "<extra></extra>", "yaxis": "y"})
    sel = [(x, r) for x, r in pts if _finite(r.get("eu_mev"))]
    if sel:
        traces.append({
            "type": "scatter", "mode": "lines+markers", "name": "Eu [meV] (right axis)",
            "x": [x for x, _ in sel], "y": [r["eu_mev"] for _, r in sel],
            "error_y": {"type": "data", "array": [r.get("eu_err_mev") or 0 for _, r in sel],
                        "visible": True, "color": PALETTE["model_direct+indirect"],
                        "thickness": 1.2, "width": 4},
            "text": [_esc(r.get("sample")) for _, r in sel],
            "marker": {"color": PALETTE["model_direct+indirect"], "size": 9,
                       "symbol": "diamond-open", "line": {"width": 2}},
            "line": {"color": PALETTE["model_direct+indirect"], "width": 1.2, "dash": "dot"},
            "hovertemplate": f"%{{text}}<br>{_esc(key)} %{{x:.4g}}<br>Eu %{{y:.1f}} meV"
                             "<extra></extra>", "yaxis": "y2"})
    lay = _layout(f"Gap and Urbach energy against {_esc(key)}", _axis(_esc(key)),
                  _axis("Eg [eV]"), height=430)
    lay["yaxis2"] = _axis("Eu [meV]", overlaying="y", side="right", showgrid=False,
                          tickmode="auto", mirror=False)
    lay["margin"]["r"] = 70
    if not traces:
        lay["annotations"].append(_note(f"no gaps to plot against {_esc(key)}"))
    return {"data": traces, "layout": lay}


_SUMMARY_JS = r"""
(function () {
  "use strict";
  var table = document.getElementById("ef-table");
  if (table) {
    var body = table.tBodies[0];
    table.querySelectorAll("th[data-col]").forEach(function (th) {
      var btn = th.querySelector("button");
      btn.addEventListener("click", function () {
        var col = +th.getAttribute("data-col");
        var numeric = th.getAttribute("data-type") === "num";
        var asc = th.getAttribute("aria-sort") !== "ascending";
        table.querySelectorAll("th[data-col]").forEach(function (o) {
          o.removeAttribute("aria-sort");
        });
        th.setAttribute("aria-sort", asc ? "ascending" : "descending");
        var rows = Array.prototype.slice.call(body.rows);
        rows.sort(function (a, b) {
          var x = a.cells[col].getAttribute("data-sort"), y = b.cells[col].getAttribute("data-sort");
          if (numeric) {
            var fx = x === "" ? NaN : +x, fy = y === "" ? NaN : +y;
            if (isNaN(fx) && isNaN(fy)) { return 0; }
            if (isNaN(fx)) { return 1; }
            if (isNaN(fy)) { return -1; }
            return asc ? fx - fy : fy - fx;
          }
          var c = x.localeCompare(y, undefined, {numeric: true, sensitivity: "base"});
          return asc ? c : -c;
        });
        rows.forEach(function (r) { body.appendChild(r); });
      });
    });
  }
  var payload = JSON.parse(document.getElementById("ef-payload").textContent);
  var div = document.getElementById("ef-trend");
  var select = document.getElementById("ef-trend-key");
  if (!div || !select) { return; }
  if (typeof window.Plotly === "undefined") {
    div.innerHTML = '<p class="ef-noplot">The trend plot needs plotly.js, which was not found: ' +
      'keep <code>plotly.min.js</code> beside this page.</p>';
    return;
  }
  var config = {responsive: true, displaylogo: false,
                modeBarButtonsToRemove: ["lasso2d", "select2d"],
                toImageButtonOptions: {format: "svg", filename: "edgefit-trend"}};
  function show(key) {
    var f = payload.trends[key];
    if (f) { window.Plotly.react(div, f.data, f.layout, config); }
  }
  select.addEventListener("change", function () { show(select.value); });
  show(select.value);
})();
"""


def _num_cell(v, dec=3) -> str:
    if not _finite(v):
        return '<td class="num" data-sort="">—</td>'
    return f'<td class="num" data-sort="{v!r}">{v:.{dec}f}</td>'


def _flag_tags(row) -> str:
    """Warnings as one tag per kind (their messages on hover); notes folded into one tag."""
    codes = row.get("flags") or []
    msgs = row.get("flag_messages") or [""] * len(codes)
    warn, notes = {}, []
    for c, m in zip(codes, msgs):
        if c in _NOTE_FLAGS:
            notes.append(f"{flag_title(c)}: {m}")
        else:
            warn.setdefault(c, []).append(m)
    out = "".join(f'<span class="ef-tag" title="{_esc(" | ".join(m))}">{_esc(flag_title(c))}'
                  f'{f" ×{len(m)}" if len(m) > 1 else ""}</span>' for c, m in warn.items())
    if notes:
        out += (f'<span class="ef-tag note" title="{_esc(" | ".join(notes))}">{len(notes)} '
                f'note{"s" if len(notes) > 1 else ""}</span>')
    return out


def _err_cell(v, scale=1.0) -> str:
    """An uncertainty with two significant digits (times ``scale``, e.g. eV → meV)."""
    if not _finite(v):
        return '<td class="num" data-sort="">—</td>'
    x = v * scale
    text = f"{x:.2g}" if abs(x) < 100 else f"{x:.0f}"
    return f'<td class="num" data-sort="{x!r}">{text}</td>'


def _meta_cell(value) -> str:
    """A metadata value as written in the file, sorted by its number."""
    x = _as_number(value)
    key = "" if x is None else repr(x)
    return f'<td class="num" data-sort="{key}">{_esc(value if value is not None else "—")}</td>'


def build_summary(rows: list[dict], *, trend_key: str | None = None, plotly_js: str = "inline",
                  errors: list | None = None, title: str = "edgefit batch summary") -> str:
    """The batch summary page: a sortable table (each row linking to its report, through the
    row's ``report`` key), the trend plot of Eg and Eu against a numeric metadata value (a
    select box lists every numeric key; ``trend_key`` picks the first shown), and the files
    that could not be analysed (``errors``: dicts with ``source`` and ``message``)."""
    tag = _plotly_tag(plotly_js)
    keys = numeric_metadata(rows)
    if trend_key is not None and trend_key in keys:
        keys = [trend_key] + [k for k in keys if k != trend_key]
    trends = {k: trend_figure(rows, k) for k in keys}
    head = [("sample", "txt"), ("transition", "txt"), ("Eg direct [eV]", "num"),
            ("± [meV]", "num"), ("Eg indirect [eV]", "num"), ("± [meV]", "num"),
            ("Eu [meV]", "num"), ("± [meV]", "num"), ("thickness [nm]", "num")] + \
        [(k, "num") for k in keys] + [("flags", "txt")]
    ths = "".join(f'<th data-col="{i}" data-type="{t}" class="{"num" if t == "num" else ""}"'
                  f' scope="col"><button type="button">{_esc(h)}</button></th>'
                  for i, (h, t) in enumerate(head))
    trs = []
    for row in rows:
        name = _esc(row.get("sample"))
        link = (f'<a href="{_esc(row["report"])}">{name}</a>' if row.get("report") else name)
        cand = ' <span class="ef-cand" title="ambiguous verdict: candidate gaps">?</span>' \
            if row.get("candidate") else ""
        tags = _flag_tags(row)
        tr = (f'<tr><td data-sort="{_esc(row.get("sample"))}">{link}'
              f'<div class="ef-small">{_esc(row.get("source") or "")}</div></td>'
              f'<td data-sort="{_esc(row.get("transition") or "")}">'
              f'<span class="ef-badge {_verdict_class(row.get("transition"))}" '
              f'style="font-size:12px;padding:2px 9px">{_esc(row.get("transition") or "—")}'
              f'</span>{cand}</td>'
              + _num_cell(row.get("eg_direct_ev"), 4)
              + _err_cell(row.get("eg_direct_err_ev"), 1e3)
              + _num_cell(row.get("eg_indirect_ev"), 4)
              + _err_cell(row.get("eg_indirect_err_ev"), 1e3)
              + _num_cell(row.get("eu_mev"), 1) + _err_cell(row.get("eu_err_mev"))
              + _num_cell(row.get("thickness_nm"), 0)
              + "".join(_meta_cell((row.get("metadata") or {}).get(k)) for k in keys)
              + f'<td data-sort="{len(row.get("flags") or [])}">{tags or "—"}</td></tr>')
        trs.append(tr)
    verdicts = {}
    for row in rows:
        verdicts[row.get("transition") or "—"] = verdicts.get(row.get("transition") or "—", 0) + 1
    counts = " · ".join(f"{n} {_esc(v)}" for v, n in sorted(verdicts.items()))
    if keys:
        options = "".join(f'<option value="{_esc(k)}">{_esc(k)}</option>' for k in keys)
        trend_html = ('<section class="ef-card full"><h2>Trend</h2><div class="ef-controls">'
                      '<label for="ef-trend-key">Plot Eg and Eu against</label>'
                      f'<select id="ef-trend-key">{options}</select></div>'
                      '<div class="ef-plot" id="ef-trend" role="img" style="height:430px" '
                      'aria-label="trend of Eg and Eu"></div></section>')
    else:
        trend_html = ('<section class="ef-card full"><h2>Trend</h2><p class="ef-small">No '
                      'metadata value is numeric in two or more files, so there is nothing to '
                      'plot the gaps against (metadata lines such as "Annealing temperature '
                      '(C): 350" above the data table give one).</p></section>')
        if trend_key:
            trend_html = trend_html.replace("</p>", f" The key {_esc(trend_key)!s} asked for "
                                            "is not among them.</p>", 1)
    if trend_key and keys and trend_key not in keys:
        trend_html = trend_html.replace("</div>", f'<span class="ef-small">({_esc(trend_key)} '
                                        'is not numeric in two files)</span></div>', 1)
    err_html = ""
    if errors:
        err_html = ('<section class="ef-card full"><h2>Not analysed</h2><ul class="ef-flags">'
                    + "".join(f'<li><b>{_esc(e.get("source", "?"))}</b>'
                              f'{_esc(e.get("message", ""))}</li>' for e in errors)
                    + "</ul></section>")
    body = (f'<header class="ef-head"><div><div class="ef-kicker">edgefit · batch summary'
            f'</div><h1>{_esc(title)}</h1><div class="ef-sub">{len(rows)} spectra · '
            f'{counts}</div></div><div class="ef-verdict ef-small">click a column header to '
            'sort; click a sample to open its report<br>the same table: '
            '<a href="summary.csv">summary.csv</a></div></header>'
            '<div class="ef-grid">'
            '<section class="ef-card full"><h2>Results</h2>'
            '<div style="overflow-x:auto"><table id="ef-table" class="ef-summary-table">'
            f'<thead><tr>{ths}</tr></thead><tbody>{"".join(trs)}</tbody></table></div>'
            '<p class="ef-small">± is one standard deviation (fit, bootstrap and spread over '
            'acceptable windows). "?" marks candidate gaps of an undecided transition.</p>'
            f'</section>{trend_html}{err_html}</div>'
            '<aside class="ef-caution"><h2>Read with care</h2><ul>'
            + "".join(f"<li>{_esc(c)}</li>" for c in CAUTION_ITEMS[:2]) + "</ul></aside>")
    payload = _safe_json({"trends": trends})
    return _page(title, body, tag, payload, _SUMMARY_JS)


def _slug(text, fallback) -> str:
    s = re.sub(r"[^A-Za-z0-9_.-]+", "-", str(text or "")).strip("-.")[:50]
    return s or fallback


def write_batch(results: list[dict], out_dir, *, trend_key: str | None = None,
                errors: list | None = None) -> dict:
    """Write a batch: one report per result, one shared plotly.min.js, summary.html, summary.csv.

    Layout of ``out_dir``::

        summary.html  summary.csv  plotly.min.js  reports/001-<sample>.html ...

    Returns ``{"summary_html", "summary_csv", "plotly_js", "reports": [...]}`` (Paths).
    """
    out = Path(out_dir)
    (out / "reports").mkdir(parents=True, exist_ok=True)
    js = _ensure_plotly_copy(out / PLOTLY_JS_NAME)
    paths, rel = [], []
    width = max(3, len(str(len(results))))
    for i, r in enumerate(results):
        name = f"{i + 1:0{width}d}-{_slug(r.get('sample') or r.get('source'), 'spectrum')}.html"
        p = out / "reports" / name
        p.write_text(build_report(r, plotly_js="../" + PLOTLY_JS_NAME,
                                  summary_href="../summary.html"), encoding="utf-8")
        paths.append(p)
        rel.append(f"reports/{name}")
    rows = summary_rows(results, report_paths=rel)
    summary = out / "summary.html"
    summary.write_text(build_summary(rows, trend_key=trend_key, plotly_js=PLOTLY_JS_NAME,
                                     errors=errors), encoding="utf-8")
    csv_path = out / "summary.csv"
    csv_path.write_text(summary_csv(rows), encoding="utf-8")
    return {"summary_html": summary, "summary_csv": csv_path, "plotly_js": js, "reports": paths}
