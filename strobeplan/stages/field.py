"""Field stage: the sound field at the view from the emitters and reflectors.

Every emitter is a baffled circular piston (``strobeplan.physics.field``); plane reflectors
add image sources. The surface velocity of each emitter follows from its datasheet rating
(on-axis SPL at the reference distance and voltage) scaled by its drive voltage, its
relative ``amplitude`` and its motional response at the drive frequency; without a rating
the first emitter moves at 1 m/s (the phase is still right, the level is not known).

The phase at the view is the argument of the complex pressure there relative to the first
emitter's surface velocity (time convention e^{j w t}): the pressure's crest comes
``-phase / w`` after the velocity's crest. ``phase_per_kelvin_deg`` is the change of that
phase with the air temperature (through the speed of sound).
"""

from __future__ import annotations

import math

import numpy as np

from ..physics import air as air_model
from ..physics import drive as drive_model
from ..physics import field as field_model
from ..plan import Section, q
from ..quickdc import dataclass
from ..viewgrid import light_span

NODE_FRACTION = 0.1  # |p| under this fraction of the largest |p| within lambda/2: a node


@dataclass
class FieldSection(Section):
    """The sound field at the view point (design contract ``field``)."""

    view_point_m: list = q("length")
    pressure_amplitude_pa: float = q("pressure")
    phase_deg: float = q("deg")
    delay_s: float = q("time")
    spl_at_view_db: float | None = q("dB")
    level_known: bool = q()
    standing_wave_ratio: float = q()
    node_ratio: float = q()
    near_field_distance_m: list = q("length")
    image_orders: int = q()
    images_converged: bool = q()
    sources: int = q()
    phase_per_kelvin_deg: float = q("deg/K")
    temperature_range_phase_deg: float | None = q("deg")
    radius_assumed: bool = q()
    line_of_sight_phase_deg: float | None = q("deg", default=None)


@dataclass(frozen=True)
class _LightPath:
    """The light's path through the view as :func:`view_projection` reads it (a ViewGrid
    has the same three fields)."""

    samples: int
    depth_m: float
    light_axis: tuple


def view_point(rig) -> np.ndarray:
    """The point where strobe.phase is defined: [view].point, else the first emitter's
    distance_to_view along its axis, else [view].centre, else the origin (a rig of a wave
    alone). [m]"""
    if rig.view is not None and rig.view.point is not None:
        return np.array(rig.view.point, dtype=float)
    em = rig.emitter
    if em is None or em.distance_to_view is None:
        centre = rig.view.centre if rig.view is not None else None
        return np.array(centre if centre is not None else (0.0, 0.0, 0.0), dtype=float)
    axis = np.asarray(em.axis, dtype=float)
    return np.asarray(em.position, dtype=float) + em.distance_to_view * axis / np.linalg.norm(
        axis)


def _pistons(rig, frequency, kappa, impedance, wavelength):
    ems = rig.emitters
    h_ref = complex(drive_model.motional_response(frequency, ems[0].resonance,
                                                  ems[0].quality_factor))
    out, assumed, known = [], False, True
    for e in ems:
        radius = e.radius
        if radius is None:  # the first emitter alone may omit it: a small source
            radius, assumed = wavelength / 20.0, True
        h = complex(drive_model.motional_response(frequency, e.resonance, e.quality_factor))
        if e.spl_at_reference is not None:
            u = field_model.rated_velocity(e.spl_at_reference, e.reference_distance, radius,
                                           kappa, impedance) * e.drive_voltage / \
                e.reference_voltage
        else:
            u, known = 1.0, False
        if not (math.isfinite(u) and u > 0):  # a rating the model cannot meet (absurd rig)
            u, known = 1.0, False
        u *= e.amplitude * abs(h) * np.exp(1j * (e.phase + math.atan2(h.imag, h.real)
                                                 - math.atan2(h_ref.imag, h_ref.real)))
        out.append(field_model.Piston(np.asarray(e.position, float),
                                      np.asarray(e.axis, float) / np.linalg.norm(e.axis),
                                      radius, complex(u)))
    return out, assumed, known


def _planes(rig):
    return [field_model.Plane(np.asarray(r.position, float), np.asarray(r.normal, float),
                              r.reflection) for r in rig.reflectors]


def pressure_at(rig, points, frequency, temperature=None, speed=None):
    """Complex pressure at points [Pa] (and the image order, convergence, source count)
    for the rig's emitters and reflectors at an air temperature (default: the rig's)."""
    a = rig.air
    t = a.temperature if temperature is None else temperature
    if speed is None:
        speed = rig.wave.speed or float(air_model.speed_of_sound(t, a.relative_humidity,
                                                                  a.pressure, a.co2))
    alpha = float(air_model.absorption(frequency, t, a.relative_humidity, a.pressure))
    rho = float(air_model.density(t, a.relative_humidity, a.pressure, a.co2))
    kappa = field_model.wavenumber(frequency, speed, alpha)
    impedance = rho * speed
    pistons, assumed, known = _pistons(rig, frequency, kappa, impedance, speed / frequency)
    view = view_point(rig)
    sources, order, converged = field_model.image_sources(pistons, _planes(rig), view, kappa,
                                                           impedance)
    p = field_model.field_pressure(points, sources, kappa, impedance)
    return p, order, converged, len(sources), assumed, known


def room_pressure(rig, points, frequency, speed=None):
    """Complex pressure at points [Pa], with no sound behind a reflector (its image sources
    model the room in front of it)."""
    pts = np.asarray(points, dtype=float)
    p = pressure_at(rig, pts, frequency, speed=speed)[0]
    for r in rig.reflectors:
        n = np.asarray(r.normal, dtype=float)
        n = n / np.linalg.norm(n)
        p = np.where((pts - np.asarray(r.position, dtype=float)) @ n < 0.0, 0.0, p)
    return p


def view_projection(rig, grid, frequency, speed=None):
    """(Q, p): the line-of-sight integral of the pressure through the view point over the
    view's depth (trapezoid rule at ``grid.samples`` points) [Pa m] and the pressure there
    [Pa].

    A schlieren image shows the integral, not the pressure at the view point: for a beam
    that spreads across the light their phases differ (by up to about 45 deg in the far
    field, the stationary-phase value of a spherical wave projected along a line), so the
    image's phase at the view is arg(Q), the plan's arg(p).
    """
    return _projection(rig, grid.samples, grid.depth_m, grid.light_axis, frequency, speed)


def line_of_sight_phase(rig, grid, frequency, speed=None) -> float | None:
    """arg(Q / p) at the view (:func:`view_projection`), wrapped to (-180, 180]; None when
    either vanishes. [deg]"""
    q_view, p_view = view_projection(rig, grid, frequency, speed)
    if not (abs(q_view) > 0 and abs(p_view) > 0):
        return None
    return math.degrees(_wrap(float(np.angle(q_view)) - float(np.angle(p_view))))


def _projection(rig, samples, depth, light_axis, frequency, speed=None):
    from ..physics.lineofsight import trapezoid_weights

    point = view_point(rig)
    s, w = trapezoid_weights(samples, depth)
    light_axis = np.asarray(light_axis, dtype=float) / np.linalg.norm(light_axis)
    pts = point + s[:, None] * light_axis
    q_view = complex(room_pressure(rig, pts, frequency, speed=speed) @ w)
    p_view = complex(pressure_at(rig, point, frequency, speed=speed)[0])
    return q_view, p_view


def _phase_at(rig, frequency, temperature):
    p = pressure_at(rig, view_point(rig), frequency, temperature=temperature)[0]
    return float(np.angle(p))


def compute(rig, design, plan) -> FieldSection | None:
    """The ``field`` section, or None without an emitter."""
    if rig.emitter is None:
        return None
    f = rig.wave.frequency
    speed = plan.air.speed_of_sound_m_s
    lam = speed / f
    view = view_point(rig)
    # The view and lines through it, +- lambda/2 along each axis: the node test and the
    # standing-wave ratio along the first emitter's axis.
    offsets = np.linspace(-0.5 * lam, 0.5 * lam, 33)
    axis = np.asarray(rig.emitter.axis, float) / np.linalg.norm(rig.emitter.axis)
    dirs = [axis] + [d for d in np.eye(3) if abs(d @ axis) < 0.99][:2]
    pts = np.concatenate([view[None, :]] + [view + offsets[:, None] * d for d in dirs])
    p, order, converged, n_src, assumed, known = pressure_at(rig, pts, f, speed=speed)
    p_view = p[0]
    along_axis = np.abs(p[1:34])
    around = np.abs(p[1:])
    swr = float(along_axis.max() / along_axis.min()) if along_axis.min() > 0 else math.inf
    node_ratio = float(abs(p_view) / around.max()) if around.max() > 0 else 0.0
    phase = float(np.angle(p_view))
    if rig.wave.speed is None:
        t = rig.air.temperature
        per_k = math.degrees(_wrap(_phase_at(rig, f, t + 0.5) - _phase_at(rig, f, t - 0.5)))
    else:
        per_k = 0.0
    moved = None
    rng = rig.air.temperature_range
    if rng is not None and rig.wave.speed is None:
        moved = abs(math.degrees(_wrap(_phase_at(rig, f, rng[1]) - _phase_at(rig, f, rng[0]))))
    amp = abs(p_view)
    los_phase = None
    v = rig.view
    if v is not None:  # the image's phase at the view: the line-of-sight integral's
        span = _LightPath(v.samples, light_span(v, lam), v.light_axis)
        los_phase = line_of_sight_phase(rig, span, f, speed)
    near = [float(e.radius**2 / lam) if e.radius is not None else 0.0 for e in rig.emitters]
    return FieldSection(
        view_point_m=[float(v) for v in view],
        pressure_amplitude_pa=float(amp),
        phase_deg=math.degrees(phase),
        delay_s=field_delay(phase, f),
        spl_at_view_db=(20.0 * math.log10(amp / (math.sqrt(2.0) * 20e-6))
                        if known and amp > 0 else None),
        level_known=known,
        standing_wave_ratio=swr,
        node_ratio=node_ratio,
        near_field_distance_m=near,
        image_orders=int(order),
        images_converged=bool(converged),
        sources=int(n_src),
        phase_per_kelvin_deg=per_k,
        temperature_range_phase_deg=moved,
        radius_assumed=assumed,
        line_of_sight_phase_deg=los_phase,
    )


def _wrap(x):
    return (x + math.pi) % (2.0 * math.pi) - math.pi


def field_delay(phase, frequency):
    """Delay of the pressure at the view behind the first emitter's surface velocity,
    -phase / w wrapped to one period [0, 1/f). [s]"""
    return ((-phase) % (2.0 * math.pi)) / (2.0 * math.pi * frequency)
