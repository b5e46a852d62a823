"""Array helpers the physics shares (numpy only).

References
----------
1. NumPy reference, ``numpy.unique`` (sorted unique values of the flattened input, NaNs
   collapsed into one at the end).
"""

from __future__ import annotations

import math

import numpy as np

FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))
"""Full width at half maximum of a Gaussian over its standard deviation (2.3548). [1]"""

__all__ = ["unique"]


def unique(values) -> np.ndarray:
    """The sorted unique values of ``values`` (flattened), as ``np.unique`` returns them.

    ``np.unique`` imports ``numpy.ma`` on its first call (about 20 ms of a ``check``); this
    sorts and drops repeats itself, NaNs collapsed into one at the end as ``np.unique``
    does [1].

    Parameters
    ----------
    values : array_like
        Any values. [any unit]
    """
    s = np.sort(np.asarray(values).ravel())
    if s.size < 2:
        return s
    keep = np.empty(s.shape, dtype=bool)
    keep[0] = True
    np.not_equal(s[1:], s[:-1], out=keep[1:])
    if s.dtype.kind in "fc":
        nan = np.isnan(s)
        keep[1:] &= ~(nan[1:] & nan[:-1])
    return s[keep]
