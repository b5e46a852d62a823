"""Synthetic phase-stepped stacks for the analyse tests, made from a rig's own geometry.

The image model is the one strobeplan/analyse.py states: the contrast (I - I0)/I0 is
S eps_v, with eps_v = passes L K / c^2 dp/dv (a plane or standing wave uniform over the
sound path L), and the wave seen at phase phi has the pressure Im[P(r) exp(i phi)]. The
picture shows the line-of-sight integral of the rig's field, whose phase at the view leads
the pressure's there by the projection's phase (``los_phase``, by default the rig's own from
:func:`strobeplan.stages.field.view_projection`): the stacks carry it, as a real image of
the rig would.
"""

from __future__ import annotations

import math

import numpy as np


def plane_stack(rig, plan, grid, phases, *, kind="travelling", offset_s=0.0, contrast=0.05,
                noise=0.0, background=20000.0, seed=0, direction=None, wavelength=None,
                antinode_shift=0.0, dtype=np.uint16, harmonic3=0.0, rod=False,
                los_phase=None):
    """(N, ny, nx) frames of a plane (or standing) wave on ``grid`` at ``phases`` [rad].

    The pressure's phase at the view is 0 at phase 0 when ``offset_s`` = 0; a positive
    ``offset_s`` makes the wave arrive later (the rig's calibration_offset convention).
    ``contrast`` is the peak contrast of the travelling wave's gradient term. ``rod``: a
    dark-field stop, whose contrast is ``contrast`` times the squared (normalised) gradient.
    """
    from strobeplan.stages.field import view_point

    rng = np.random.default_rng(seed)
    f = plan.timing.drive_frequency_hz
    lam = wavelength or plan.air.speed_of_sound_m_s / f
    k = 2 * math.pi / lam
    d = np.asarray(direction if direction is not None else grid.v, dtype=float)
    d = d / np.linalg.norm(d)
    pts = grid.points() - view_point(rig)
    s = pts @ d  # distance along the wave's direction from the view
    kv = k * float(d @ grid.v)
    omega = 2 * math.pi * f
    if los_phase is None:
        from strobeplan.stages.field import view_projection

        if rig.emitter is None:
            los_phase = 0.0
        else:
            q_view, p_view = view_projection(rig, grid, f, plan.air.speed_of_sound_m_s)
            los_phase = float(np.angle(q_view / p_view))
    lag = omega * offset_s - los_phase
    if kind == "travelling":
        grad = -1j * kv * np.exp(-1j * k * s)  # d/dv of exp(-i k s)
    else:  # standing: cos(k (s - shift)) / cos(k (0 - shift)) keeps P(view) = 1
        grad = -kv * np.sin(k * (s - antinode_shift)) / math.cos(k * antinode_shift)
    grad = grad / k  # peak contrast = ``contrast`` for a travelling wave along v
    out = np.empty((len(phases),) + grad.shape, dtype=dtype)
    top = np.iinfo(dtype).max
    for i, phi in enumerate(phases):
        c = contrast * np.imag(grad * np.exp(1j * (phi - lag)))
        if rod:
            c = contrast * np.imag(grad * np.exp(1j * (phi - lag))) ** 2
        if harmonic3:
            c = c + harmonic3 * contrast * np.imag((grad / abs(kv) * k) ** 3
                                                   * np.exp(3j * (phi - lag)))
        img = background * (1.0 + c)
        if noise:
            img = img + rng.normal(0.0, noise, img.shape)
        out[i] = np.clip(np.rint(img), 0, top)
    return out
