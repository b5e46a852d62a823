"""The view grid: pixel centres, axes and the point-to-pixel map (geometry identities)."""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from strobeplan import load_rig, solve
from strobeplan.viewgrid import ViewGrid, image_axes, view_grid

CONFIGS = "configs"


def test_axes_are_orthonormal_and_right_handed():
    u, v = image_axes((1, 0, 0), (0, 0, 1))
    # geometry: v is the hint with its light-axis part removed; u = v x light axis
    assert np.allclose(v, [0, 0, 1]) and np.allclose(u, [0, 1, 0])
    u, v = image_axes((0, 0, 1), (0, 0, 1))  # degenerate hint falls back to +y
    assert abs(u @ v) < 1e-12 and abs(v @ [0, 0, 1]) < 1e-12


@settings(max_examples=50, deadline=None)
@given(st.tuples(*[st.floats(-1, 1)] * 3).filter(lambda a: np.linalg.norm(a) > 0.1),
       st.integers(0, 9), st.integers(0, 6), st.floats(-1, 1))
def test_pixel_of_inverts_points(axis, c, r, along):
    u, v = image_axes(axis, (0, 0, 1))
    ell = np.asarray(axis) / np.linalg.norm(axis)
    # geometry: (u, v, light axis) orthonormal with u = v x light axis
    assert np.allclose([u @ u, v @ v, u @ v, u @ ell, v @ ell], [1, 1, 0, 0, 0], atol=1e-9)
    grid = ViewGrid(centre=np.array([0.01, -0.02, 0.03]), u=u, v=v, light_axis=ell,
                    pixel_m=1e-4, nx=10, ny=7, depth_m=0.01, samples=8)
    p = grid.points()[r, c] + along * ell  # moving along the light keeps the pixel
    row, col = grid.pixel_of(p)
    assert abs(row - r) < 1e-6 and abs(col - c) < 1e-6


def test_levitator_grid_uses_the_object_pixel():
    rig = load_rig(f"{CONFIGS}/levitator-40k.toml")
    plan = solve(rig, checks=False)
    grid = view_grid(rig, plan)
    assert grid.pixel_m == plan.image.object_pixel_m
    row, col = grid.pixel_of(grid.centre)
    assert abs(row - (grid.ny - 1) / 2) < 1e-9 and abs(col - (grid.nx - 1) / 2) < 1e-9
    # up in the picture is the emitter's axis (+z) when the light crosses along x
    assert np.allclose(grid.v, [0, 0, 1])
