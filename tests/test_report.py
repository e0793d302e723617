"""Reports: the figure data drawn from a result, the HTML around it, the batch summary.

Most checks use a hand-made result (synthetic: every number in it is chosen here, so the
expected traces, windows and annotations are known exactly); a few use the real pipeline on a
synthetic film (synthetic truth Eg = 1.60 eV direct allowed).
"""
from __future__ import annotations

import csv
import io
import json
import re

import numpy as np
import pytest

from edgefit import report
from edgefit.edge.tauc import tauc_ordinate
from report_support import EG, EG_ERR, SLOPE, U_WIN, WIN, handmade_result


def panel(result, pid):
    return next(p for p in report.figures(result) if p["id"] == pid)["figure"]


def trace(fig, name_start):
    return next(t for t in fig["data"] if t.get("name", "").startswith(name_start))


def decode_payload(html):
    """The figures of a report page with their arrays restored, decoded the way the page's
    script does it ($a, $s, $r references; integer arrays in units of 10^e, delta-coded,
    blanks as run lengths)."""
    text = re.search(r'<script type="application/json" id="ef-payload">(.*?)</script>', html,
                     re.S).group(1)
    payload = json.loads(text)
    arrays = []
    for t in payload["arrays"]:
        if "e" not in t:
            arrays.append(t["v"])
            continue
        vals = list(np.cumsum(t["v"]) if t.get("d") else t["v"])
        vals = [v * 10.0 ** t["e"] for v in vals]
        if "g" in t:
            full, it = [], iter(vals)
            for j, run in enumerate(t["g"]):
                full.extend(next(it) if j % 2 else None for _ in range(run))
            vals = full
        arrays.append(vals)

    def res(o):
        if isinstance(o, list):
            return [res(v) for v in o]
        if isinstance(o, dict):
            if "$a" in o:
                return arrays[o["$a"]]
            if "$s" in o:
                i, s, n = o["$s"]
                return arrays[i][s:s + n]
            if "$r" in o:
                s, st, n = o["$r"]
                return [s + st * k for k in range(n)]
            return {k: res(v) for k, v in o.items()}
        return o
    return payload, [{"id": f["id"], "data": res(f["data"]), "layout": f["layout"]}
                     for f in payload["figures"]]


# ------------------------------------------------------------------ figure data

def test_panels_in_order_with_groups():
    ids = [(p["id"], p["group"]) for p in report.figures(handmade_result())]
    assert ids == [("tauc-direct-allowed", "main"), ("tauc-indirect-allowed", "main"),
                   ("alpha", "main"), ("urbach", "main"), ("measured", "main"),
                   ("tauc-direct-forbidden", "secondary"),
                   ("tauc-indirect-forbidden", "secondary")]


def test_tauc_window_shaded_at_the_fitted_energies():
    fig = panel(handmade_result(), "tauc-direct-allowed")
    win = [s for s in fig["layout"]["shapes"] if s.get("name") == "window"]
    assert len(win) == 1
    assert (win[0]["x0"], win[0]["x1"]) == WIN
    assert win[0]["yref"] == "y domain"
    other = [s for s in fig["layout"]["shapes"] if s.get("name") == "stretch"]
    assert [(s["x0"], s["x1"]) for s in other] == [(2.1, 2.3)]


def test_tauc_fit_line_and_extrapolation_reach_the_axis_at_eg():
    fig = panel(handmade_result(), "tauc-direct-allowed")
    fit = trace(fig, "fit in the window")
    assert fit["x"] == list(WIN)
    assert fit["y"] == pytest.approx([SLOPE * (x - EG) for x in WIN])
    ext = trace(fig, "extrapolation")
    assert ext["x"][0] == pytest.approx(EG)
    assert ext["y"][0] == pytest.approx(0.0, abs=1e-3)
    assert ext["x"][1] == pytest.approx(WIN[0])
    # the intercept is inside the initial x range
    x0, x1 = fig["layout"]["xaxis"]["range"]
    assert x0 < EG < x1


def test_tauc_annotation_and_marker_carry_the_gap_with_its_error():
    fig = panel(handmade_result(), "tauc-direct-allowed")
    texts = [a["text"] for a in fig["layout"]["annotations"]]
    assert any("1.6000 ± 0.0050 eV" in t for t in texts)
    assert any("fitted window 1.650–1.900 eV" in t for t in texts)
    mark = trace(fig, "Eg =")
    assert mark["x"] == [EG] and mark["y"] == [0]
    assert mark["error_x"]["value"] == EG_ERR


def test_tauc_acceptable_windows_drawn_as_ticks_at_their_eg():
    res = handmade_result()
    fig = panel(res, "tauc-direct-allowed")
    rug = trace(fig, "Eg per acceptable window")
    want = [w[2] for w in res["tauc"]["direct-allowed"]["acceptable_windows"]]
    assert rug["x"] == pytest.approx(want, abs=1e-4)
    assert rug["customdata"][0] == [1.63, 1.85]
    assert "(11)" in rug["name"]
    # all ticks sit just under the axis, below every data point of the window
    assert set(rug["y"]) == {rug["y"][0]} and rug["y"][0] < 0


def test_tauc_acceptable_windows_thinned_beyond_the_limit():
    res = handmade_result()
    many = [[1.63, 1.85 + 1e-4 * i, EG + 1e-5 * i] for i in range(1000)]
    res["tauc"]["direct-allowed"]["acceptable_windows"] = many
    rug = trace(panel(res, "tauc-direct-allowed"), "Eg per acceptable window")
    assert len(rug["x"]) == report._MAX_RUG
    assert rug["x"][0] == pytest.approx(many[0][2], abs=1e-4)
    assert rug["x"][-1] == pytest.approx(many[-1][2], abs=1e-4)
    assert "120 of 1000)" in rug["name"]
    caption = next(p for p in report.figures(res) if p["id"] == "tauc-direct-allowed")
    assert "1000 acceptable windows" in caption["caption"]
    assert "(120 drawn)" in caption["caption"]


def test_tauc_windows_count_all_of_the_stretch_when_the_result_lists_a_selection():
    """The result lists at most 100 acceptable windows (an even selection); the legend and the
    caption count all of them (the spread is over all), and say how many are drawn."""
    res = handmade_result()
    entry = res["tauc"]["direct-allowed"]
    entry["acceptable_windows"] = [[1.63, 1.85 + 1e-4 * i, EG + 1e-5 * i] for i in range(100)]
    entry.setdefault("uncertainty", {})["n_windows"] = 553
    rug = trace(panel(res, "tauc-direct-allowed"), "Eg per acceptable window")
    assert len(rug["x"]) == 100 and "100 of 553)" in rug["name"]
    caption = next(p for p in report.figures(res) if p["id"] == "tauc-direct-allowed")
    assert "553 acceptable windows" in caption["caption"]
    assert "(100 drawn)" in caption["caption"]
    # one window: the result lists none (a stretch of one), the caption says one, draws none
    entry["acceptable_windows"], entry["uncertainty"]["n_windows"] = [], 1
    caption = next(p for p in report.figures(res) if p["id"] == "tauc-direct-allowed")
    assert "one acceptable window;" in caption["caption"] and "drawn" not in caption["caption"]
    assert not any(t.get("name", "").startswith("Eg per acceptable window")
                   for t in panel(res, "tauc-direct-allowed")["data"])


def test_tauc_residuals_are_data_minus_line_inside_the_window():
    res = handmade_result()
    fig = panel(res, "tauc-direct-allowed")
    r = trace(fig, "residual")
    assert r["xaxis"] == "x2" and r["yaxis"] == "y2"
    assert min(r["x"]) >= WIN[0] and max(r["x"]) <= WIN[1]
    e = np.array(r["x"])
    # synthetic: (αhν)² is exactly linear there, so the residuals vanish (to rounding)
    assert None not in r["y"] and np.max(np.abs(r["y"])) < 1e-6 * SLOPE
    a = np.interp(e, res["data"]["energy_ev"], res["data"]["alpha"])
    assert len(r["y"]) == len(e) > 50
    assert np.allclose(tauc_ordinate(e, a, "direct-allowed"), SLOPE * (e - EG), rtol=1e-3)


def test_tauc_without_window_says_so():
    fig = panel(handmade_result(), "tauc-indirect-allowed")
    texts = " ".join(a["text"] for a in fig["layout"]["annotations"])
    assert "no linear window" in texts
    assert [t["name"] for t in fig["data"]] == ["data (trusted points)"]
    assert fig["layout"]["yaxis"]["title"]["text"] == "(αhν)^(1/2) [(cm⁻¹·eV)^(1/2)]"


def test_an_analysis_stopped_before_the_window_search_says_why_not_that_none_was_found():
    flag = {"code": "no-absorption-edge", "message": "α varies only 1.9-fold"}
    res = handmade_result(urbach=None, gaps=[], flags=[flag],
                          tauc={"direct-allowed": None, "indirect-allowed": None})
    fig = panel(res, "tauc-direct-allowed")
    texts = " ".join(a["text"] for a in fig["layout"]["annotations"])
    assert "not searched: no absorption edge in the data" in texts
    assert "no linear window" not in texts
    assert "Not searched: no absorption edge in the data." in report.build_report(res, plotly_js="plotly.min.js")


def test_tauc_trusted_points_only_and_ordinate_from_the_formula():
    res = handmade_result()
    fig = panel(res, "tauc-direct-allowed")
    data = trace(fig, "data")
    e = np.array(res["data"]["energy_ev"])
    ok = np.array(res["data"]["trusted"])
    # drawn on the full energy grid (shared by every panel), blank where not trusted
    assert data["x"] == pytest.approx(e.tolist())
    y = np.array([np.nan if v is None else v for v in data["y"]])
    assert np.isnan(y[~ok]).all()
    want = tauc_ordinate(e[ok], np.array(res["data"]["alpha"])[ok], "direct-allowed")
    assert np.allclose(y[ok], want, equal_nan=True)
    assert data["hovertemplate"].startswith("hν %{x:.4f} eV<br>(αhν)² %{y:.4g} (cm⁻¹·eV)²")
    assert "(cm⁻¹·eV)²" in trace(fig, "residual")["hovertemplate"]
    # the data line is drawn over the fit line (the fit stays visible around it)
    names = [t["name"] for t in fig["data"]]
    assert names.index("fit in the window") < names.index("data (trusted points)")


def test_baseline_intersection_drawn_on_its_transition():
    res = handmade_result(baseline={"eg_ev": 1.58, "baseline_window_ev": [1.45, 1.55],
                                    "baseline_slope": 1e8, "baseline_intercept": -1.0e8,
                                    "transition": "direct-allowed"})
    fig = panel(res, "tauc-direct-allowed")
    base = trace(fig, "sub-gap baseline")
    assert base["x"] == [1.45, 1.58]
    star = trace(fig, "Eg at the baseline")
    assert star["x"] == [1.58] and star["y"] == [pytest.approx(1e8 * 1.58 - 1e8)]


def test_two_onsets_direct_form_over_the_indirect_edge():
    res = handmade_result()
    e = np.linspace(1.7, 2.3, 200)
    rest = np.sqrt(SLOPE * (e - 1.8).clip(0)) / e + 1.0
    entry = dict(res["tauc"]["direct-allowed"], eg_ev=1.8, window_ev=[1.85, 2.1],
                 intercept=-SLOPE * 1.8, stretches=[], acceptable_windows=[[1.85, 2.1, 1.8]])
    res["tauc_direct_over_indirect"] = entry
    res["data"]["direct_over_indirect"] = {"energy_ev": e.tolist(), "alpha": rest.tolist()}
    res["gaps"] = [dict(res["gaps"][0], eg_ev=1.8, window_ev=[1.85, 2.1],
                        method="Tauc (αhν)² of α minus the fitted indirect edge")]
    panels = report.figures(res)
    ids = [p["id"] for p in panels]
    assert ids.index("tauc-direct-over-indirect") == ids.index("tauc-direct-allowed") + 1
    p = panels[ids.index("tauc-direct-over-indirect")]
    assert p["caption"].startswith("Reported gap. Two onsets")
    assert not panels[0]["caption"].startswith("Reported gap")
    fig = p["figure"]
    win = next(s for s in fig["layout"]["shapes"] if s.get("name") == "window")
    assert (win["x0"], win["x1"]) == (1.85, 2.1)
    assert trace(fig, "data")["x"] == pytest.approx(e.tolist())
    assert "minus the indirect edge" in fig["layout"]["title"]["text"]
    # without the arrays the direct-allowed caption says where the gap came from
    res.pop("tauc_direct_over_indirect")
    cap = report.figures(res)[0]["caption"]
    assert "does not carry to draw" in cap


def test_alpha_plot_tells_trusted_from_excluded_on_a_log_axis():
    res = handmade_result()
    fig = panel(res, "alpha")
    assert fig["layout"]["yaxis"]["type"] == "log"
    ok = np.array(res["data"]["trusted"])
    drawn = [[v is not None for v in trace(fig, n)["y"]] for n in ("trusted", "excluded")]
    assert np.array_equal(drawn[0], ok) and np.array_equal(drawn[1], ~ok)
    assert trace(fig, "excluded")["marker"]["symbol"] == "circle-open"
    assert trace(fig, "trusted")["mode"] == "lines"
    model = trace(fig, "direct edge model")
    assert "BIC -900" in model["name"] and len(model["x"]) == 60
    names = [s.get("name") for s in fig["layout"]["shapes"]]
    assert "urbach-window" in names and "window-direct" in names
    e04 = trace(fig, "E04")
    assert e04["x"] == [1.66] and e04["y"] == [1e4]


def test_urbach_plot_fit_line_window_and_eu():
    res = handmade_result()
    fig = panel(res, "urbach")
    win = next(s for s in fig["layout"]["shapes"] if s.get("name") == "window")
    assert (win["x0"], win["x1"]) == U_WIN
    fit = trace(fig, "Urbach fit")
    u = res["urbach"]
    # the drawn tail (no baseline in this result) is the straight line over the window
    assert (fit["x"][0], fit["x"][-1]) == pytest.approx(U_WIN)
    assert fit["y"] == pytest.approx([u["slope_per_ev"] * x + u["ln_alpha_intercept"]
                                      for x in fit["x"]])
    # synthetic tail: the line passes through ln α of the data at 1.55 eV
    e = np.array(res["data"]["energy_ev"])
    a = np.array(res["data"]["alpha"])
    assert u["slope_per_ev"] * 1.55 + u["ln_alpha_intercept"] == pytest.approx(
        np.log(np.interp(1.55, e, a)), abs=0.01)
    assert any("25.0 ± 1.0 meV" in a["text"] for a in fig["layout"]["annotations"])


def test_urbach_missing_is_said():
    fig = panel(handmade_result(urbach=None), "urbach")
    assert any("no exponential" in a["text"] for a in fig["layout"]["annotations"])


def test_measured_panel_in_file_units():
    res = handmade_result()
    fig = panel(res, "measured")
    t = fig["data"][0]
    assert t["x"] == pytest.approx(res["data"]["measured"]["x"])
    assert fig["layout"]["xaxis"]["title"]["text"] == "Wavelength λ [nm]"
    assert fig["layout"]["yaxis"]["title"]["text"] == "Transmittance T [fraction]"
    assert "nm" in t["hovertemplate"]


def test_fringes_panel_draws_envelopes_and_extrema_when_present():
    res = handmade_result()
    lam = np.array(res["data"]["measured"]["x"])
    res["film"].update({"tm_upper": (0.9 + 0 * lam).tolist(), "tm_lower": (0.6 + 0 * lam)
                        .tolist(), "wavelength_nm": lam.tolist(),
                        "extrema": {"maxima_nm": [700.0, 800.0], "minima_nm": [750.0]}})
    fig = panel(res, "fringes")
    names = [t["name"] for t in fig["data"]]
    assert names[:3] == ["measured T", "upper envelope T<sub>M</sub>",
                         "lower envelope T<sub>m</sub>"]
    assert trace(fig, "maxima used")["x"] == [700.0, 800.0]
    assert trace(fig, "minima used")["x"] == [750.0]
    ann = fig["layout"]["annotations"][0]["text"]
    assert "d = 500 ± 4 nm" in ann and "n(800nm) = 2.310" in ann


def test_fringes_extrema_as_records_mark_the_unused():
    res = handmade_result()
    res["film"]["extrema"] = [{"wavelength_nm": 700.0, "kind": 1, "used": True},
                              {"wavelength_nm": 750.0, "kind": -1, "used": False}]
    fig = panel(res, "fringes")
    assert trace(fig, "maxima used")["x"] == [700.0]
    assert trace(fig, "minima not used")["marker"]["symbol"] == "triangle-down-open"


def test_fringes_from_the_drawing_block_with_extremum_records():
    # the shape the pipeline hands over: data.film with T and envelopes on one λ grid and one
    # record per extremum (values synthetic)
    res = handmade_result()
    lam = np.linspace(500.0, 1500.0, 300)
    t = 0.75 + 0.15 * np.cos(2 * np.pi * 4000.0 / lam)
    res["data"]["film"] = {
        "wavelength_nm": lam.tolist(), "t": t.tolist(), "tm_upper": [0.9] * 300,
        "tm_lower": [0.6] * 300, "fringe_free_t": [0.73] * 300,
        "extrema": [{"wavelength_nm": 1000.0, "kind": "max", "t_upper": 0.9, "order": 4.0,
                     "d_nm": 1002.0, "n_refined": 2.3, "used": True},
                    {"wavelength_nm": 1142.9, "kind": "min", "t_lower": 0.6, "order": 3.5,
                     "d_nm": 998.0, "n_refined": 2.29, "used": True},
                    {"wavelength_nm": 1333.3, "kind": "max", "t_upper": 0.9, "used": False}]}
    fig = panel(res, "fringes")
    assert trace(fig, "measured T")["x"] == pytest.approx(lam.tolist())
    assert trace(fig, "measured T")["y"] == pytest.approx(t.tolist())
    used = trace(fig, "maxima used")
    assert used["x"] == [1000.0] and used["y"] == [0.9]
    assert used["customdata"] == [[4.0, 1002.0, 2.3]]
    assert trace(fig, "minima used")["y"] == [0.6]
    assert trace(fig, "maxima not used")["x"] == [1333.3]
    assert "fringe-free" in trace(fig, "fringe-free")["name"]


def test_no_fringes_panel_without_fringe_data():
    assert "fringes" not in [p["id"] for p in report.figures(handmade_result())]


def test_relative_and_kubelka_munk_axis_titles():
    assert report.ordinate_title("direct-allowed", "relative") == "(αdhν)² [(eV)²]"
    assert report.ordinate_title("indirect-allowed", "kubelka-munk") == \
        "(Fhν)^(1/2) [(eV)^(1/2)]"
    assert report.ordinate_title("cody") == "(α/hν)^(1/2) [(cm⁻¹/eV)^(1/2)]"


@pytest.mark.parametrize("value, err, unit, kw, text", [
    (1.59956, 0.00179, "eV", {}, "1.5996 ± 0.0018 eV"),
    (1.6, 0.063, "eV", {}, "1.600 ± 0.063 eV"),
    (20.22, 0.122, "meV", {"floor": 1, "ceil": 3}, "20.22 ± 0.12 meV"),
    (35.14, 1.96, "meV", {"floor": 1, "ceil": 3}, "35.1 ± 2.0 meV"),
    (3000.0, None, "nm", {}, "3000 nm"),
    (512.3, 4.2, "nm", {"floor": 0, "ceil": 0}, "512 ± 4 nm"),
    (512.34, 0.21, "nm", {"floor": 0, "ceil": 0}, "512.34 ± 0.21 nm"),
    (None, 0.1, "eV", {}, "—"),
])
def test_fmt_pm(value, err, unit, kw, text):
    assert report.fmt_pm(value, err, unit, **kw) == text


# ------------------------------------------------------------------ the page

def test_report_page_summary_block():
    html = report.build_report(handmade_result(), plotly_js="plotly.min.js")
    assert "1.6000 ± 0.0050 eV" in html
    assert "window 1.650–1.900 eV" in html
    assert "25.0 ± 1.0 meV" in html
    assert "ΔBIC = 120" in html and "strong evidence" in html
    assert "<td>edge models (ΔBIC)</td><td>direct</td><td>strong</td>" in html
    assert "d = 500 ± 4 nm" in html and "2.310 at 800nm" in html
    assert "Points under the noise floor excluded" in html
    assert "ab" * 32 in html and "T (%)" in html and "2026-01-01T00:00:00+00:00" in html
    assert "Burstein–Moss" in html and "thickness scales α, not the gap" in html
    assert '<script src="plotly.min.js"></script>' in html


def test_payload_roundtrip_within_drawing_resolution():
    res = handmade_result()
    html = report.build_report(res, plotly_js="plotly.min.js")
    _, figs = decode_payload(html)
    direct = [p["figure"] for p in report.figures(res)]
    assert [f["id"] for f in figs] == [p["id"] for p in report.figures(res)]
    for packed, orig in zip(figs, direct):
        for tp, to in zip(packed["data"], orig["data"]):
            for key in ("x", "y"):
                if key not in to:
                    continue
                a = np.array([np.nan if v is None else v for v in tp[key]], dtype=float)
                b = np.array([np.nan if v is None else v for v in to[key]], dtype=float)
                assert a.shape == b.shape, (packed["id"], to.get("name"), key)
                assert np.array_equal(np.isnan(a), np.isnan(b))
                ok = ~np.isnan(b)
                # x: 1e-6 of the largest value; y: 1e-4 of the axis span (linear) or four
                # significant digits (log axis): a relative 5e-4 of each value
                tol = 5e-4 * np.abs(b[ok]) + 1e-4 * np.max(np.abs(b[ok]), initial=0)
                assert np.all(np.abs(a[ok] - b[ok]) <= tol), (packed["id"], to.get("name"))


def test_shared_arrays_are_stored_once(analysed):
    res = analysed("direct")      # λ evenly spaced, so the energies are not
    payload, _ = decode_payload(report.build_report(res, plotly_js="plotly.min.js"))
    figs = {f["id"]: f for f in payload["figures"]}
    # the trusted energies feed the Tauc, α and Urbach panels: one array, several references
    xs = [next(t for t in figs[k]["data"] if t["name"].startswith("data") or
               t["name"].startswith("trusted"))["x"]
          for k in ("tauc-direct-allowed", "tauc-indirect-allowed", "alpha", "urbach")]
    assert all(x == xs[0] for x in xs) and "$a" in xs[0]
    resid = next(t for t in figs["tauc-direct-allowed"]["data"]
                 if t["name"].startswith("residual"))
    assert resid["x"]["$s"][0] == xs[0]["$a"]   # window energies: a slice of the same array
    assert figs["measured"]["data"][0]["x"] == {"$r": [300.0, 800.0 / 1999, 2000]}


def test_evenly_spaced_grid_travels_as_a_range():
    res = handmade_result()
    res["data"]["measured"]["x"] = np.linspace(500.0, 1000.0, 600).tolist()
    payload, figs = decode_payload(report.build_report(res, plotly_js="plotly.min.js"))
    measured = next(f for f in payload["figures"] if f["id"] == "measured")
    assert measured["data"][0]["x"] == {"$r": [500.0, 500.0 / 599, 600]}
    x = next(f for f in figs if f["id"] == "measured")["data"][0]["x"]
    assert x == pytest.approx(np.linspace(500.0, 1000.0, 600).tolist())


def test_escaping_of_names_metadata_and_messages():
    evil = "<script>alert(1)</script>"
    res = handmade_result(sample=evil, source="a<b>.csv",
                          metadata={"<i>key</i>": '"><img src=x onerror=alert(2)>'},
                          flags=[{"code": "reader", "message": "<b>bold</b> & co"}])
    html = report.build_report(res, plotly_js="plotly.min.js")
    assert evil not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    assert "<img" not in html and "&lt;img src=x onerror=alert(2)&gt;" in html
    assert "<b>bold</b>" not in html and "&lt;b&gt;bold&lt;/b&gt; &amp; co" in html
    assert "a&lt;b&gt;.csv" in html
    # only our own three script elements exist
    assert len(re.findall(r"<script\b", html, re.I)) == 3
    payload = re.search(r'id="ef-payload">(.*?)</script>', html, re.S).group(1)
    assert "<" not in payload
    assert json.loads(payload)["filename"] == "_script_alert_1_script_"


def test_report_without_data_block_shows_numbers_only():
    res = handmade_result()
    res.pop("data")
    html = report.build_report(res, plotly_js="plotly.min.js")
    assert "carries no arrays" in html and "1.6000 ± 0.0050 eV" in html
    assert 'class="ef-plot"' not in html


def test_report_tolerates_none_blocks():
    res = handmade_result(urbach=None, film=None, verdict={}, models={}, e04_ev=None,
                          tauc={"direct-allowed": None}, gaps=[], flags=[], options={},
                          metadata={})
    html = report.build_report(res, plotly_js="plotly.min.js")
    assert "No gap could be reported" in html and "No quality flags" in html


def test_inline_plotly_is_the_installed_bundle_and_no_network():
    from plotly.offline import get_plotlyjs
    html = report.build_report(handmade_result())
    js = get_plotlyjs()
    assert js[:2000] in html
    assert not re.search(r"<script[^>]+src=", html)


@pytest.mark.parametrize("bad", ["https://cdn.example.org/plotly.js", "//cdn.example.org/p.js",
                                 "file:///tmp/plotly.js"])
def test_plotly_js_must_be_inline_or_relative(bad):
    with pytest.raises(ValueError, match="never load scripts from a network"):
        report.build_report(handmade_result(), plotly_js=bad)


def test_standalone_report_of_2000_points_stays_under_5_mb(analysed, tmp_path):
    res = json.loads(json.dumps(analysed("direct")))       # a copy: the fixture is shared
    assert len(res["data"]["energy_ev"]) == 2000
    # the worst case: a film block with envelopes on the 2,000-point grid as well
    lam = np.array(res["data"]["measured"]["x"])
    rng = np.random.default_rng(0)
    res["film"].update({"wavelength_nm": lam.tolist(),
                        "tm_upper": (0.85 + 0.01 * rng.random(lam.size)).tolist(),
                        "tm_lower": (0.55 + 0.01 * rng.random(lam.size)).tolist(),
                        "fringe_free_t": (0.7 + 0.01 * rng.random(lam.size)).tolist(),
                        "extrema": {"maxima_nm": [900.0, 1000.0], "minima_nm": [950.0]}})
    path = report.write_report(res, tmp_path / "r.html")
    size = path.stat().st_size
    assert "fringes" in [p["id"] for p in report.figures(res)]
    assert size < 5_000_000, size


def test_report_of_the_pipeline_shows_its_gap(analysed):
    res = analysed("direct")
    g = res["gaps"][0]
    assert g["kind"] == "direct"
    # synthetic truth 1.60 eV; the analysis is tested elsewhere, this checks that the report
    # draws the gap the result holds
    assert g["eg_ev"] == pytest.approx(1.60, abs=0.01)
    fig = panel(res, "tauc-direct-allowed")
    want = report.fmt_pm(g["eg_ev"], g["eg_err_ev"], "eV")
    assert any(want in a["text"] for a in fig["layout"]["annotations"])
    win = next(s for s in fig["layout"]["shapes"] if s.get("name") == "window")
    assert [win["x0"], win["x1"]] == g["window_ev"]


def test_write_report_shared_copy_one_level_up(tmp_path):
    p = report.write_report(handmade_result(), tmp_path / "sample-7" / "r.html",
                            standalone=False, plotly_js="../plotly.min.js")
    assert (tmp_path / report.PLOTLY_JS_NAME).exists()
    assert not (tmp_path / "sample-7" / report.PLOTLY_JS_NAME).exists()
    assert '<script src="../plotly.min.js"></script>' in p.read_text(encoding="utf-8")


def test_write_report_shared_copy(tmp_path):
    p = report.write_report(handmade_result(), tmp_path / "one" / "r.html", standalone=False)
    js = tmp_path / "one" / report.PLOTLY_JS_NAME
    assert js.exists() and js.stat().st_size > 1_000_000
    assert p.stat().st_size < 300_000
    assert '<script src="plotly.min.js"></script>' in p.read_text(encoding="utf-8")


# ------------------------------------------------------------------ batch

def series():
    out = []
    for i, (temp, eg, eu) in enumerate([("450", 1.62, 22.0), ("350", 1.60, 25.0),
                                        ("550 C", 1.65, 19.0)]):
        r = handmade_result(sample=f"S{i + 1}", metadata={"Annealing temperature (C)": temp,
                                                          "Substrate": "glass"})
        r["gaps"] = [dict(r["gaps"][0], eg_ev=eg, eg_err_ev=0.004)]
        r["urbach"] = dict(r["urbach"], eu_mev=eu)
        out.append(r)
    amb = handmade_result(sample="S4", metadata={"Annealing temperature (C)": "250"})
    amb["verdict"] = {"transition": "ambiguous", "reason": "undecided"}
    amb["gaps"] = [dict(amb["gaps"][0], candidate=True),
                   {"kind": "indirect", "eg_ev": 1.5, "eg_err_ev": 0.02, "window_ev": [1.5, 1.7],
                    "candidate": True}]
    amb["urbach"] = None
    out.append(amb)
    return out


def test_summary_rows():
    rows = report.summary_rows(series(), report_paths=["a.html", None, "c.html", "d.html"])
    assert [r["sample"] for r in rows] == ["S1", "S2", "S3", "S4"]
    assert rows[0]["eg_direct_ev"] == 1.62 and rows[0]["eg_direct_err_ev"] == 0.004
    assert rows[0]["direct_window_lo_ev"] == 1.65 and rows[0]["eg_indirect_ev"] is None
    assert rows[3]["transition"] == "ambiguous" and rows[3]["candidate"] is True
    assert rows[3]["eg_indirect_ev"] == 1.5 and rows[3]["eu_mev"] is None
    assert rows[0]["flags"] == ["noise-floor"] and rows[1]["report"] is None
    assert rows[0]["thickness_nm"] == 500.0


def test_summary_csv_reads_back():
    rows = report.summary_rows(series())
    table = list(csv.DictReader(io.StringIO(report.summary_csv(rows))))
    assert len(table) == 4
    assert list(table[0])[:4] == ["sample", "source", "column", "transition"]
    assert table[0]["eg_direct_ev"] == "1.62" and table[3]["eu_mev"] == ""
    assert table[2]["meta:Annealing temperature (C)"] == "550 C"
    assert table[0]["meta:Substrate"] == "glass" and table[3]["meta:Substrate"] == ""
    assert table[0]["flags"] == "noise-floor"


def test_numeric_metadata_and_trend_figure():
    rows = report.summary_rows(series())
    assert report.numeric_metadata(rows) == ["Annealing temperature (C)"]
    fig = report.trend_figure(rows, "Annealing temperature (C)")
    eg = trace(fig, "Eg direct")
    assert eg["x"] == [250.0, 350.0, 450.0, 550.0]          # sorted by the metadata value
    assert eg["y"] == [1.60, 1.60, 1.62, 1.65]
    assert eg["error_y"]["array"] == [0.005, 0.004, 0.004, 0.004]
    eu = trace(fig, "Eu")
    assert eu["x"] == [350.0, 450.0, 550.0] and eu["yaxis"] == "y2"
    assert eu["y"] == [25.0, 22.0, 19.0]
    assert trace(fig, "Eg indirect")["x"] == [250.0]
    assert fig["layout"]["yaxis2"]["side"] == "right"


def test_summary_page_table_links_and_select():
    rows = report.summary_rows(series(), report_paths=[f"reports/{i}.html" for i in range(4)])
    html = report.build_summary(rows, trend_key="Annealing temperature (C)",
                                plotly_js="plotly.min.js")
    assert html.count('<a href="reports/') == 4
    assert '<option value="Annealing temperature (C)">' in html
    assert html.count("<th data-col=") == 11
    assert 'data-sort="550.0">550 C</td>' in html
    assert 'title="ambiguous verdict: candidate gaps"' in html
    # notes fold into one tag; warnings keep one tag per kind
    assert html.count(">1 note</span>") == 4


def test_summary_flag_tags_deduplicate():
    row = {"flags": ["edge-near-data-end", "edge-near-data-end", "noise-floor", "reader"],
           "flag_messages": ["direct <edge>", "indirect edge", "n", "r"]}
    tags = report._flag_tags(row)
    assert "Edge close to the end of the data ×2</span>" in tags
    assert 'title="direct &lt;edge&gt; | indirect edge"' in tags
    assert ">2 notes</span>" in tags


def test_summary_escapes_names():
    rows = report.summary_rows([handmade_result(sample="<script>alert(1)</script>",
                                                metadata={"<k>": "1", "x": "2"}),
                                handmade_result(sample="b", metadata={"<k>": "3"})])
    html = report.build_summary(rows, plotly_js="plotly.min.js")
    assert "<script>alert" not in html and "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    assert '<option value="&lt;k&gt;">' in html
    assert len(re.findall(r"<script\b", html)) == 3


def test_write_batch_layout(tmp_path):
    out = report.write_batch(series(), tmp_path / "batch", trend_key="Annealing temperature (C)",
                             errors=[{"source": "broken.csv", "message": "no numeric rows"}])
    assert out["summary_html"].exists() and out["summary_csv"].exists()
    assert out["plotly_js"] == tmp_path / "batch" / "plotly.min.js"
    assert len(out["reports"]) == 4 and all(p.exists() for p in out["reports"])
    assert sorted(p.name for p in (tmp_path / "batch").rglob("*.js")) == ["plotly.min.js"]
    for p in out["reports"]:
        text = p.read_text(encoding="utf-8")
        assert '<script src="../plotly.min.js"></script>' in text
        assert 'href="../summary.html"' in text
    summary = out["summary_html"].read_text(encoding="utf-8")
    links = re.findall(r'<a href="(reports/[^"]+)"', summary)
    assert [tmp_path / "batch" / link for link in links] == out["reports"]
    assert "broken.csv" in summary and "no numeric rows" in summary
    assert len(out["summary_csv"].read_text(encoding="utf-8").splitlines()) == 5


def test_summary_csv_keeps_formula_like_names_as_text():
    # CSV formula injection (common practice, no source): a cell starting with = + - @ would be
    # run by a spreadsheet; numbers stay numbers
    from edgefit.report import summary_csv
    text = summary_csv([{"sample": "=HYPERLINK(\"x\")", "source": "@evil.csv",
                         "metadata": {"T": "-5"}}])
    assert "'=HYPERLINK" in text and "'@evil.csv" in text
    assert ",-5" in text and "'-5" not in text
