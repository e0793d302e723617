"""A hand-made analysis result for the report tests (synthetic: every number is chosen here,
so the traces, windows and annotations a report must draw are known exactly)."""
from __future__ import annotations

import math

import numpy as np

EG, EG_ERR, WIN = 1.60, 0.005, (1.65, 1.90)
SLOPE = 4.0e9            # (αhν)² per eV, synthetic
EU_MEV, EU_ERR_MEV, U_WIN = 25.0, 1.0, (1.50, 1.58)


def handmade_result(n=600, sample="handmade film", **over):
    """A result dict in the shape of EdgeResult.to_dict(arrays=True), synthetic: above the
    gap (αhν)² = SLOPE·(E − EG) exactly; below it an Urbach tail with Eu = 25 meV; points
    under 1.45 eV marked untrusted (noise floor)."""
    e = np.linspace(1.2, 2.4, n)
    above = np.sqrt(SLOPE * np.clip(e - EG, 0, None)) / e
    tail = 300.0 * np.exp((e - 1.58) / (EU_MEV / 1e3))
    alpha = np.where(e > 1.62, above, np.minimum(tail, np.sqrt(SLOPE * 0.02) / 1.62))
    trusted = e >= 1.45
    wl = 1239.841984 / e[::-1]
    acceptable = [[1.63 + 0.01 * i, 1.85 + 0.01 * i, EG + 0.001 * (i - 5)] for i in range(11)]
    u_m = 1e3 / EU_MEV
    res = {
        "source": "handmade.csv", "sha256": "ab" * 32, "column": "T (%)", "sample": sample,
        "quantity": "transmittance", "alpha_kind": "absolute", "transition": "direct",
        "gaps": [{"kind": "direct", "eg_ev": EG, "eg_err_ev": EG_ERR, "window_ev": list(WIN),
                  "method": "Tauc (αhν)², automatic linear window",
                  "transition": "direct-allowed",
                  "uncertainty": {"fit_stderr_ev": 0.0004, "bootstrap_sd_ev": 0.0005,
                                  "window_spread_ev": 0.0049, "n_windows": 11,
                                  "meaning": "one standard deviation"}}],
        "tauc": {
            "direct-allowed": {"eg_ev": EG, "eg_err_ev": EG_ERR, "window_ev": list(WIN),
                               "slope": SLOPE, "intercept": -SLOPE * EG,
                               "ordinate": "(αhν)²", "window_choice": "automatic",
                               "acceptable_windows": acceptable,
                               "stretches": [{"window_ev": list(WIN), "eg_ev": EG,
                                              "linear_span_ev": 0.25},
                                             {"window_ev": [2.1, 2.3], "eg_ev": 1.75,
                                              "linear_span_ev": 0.2}],
                               "uncertainty": {"window_spread_ev": 0.0049, "n_windows": 11},
                               "rms_residual": 1.0, "r2": 0.999, "n_points": 125},
            "indirect-allowed": None, "direct-forbidden": None, "indirect-forbidden": None},
        "cody": None, "baseline": None,
        "urbach": {"eu_mev": EU_MEV, "eu_err_mev": EU_ERR_MEV, "window_ev": list(U_WIN),
                   "slope_per_ev": u_m, "ln_alpha_intercept": math.log(300.0) - u_m * 1.58,
                   "decades": 1.4, "uncertainty": {"n_windows": 7}},
        "verdict": {"transition": "direct", "strength": "strong",
                    "reason": "the direct edge model fits better by ΔBIC = 120",
                    "evidence": {"items": {
                        "edge_models": {"favours": "direct", "strength": "strong",
                                        "delta_bic": 120.0,
                                        "text": "the direct edge model fits better by "
                                                "ΔBIC = 120.0"},
                        "straightness": {"favours": "direct", "strength": "strong",
                                         "text": "(αhν)² is straight over 250 meV, "
                                                 "(αhν)^(1/2) over 40 meV at the onset"}},
                        "score": {"direct": 6.0, "indirect": 0.0}, "margin": 6.0,
                        "candidates": ["direct", "indirect"]}},
        "models": {"direct": {"bic": -900.0}, "indirect": {"bic": -780.0}},
        "e04_ev": 1.66,
        "film": {"thickness_nm": 500.0, "thickness_err_nm": 4.0, "thickness_source": "user",
                 "n": {"800nm": 2.31}, "method": "", "extrema": {}},
        "flags": [{"code": "noise-floor", "message": "points below the noise floor excluded"}],
        "options": {"thickness_nm": 500.0, "model": "auto", "criteria": {"min_points": 5}},
        "metadata": {"Annealing temperature (C)": "350"},
        "version": "0.1.0", "created": "2026-01-01T00:00:00+00:00",
        "data": {"measured": {"x": wl.tolist(), "y": np.exp(-alpha[::-1] * 5e-5).tolist(),
                              "x_unit": "nm", "y_unit": "fraction",
                              "quantity": "transmittance"},
                 "energy_ev": e.tolist(), "alpha": alpha.tolist(),
                 "trusted": trusted.tolist(), "alpha_kind": "absolute",
                 "alpha_label": "α [cm⁻¹]", "conversion": "−ln(T)/d",
                 "models": {"direct": {"energy_ev": e[::10].tolist(),
                                       "alpha": alpha[::10].tolist()}}},
    }
    res.update(over)
    return res
