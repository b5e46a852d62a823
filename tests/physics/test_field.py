"""Sound field of baffled pistons and image sources (strobeplan.physics.field)."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import brentq, minimize_scalar
from scipy.special import j1

from strobeplan.physics import air, field

C = 343.2  # speed of sound at 20 degC [m/s] (round figure of our own; any value works)
RHO_C = 413.0  # [Pa s/m] (round figure of our own; the model is linear in it)


def _axis_points(z):
    z = np.asarray(z, dtype=float)
    return np.stack([np.zeros_like(z), np.zeros_like(z), z], axis=-1)


@pytest.mark.parametrize("frequency, radius", [
    (25e3, 8e-3),   # ka = 3.7
    (40e3, 5e-3),   # ka = 3.7 (a common 40 kHz transducer size)
    (40e3, 20e-3),  # ka = 14.6 (a large face: deep near-field nulls)
    (200e3, 4e-3),  # ka = 14.6
    (20e3, 2e-3),   # ka = 0.7 (nearly a point source)
])
def test_on_axis_matches_closed_form(frequency, radius):
    # Kinsler et al., Fundamentals of Acoustics (4th ed.), sec. 7.4: on the axis of a baffled
    # piston p = rho c U [e^{-jkz} - e^{-jk sqrt(z^2 + a^2)}], written out here, not through
    # the module. Tolerance 0.5 % in magnitude and 0.5 deg in phase from z = a/2 to 100 a.
    k = 2 * np.pi * frequency / C
    z = np.geomspace(radius / 2, 100 * radius, 400)
    exact = RHO_C * (np.exp(-1j * k * z) - np.exp(-1j * k * np.sqrt(z**2 + radius**2)))
    p = field.piston_pressure(_axis_points(z), [0, 0, 0], [0, 0, 1], radius, k, RHO_C)
    keep = np.abs(exact) > 1e-3 * np.abs(exact).max()  # exact nulls have no phase
    assert np.max(np.abs(np.abs(p) / np.abs(exact) - 1)[keep]) < 0.005
    assert np.max(np.abs(np.angle(p / exact, deg=True))[keep]) < 0.5


def test_on_axis_off_origin_and_tilted():
    # Same closed form (Kinsler et al., sec. 7.4) for a piston placed and turned
    # arbitrarily: the model must be invariant under rigid motions.
    k, a = 2 * np.pi * 40e3 / C, 5e-3
    centre = np.array([0.01, -0.02, 0.03])
    axis = np.array([1.0, 2.0, -0.5]) / np.linalg.norm([1.0, 2.0, -0.5])
    z = np.linspace(a / 2, 100 * a, 50)
    pts = centre + z[:, None] * axis
    exact = RHO_C * (np.exp(-1j * k * z) - np.exp(-1j * k * np.sqrt(z**2 + a**2)))
    p = field.piston_pressure(pts, centre, axis, a, k, RHO_C)
    assert np.allclose(p, exact, rtol=2e-3, atol=1e-4 * RHO_C)


def _rayleigh_brute(point, radius, k, n=500):
    # The Rayleigh integral itself, p = (j rho c k / 2 pi) int e^{-jkR}/R dS (Kinsler et al.,
    # sec. 7.4), by a plain midpoint sum over the face in polar coordinates.
    r = (np.arange(n) + 0.5) / n * radius
    phi = (np.arange(2 * n) + 0.5) / (2 * n) * 2 * np.pi
    rr, pp = np.meshgrid(r, phi)
    dist = np.sqrt((point[0] - rr * np.cos(pp))**2 + (point[1] - rr * np.sin(pp))**2
                   + point[2]**2)
    area = rr * (radius / n) * (np.pi / n)
    return 1j * k / (2 * np.pi) * np.sum(np.exp(-1j * k * dist) / dist * area)


@pytest.mark.parametrize("point", [
    (0.3, 0.0, 1.0), (1.0, 0.0, 1.0), (2.0, 0.5, 1.0), (3.0, 0.0, 5.0), (0.99, 0.0, 2.0),
    (1.01, 0.0, 0.7), (0.0, 6.0, 3.0),
])
def test_off_axis_matches_direct_rayleigh_sum(point):
    # The rim form against a direct quadrature of the Rayleigh integral (Kinsler et al.,
    # sec. 7.4), in units of the radius; within 0.5 % (the rim form is worst, ~0.25 %, at the
    # edge of the geometric beam).
    a, k = 5e-3, 2 * np.pi * 40e3 / C
    pt = np.array(point) * a
    ref = _rayleigh_brute(pt, a, k)
    p = field.piston_pressure(pt, [0, 0, 0], [0, 0, 1], a, k)
    assert abs(p / ref - 1) < 0.005


@pytest.mark.parametrize("ka", [1.0, 3.7, 8.0, 20.0])
def test_far_field_directivity(ka):
    # Kinsler et al., sec. 7.4: far from a baffled piston |p(r, t)| / |p(r, 0)| =
    # |2 J1(ka sin t) / (ka sin t)|, here with scipy.special.j1. Far: r = 200 k a^2 (the
    # Fresnel term k a^2 / 2r stays under 0.3 %).
    a = 5e-3
    k = ka / a
    r = max(200 * k * a**2, 200 * a)
    theta = np.linspace(0.02, 1.5, 60)
    pts = np.stack([r * np.sin(theta), np.zeros_like(theta), r * np.cos(theta)], axis=-1)
    p = field.piston_pressure(pts, [0, 0, 0], [0, 0, 1], a, k)
    p0 = field.piston_pressure(np.array([0, 0, r]), [0, 0, 0], [0, 0, 1], a, k)
    x = ka * np.sin(theta)
    expected = np.abs(2 * j1(x) / x)
    assert np.max(np.abs(np.abs(p / p0) - expected)) < 0.004


def test_nothing_behind_the_baffle():
    # A baffled piston radiates into its half space only (Kinsler et al., sec. 7.4).
    p = field.piston_pressure(np.array([[0, 0, -0.01], [0.02, 0, -1e-4]]), [0, 0, 0],
                              [0, 0, 1], 5e-3, 700.0)
    assert np.all(p == 0)


def test_absorption_along_the_path():
    # ISO 9613-1:1993, clause 3: attenuation alpha * s in dB over a path s. Far on the axis
    # the pressure falls as 1/r (Kinsler et al., sec. 7.4), times the absorption.
    f = 100e3
    alpha = air.absorption(f, 293.15, 0.5, 101325.0)  # ISO 9613-1 (checked in test_air)
    kap = field.wavenumber(f, C, alpha)
    a = 3e-3
    r1, r2 = 1.0, 3.0
    p1, p2 = field.piston_pressure(_axis_points([r1, r2]), [0, 0, 0], [0, 0, 1], a, kap)
    loss_db = 20 * np.log10(abs(p1) / abs(p2)) - 20 * np.log10(r2 / r1)
    assert loss_db == pytest.approx(alpha * (r2 - r1), rel=2e-3)


@settings(max_examples=25, deadline=None)
@given(chunk=st.integers(1, 300), n=st.integers(1, 400))
def test_chunking_does_not_change_the_result(chunk, n):
    # Invariant: chunks only bound memory (property of the implementation).
    rng = np.random.default_rng(n)
    pts = rng.uniform([-0.03, -0.03, -0.005], [0.03, 0.03, 0.08], (n, 3))
    args = ([0.001, 0.002, 0.0], [0.1, 0.0, 1.0], 4e-3, field.wavenumber(40e3, C, 1.3))
    whole = field.piston_pressure(pts, *args, chunk=10_000)
    parts = field.piston_pressure(pts, *args, chunk=chunk)
    assert np.allclose(whole, parts, rtol=1e-6, atol=1e-9)  # float32 sums may reorder


def test_rigid_reflector_standing_wave():
    # A rigid plane doubles the pressure at its face and sets up a standing wave: nodes
    # lambda/4 from the wall and every lambda/2 after it, the pressure in phase inside a
    # cell and in antiphase across a node (Kinsler et al., ch. 10, standing waves in a
    # closed pipe; the image of a source in a rigid plane, Allen and Berkley 1979).
    f, a, length = 40e3, 1e-3, 0.5
    lam = C / f
    k = 2 * np.pi / lam
    emitter = field.Piston(np.zeros(3), np.array([0, 0, 1.0]), a, 1.0)
    wall = field.Plane(np.array([0, 0, length]), np.array([0, 0, -1.0]), 1.0)
    view = np.array([0, 0, length - lam / 8])
    sources, order, converged = field.image_sources([emitter], [wall], view, k)
    assert (order, converged, len(sources)) == (1, True, 2)
    z = np.linspace(length - 2 * lam, length, 4001)
    p = field.field_pressure(_axis_points(z), sources, k)
    direct = field.field_pressure(_axis_points(z), sources[:1], k)
    assert abs(p[-1]) == pytest.approx(2 * abs(direct[-1]), rel=1e-3)
    mag = np.abs(p)
    low = mag[1:-1] < 0.3 * mag.max()
    minima = z[1:-1][(mag[1:-1] < mag[:-2]) & (mag[1:-1] < mag[2:]) & low]
    gaps_from_wall = np.sort(length - minima)
    assert gaps_from_wall == pytest.approx([lam / 4, 3 * lam / 4, 5 * lam / 4, 7 * lam / 4],
                                           abs=lam / 200)
    # Phase inside the cells next to the wall (the middle half of each cell) and the jump.
    cells = [(length - lam / 8, length), (length - 5 * lam / 8, length - 3 * lam / 8)]
    phases = []
    for lo, hi in cells:
        sel = (z >= lo) & (z <= hi)
        ph = np.angle(p[sel] / p[sel][len(p[sel]) // 2], deg=True)
        assert np.max(np.abs(ph)) < 2.0  # uniform within 2 deg (the wave is 97 % standing)
        phases.append(np.angle(p[sel][len(p[sel]) // 2]))
    jump = np.degrees(np.angle(np.exp(1j * (phases[0] - phases[1]))))
    assert abs(abs(jump) - 180.0) < 2.0


def test_two_in_phase_emitters_minima_by_geometry():
    # Two in-phase sources: minima where the path difference is (m + 1/2) lambda (Young's
    # two-source interference; Kinsler et al., sec. 7.2 on arrays). Small pistons (ka = 0.37),
    # a line 0.3 m away parallel to their separation.
    f, a, sep, dist = 40e3, 0.5e-3, 0.03, 0.3
    lam = C / f
    k = 2 * np.pi / lam
    e1 = field.Piston(np.array([-sep / 2, 0, 0]), np.array([0, 0, 1.0]), a, 1.0)
    e2 = field.Piston(np.array([sep / 2, 0, 0]), np.array([0, 0, 1.0]), a, 1.0)
    def mag(xx):
        xx = np.asarray(xx, dtype=float)
        pts = np.stack([xx, np.zeros_like(xx), np.full_like(xx, dist)], axis=-1)
        return np.abs(field.field_pressure(pts, [e1, e2], k))

    x = np.linspace(0, 0.15, 1501)
    m = mag(x)
    coarse = np.flatnonzero((m[1:-1] < m[:-2]) & (m[1:-1] < m[2:]) & (m[1:-1] < 0.3 * m.max()))
    found = [minimize_scalar(mag, bounds=(x[i], x[i + 2]), method="bounded",
                             options={"xatol": 1e-7}).x for i in coarse]

    def path_difference(xx):
        return np.hypot(xx + sep / 2, dist) - np.hypot(xx - sep / 2, dist)

    expected = []
    for m in range(10):
        target = (m + 0.5) * lam
        if path_difference(x[-1]) > target:
            expected.append(brentq(lambda xx, t=target: path_difference(xx) - t, 0, x[-1]))
    assert len(found) == len(expected) >= 2
    assert np.allclose(found, expected, atol=lam / 100)


def test_images_of_two_parallel_walls():
    # Two parallel walls: images at 2nL +- z0 (Allen and Berkley 1979), one new image per
    # wall per order, never mirrored twice in a row in the same wall.
    e = field.Piston(np.array([0, 0, 0.01]), np.array([0, 0, 1.0]), 2e-3, 1.0)
    walls = [field.Plane(np.zeros(3), np.array([0, 0, 1.0]), 0.9),
             field.Plane(np.array([0, 0, 0.1]), np.array([0, 0, -1.0]), 0.9)]
    first = field.next_images([e], walls)
    assert sorted(s.centre[2] for s in first) == pytest.approx([-0.01, 0.19])
    assert all(s.velocity == pytest.approx(0.9) for s in first)
    second = field.next_images(first, walls)
    assert sorted(s.centre[2] for s in second) == pytest.approx([-0.19, 0.21])
    assert all(s.order == 2 and s.velocity == pytest.approx(0.81) for s in second)
    # The mirrored axis points back into the room for the image behind the far wall.
    far = [s for s in first if s.centre[2] > 0.1][0]
    assert far.axis == pytest.approx([0, 0, -1.0])


def test_image_series_stops_at_one_percent():
    # The series stops where the next order adds under 1 % at the view (the stopping rule
    # stated in the module), so a lossy cavity needs a finite order, and the omitted next
    # order is indeed under 1 % of the pressure at the view.
    f, a = 40e3, 3e-3
    k = field.wavenumber(f, C, 1.3)
    e = field.Piston(np.zeros(3), np.array([0, 0, 1.0]), a, 1.0)
    walls = [field.Plane(np.zeros(3), np.array([0, 0, 1.0]), 0.5),
             field.Plane(np.array([0, 0, 0.05]), np.array([0, 0, -1.0]), 0.5)]
    view = np.array([0.004, 0, 0.03])
    sources, order, converged = field.image_sources([e], walls, view, k)
    assert converged and 2 <= order < 24
    last = [s for s in sources if s.order == order]
    nxt = field.next_images(last, walls)
    p_view = field.field_pressure(view, sources, k)
    added = sum(abs(field.field_pressure(view, [s], k)) for s in nxt)
    assert added < 0.01 * abs(p_view)


def test_parallel_rigid_walls_hit_the_order_limit():
    # Two lossless rigid walls never converge (images fall off only as 1/distance): the
    # series reports that it stopped at the limit.
    k = 2 * np.pi * 40e3 / C
    e = field.Piston(np.zeros(3), np.array([0, 0, 1.0]), 3e-3, 1.0)
    walls = [field.Plane(np.zeros(3), np.array([0, 0, 1.0]), 1.0),
             field.Plane(np.array([0, 0, 0.05]), np.array([0, 0, -1.0]), 1.0)]
    _, order, converged = field.image_sources([e], walls, np.array([0, 0, 0.03]), k,
                                              max_order=6)
    assert (order, converged) == (6, False)


def test_rated_velocity_reproduces_the_rating():
    # A datasheet rating of 120 dB at 30 cm (a typical 40 kHz air transducer's figure, from
    # memory) must come back from the field at that point (ISO 1683: RMS re 20 uPa).
    k = field.wavenumber(40e3, C, 1.3)
    u = field.rated_velocity(120.0, 0.3, 5e-3, k, RHO_C)
    p = field.piston_pressure(np.array([0, 0, 0.3]), [0, 0, 0], [0, 0, 1], 5e-3, k, RHO_C, u)
    assert 20 * np.log10(abs(p) / np.sqrt(2) / 20e-6) == pytest.approx(120.0, abs=0.01)
