"""Line of sight: lattice interpolation, the projected field against PyAbel, a plane wave."""

import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from strobeplan.physics import lineofsight as los
from strobeplan.physics import schlieren
from strobeplan.preview import LATTICE_FRACTION, pixel_maps, project
from strobeplan.viewgrid import ViewGrid


def _grid(nx=6, ny=80, pixel=0.5e-3, depth=0.08, samples=161):
    return ViewGrid(centre=np.zeros(3), u=np.array([0.0, 1.0, 0.0]),
                    v=np.array([0.0, 0.0, 1.0]), light_axis=np.array([1.0, 0.0, 0.0]),
                    pixel_m=pixel, nx=nx, ny=ny, depth_m=depth, samples=samples)


def _lattice(grid, lam):
    x, y = grid.offsets()
    u = los.lattice_nodes(x.min(), x.max(), lam / LATTICE_FRACTION)
    v = los.lattice_nodes(y.min(), y.max(), lam / LATTICE_FRACTION)
    s, w = los.trapezoid_weights(grid.samples, grid.depth_m)
    return u, v, s, w


@pytest.mark.parametrize("fraction", [6, 8])
def test_interpolation_error_of_a_band_limited_field(fraction):
    # A sinusoid of the sound's wavelength sampled at lambda/6 or lambda/8: sixth-order
    # Lagrange interpolation error bound (Stoer & Bulirsch 2002, thm. 2.1.4.1):
    # |f - p| <= max|f^(6)| / 6! * prod|x - x_i| <= (k h)^6 * 3.516 / 720 (prod <= 3.516 h^6,
    # (2.5 * 1.5 * 0.5)^2, on the middle interval of six equally spaced nodes)
    lam = 8.6e-3
    k = 2 * np.pi / lam
    h = lam / fraction
    nodes = los.lattice_nodes(0.0, 0.05, h)
    x = np.linspace(0.0, 0.05, 977)
    w = los.interpolation_matrix(nodes, x)
    d = los.interpolation_matrix(nodes, x, derivative=True)
    f = np.exp(1j * k * nodes)
    bound = (k * h) ** 6 * 3.516 / 720
    assert np.max(np.abs(w @ f - np.exp(1j * k * x))) <= bound
    # derivative: one order less accurate; 5 (k h)^5 / 5! bounds it (common practice
    # estimate), relative to k
    err_d = np.max(np.abs(d @ f - 1j * k * np.exp(1j * k * x))) / k
    assert err_d <= 5 * (k * h) ** 5 / 120
    assert err_d < (0.02 if fraction == 6 else 0.005)


def test_line_of_sight_of_an_axisymmetric_field_matches_pyabel():
    import abel  # PyAbel, a test dependency (pyproject's [test] extra)

    # f(r) = (1 + cos(k r)) exp(-r^2 / s^2), symmetric about the u axis (r^2 = v^2 + l^2):
    # its line-of-sight integral along l is the forward Abel transform of f (PyAbel,
    # abel.Transform(..., direction='forward', method='direct'))
    lam, s = 8.6e-3, 8e-3
    k = 2 * np.pi / lam
    grid = _grid()
    u, v, sp, sw = _lattice(grid, lam)

    def field(pts):
        r = np.sqrt(pts[..., 2] ** 2 + pts[..., 0] ** 2)
        return (1 + np.cos(k * r)) * np.exp(-(r / s) ** 2) + 0j

    q_lat, _ = project(field, grid, u, v, sp, sw)
    q_pix = pixel_maps(q_lat, u, v, grid)[0][:, grid.nx // 2].real
    # reference: PyAbel on a fine radial grid (dr = 0.1 mm), read at the pixel rows
    dr = 1e-4
    r = np.arange(-400, 401) * dr
    image = np.tile((1 + np.cos(k * np.abs(r))) * np.exp(-(r / s) ** 2), (3, 1))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ref = abel.Transform(image, direction="forward", method="direct", origin="none",
                             transform_options={"dr": dr}).transform[1]
    _, y = grid.offsets()
    expected = np.interp(y, r, ref)
    assert np.max(np.abs(q_pix - expected)) <= 0.01 * np.max(np.abs(expected))


def test_plane_wave_deflection_is_l_k_k_p_over_c2_at_every_pixel():
    # Plane wave along v through a uniform path L: eps = L K k p'/c^2 (Settles 2001,
    # eq. 3.6 chain as strobeplan.physics.schlieren writes it, docs/references.md)
    lam, c, p0, kgd = 8.6e-3, 343.2, 120.0, 2.26e-4
    k = 2 * np.pi / lam
    grid = _grid(nx=20, ny=60, pixel=0.3e-3, depth=0.03, samples=12)
    u, v, sp, sw = _lattice(grid, lam)
    q_lat, _ = project(lambda pts: p0 * np.exp(-1j * k * pts[..., 2]), grid, u, v, sp, sw)
    eps = los.deflection_map(pixel_maps(q_lat, u, v, grid)[1], kgd, c)
    expected = schlieren.deflection(1, grid.depth_m, k, schlieren.index_amplitude(
        schlieren.density_amplitude(p0, c), kgd))
    assert np.allclose(np.abs(eps), expected, rtol=2e-3)
    # double pass with coincident passes doubles it (Settles 2001, sec. 4.3)
    both = los.double_pass(lambda shift: eps, 0.0)
    assert np.allclose(np.abs(both), 2 * expected, rtol=2e-3)


def test_trapezoid_weights_integrate_a_line():
    s, w = los.trapezoid_weights(5, 0.04)
    # trapezoid rule is exact for linear functions (Stoer & Bulirsch 2002, sec. 3.1)
    assert w.sum() == pytest.approx(0.04) and (w * (s + 0.02)).sum() == pytest.approx(8e-4)


@settings(max_examples=40, deadline=None)
@given(st.floats(1e-4, 1e-2), st.integers(8, 40), st.floats(0.0, 1.0), st.integers(0, 5))
def test_interpolation_reproduces_polynomials(h, n, where, degree):
    # Lagrange interpolation on six nodes is exact for polynomials of degree <= 5, and so is
    # its derivative (Stoer & Bulirsch 2002, sec. 2.1: uniqueness of the interpolant)
    nodes = h * np.arange(n)
    x = np.array([where * nodes[-1]])
    scale = nodes[-1]
    w = los.interpolation_matrix(nodes, x)
    d = los.interpolation_matrix(nodes, x, derivative=True)
    f = (nodes / scale) ** degree
    assert w @ f == pytest.approx((x / scale) ** degree, abs=1e-9)
    exact_d = degree * (x / scale) ** max(degree - 1, 0) / scale if degree else 0.0
    assert d @ f == pytest.approx(exact_d, abs=1e-6 / h)
