"""Synthetic spectra with known truths (synthetic: generated here from the edge model)."""
import numpy as np

from edgefit.edge.tauc import edge_model_alpha
from edgefit.optics import HC_EV_NM
from edgefit.spectrum import Spectrum


def transmittance_spectrum(alpha_fn, thickness_nm, noise=0.0, seed=0, lam=(250.0, 1500.0)):
    wl = np.arange(lam[0], lam[1] + 1.0, 1.0)
    e = HC_EV_NM / wl
    t = np.exp(-alpha_fn(e) * thickness_nm * 1e-7)
    t = t + np.random.default_rng(seed).normal(0.0, noise, t.size)
    return Spectrum(wl, t, "nm", "transmittance", "fraction", source="synthetic.csv",
                    sample="synthetic")


def single_edge(eg, eu, r, thickness_nm, noise=0.0, seed=0, amplitude=None):
    b = amplitude or (1e5 if r == 0.5 else 3e5)
    return transmittance_spectrum(lambda e: edge_model_alpha(e, eg, eu, b, r), thickness_nm,
                                  noise, seed)
