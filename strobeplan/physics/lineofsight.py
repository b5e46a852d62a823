"""Line of sight through a sound field: the schlieren deflection map.

A ray crossing the test region along the light axis l is deflected, towards higher index,
by eps_w = (1/n0) int dn/dw dl across any direction w perpendicular to it (Settles 2001,
eq. 2.4 with n0 ~ 1). With linear acoustics and Gladstone-Dale, n' = K rho' = K p'/c^2, and
since w is perpendicular to l the derivative leaves the integral:

    eps_w(u, v) = (K / c^2) d/dw Q(u, v),     Q(u, v) = int p(u, v, l) dl

Q, the line-of-sight integral of the complex pressure, is a band-limited function of the
picture's coordinates (the sound's wavenumber bounds its spectrum), so it is computed on a
coarse lattice (a fraction of the sound wavelength apart) and carried to the pixels by
local Lagrange interpolation, whose derivative gives dQ/dw at once
(:func:`interpolation_matrix`). Along l the integral is the trapezoid rule over the given
samples (:func:`trapezoid_weights`).

Every frame of a stroboscopic sweep is the real part of one complex map at its phase:
eps_k = Re(E e^{j phi_k}), so the map is computed once.

References
----------
1. G. S. Settles, *Schlieren and Shadowgraph Techniques*, Springer (2001), sec. 2.4
   (the ray deflection as the line integral of the index gradient).
2. L. E. Kinsler et al., *Fundamentals of Acoustics*, 4th ed., Wiley (2000)
   (rho' = p'/c^2).
3. J. Stoer, R. Bulirsch, *Introduction to Numerical Analysis*, 3rd ed., Springer (2002),
   sec. 2.1 (Lagrange interpolation and its error term) and sec. 3.1 (trapezoid rule).
4. C. E. Shannon, "Communication in the presence of noise", Proc. IRE 37, 10-21 (1949)
   (a band-limited function is fixed by samples closer than half its shortest period).
"""

from __future__ import annotations

import numpy as np

DEFAULT_ORDER = 6  # nodes of the local interpolating polynomial
LATTICE_FRACTION = 8  # lattice spacing = sound wavelength / LATTICE_FRACTION


def lattice_nodes(start, stop, spacing, order=DEFAULT_ORDER):
    """Uniform lattice covering [start, stop] with ``order // 2`` spare nodes at each end.

    Parameters
    ----------
    start, stop : float
        Interval to cover. [m]
    spacing : float
        Largest node spacing. [m]
    order : int
        Nodes of the interpolating polynomial (sets the margin). [1]

    Returns
    -------
    ndarray
        Node coordinates (equally spaced, spacing <= ``spacing``). [m]

    References
    ----------
    1. Stoer and Bulirsch (2002), sec. 2.1.
    """
    span = float(stop) - float(start)
    cells = max(1, int(np.ceil(span / spacing - 1e-9)))
    h = span / cells if span > 0 else float(spacing)
    margin = order // 2
    return float(start) + h * np.arange(-margin, cells + margin + 1)


def interpolation_matrix(nodes, x, order=DEFAULT_ORDER, derivative=False):
    """Weights of local Lagrange interpolation from a uniform lattice to points.

    ``W @ f(nodes)`` approximates f(x) (or f'(x) with ``derivative``) using the ``order``
    nodes around each x. For f = e^{j k x} the error falls like (k h)^order.

    Parameters
    ----------
    nodes : ndarray, shape (n,)
        Uniform lattice (n >= order). [m]
    x : ndarray, shape (m,)
        Points inside the lattice. [m]
    order : int
        Nodes per point. [1]
    derivative : bool
        Weights of the derivative instead of the value.

    Returns
    -------
    ndarray, shape (m, n)
        Interpolation weights ([1], or [1/m] for the derivative).

    References
    ----------
    1. Stoer and Bulirsch (2002), sec. 2.1 (Lagrange form).
    """
    nodes = np.asarray(nodes, dtype=float)
    x = np.atleast_1d(np.asarray(x, dtype=float))
    n = nodes.size
    if n < order:
        raise ValueError("lattice has fewer nodes than the interpolation order")
    h = nodes[1] - nodes[0]
    t = (x - nodes[0]) / h
    first = np.clip(np.floor(t).astype(int) - (order // 2 - 1), 0, n - order)
    local = t - first  # position in units of h from the first node used
    j = np.arange(order)
    # Lagrange basis l_i(s) = prod_{m != i} (s - m) / (i - m) on the nodes 0..order-1.
    diff = local[:, None] - j[None, :]  # (m, order)
    denom = np.array([np.prod([i - m for m in j if m != i]) for i in j], dtype=float)
    w = np.empty((x.size, order))
    for i in j:
        others = [m for m in j if m != i]
        if not derivative:
            w[:, i] = np.prod(diff[:, others], axis=1) / denom[i]
        else:
            acc = np.zeros(x.size)
            for skip in others:
                rest = [m for m in others if m != skip]
                acc += np.prod(diff[:, rest], axis=1) if rest else 1.0
            w[:, i] = acc / (denom[i] * h)
    out = np.zeros((x.size, n))
    rows = np.repeat(np.arange(x.size), order)
    cols = (first[:, None] + j[None, :]).ravel()
    np.add.at(out, (rows, cols), w.ravel())
    return out


def trapezoid_weights(samples, depth):
    """Positions and trapezoid weights of ``samples`` points spanning ``depth``.

    Parameters
    ----------
    samples : int
        Points along the light axis (>= 2). [1]
    depth : float
        Span integrated, centred on the view plane. [m]

    Returns
    -------
    positions, weights : ndarray
        Offsets along the light from the view plane [m] and their weights [m].

    References
    ----------
    1. Stoer and Bulirsch (2002), sec. 3.1.
    """
    s = np.linspace(-0.5 * depth, 0.5 * depth, int(samples))
    step = depth / (int(samples) - 1)
    w = np.full(int(samples), step)
    w[[0, -1]] *= 0.5
    return s, w


def deflection_map(projected_gradient, gladstone_dale_constant, speed):
    """Complex deflection from the gradient of the projected pressure, (K / c^2) dQ/dw. [rad]

    Parameters
    ----------
    projected_gradient : complex or ndarray
        dQ/dw, Q the line integral of the complex pressure. [Pa]
    gladstone_dale_constant : float
        K. [m^3/kg]
    speed : float
        Speed of sound. [m/s]

    References
    ----------
    1. Settles (2001), sec. 2.4; Kinsler et al. (2000).
    """
    return np.asarray(projected_gradient) * (gladstone_dale_constant / speed**2)


def double_pass(first_pass_at, offset):
    """Deflection of a double pass: the first pass's map plus itself shifted by ``offset``.

    Parameters
    ----------
    first_pass_at : callable
        Maps a lateral shift [m] to the one-pass complex deflection map there. [rad]
    offset : float
        Lateral offset between the two passes' images. [m]

    Returns
    -------
    complex ndarray
        eps(x) + eps(x + offset): 2 eps when the passes coincide. [rad]

    References
    ----------
    1. Settles (2001), sec. 4.3 (double-pass systems and their double image).
    """
    one = first_pass_at(0.0)
    return 2.0 * one if offset == 0 else one + first_pass_at(float(offset))


def frame_deflection(deflection, phase, gain=1.0):
    """Real deflection of one frame: Re(gain E e^{j phase}). [rad]

    Parameters
    ----------
    deflection : complex ndarray
        Complex deflection map E. [rad]
    phase : float
        Phase of the frame relative to the map's reference. [rad]
    gain : float
        Contrast kept by the flash (retention times smear). [1]

    References
    ----------
    1. Kinsler et al. (2000) (complex amplitudes: p(t) = Re(P e^{j w t})).
    """
    return np.real(np.asarray(deflection) * (gain * np.exp(1j * phase)))
