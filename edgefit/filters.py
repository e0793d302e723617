"""Robust summaries of sampled readings (numpy and scipy, named for what they compute)."""
from __future__ import annotations

import numpy as np
from scipy.ndimage import median_filter


def running_median(values, k: int) -> np.ndarray:
    """Running median over ``k`` readings, the ends padded by their nearest reading
    (``scipy.ndimage.median_filter(values, size=k, mode="nearest")``)."""
    return median_filter(np.asarray(values, float), size=max(int(k), 1), mode="nearest")


def median(values) -> float:
    """Median of all values (of any shape)."""
    return float(np.median(np.asarray(values, float)))


def percentile(values, q: float) -> float:
    """The q-th percentile of all values (numpy's linear interpolation)."""
    return float(np.percentile(np.asarray(values, float), q))
