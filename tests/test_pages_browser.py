"""The web pages in a real browser: Debian's chromium through Playwright (the shared
``browser`` fixture of conftest.py) against ``edgefit serve`` on 127.0.0.1 in a subprocess.

A researcher's session: sign in with a token, drop a demo spectrum, read the gap and see the
report drawn, re-fit with a manual window, upload a second film of the series and compare the
two. Every request that leaves 127.0.0.1 is aborted and counted; console errors are collected.
Screenshots go to tests/artifacts/ (gitignored); page load times to
tests/artifacts/pages-timings.json (figures for the record, never asserted).

The demo files are the invented scenario of spectra_demo/ (manifest_core.json: LK-ZTO-300 is a
direct allowed film, Eg 3.20 eV, 540 nm thick; LK-ZTO-400: Eg 3.25 eV, 515 nm; synthetic
truths generated from the continuous edge model).
"""
from __future__ import annotations

import json
import re
from urllib.parse import urlparse

import pytest

from edgefit.archive import create_token
from service_support import DEMO_DIR, ServerProcess

pytestmark = [pytest.mark.browser, pytest.mark.server]

# For each Plotly container of a document: drawn (Plotly's class, an svg, a trace group).
PLOTS_JS = """(sel) => Array.from(document.querySelectorAll(sel)).map(d => ({
    plotly: d.classList.contains('js-plotly-plot'),
    svg: d.querySelectorAll('svg.main-svg').length,
    traces: d.querySelectorAll('.scatterlayer .trace').length,
    width: d.getBoundingClientRect().width }))"""
TIMING_JS = """() => { const n = performance.getEntriesByType('navigation')[0];
    return {load_ms: Math.round(n.loadEventEnd - n.startTime),
            dom_ms: Math.round(n.domContentLoadedEventEnd - n.startTime)}; }"""


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    root = tmp_path_factory.mktemp("pages-browser")
    token = create_token(root / "data", "browser-test")
    srv = ServerProcess(root / "data", root / "server.log", workers=2).start()
    srv.base = srv.url[: -len("/api/v1")]
    srv.token = token
    yield srv
    assert srv.terminate() == 0, srv.read_output()


class Session:
    """A browser context at 1280 px whose requests outside the server are aborted."""

    def __init__(self, browser, server):
        self.server = server
        self.host = urlparse(server.base).netloc
        self.context = browser.new_context(viewport={"width": 1280, "height": 900},
                                           accept_downloads=True)
        self.elsewhere, self.errors, self.timings = [], [], {}
        self.context.route("**/*", self._route)
        self.page = self.context.new_page()
        self.page.on("console", lambda m: self.errors.append(m.text)
                     if m.type == "error" else None)
        self.page.on("pageerror", lambda exc: self.errors.append(f"uncaught: {exc}"))

    def _route(self, route):
        url = urlparse(route.request.url)
        if url.scheme in ("http", "https") and url.netloc == self.host:
            route.continue_()
        else:
            self.elsewhere.append(route.request.url)
            route.abort()

    def go(self, path):
        self.page.goto(self.server.base + path)
        return self.page

    def timed(self, name):
        self.timings[name] = self.page.evaluate(TIMING_JS)

    def sign_in(self, token):
        page = self.go("/login")
        page.get_by_label("API token").fill(token)
        page.get_by_role("button", name="Sign in").click()
        page.wait_for_load_state()
        return page

    def shot(self, artifacts_dir, name, full=True):
        self.page.screenshot(path=str(artifacts_dir / f"pages-{name}.png"), full_page=full)

    def close(self):
        self.context.close()


@pytest.fixture
def session(browser, server):
    s = Session(browser, server)
    yield s
    s.close()


def drop_file(page, path):
    """Drop a file on the upload box the way a file manager does (a drop event carrying a
    DataTransfer with the file)."""
    data = list(path.read_bytes())
    page.evaluate("""([name, bytes]) => {
        const dt = new DataTransfer();
        dt.items.add(new File([new Uint8Array(bytes)], name, {type: 'text/csv'}));
        const drop = document.getElementById('drop');
        drop.dispatchEvent(new DragEvent('dragover', {dataTransfer: dt, bubbles: true,
                                                      cancelable: true}));
        drop.dispatchEvent(new DragEvent('drop', {dataTransfer: dt, bubbles: true,
                                                  cancelable: true}));
    }""", [path.name, data])


def wait_job_finished(page):
    page.wait_for_function("""() => { const p = document.querySelector('[data-job-status]');
        return p && ['done', 'failed'].includes(p.getAttribute('data-state')); }""",
                           timeout=60_000)


def test_wrong_token_refused_right_token_signs_in(session, server, artifacts_dir):
    page = session.go("/samples")
    assert urlparse(page.url).path == "/login"          # sign-in required
    page.get_by_label("API token").fill("ef_not-a-token")
    page.get_by_role("button", name="Sign in").click()
    assert "not valid" in page.get_by_role("alert").inner_text()
    session.shot(artifacts_dir, "login-refused")
    session.timed("login")
    # with the keyboard alone: the token field has the focus, Enter sends the form
    assert page.evaluate("() => document.activeElement.id") == "token"
    page.keyboard.type(server.token)
    with page.expect_navigation():
        page.keyboard.press("Enter")
    assert urlparse(page.url).path == "/samples"
    assert page.get_by_role("heading", name="Samples").is_visible()
    page.get_by_role("button", name="Sign out").click()
    page.wait_for_url(re.compile(r"/login$"))
    assert page.get_by_text("Signed out.").is_visible()
    # the only console error: Chromium reporting the 401 of the refused token
    assert all("401" in e for e in session.errors), session.errors
    assert len(session.errors) <= 1
    assert session.elsewhere == []


def test_unreadable_file_is_explained_before_and_after_upload(session, server, artifacts_dir):
    page = session.sign_in(server.token)
    page = session.go("/upload")
    bad = b"Wavelength (nm),%T\n400,50\n410,<b>5l</b>\n420,52\n430,53\n440,54\n450,55\n"
    page.set_input_files("#file", files=[{"name": "broken.csv", "mimeType": "text/csv",
                                          "buffer": bad}])
    message = page.locator("#detected pre.reader-message")
    message.wait_for()
    # the reader's own words, shown as text: the line, the column and the fix
    assert message.inner_text() == ("broken.csv, line 3, column '%T': '<b>5l</b>' is not a "
                                    "number (fix: correct or delete the row; leave a missing "
                                    "value empty or write NaN)")
    assert page.locator("#detected b").count() == 0
    page.get_by_role("button", name="Upload and fit").click()
    page.wait_for_load_state()
    assert "No file could be read, so nothing was stored" in page.get_by_role("alert").inner_text()
    assert "line 3" in page.locator("pre.reader-message").inner_text()
    session.shot(artifacts_dir, "upload-unreadable")
    # Chromium reports the 422 answer of the upload as a failed resource, nothing else
    assert all("422" in e for e in session.errors) and len(session.errors) <= 1, session.errors
    assert session.elsewhere == []


def test_upload_read_gap_refit_and_compare(session, server, artifacts_dir):
    page = session.sign_in(server.token)

    # -- upload by dropping a demo file; the detection shows before anything is fitted
    page = session.go("/upload")
    session.timed("upload")
    drop_file(page, DEMO_DIR / "LK-ZTO-300_T.csv")
    det = page.locator("#detected .det-file")
    det.wait_for()
    text = det.inner_text()
    assert "LK-ZTO-300_T.csv" in text and "transmittance" in text and "651 points" in text
    page.get_by_role("button", name="use 540nm").click()        # the thickness the file states
    assert page.get_by_label("Film thickness").input_value() == "540nm"
    page.get_by_label("Metadata").fill("Series=LK-ZTO anneal\nSubstrate=fused silica")
    session.shot(artifacts_dir, "upload")
    page.get_by_role("button", name="Upload and fit").click()
    page.wait_for_url(re.compile(r"/jobs/\d+$"))
    wait_job_finished(page)
    page.locator("#job-results td.num").first.wait_for()
    assert page.locator("tr.state-fitted").count() == 1
    session.shot(artifacts_dir, "job")

    # -- the sample page: the gap in the headline, the report drawn in its frame
    page.get_by_role("link", name="LK-ZTO-300").click()
    page.wait_for_url(re.compile(r"/samples/\d+"))
    page.wait_for_load_state("load")
    session.timed("sample")
    gap = float(page.locator("[data-gap-ev]").first.get_attribute("data-gap-ev"))
    # synthetic truth of the demo file (spectra_demo/manifest_core.json): Eg 3.20 eV direct;
    # 0.05 eV covers the window choice on a noisy 0.2 %T spectrum
    assert abs(gap - 3.20) < 0.05
    assert "eV" in page.locator(".headline").inner_text()
    frame = page.frame_locator(".report-frame")
    frame.locator(".ef-plot.js-plotly-plot").first.wait_for(timeout=30_000)
    report = page.frames[1]
    report.wait_for_function("""() => Array.from(document.querySelectorAll('.ef-plot'))
        .every(d => d.classList.contains('js-plotly-plot') || d.querySelector('.ef-noplot'))""")
    plots = report.evaluate(PLOTS_JS, ".ef-plot.js-plotly-plot")
    assert plots and all(p["svg"] >= 1 and p["traces"] >= 1 for p in plots), plots
    height = page.locator(".report-frame").bounding_box()["height"]
    assert height > 1000            # sized to the report, not a small scrolled box
    session.shot(artifacts_dir, "sample")
    session.shot(artifacts_dir, "sample-top", full=False)
    page.locator("#report").scroll_into_view_if_needed()
    session.shot(artifacts_dir, "sample-report", full=False)
    page.evaluate("window.scrollTo(0, 0)")

    # -- re-fit with a manual window: a new fit, the old one kept
    page.get_by_label("Transition").select_option("direct")
    page.get_by_label("Tauc window [eV]").fill("3.30:3.60")
    page.get_by_role("button", name=re.compile("Fit again")).click()
    page.wait_for_url(re.compile(r"/samples/\d+\?job=\d+"), wait_until="domcontentloaded")
    page.get_by_text(re.compile(r"The re-fit is stored as fit \d+")).wait_for(timeout=60_000)
    rows = page.locator(".history tbody tr")
    assert rows.count() == 2
    assert "window 3.30:3.60" in rows.first.inner_text()           # newest first
    lo, hi = map(float, re.search(r"window ([\d.]+):([\d.]+) eV",
                                  page.locator(".headline").inner_text()).groups())
    assert 3.30 <= lo < hi <= 3.60          # the points inside the window asked for
    session.shot(artifacts_dir, "sample-refit", full=False)
    rows.nth(1).get_by_role("link", name="show").click()         # the older fit is still there
    page.wait_for_url(re.compile(r"fit=\d+"), wait_until="domcontentloaded")
    assert "current" in (page.locator(".history tbody tr").nth(1).get_attribute("class") or "")
    assert "window 3.30:3.60" not in page.locator(".history tr.current").inner_text()

    # -- a second film of the series, through the file picker
    page = session.go("/upload")
    page.set_input_files("#file", str(DEMO_DIR / "LK-ZTO-400_T.csv"))
    page.locator("#detected .det-file").wait_for()
    page.get_by_label("Film thickness").fill("515nm")
    page.get_by_label("Metadata").fill("Series=LK-ZTO anneal")
    page.get_by_role("button", name="Upload and fit").click()
    page.wait_for_url(re.compile(r"/jobs/\d+$"))
    wait_job_finished(page)

    # -- the samples list: both, sortable; pick both and compare
    page = session.go("/samples?sort=gap&order=asc")
    session.timed("samples")
    names = page.locator("#samples-table tbody tr td:nth-child(2)").all_inner_texts()
    assert names == ["LK-ZTO-300", "LK-ZTO-400"]          # 3.2x eV before 3.25 eV
    session.shot(artifacts_dir, "samples")
    page.get_by_label("select LK-ZTO-300").check()
    page.get_by_label("select LK-ZTO-400").check()
    page.get_by_role("button", name="Compare selected").click()
    page.wait_for_url(re.compile(r"/compare\?"))
    page.wait_for_load_state("load")
    session.timed("compare")
    assert page.locator("#compare-table tbody tr").count() == 2
    assert page.get_by_label("Plot Eg and Eu against").input_value() == \
        "Annealing temperature (C)"
    page.locator("#trend.js-plotly-plot").wait_for()
    trend = page.evaluate(PLOTS_JS, "#trend")
    assert trend[0]["traces"] >= 2 and trend[0]["width"] > 800, trend    # Eg and Eu
    session.shot(artifacts_dir, "compare")
    with page.expect_download() as dl:
        page.get_by_role("link", name="Download the table (CSV)").click()
    csv_text = open(dl.value.path(), encoding="utf-8").read().splitlines()
    assert len(csv_text) == 3 and csv_text[0].startswith("sample,")
    assert {line.split(",")[0] for line in csv_text[1:]} == {"LK-ZTO-300", "LK-ZTO-400"}

    assert session.errors == []
    assert session.elsewhere == []
    (artifacts_dir / "pages-timings.json").write_text(json.dumps(session.timings, indent=1))
    print("page load times [ms]:", session.timings)
