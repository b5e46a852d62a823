"""Array helpers the physics shares (numpy only).

References
----------
1. NumPy reference, ``numpy.unique`` (sorted unique values of the flattened input, NaNs
   collapsed into one at the end).
2. NumPy reference, "Broadcasting" and ``numpy.broadcast_to`` (a broadcast axis is a view
   with stride 0), ``numpy.repeat``.
"""

from __future__ import annotations

import math

import numpy as np

FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))
"""Full width at half maximum of a Gaussian over its standard deviation (2.3548). [1]"""

__all__ = ["unique", "compact", "expand", "expanded"]


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


def compact(x) -> np.ndarray:
    """``x`` without its broadcast axes: every axis of stride 0 (a view made by
    ``np.broadcast_to`` or an expanded operand) cut to length 1 [2].

    The result broadcasts back to ``x``'s shape with the same values, so elementwise work on
    it gives the same numbers on fewer elements. Arrays without such axes come back as they
    are.

    Parameters
    ----------
    x : array_like
        Any array. [any unit]
    """
    a = np.asarray(x)
    if a.ndim == 0 or 0 not in a.strides:
        return a
    return a[tuple(slice(0, 1) if st == 0 and n > 1 else slice(None)
                   for st, n in zip(a.strides, a.shape, strict=True))]


def expand(x, shape: tuple[int, ...]) -> np.ndarray:
    """A new C-contiguous array of ``shape`` holding ``x`` broadcast to it [2].

    Equal to ``np.broadcast_to(x, shape).copy()``, built by ``np.repeat`` along the
    broadcast axes, the last first while the array is small. Arithmetic between operands of
    different broadcast axes iterates in runs as long as the innermost axis; when that axis
    is short (the design search's supply axis), expanding the operands first and combining
    whole arrays is several times faster, with the same numbers.

    Parameters
    ----------
    x : array_like
        Values that broadcast to ``shape``. [any unit]
    shape : tuple of int
        The shape wanted. [1]
    """
    shape = tuple(shape)
    a = compact(x)
    if a.ndim > len(shape) or np.broadcast_shapes(a.shape, shape) != shape:
        raise ValueError(f"cannot broadcast shape {a.shape} to {shape}")
    a = a.reshape((1,) * (len(shape) - a.ndim) + a.shape)
    if a.shape == shape:
        return np.array(a, order="C")
    for axis in range(len(shape) - 1, -1, -1):
        if a.shape[axis] == 1 and shape[axis] != 1:
            a = np.repeat(a, shape[axis], axis=axis)
    return np.ascontiguousarray(a)


def expanded(*xs) -> list:
    """The operands as arrays of their common broadcast shape: each one with broadcast axes
    of its own expanded (:func:`expand`), the others (full-shaped, or one value) as given.

    ``op(*expanded(a, b))`` equals ``op(a, b)`` for any elementwise numpy operation (the
    same numbers), faster when ``a`` and ``b`` broadcast against each other along short
    inner axes.

    Parameters
    ----------
    *xs : array_like
        Operands that broadcast together. [any unit]
    """
    arrays = [np.asarray(x) for x in xs]
    shape = np.broadcast_shapes(*(a.shape for a in arrays))
    return [expand(a, shape) if a.size > 1 and a.shape != shape else a for a in arrays]
