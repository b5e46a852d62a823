"""Tests for strobeplan.physics.imaging: layout geometry, sensitivity, aberrations."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from strobeplan.physics import imaging as im


def test_thin_lens_magnification_against_lens_formula():
    # Gaussian lens formula (Hecht 2017, eq. 5.17): 1/u + 1/v = 1/f, m = v/u. A 50 mm lens
    # focused at 1.5 m: v = 1 / (1/0.05 - 1/1.5) = 0.051724 m, m = 0.034483.
    v = 1.0 / (1.0 / 0.05 - 1.0 / 1.5)
    assert im.magnification(0.05, 1.5) == pytest.approx(v / 1.5, rel=1e-12)
    assert np.isinf(im.magnification(0.05, 0.04))  # cannot focus inside f


def test_object_pixel_and_field_of_view():
    # Hand-worked (Hecht eq. 5.24): pitch 3.45 um over m = 1/29 -> 100.05 um; 1440 px ->
    # 144.07 mm.
    m = 0.05 / (1.5 - 0.05)
    assert im.object_pixel(3.45e-6, m) == pytest.approx(3.45e-6 * 29.0, rel=1e-12)
    assert im.field_of_view(3.45e-6, 1440, m) == pytest.approx(0.144072, rel=1e-5)


def test_filling_focal_length_fills_the_sensor():
    # Property of the thin lens: the focal length found gives a mirror image exactly the
    # sensor's height.
    u, d, h = 3.0, 0.15, 1080 * 3.45e-6
    f = im.filling_focal_length(d, h, u)
    assert im.sensor_fill(d, im.magnification(f, u), h) == pytest.approx(1.0, rel=1e-12)


def test_settles_sensitivity_and_range():
    # Settles (2001), eq. 3.6 (C = f2 eps / a, the image shifting by f2 eps; as quoted by a
    # secondary source): dC/d eps = f2 / a; a half-cut 1 mm image (a = 0.5 mm) at
    # f2 = 1.5 m: 3000 per rad, range a / f2 = 0.333 mrad.
    a = im.unobstructed_height(1e-3, 0.5)
    assert a == pytest.approx(0.5e-3)
    assert im.sensitivity(1.5, a) == pytest.approx(3000.0)
    assert im.measuring_range(1.5, a, 1e-3 - a) == pytest.approx(0.5e-3 / 1.5)
    # a 75 % cut leaves a = 0.25 mm: the range is the smaller side
    assert im.measuring_range(1.5, 0.25e-3, 0.75e-3) == pytest.approx(0.25e-3 / 1.5)


def test_diffraction_limit():
    # Settles (2001) sec. 3.6 / Hecht sec. 10.2: resolution ~ lambda f / a; 630 nm, 1.5 m,
    # 0.5 mm -> 1.89 mm.
    assert im.diffraction_resolution(630e-9, 1.5, 0.5e-3) == pytest.approx(1.89e-3, rel=1e-9)


def test_astigmatism_from_the_tilted_mirror_foci():
    # Smith (2008) ch. 5: f_t = f cos(theta), f_s = f / cos(theta). 1.5 m at 3 deg:
    # f_s - f_t = 1.5 (1/cos - cos) = 4.1163 mm (~ f theta^2 = 4.1123 mm).
    t = np.radians(3.0)
    split = im.astigmatic_split(1.5, t)
    assert split == pytest.approx(1.5 / np.cos(t) - 1.5 * np.cos(t), rel=1e-12)
    assert split == pytest.approx(1.5 * t**2, rel=2e-3)
    # blur halfway between the foci, D = 150 mm: split x D / (2 f) = 0.2058 mm
    assert im.astigmatic_blur(split, 0.15, 1.5) == pytest.approx(split * 0.05, rel=1e-12)


def test_coma_of_a_tilted_sphere():
    # Smith (2008) ch. 18: tangential coma angle 3 theta / (16 N^2); f/10 at 3 deg:
    # 3 * 0.05236 / 1600 = 9.817e-5 rad, times f = 1.5 m -> 0.1473 mm.
    t = np.radians(3.0)
    assert im.coma_length(0.15, 1.5, t) == pytest.approx(1.5 * 3 * t / (16 * 100), rel=1e-12)


def test_double_image_by_similar_triangles():
    # Geometry: lines from two points 10 mm apart at R = 2.4 m through a point 0.2 m from
    # the mirror meet the mirror 10 * 0.2 / 2.2 = 0.909 mm apart; coincident: 0.
    assert im.double_image_offset(10e-3, 2.4, 0.2) == pytest.approx(10e-3 * 0.2 / 2.2)
    assert im.double_image_offset(0.0, 2.4, 0.2) == 0.0


@settings(max_examples=60, deadline=None)
@given(f=st.floats(0.3, 5.0), fl=st.floats(0.01, 0.3), d=st.floats(0.05, 0.5),
       double=st.booleans())
def test_layout_broadcasts_and_bench_covers_the_optics(f, fl, d, double):
    # Invariants: the bench is at least the mirror-to-cutoff distance; arrays broadcast.
    u = im.lens_object_distance(double, f)
    assert im.bench_length(double, f, d, fl, 2 * f) >= u
    arr = im.magnification(np.array([fl, fl / 2]), np.array([[u], [2 * u]]))
    assert arr.shape == (2, 2)
