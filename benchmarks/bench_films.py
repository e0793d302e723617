"""Benchmark (a script, never a test): speed of the fringe analysis on 2,000-point spectra.

Simulates films on glass with Swanepoel's formula (thickness 300–3000 nm, index 1.9–2.6, an
absorption edge, 0.1 % noise) on a 2,000-point grid and times
``edgefit.films.analyse_fringes``: CPU time per spectrum (median, 95th percentile, max) and
spectra per second on one core. Target: well under 50 ms per spectrum.

    python benchmarks/bench_films.py [--spectra 200]
"""
from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from edgefit import films  # noqa: E402
from edgefit.optics import HC_EV_NM  # noqa: E402


def synthetic(k: int):
    rng = np.random.default_rng(k)
    lam = np.linspace(350.0, 2000.0, 2000)
    d = rng.uniform(300, 3000)
    n = rng.uniform(1.9, 2.6) + rng.uniform(1e4, 4e4) / lam ** 2
    e = HC_EV_NM / lam
    eg = rng.uniform(2.0, 3.3)
    alpha = 1e4 * np.exp(np.clip((e - eg) / 0.05, -60, 3))
    t = films.swanepoel_transmittance(lam, n, d, alpha, 1.52)
    return lam, t + 0.001 * rng.standard_normal(lam.size), d


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--spectra", type=int, default=200)
    args = ap.parse_args(argv)
    cases = [synthetic(k) for k in range(args.spectra)]
    films.analyse_fringes(*cases[0][:2])          # warm-up (imports, caches)
    times, errors, refused = [], [], 0
    for lam, t, d in cases:
        t0 = time.process_time()
        fa = films.analyse_fringes(lam, t, substrate_index=1.52)
        times.append(time.process_time() - t0)
        if fa is None or fa.thickness_nm is None:
            refused += 1
        else:
            errors.append(abs(fa.thickness_nm / d - 1))
    ms = 1e3 * np.array(times)
    print(f"analyse_fringes on {len(cases)} spectra of 2,000 points (CPU time):")
    print(f"  median {np.median(ms):.1f} ms, 95th percentile {np.percentile(ms, 95):.1f} ms, "
          f"max {ms.max():.1f} ms; {1e3 / np.mean(ms):.0f} spectra/s per core")
    if errors:
        print(f"  thickness: {len(errors)} found, {refused} refused; |error| median "
              f"{100 * np.median(errors):.3f} %, max {100 * np.max(errors):.3f} %")


if __name__ == "__main__":
    main()
