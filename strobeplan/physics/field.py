"""Sound field of baffled circular pistons with plane reflectors (complex pressure).

Time convention e^{+j omega t}: a complex amplitude P stands for p(t) = Re(P e^{j omega t}).
Each emitter is a circular piston of radius a in an infinite rigid baffle, moving with the
uniform complex surface velocity U. Its pressure is the Rayleigh integral over the face

    p(r) = (j rho c k U / 2 pi) * integral_S e^{-j k R} / R dS ,   R = |r - r_s| .

In polar coordinates centred on the field point's foot in the face plane, R dR = s ds, so
the radial integral is exact and only the integral around the rim is left to quadrature
(the plane wave plus the edge wave):

    p = rho c U (k / kappa) [ H(a - x) e^{-j kappa z}
                              - (1 / 2 pi) integral_0^{2 pi} w(psi) e^{-j kappa R(psi)} dpsi ]
    w(psi) = (a^2 - a x cos psi) / (a^2 + x^2 - 2 a x cos psi) ,

with z the height above the face, x the distance of the foot from the axis, psi the angle
of the rim point about the centre and R(psi) its distance to the field point (H(0) = 1/2).
w is 1/2 plus half a Poisson kernel, whose integral is known (2 pi sign(a - x)); it is
subtracted at its peak (psi = 0) so that the trapezoid rule over the rim converges
geometrically also near the edge of the geometric beam. On the axis (x = 0) this is the
closed form p = rho c U [e^{-jkz} - e^{-jk sqrt(z^2 + a^2)}].

Atmospheric absorption (ISO 9613-1) along every path enters through the complex
wavenumber kappa = k - j alpha (alpha in Np/m), which the radial integral keeps exact.

Plane reflectors act by image sources: a piston mirrored in a reflector's plane, with its
velocity times the pressure reflection coefficient (exact for a rigid infinite plane,
coefficient 1). Images of images follow, order by order, until the next order adds under a
given fraction of the pressure at the view point.

Points behind a piston's baffle (z < 0) receive nothing from it.

References
----------
1. L. E. Kinsler, A. R. Frey, A. B. Coppens, J. V. Sanders, *Fundamentals of Acoustics*,
   4th ed., Wiley (2000), sec. 7.4 (the Rayleigh integral, the on-axis pressure and the
   far-field directivity 2 J1(ka sin t) / (ka sin t) of the baffled circular piston).
2. A. Schoch, "Betrachtungen ueber das Schallfeld einer Kolbenmembran",
   Akustische Zeitschrift 6, 318-326 (1941) (the field as plane wave plus edge wave).
3. P. R. Stepanishen, "Transient radiation from pistons in an infinite planar baffle",
   J. Acoust. Soc. Am. 49, 1629-1638 (1971) (the rim integral with the weight w).
4. J. B. Allen, D. A. Berkley, "Image method for efficiently simulating small-room
   acoustics", J. Acoust. Soc. Am. 65, 943-950 (1979) (image sources).
5. ISO 9613-1:1993 (absorption of sound by the atmosphere).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

NEPER_PER_DB = np.log(10.0) / 20.0  # [Np/dB]
_MAX_BLOCK = 1 << 19  # largest block of (point, rim node) pairs: ~20 MB of work arrays


class Piston(NamedTuple):
    """One baffled circular piston (an emitter or one of its images).

    centre : (3,) [m]; axis : (3,) unit normal of the face, pointing into the field [1];
    radius [m]; velocity : complex surface velocity amplitude [m/s];
    last : index of the reflector that made this image (-1 for a real emitter);
    order : number of reflections [1].
    """

    centre: np.ndarray
    axis: np.ndarray
    radius: float
    velocity: complex
    last: int = -1
    order: int = 0


class Plane(NamedTuple):
    """A plane reflector: a point on it [m], its unit normal towards the room [1] and the
    pressure reflection coefficient [1]."""

    point: np.ndarray
    normal: np.ndarray
    reflection: float = 1.0


def _unit(v):
    v = np.asarray(v, dtype=float)
    n = np.linalg.norm(v)
    if not n > 0:
        raise ValueError("direction vector has zero length")
    return v / n


def wavenumber(frequency, speed, absorption_db_m=0.0):
    """Complex wavenumber kappa = omega / c - j alpha of a lossy plane wave.

    Parameters
    ----------
    frequency : float or ndarray
        Frequency. [Hz]
    speed : float or ndarray
        Speed of sound. [m/s]
    absorption_db_m : float or ndarray, optional
        ISO 9613-1 absorption coefficient. [dB/m]

    Returns
    -------
    complex or ndarray
        kappa; e^{-j kappa r} decays by absorption_db_m dB per metre. [rad/m]

    References
    ----------
    1. ISO 9613-1:1993, clause 3 (attenuation alpha s in dB); 1 dB = ln(10)/20 Np.
    """
    k = 2.0 * np.pi * np.asarray(frequency, dtype=float) / np.asarray(speed, dtype=float)
    out = k - 1j * NEPER_PER_DB * np.asarray(absorption_db_m, dtype=float)
    return out if np.ndim(out) else complex(out)


def on_axis_pressure(z, radius, kappa, impedance=1.0, velocity=1.0):
    """Exact complex pressure on the axis of a baffled circular piston.

    Parameters
    ----------
    z : float or ndarray
        Distance from the face along the axis, >= 0. [m]
    radius : float or ndarray
        Piston radius. [m]
    kappa : complex or ndarray
        Wavenumber (complex with absorption, see `wavenumber`). [rad/m]
    impedance : float or ndarray, optional
        Characteristic impedance rho c of the air. [Pa s/m]
    velocity : complex or ndarray, optional
        Surface velocity amplitude. [m/s]

    Returns
    -------
    complex or ndarray
        rho c U (k / kappa) [e^{-j kappa z} - e^{-j kappa sqrt(z^2 + a^2)}]. [Pa]

    References
    ----------
    1. Kinsler et al. (2000), sec. 7.4, the on-axis pressure of the baffled piston.
    """
    z = np.asarray(z, dtype=float)
    a = np.asarray(radius, dtype=float)
    kap = np.asarray(kappa, dtype=complex)
    ratio = kap.real / kap
    out = impedance * velocity * ratio * (
        np.exp(-1j * kap * z) - np.exp(-1j * kap * np.sqrt(z * z + a * a)))
    return out if np.ndim(out) else complex(out)


def rim_nodes(radius, kappa, nodes=None):
    """Number of rim intervals over half the rim used by `piston_pressure`.

    The integrand around the rim varies like e^{-j k a sin(t) cos(psi)}; the trapezoid rule
    over a period converges once the number of points exceeds its bandwidth (k a) by a
    margin. The default, ceil(k a) + 6 intervals over [0, pi] (twice that around the full
    rim), keeps the relative error near 1e-5 away from the edge of the geometric beam
    (|x - a| > a/10) and under 0.3 % right at it, where the rim weight has a kink
    (tests/physics/test_field.py compares it with a direct sum of the Rayleigh integral).

    Parameters
    ----------
    radius : float
        Piston radius. [m]
    kappa : complex
        Wavenumber. [rad/m]
    nodes : int, optional
        Explicit count, returned as given.

    Returns
    -------
    int
        Intervals over half the rim. [1]

    References
    ----------
    1. L. N. Trefethen, J. A. C. Weideman, "The exponentially convergent trapezoidal
       rule", SIAM Review 56, 385-458 (2014).
    """
    if nodes is not None:
        return int(nodes)
    return int(np.ceil(abs(np.real(kappa)) * radius)) + 6


def piston_pressure(points, centre, axis, radius, kappa, impedance=1.0, velocity=1.0,
                    nodes=None, chunk=8192):
    """Complex pressure of one baffled circular piston at any points (Rayleigh integral).

    Parameters
    ----------
    points : ndarray, shape (..., 3)
        Field points. [m]
    centre : ndarray, shape (3,)
        Centre of the face. [m]
    axis : ndarray, shape (3,)
        Direction the face radiates into (normalised here). [1]
    radius : float
        Piston radius. [m]
    kappa : complex
        Wavenumber, complex with absorption (see `wavenumber`). [rad/m]
    impedance : float, optional
        rho c of the air. [Pa s/m]
    velocity : complex, optional
        Surface velocity amplitude (its argument is the drive phase). [m/s]
    nodes : int, optional
        Trapezoid intervals over half the rim (default `rim_nodes`).
    chunk : int, optional
        Points per block (fewer when the rim needs many nodes: at most 2^19 point-node
        pairs, ~20 MB, per block); float32 work arrays, the result keeps about 1e-6
        relative precision.

    Returns
    -------
    complex ndarray, shape (...)
        Pressure amplitude; zero behind the baffle. [Pa]

    References
    ----------
    1. Kinsler et al. (2000), sec. 7.4 (Rayleigh integral).
    2. Schoch (1941); Stepanishen (1971) (radial integral in closed form, the rim weight).
    3. Trefethen and Weideman (2014) (trapezoid rule for periodic integrands).
    """
    pts = np.asarray(points, dtype=float)
    shape = pts.shape[:-1]
    pts = pts.reshape(-1, 3)
    c = np.asarray(centre, dtype=float)
    n = _unit(axis)
    a = float(radius)
    kap = complex(kappa)
    n_half = rim_nodes(a, kap, nodes)
    psi = np.linspace(0.0, np.pi, n_half + 1)
    versine = (2.0 * np.sin(0.5 * psi) ** 2).astype(np.float32)  # 1 - cos(psi)
    weights = np.full(n_half + 1, 1.0 / n_half, dtype=np.float32)
    weights[[0, -1]] *= 0.5  # trapezoid over [0, pi] = mean over the full (even) rim
    scale = impedance * velocity * kap.real / kap
    k = np.float32(kap.real)
    alpha = np.float32(-kap.imag)  # [Np/m]
    out = np.empty(pts.shape[0], dtype=complex)
    chunk = max(1, min(int(chunk), _MAX_BLOCK // (n_half + 1)))
    for start in range(0, pts.shape[0], chunk):
        d = pts[start:start + chunk] - c
        z = d @ n
        x = np.sqrt(np.maximum(np.einsum("ij,ij->i", d, d) - z * z, 0.0))
        r0 = np.sqrt(z * z + (a - x) ** 2)  # distance to the nearest rim point
        # Everything per rim node is formed without cancellation, so single precision
        # keeps ~1e-6 of the result even far away where the edge terms nearly cancel.
        two_ax = (2.0 * a * x).astype(np.float32)[:, None]
        foot2 = ((a - x) ** 2).astype(np.float32)[:, None] + two_ax * versine
        r = np.sqrt((z * z).astype(np.float32)[:, None] + foot2)
        delta = two_ax * versine / (r + r0.astype(np.float32)[:, None])  # R - R0 >= 0
        kd = k * delta
        # g = e^{-j kappa delta} - 1
        g_r = -2.0 * np.sin(0.5 * kd) ** 2
        g_i = -np.sin(kd)
        if alpha:
            att = np.exp(-alpha * delta)
            g_r = att * g_r + (att - 1.0)
            g_i *= att
        one_k = 1.0 + np.divide(((a - x) * (a + x)).astype(np.float32)[:, None], foot2,
                                out=np.zeros_like(foot2), where=foot2 > 0)
        one_k[np.abs(x - a) <= 1e-12 * a] = 1.0  # on the shadow line the kernel is a delta
        mean = (g_r * one_k) @ weights + 1j * ((g_i * one_k) @ weights)
        e0 = np.exp(-1j * kap * r0)
        inside = 0.5 * (1.0 + np.sign(a - x))  # H(a - x), 1/2 on the rim's shadow line
        # p = rho c U (k/kappa) [H (e^{-j kappa z} - e^{-j kappa R0}) - e^{-j kappa R0} <g w'>]
        # with <g w'> = (1/2) mean over the rim of g (1 + K), K the Poisson kernel.
        plane = inside * (np.exp(-1j * kap * z) - e0)
        p = plane - 0.5 * e0 * mean
        out[start:start + chunk] = np.where(z >= 0, scale * p, 0.0)
    return out.reshape(shape)


def mirror(source, plane, index):
    """Image of a piston in a plane reflector.

    Parameters
    ----------
    source : Piston
        The piston (or image) to mirror.
    plane : Plane
        The reflector.
    index : int
        The reflector's index (stored so that the next order skips it).

    Returns
    -------
    Piston
        Centre and axis mirrored in the plane, velocity times the reflection coefficient.

    References
    ----------
    1. Allen and Berkley (1979).
    """
    nn = _unit(plane.normal)
    q = np.asarray(plane.point, dtype=float)
    c = np.asarray(source.centre, dtype=float)
    ax = np.asarray(source.axis, dtype=float)
    return Piston(c - 2.0 * ((c - q) @ nn) * nn, ax - 2.0 * (ax @ nn) * nn, source.radius,
                  source.velocity * plane.reflection, index, source.order + 1)


def next_images(sources, planes):
    """The images of the next order: each source mirrored in every plane it sits in front
    of, except the one that made it.

    Parameters
    ----------
    sources : list of Piston
        Sources of one order.
    planes : list of Plane
        Reflectors.

    Returns
    -------
    list of Piston
        Sources of the next order.

    References
    ----------
    1. Allen and Berkley (1979).
    """
    out = []
    for s in sources:
        for j, pl in enumerate(planes):
            if j == s.last:
                continue
            side = (np.asarray(s.centre, float) - np.asarray(pl.point, float)) @ _unit(pl.normal)
            if side > 0:
                out.append(mirror(s, pl, j))
    return out


def image_sources(emitters, planes, view, kappa, impedance=1.0, tolerance=0.01,
                  max_order=24, nodes=None):
    """Emitters and their images, up to the order where the next adds little at the view.

    The next order is left out when the sum of the magnitudes of its sources' pressures at
    the view is under `tolerance` times the pressure there so far (or under tolerance^2
    times the sum of all magnitudes so far, so that a view at a node still stops).

    Parameters
    ----------
    emitters : list of Piston
        The real emitters (order 0).
    planes : list of Plane
        Reflectors.
    view : ndarray, shape (3,)
        The view point. [m]
    kappa : complex
        Wavenumber. [rad/m]
    impedance : float, optional
        rho c. [Pa s/m]
    tolerance : float, optional
        Fraction of the pressure at the view the next order must add to be kept. [1]
    max_order : int, optional
        Hard limit on the order (two parallel rigid reflectors never converge). [1]
    nodes : int, optional
        Rim intervals (see `rim_nodes`).

    Returns
    -------
    sources : list of Piston
        All kept sources.
    order : int
        Highest reflection order kept. [1]
    converged : bool
        False when `max_order` stopped the series.

    References
    ----------
    1. Allen and Berkley (1979).
    """
    view = np.asarray(view, dtype=float)

    def at_view(srcs):
        return np.array([piston_pressure(view, s.centre, s.axis, s.radius, kappa, impedance,
                                         s.velocity, nodes) for s in srcs], dtype=complex)

    kept = list(emitters)
    vals = at_view(kept)
    total = vals.sum()
    magnitude = np.abs(vals).sum()
    current = list(emitters)
    order = 0
    while True:
        nxt = next_images(current, planes)
        if not nxt:
            return kept, order, True
        v = at_view(nxt)
        added = np.abs(v).sum()
        if added < tolerance * abs(total) or added < tolerance**2 * magnitude:
            return kept, order, True
        if order >= max_order:
            return kept, order, False
        kept.extend(nxt)
        total += v.sum()
        magnitude += added
        current = nxt
        order += 1


def field_pressure(points, sources, kappa, impedance=1.0, nodes=None, chunk=8192):
    """Total complex pressure of several pistons (emitters and images) at any points.

    Parameters
    ----------
    points : ndarray, shape (..., 3)
        Field points. [m]
    sources : list of Piston
        Pistons to sum.
    kappa : complex
        Wavenumber. [rad/m]
    impedance : float, optional
        rho c. [Pa s/m]
    nodes : int, optional
        Rim intervals (see `rim_nodes`).
    chunk : int, optional
        Points per block (bounds memory).

    Returns
    -------
    complex ndarray, shape (...)
        Pressure amplitude. [Pa]

    References
    ----------
    1. Kinsler et al. (2000) (superposition); Allen and Berkley (1979).
    """
    pts = np.asarray(points, dtype=float)
    out = np.zeros(pts.shape[:-1], dtype=complex)
    for s in sources:
        out += piston_pressure(pts, s.centre, s.axis, s.radius, kappa, impedance, s.velocity,
                               nodes, chunk)
    return out


def rated_velocity(spl_reference, reference_distance, radius, kappa, impedance):
    """Surface velocity amplitude that gives a datasheet's on-axis SPL at its distance.

    Parameters
    ----------
    spl_reference : float or ndarray
        Rated SPL (RMS) on the axis at the reference distance. [dB re 20 uPa]
    reference_distance : float or ndarray
        Datasheet distance. [m]
    radius : float or ndarray
        Piston radius. [m]
    kappa : complex or ndarray
        Wavenumber. [rad/m]
    impedance : float or ndarray
        rho c. [Pa s/m]

    Returns
    -------
    float or ndarray
        |U| such that |p(z = r0)| equals the rated peak pressure. [m/s]

    References
    ----------
    1. Kinsler et al. (2000), sec. 7.4; ISO 1683:2015 (20 uPa, RMS level).
    """
    peak = np.sqrt(2.0) * 20e-6 * 10.0 ** (np.asarray(spl_reference, dtype=float) / 20.0)
    unit = np.abs(on_axis_pressure(reference_distance, radius, kappa, impedance, 1.0))
    out = peak / unit
    return out if np.ndim(out) else float(out)
