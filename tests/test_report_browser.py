"""Reports in a real browser: Debian's chromium through Playwright, pages opened from disk
(file://) with every other request aborted. Screenshots go to tests/artifacts/ (gitignored).

Spectra are synthetic (tests/conftest.py: the edge model with known Eg, Eu and thickness).
"""
from __future__ import annotations

import json

import numpy as np
import pytest

from edgefit import report
from report_support import handmade_result

pytestmark = pytest.mark.browser

# For each plot container: drawn (Plotly's class, an svg, at least one trace group) and sized.
PLOTS_JS = """() => Array.from(document.querySelectorAll('.ef-plot')).map(d => ({
    id: d.id,
    plotly: d.classList.contains('js-plotly-plot'),
    svg: d.querySelectorAll('svg.main-svg').length,
    traces: d.querySelectorAll('.scatterlayer .trace').length,
    width: d.getBoundingClientRect().width }))"""


def wait_drawn(page):
    page.wait_for_function("""() => { const p = document.querySelectorAll('.ef-plot');
        return p.length > 0 && Array.from(p).every(d => d.classList.contains('js-plotly-plot')
            || d.querySelector('.ef-noplot')); }""")


def assert_all_drawn(page, visible_only=False):
    plots = page.evaluate(PLOTS_JS)
    assert plots, "no plot containers on the page"
    for p in plots:
        assert p["plotly"] and p["svg"] >= 1 and p["traces"] >= 1, p
        if visible_only:
            assert p["width"] > 300, p
    return plots


def with_fringes(res):
    """A copy of a result with envelope arrays on its measured grid (the shape the films
    module hands over; values synthetic)."""
    res = json.loads(json.dumps(res))
    lam = np.array(res["data"]["measured"]["x"])
    t = np.array(res["data"]["measured"]["y"])
    res["film"] = dict(res.get("film") or {}, wavelength_nm=lam.tolist(),
                       tm_upper=np.clip(t + 0.04, 0, 1).tolist(),
                       tm_lower=np.clip(t - 0.04, 0, 1).tolist(),
                       extrema={"maxima_nm": [900.0, 1000.0], "minima_nm": [950.0]})
    return res


def test_standalone_report_draws_every_panel_offline(analysed, tmp_path, watch, artifacts_dir):
    res = with_fringes(analysed("direct"))
    path = report.write_report(res, tmp_path / "standalone.html")
    w = watch()
    page = w.open(path)
    wait_drawn(page)
    plots = assert_all_drawn(page)
    ids = [p["id"] for p in plots]
    assert ids == [p["id"] for p in report.figures(res)]
    assert {"tauc-direct-allowed", "tauc-indirect-allowed", "alpha", "urbach", "fringes",
            "measured"} <= set(ids)
    # the main panels have their width at 1280 px; the collapsed ones get theirs when opened
    main = [p for p in plots if p["id"] in ("tauc-direct-allowed", "alpha", "urbach")]
    assert all(p["width"] > 500 for p in main), main
    page.click("details.ef-more > summary")
    page.wait_for_function("""() => Array.from(document.querySelectorAll(
        'details.ef-more .ef-plot')).every(d => d.querySelector('.main-svg')
        && d.querySelector('.main-svg').getBoundingClientRect().width > 300)""")
    assert_all_drawn(page, visible_only=True)
    # the gap read-out as drawn on the page
    g = res["gaps"][0]
    text = page.inner_text("#tauc-direct-allowed")
    assert report.fmt_pm(g["eg_ev"], g["eg_err_ev"], "eV") in text.replace("\n", " ")
    page.screenshot(path=str(artifacts_dir / "report-standalone.png"), full_page=True)
    for pid in ("tauc-direct-allowed", "tauc-indirect-allowed", "alpha", "urbach", "fringes"):
        page.locator(f"#{pid}").screenshot(path=str(artifacts_dir / f"report-{pid}.png"))

    # hover read-outs carry units: the middle drawn point of each data trace
    for pid, unit in (("tauc-direct-allowed", "(cm⁻¹·eV)²"), ("alpha", "cm⁻¹"),
                      ("measured", "nm"), ("urbach", "eV")):
        label = page.evaluate("""([id]) => { const gd = document.getElementById(id);
            const c = gd.data.findIndex(t => /^(data|trusted|as measured)/.test(t.name));
            const ok = gd.data[c].y.map((v, i) => v === null ? -1 : i).filter(i => i >= 0);
            Plotly.Fx.hover(gd, [{curveNumber: c, pointNumber: ok[ok.length >> 1]}]);
            const text = gd.querySelector('.hoverlayer').textContent;
            Plotly.Fx.unhover(gd); return text; }""", [pid])
        assert unit in label, (pid, label)

    # printing on A4 (794 CSS px): one column of panels, collapsed plots opened and every
    # plot redrawn to the column's width, no tool bars; a PDF comes out
    page.click("details.ef-more > summary")                  # closed again
    page.set_viewport_size({"width": 794, "height": 1123})
    page.emulate_media(media="print")
    page.evaluate("window.dispatchEvent(new Event('beforeprint'))")
    page.wait_for_function("""() => Array.from(document.querySelectorAll('.ef-plot')).every(
        d => Math.abs(d.querySelector('.main-svg').getBoundingClientRect().width
                      - d.getBoundingClientRect().width) < 2)""")
    cols = page.evaluate("getComputedStyle(document.querySelector('.ef-panels'))"
                         ".gridTemplateColumns")
    assert len(cols.split()) == 1, cols
    assert page.evaluate("document.querySelector('details.ef-more').open")
    assert page.evaluate("getComputedStyle(document.querySelector('.modebar')).display") == "none"
    page.screenshot(path=str(artifacts_dir / "report-print.png"), full_page=True)
    pdf = page.pdf(format="A4")
    assert pdf[:4] == b"%PDF" and len(pdf) > 50_000
    page.evaluate("window.dispatchEvent(new Event('afterprint'))")
    assert not page.evaluate("document.querySelector('details.ef-more').open")

    assert w.requests == [path.resolve().as_uri()]
    assert w.blocked == [] and w.errors == [] and w.dialogs == []


def test_escaped_names_stay_text(tmp_path, watch):
    evil = "<script>alert(1)</script>"
    res = handmade_result(sample=evil, metadata={"<img src=x onerror=alert(2)>": "<b>3</b>"},
                          flags=[{"code": "reader", "message": "<svg onload=alert(4)>"}])
    path = tmp_path / "evil.html"      # no plotly.js beside it: the page is text only
    path.write_text(report.build_report(res, plotly_js="plotly.min.js"), encoding="utf-8")
    w = watch()
    page = w.open(path)
    wait_drawn(page)
    assert page.inner_text("h1") == evil
    assert page.locator("img").count() == 0
    assert "<svg onload=alert(4)>" in page.inner_text(".ef-flags")
    assert "<img src=x onerror=alert(2)>" in page.inner_text(".ef-prov")
    assert w.dialogs == []
    assert all("ERR_FILE_NOT_FOUND" in e for e in w.errors), w.errors


def test_missing_shared_plotly_is_explained(tmp_path, watch):
    path = tmp_path / "lonely.html"
    path.write_text(report.build_report(handmade_result(), plotly_js="plotly.min.js"),
                    encoding="utf-8")
    w = watch()
    page = w.open(path)
    wait_drawn(page)
    notes = page.locator(".ef-noplot")
    assert notes.count() == len(report.figures(handmade_result()))
    assert "plotly.min.js" in notes.first.inner_text()
    # the only error is the missing file itself, no script failure
    assert all("ERR_FILE_NOT_FOUND" in e for e in w.errors), w.errors
    assert "1.6000 ± 0.0050 eV" in page.inner_text(".ef-grid")


def batch_results(analysed):
    """Four results for a batch: copies of the two synthetic analyses under new names, with
    gaps shifted so that sorting has something to do (the plots stay those of the copies)."""
    out = []
    for temp, shift in (("300", -0.02), ("400", 0.0), ("500", 0.03)):
        r = json.loads(json.dumps(analysed("direct")))
        r["sample"] = f"film {temp} C"
        r["gaps"][0]["eg_ev"] += shift
        r["metadata"] = {"Annealing temperature (C)": temp, "Operator": "A. N. Other"}
        out.append(r)
    r = json.loads(json.dumps(analysed("indirect")))
    r["sample"] = "powder"
    r["metadata"] = {"Annealing temperature (C)": "250"}
    out.append(r)
    return out


def test_batch_summary_sorts_plots_and_links(analysed, tmp_path, watch, artifacts_dir):
    results = batch_results(analysed)
    out = report.write_batch(results, tmp_path / "batch", trend_key="Annealing temperature (C)")
    w = watch()
    page = w.open(out["summary_html"])
    wait_drawn(page)
    assert_all_drawn(page, visible_only=True)
    traces = page.evaluate("document.getElementById('ef-trend').data.map(t => t.name)")
    assert traces == ["Eg direct [eV]", "Eg indirect [eV]", "Eu [meV] (right axis)"]
    page.screenshot(path=str(artifacts_dir / "report-summary.png"), full_page=True)

    def samples():
        return page.eval_on_selector_all("#ef-table tbody tr td:first-child a",
                                         "els => els.map(e => e.textContent)")
    assert samples() == ["film 300 C", "film 400 C", "film 500 C", "powder"]
    page.click("#ef-table th:nth-child(3) button")           # Eg direct, ascending
    assert samples()[:3] == ["film 300 C", "film 400 C", "film 500 C"]
    assert samples()[3] == "powder"                          # no direct gap: last
    page.click("#ef-table th:nth-child(3) button")           # descending
    assert samples()[:3] == ["film 500 C", "film 400 C", "film 300 C"]
    assert page.get_attribute("#ef-table th:nth-child(3)", "aria-sort") == "descending"
    page.click("#ef-table th:nth-child(1) button")           # by name
    assert samples() == ["film 300 C", "film 400 C", "film 500 C", "powder"]

    # a row link opens its report, which draws every panel from the shared plotly.min.js
    page.click("text=film 400 C")
    page.wait_for_url("**/reports/*.html")
    wait_drawn(page)
    assert_all_drawn(page)
    assert page.inner_text("h1") == "film 400 C"
    base = (tmp_path / "batch").resolve().as_uri()
    assert page.evaluate("document.querySelector('a.ef-back').href") == f"{base}/summary.html"
    assert w.requests == [f"{base}/summary.html", f"{base}/plotly.min.js",
                          out["reports"][1].resolve().as_uri(), f"{base}/plotly.min.js"]
    assert w.blocked == [] and w.errors == []


def test_trend_select_lists_numeric_keys(tmp_path, watch):
    results = []
    for i, (temp, time_) in enumerate((("300", "10 min"), ("400", "20 min"), ("500", "5 min"))):
        r = handmade_result(sample=f"S{i}", metadata={"Annealing temperature (C)": temp,
                                                      "Anneal time": time_, "Substrate": "glass"})
        r["gaps"] = [dict(r["gaps"][0], eg_ev=1.6 + 0.01 * i)]
        results.append(r)
    out = report.write_batch(results, tmp_path / "b2")
    w = watch()
    page = w.open(out["summary_html"])
    wait_drawn(page)
    options = page.eval_on_selector_all("#ef-trend-key option", "els => els.map(e => e.value)")
    assert options == ["Annealing temperature (C)", "Anneal time"]
    first = page.evaluate("document.getElementById('ef-trend').data[0].x")
    assert first == [300, 400, 500]
    page.select_option("#ef-trend-key", "Anneal time")
    page.wait_for_function("document.getElementById('ef-trend').data[0].x[0] === 5")
    assert page.evaluate("document.getElementById('ef-trend').data[0].x") == [5, 10, 20]
    assert page.evaluate("document.getElementById('ef-trend').data[0].y") == \
        pytest.approx([1.62, 1.60, 1.61])
    assert w.errors == [] and w.blocked == []
