"""The one decorator for compiled inner loops (numba): :mod:`edgefit.edge.kernels`,
:mod:`edgefit.fringe_kernels` and :mod:`edgefit.filters`.

Compiled code is cached on disk (numba's ``cache=True``: beside the module, or in the user's
cache directory when that is read-only), so only the first run after an install compiles.
"""
from __future__ import annotations

import numba


def compiled(fn):
    """numba.njit with an on-disk cache, or without one where numba finds no writable place."""
    try:
        return numba.njit(cache=True, nogil=True, error_model="numpy")(fn)
    except RuntimeError:            # "cannot cache function ...: no locator available"
        return numba.njit(nogil=True, error_model="numpy")(fn)
