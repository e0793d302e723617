"""Shared fixtures: synthetic analysis results and one headless chromium for browser tests.

The browser is Debian's /usr/bin/chromium driven by Playwright for Python (never a browser
download), launched once per session with the flags of DEVELOPERS.md.
"""
from __future__ import annotations

import os
import shutil
from pathlib import Path

import numpy as np
import pytest

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]
ARTIFACTS = Path(__file__).parent / "artifacts"


def synthetic_film_spectrum(*, eg_ev=1.60, eu_ev=0.020, r=0.5, amplitude=5e4,
                            thickness_nm=5000.0, noise_t=5e-4, points=2000, seed=1,
                            sample="synthetic film", metadata=None):
    """Transmittance of a synthetic film (synthetic truth: the edge model of edgefit.edge.tauc
    with the given Eg, Eu, exponent r, thickness; T = exp(−αd), Gaussian noise in T)."""
    from edgefit import optics
    from edgefit.edge.tauc import edge_model_alpha
    from edgefit.spectrum import Spectrum

    wl = np.linspace(300.0, 1100.0, points)
    e = optics.HC_EV_NM / wl
    alpha = edge_model_alpha(e, eg_ev, eu_ev, amplitude, r)
    t = np.exp(-alpha * thickness_nm * 1e-7)
    t = t + np.random.default_rng(seed).normal(0.0, noise_t, t.size)
    return Spectrum(wl, t, "nm", "transmittance", "fraction", source=f"{sample}.csv",
                    sample=sample, metadata=dict(metadata or {}))


@pytest.fixture(scope="session")
def analysed():
    """A function (kind, **spectrum options) → result dict with arrays, cached per session.

    kind "direct": Eg 1.60 eV direct allowed film, Eu 20 meV, d = 5 µm; "indirect": Eg 1.30 eV
    indirect allowed film, Eu 30 meV, d = 8 µm (synthetic truths). Thick enough that T falls
    to the noise above the edge and the tail stands out of it below."""
    from edgefit.analysis import analyse

    cache = {}
    presets = {"direct": dict(eg_ev=1.60, eu_ev=0.020, r=0.5, amplitude=5e4,
                              thickness_nm=5000.0),
               "indirect": dict(eg_ev=1.30, eu_ev=0.030, r=2.0, amplitude=2e4,
                                thickness_nm=8000.0)}

    def run(kind="direct", **kw):
        key = (kind, tuple(sorted((k, repr(v)) for k, v in kw.items())))
        if key not in cache:
            opts = {**presets[kind], **kw}
            spec = synthetic_film_spectrum(**opts)
            cache[key] = analyse(spec, thickness_nm=opts["thickness_nm"],
                                 bootstrap=50).to_dict(arrays=True)
        return cache[key]

    return run


@pytest.fixture(scope="session")
def artifacts_dir():
    ARTIFACTS.mkdir(exist_ok=True)
    return ARTIFACTS


@pytest.fixture(scope="session")
def browser():
    """A headless chromium (session-scoped). Skipped with the reason when chromium or
    Playwright is missing; CI installs both, so there the tests run."""
    if not (os.path.exists(CHROMIUM) or shutil.which("chromium")):
        pytest.skip(f"{CHROMIUM} not found: install Debian's chromium (apt-get install "
                    "chromium) to run the browser tests")
    try:
        from playwright.sync_api import sync_playwright
    except ImportError:
        pytest.skip("Playwright for Python is not installed (pip install -e '.[test]')")
    pw = sync_playwright().start()
    try:
        b = pw.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS, headless=True)
    except Exception:
        pw.stop()
        raise
    yield b
    b.close()
    pw.stop()


class PageWatch:
    """A page whose every request is recorded and, unless it is a file:// URL, aborted; with
    the console errors and uncaught exceptions collected."""

    def __init__(self, browser, width=1280, height=900):
        self.page = browser.new_page(viewport={"width": width, "height": height})
        self.requests, self.blocked, self.errors, self.dialogs = [], [], [], []
        self.page.on("console", lambda m: self.errors.append(m.text)
                     if m.type == "error" else None)
        self.page.on("pageerror", lambda exc: self.errors.append(f"uncaught: {exc}"))
        self.page.on("dialog", self._dialog)
        self.page.route("**/*", self._route)

    def _dialog(self, dialog):
        self.dialogs.append(dialog.message)
        dialog.dismiss()

    def _route(self, route):
        url = route.request.url
        self.requests.append(url)
        if url.startswith("file://"):
            route.continue_()
        else:
            self.blocked.append(url)
            route.abort()

    def open(self, path: Path):
        self.page.goto(Path(path).resolve().as_uri())
        self.page.wait_for_load_state("load")
        return self.page

    def close(self):
        self.page.close()


@pytest.fixture
def watch(browser):
    pages = []

    def make(**kw):
        w = PageWatch(browser, **kw)
        pages.append(w)
        return w

    yield make
    for w in pages:
        w.close()
