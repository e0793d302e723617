"""Benchmark (a script, never a test): speed of the whole analysis and of the window search.

Prints spectra per second per core for the whole pipeline on synthetic 2,000-point spectra,
and compares the prefix-sum window search with a brute-force search that refits every
admissible window with numpy.polyfit and applies the same acceptance and choice rules.
With ``--passes N`` the spectra are analysed N times over and every pass's rate is printed
with the fastest: on a shared machine the neighbours' load slows a pass by up to 2x, and the
fastest pass is the closest to what the code does on a core of its own.

    python benchmarks/bench_windows.py [--spectra 40] [--brute 3] [--passes 1]
"""
from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from edgefit.analysis import AnalysisOptions, analyse, to_absorption  # noqa: E402
from edgefit.edge.tauc import EXPONENT_R, edge_model_alpha, tauc_ordinate  # noqa: E402
from edgefit.edge.windows import (WindowCriteria, WindowTable, stretches,  # noqa: E402
                                  weights_from_sd, window_nodes, window_table)
from edgefit.optics import HC_EV_NM  # noqa: E402
from edgefit.spectrum import Spectrum  # noqa: E402


def synthetic(k: int) -> tuple[Spectrum, float]:
    rng = np.random.default_rng(k)
    wl = np.linspace(250.0, 1250.0, 2000)
    e = HC_EV_NM / wl
    eg, eu = rng.uniform(1.4, 3.4), rng.uniform(0.015, 0.05)
    t = np.exp(-edge_model_alpha(e, eg, eu, 1e5, 0.5) * 1500e-7)
    t += rng.normal(0, 0.002, t.size)
    return Spectrum(wl, t, "nm", "transmittance", "fraction", source=f"bench{k}.csv"), eg


def brute_force(e, y, y_sd, nodes, crit):
    """Every admissible window refitted with numpy.polyfit (weights 1/σ; degree 1 and 2), with
    the acceptance rules of edgefit.edge.windows.window_table written out plainly."""
    w = weights_from_sd(y_sd, y)
    rows = []
    for a in range(len(nodes)):
        for b in range(a + 1, len(nodes)):
            i, j = nodes[a], nodes[b]
            n = j - i + 1
            if n < max(crit.min_points, 4) or e[j] - e[i] < crit.min_span_ev:
                continue
            xs, ys, ws = e[i:j + 1], y[i:j + 1], w[i:j + 1]
            m, c = np.polyfit(xs, ys, 1, w=np.sqrt(ws))
            res = ys - (m * xs + c)
            chi2 = float(np.sum(ws * res ** 2))
            q = np.polyfit(xs, ys, 2, w=np.sqrt(ws))
            chi2_q = float(np.sum(ws * (ys - np.polyval(q, xs)) ** 2))
            rms = float(np.sqrt(np.mean(res ** 2)))
            sigma = float(np.sqrt(n / ws.sum()))
            rows.append((i, j, e[i], e[j], n, m, c, rms, sigma, -c / m, chi2 / (n - 2),
                         chi2 - chi2_q))
    r = np.array(rows, dtype=float)
    i, j, lo, hi, n, m, c, rms, sigma, xint, chi2_red, gain = r.T
    rise = m * (hi - lo)
    acc = (m > 0) & ((rms <= crit.linearity_tol * rise)
                     | ((chi2_red <= crit.noise_factor ** 2) & (gain < crit.curvature_chi2))) \
        & (rise >= crit.min_snr * sigma) & (xint >= 0.5 * lo) & (xint < lo) \
        & ((hi - lo) >= crit.min_coverage * (hi - xint)) \
        & (np.interp(xint, e, y) <= crit.max_foot_fraction * y[j.astype(int)])
    return WindowTable(i=i.astype(int), j=j.astype(int), lo_ev=lo, hi_ev=hi, n=n.astype(int),
                       slope=m, intercept=c, rms=rms, sigma=sigma, x_intercept=xint, accepted=acc)


def chosen(table, crit):
    """The first stretch's window, chosen as edgefit.analysis._tauc_form chooses it."""
    acc, groups = stretches(table, nearest_onset=True)
    if not groups:
        return None
    groups = [g for g in groups if acc.span[g.family].max() >= 2 * crit.min_span_ev] or groups
    g = min(groups, key=lambda s: acc.lo_ev[s.best])
    return int(acc.i[g.best]), int(acc.j[g.best])


def _time_model_fits():
    """Count the CPU time spent in edge-model fits (edgefit.edge.models.fit_hypothesis, as the
    analysis calls it) from now on: [seconds, calls]."""
    from edgefit.edge import models
    spent = [0.0, 0]
    inner = models.fit_hypothesis

    def timed(*a, **k):
        c = time.process_time()
        try:
            return inner(*a, **k)
        finally:
            spent[0] += time.process_time() - c
            spent[1] += 1
    models.fit_hypothesis = timed
    return spent


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--spectra", type=int, default=40)
    ap.add_argument("--brute", type=int, default=3, help="spectra for the brute-force check")
    ap.add_argument("--passes", type=int, default=1, help="times over the spectra")
    args = ap.parse_args()

    specs = [synthetic(k) for k in range(args.spectra)]
    analyse(specs[0][0], thickness_nm=1500)                      # warm-up (imports)
    fit_cpu = _time_model_fits()
    rates = []
    for _ in range(max(args.passes, 1)):
        fit_cpu[:] = [0.0, 0]
        t0 = time.perf_counter()
        c0 = time.process_time()
        errs, verdicts = [], []
        for s, eg in specs:
            r = analyse(s, thickness_nm=1500)
            g = [x for x in r.gaps if x["kind"] == "direct"]
            errs.append(abs(g[0]["eg_ev"] - eg) if g else np.inf)
            verdicts.append(r.transition)
        dt = time.perf_counter() - t0
        cpu = time.process_time() - c0
        rates.append(args.spectra / cpu)
        print(f"whole analysis: {args.spectra} spectra of 2000 points in {dt:.2f} s wall, "
              f"{cpu:.2f} s CPU on one core = {args.spectra / cpu:.1f} spectra/s per core "
              f"(target >= 100)")
    if len(rates) > 1:
        print(f"  {len(rates)} passes: {', '.join(f'{v:.0f}' for v in rates)} spectra/s; "
              f"fastest {max(rates):.1f}, median {np.median(rates):.1f}")
    print(f"  of which edge-model fits: {fit_cpu[0] / args.spectra * 1e3:.1f} ms CPU per spectrum "
          f"in {fit_cpu[1] / args.spectra:.1f} calls ({100 * fit_cpu[0] / cpu:.0f} %)")
    found = np.isfinite(errs)
    print(f"  direct verdicts {verdicts.count('direct')}/{len(verdicts)}; "
          "|Eg - truth| (synthetic): "
          f"median {np.median(np.asarray(errs)[found]) * 1e3:.2f} meV, "
          f"max {np.max(np.asarray(errs)[found]) * 1e3:.2f} meV over {found.sum()} with a gap")

    crit = WindowCriteria()
    same, ratios = 0, []
    for s, _ in specs[:args.brute]:
        ab = to_absorption(s, AnalysisOptions(thickness_nm=1500))
        e, a, sd = (ab.energy_ev[ab.trusted], ab.alpha[ab.trusted],
                    ab.ln_alpha_sd[ab.trusted])
        nodes = window_nodes(e, a, crit.max_nodes)
        y = tauc_ordinate(e, a, "direct-allowed")
        y_sd = y / EXPONENT_R["direct-allowed"] * sd
        t1 = time.perf_counter()
        for _ in range(10):
            fast = chosen(window_table(e, y, y_sd, nodes, crit, tauc=True), crit)
        t_fast = (time.perf_counter() - t1) / 10
        t1 = time.perf_counter()
        slow = chosen(brute_force(e, y, y_sd, nodes, crit), crit)
        t_slow = time.perf_counter() - t1
        ratios.append(t_slow / t_fast)
        same += fast == slow
        print(f"  {s.source}: {len(nodes)} nodes, ours {t_fast * 1e3:.2f} ms, brute force "
              f"{t_slow * 1e3:.0f} ms, ratio {t_slow / t_fast:.0f}x, same window: {fast == slow}"
              f" {fast} {slow}")
    if ratios:
        print(f"window search: brute/ours = {np.median(ratios):.0f}x (median; target >= 50x), "
              f"same choice in {same}/{len(ratios)}")


if __name__ == "__main__":
    main()
