"""``strobeplan preview``: the frames the camera will record, drawn before anything is built.

Composition only (the physics lives in ``strobeplan.physics``):

1. **Pixel grid**: :func:`strobeplan.viewgrid.view_grid` (the same grid ``analyse`` reads).
2. **Line of sight** (physics.lineofsight): the exact complex pressure of every emitter and
   reflector image (``stages.field.pressure_at``) on a lattice aligned with the picture
   (u, v) and the light axis: in the picture's plane a sound wavelength / 8 apart
   (:data:`LATTICE_FRACTION`), along the light ``[view].samples`` points over
   ``[view].depth``; the trapezoid rule along the light gives the projected pressure Q(u, v);
   sixth-order Lagrange interpolation carries Q and its derivative across the cutoff's
   direction to the pixels; eps = (K / c^2) dQ/dv, K = (n - 1)/rho of the rig's air from
   Ciddor (1996) at the light's wavelength (physics.refraction). Double pass: the map plus
   itself shifted by the double-image offset along u (twice the map when it is zero).
   When ``emitter.spl_at_view`` is given (a measured level) the field is scaled to it at
   the view point; without a rated level, to the optics section's pressure.
3. **Image formation**: the complex map is blurred by the optics' diffraction limit
   (a Gaussian with that FWHM; exact in the cutoff's linear range), and frame k is
   Re(gain_k E e^{j phase_k}): phase_k from the schedule row's achieved image phase (0 deg:
   rising zero crossing of the pressure at the view point, 90 deg its crest), gain_k the
   flash's retention times the row's smear. The source image then shifts by f2 eps at the
   cutoff; the knife or rod passes the fraction ``physics.cutoff.transmission`` of the
   blurred source image (the source's size and the mirror's diffraction, tabulated once);
   the light budget of the image section turns it into electrons (``electrons_open`` times
   the transmission, plus dark charge), and the camera adds shot and read noise and
   quantises to its bit depth (seeded: reruns are byte-identical).

Conventions: the cutoff is sensitive along the picture's "up" (v: the first emitter's
axis as seen by the camera, so a horizontal knife edge for a vertical levitator); a
deflection towards +v moves the source image off the knife (brighter). Without an image
chain (no [optics] layout or camera lens), the preview draws a normalised knife-edge picture:
mid-grey background, the view's largest deflection at half the linear range, no noise.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .errors import StrobeplanError
from .physics import camera as cam_model
from .physics import cutoff as cut_model
from .physics import lineofsight as los
from .physics.arrays import FWHM_PER_SIGMA
from .plan import Finding, PictureRule
from .viewgrid import ViewGrid, view_grid
from .workload import MAX_PREVIEW_BYTES, MAX_PREVIEW_SECONDS

__all__ = ["Preview", "PreviewError", "render_preview", "write_preview", "estimate_work",
           "PREVIEW_RULES", "LATTICE_FRACTION", "MAX_FRAMES"]

LATTICE_FRACTION = los.LATTICE_FRACTION
ORDER = los.DEFAULT_ORDER
MAX_FRAMES = 720
"""Most frames one preview draws."""
FIELD_POINT_SECONDS = 6e-7
"""Cost of one piston at one lattice point (bench/bench_preview.py measured 4.5e-7 s)."""
PIXEL_FRAME_SECONDS = 1.5e-7
"""Cost of one pixel of one frame with noise (bench/bench_preview.py measured 1.1e-7 s)."""
SATURATED_FRACTION = 0.01  # cutoff clipping in more than 1 % of the view: a finding
DARK_FRACTION = 0.5  # more than half the view below the SNR threshold: a finding
LIGHT_SAMPLING = 4  # samples per sound wavelength along the light, at least
VIEW_SAMPLING = 4  # pixels per wavelength of the image (half that for a rod), at least


class PreviewError(StrobeplanError):
    """The rig cannot be previewed (bad input: exit 2)."""


@dataclass
class Preview:
    """The rendered preview: frames, their phases, the grid, the map, the summary."""

    frames: np.ndarray          # uint16 (N, ny, nx), grey levels at the camera's bit depth
    phases_deg: np.ndarray      # (N,) achieved image phase of each frame [deg]
    grid: ViewGrid
    deflection: np.ndarray      # complex (ny, nx) deflection map [rad]
    summary: dict
    findings: list = field(default_factory=list)
    bit_depth: int = 8
    rig_name: str = ""


PREVIEW_RULES = (
    PictureRule("preview.cutoff_saturated", "warning",
                "The wave saturates the cutoff in part of the view (the source image moves "
                "wholly onto or off the knife or rod; the picture clips there)",
                "lower the drive (SPL), cut less of the source image, widen the source or "
                "shorten the focal length f2"),
    PictureRule("preview.below_snr", "warning",
                "Most of the view is below the SNR threshold (the wave will not stand out "
                "of the noise)",
                "more light (current, pulse width, flashes per frame), a larger source, "
                "binning or averaging frames, or a more sensitive cutoff"),
    PictureRule("preview.double_image", "warning",
                "The double-pass image overlaps itself: its two copies, offset by the "
                "source-cutoff separation, add with a shift and blur or cancel the wave",
                "use a beamsplitter on the axis (source_separation = 0) or put the test "
                "region close to the mirror (smaller test_distance)"),
    PictureRule("preview.light_sampling", "warning",
                "The sampling along the light axis is too coarse for the sound wavelength "
                "(the line-of-sight integral aliases)",
                "raise [view].samples or shorten [view].depth"),
    PictureRule("preview.view_sampling", "warning",
                "The pixels are too coarse for the sound wavelength (the picture aliases the "
                "wave)",
                "a longer camera lens, or a narrower [view] with the object pixel of the "
                "image chain"),
    PictureRule("preview.no_image_chain", "note",
                "No image chain (an [optics] layout and a camera with lens and pixel "
                "pitch): the preview is a normalised knife-edge picture without a light "
                "budget or noise",
                "add [optics] (layout, mirrors, source, cutoff) and [camera] (lens, "
                "pixel_pitch, quantum_efficiency, full_well, read_noise)"),
)
_RULES = {r.code: r for r in PREVIEW_RULES}


def _finding(code, message, value=None, limit=None, unit=None):
    r = _RULES[code]
    return Finding(code, r.severity, "preview", f"{r.title}: {message}", value, limit, unit,
                   r.fix)


# --- sizes and work ----------------------------------------------------------------------


def _lattice(grid: ViewGrid, wavelength: float, offset: float):
    """(u nodes, v nodes, light positions, light weights) of the field lattice."""
    x, y = grid.offsets()
    h = wavelength / LATTICE_FRACTION
    lo_x, hi_x = float(x.min()), float(x.max())
    hi_x = max(hi_x, hi_x + offset)
    lo_x = min(lo_x, lo_x + offset)
    u_nodes = los.lattice_nodes(lo_x, hi_x, h, ORDER)
    v_nodes = los.lattice_nodes(float(y.min()), float(y.max()), h, ORDER)
    s, w = los.trapezoid_weights(grid.samples, grid.depth_m)
    return u_nodes, v_nodes, s, w


def estimate_work(grid: ViewGrid, wavelength: float, sources: int, frames: int,
                  offset: float = 0.0) -> tuple[float, float, int]:
    """(seconds, bytes, lattice points) a preview would take, from its sizes alone."""
    u, v, s, _ = _lattice(grid, wavelength, offset)
    points = u.size * v.size * s.size
    pixels = grid.nx * grid.ny
    seconds = points * sources * FIELD_POINT_SECONDS + pixels * frames * PIXEL_FRAME_SECONDS
    memory = pixels * frames * 2 + pixels * 16 * 8 + 200 * u.size * s.size * 8
    return seconds, memory, points


def _require_within(grid, seconds, memory, frames, max_seconds=MAX_PREVIEW_SECONDS):
    from .workload import WorkloadError, duration_text

    if seconds <= max_seconds and memory <= MAX_PREVIEW_BYTES:
        return
    raise WorkloadError(
        f"preview: {grid.nx} x {grid.ny} pixels x {frames} frames with {grid.samples} "
        f"samples along the light would take about {duration_text(seconds)} and "
        f"{memory / 1e9:.1f} GB (limits {duration_text(max_seconds)}, "
        f"{MAX_PREVIEW_BYTES / 1e9:.0f} GB); narrow it with --frames, "
        "[view].width/height, [view].samples or [view].depth")


# --- the picture -------------------------------------------------------------------------


def _gaussian_matrix(n, sigma_px):
    """Row-normalised Gaussian blur matrix (n, n); identity for tiny sigma."""
    if sigma_px < 0.3:
        return None
    i = np.arange(n)
    g = np.exp(-0.5 * ((i[:, None] - i[None, :]) / sigma_px) ** 2)
    return g / g.sum(axis=1, keepdims=True)


def _blur(field_map, sigma_px):
    gy = _gaussian_matrix(field_map.shape[0], sigma_px)
    gx = _gaussian_matrix(field_map.shape[1], sigma_px)
    if gy is None or gx is None:
        return field_map
    return gy @ field_map @ gx.T


@dataclass
class _Optics:
    """What turns a deflection into electrons."""

    f2: float
    height: float
    rod: bool
    cut: float
    width: float
    blur: float
    unit: float           # electrons with the whole source image passing
    dark: float
    full_well: float
    read_noise: float
    bit_depth: int
    noise_known: bool
    min_snr: float
    resolution: float     # [m] FWHM of the image blur
    chain: bool


def _optics(rig, plan, peak_deflection) -> _Optics:
    from .stages.image import cutoff_blur

    img, opt, cam = plan.image, rig.optics, rig.camera
    bits = int(cam.bit_depth) if cam is not None else 8
    if img is not None:
        height = img.source_image_m
        rod = img.cutoff == "rod"
        blur = cutoff_blur(rig)
        known = img.electrons_open is not None
        dark = float(cam.dark_current * cam.exposure) if known else 0.0
        return _Optics(img.cutoff_distance_m, height, rod, opt.cut_fraction,
                       opt.cutoff_width or 0.0, blur,
                       float(img.electrons_open) if known else 0.5 * 2**bits,
                       dark, float(cam.full_well) if known else 2.0**bits,
                       float(cam.read_noise) if known else 0.0, bits, known,
                       float(opt.min_snr), float(img.diffraction_limit_m), True)
    # No image chain: a half-cut knife whose linear range holds twice the largest deflection.
    f2 = 1.0
    height = 4.0 * max(peak_deflection, 1e-12) * f2
    return _Optics(f2, height, False, 0.5, 0.0, 0.0, 2.0**bits, 0.0, 2.0**bits, 0.0, bits,
                   False, float(rig.optics.min_snr) if rig.optics is not None else 5.0, 0.0,
                   False)


def _transmission_table(o: _Optics, reach: float):
    """Shifts and transmissions tabulated over +-reach (np.interp between them)."""
    reach = max(reach, 2.0 * o.height + 2.0 * o.width, 1e-12)
    s = np.linspace(-reach, reach, 8193)
    t = np.asarray(cut_model.transmission(s, o.height, o.rod, o.cut, o.width, o.blur))
    return s, t


def project(pressure, grid: ViewGrid, u_nodes, v_nodes, s_pos, s_w, progress=None):
    """Line-of-sight integral Q of a complex field on the lattice, and the largest |p|.

    ``pressure(points (..., 3)) -> complex (...)``; the lattice is (v_nodes, u_nodes) in the
    picture's plane through the grid's centre, ``s_pos`` along the light with the trapezoid
    weights ``s_w``. One v row at a time (bounded memory); ``progress(i)`` after row i.
    Returns (Q (nv, nu) [Pa m], peak |p| over the lattice points inside the view [Pa]).
    """
    x_pix, y_pix = grid.offsets()
    inside_u = (u_nodes >= x_pix.min() - 1e-12) & (u_nodes <= x_pix.max() + 1e-12)
    plane = (grid.centre + u_nodes[:, None, None] * grid.u
             + s_pos[None, :, None] * grid.light_axis)  # (nu, S, 3)
    q_lat = np.empty((v_nodes.size, u_nodes.size), dtype=complex)
    peak = 0.0
    for i, yv in enumerate(v_nodes):
        p = pressure(plane + yv * grid.v)
        q_lat[i] = p @ s_w
        if y_pix.min() - 1e-12 <= yv <= y_pix.max() + 1e-12:
            peak = max(peak, float(np.abs(p[inside_u]).max(initial=0.0)))
        if progress is not None:
            progress(i + 1)
    return q_lat, peak


def pixel_maps(q_lat, u_nodes, v_nodes, grid: ViewGrid, shift=0.0):
    """(Q, dQ/dv) at the pixel centres (optionally shifted by ``shift`` along u) from the
    lattice, by sixth-order Lagrange interpolation."""
    x_pix, y_pix = grid.offsets()
    wu = los.interpolation_matrix(u_nodes, x_pix + shift, ORDER)
    wv = los.interpolation_matrix(v_nodes, y_pix, ORDER)
    dv = los.interpolation_matrix(v_nodes, y_pix, ORDER, derivative=True)
    right = q_lat @ wu.T
    return wv @ right, dv @ right


def reduced_grid(grid: ViewGrid, max_pixels: int) -> ViewGrid:
    """The grid with whole-number coarser pixels so that neither side exceeds max_pixels."""
    import dataclasses

    factor = max(1, -(-max(grid.nx, grid.ny) // int(max_pixels)))
    if factor == 1:
        return grid
    return dataclasses.replace(grid, pixel_m=grid.pixel_m * factor,
                               nx=max(1, grid.nx // factor), ny=max(1, grid.ny // factor))


def render_preview(rig, plan=None, *, frames=None, noise=True, seed=0, progress=None,
                   max_pixels=None, max_seconds=MAX_PREVIEW_SECONDS, grid=None,
                   speed=None) -> Preview:
    """Draw the frames the camera will record over the planned sweep.

    Parameters
    ----------
    rig : Rig
        The rig (needs an emitter).
    plan : Plan, optional
        ``solve(rig)`` (computed when omitted).
    frames : int, optional
        Frames over the sweep's span (default: the schedule's rows).
    noise : bool
        Shot, read and quantisation noise (seeded); False gives the mean grey levels.
    seed : int
        Seed of the noise (same seed, same bytes).
    progress : callable, optional
        Called as progress(done, total) while the field and the frames are computed.
    max_pixels : int, optional
        Coarser pixels (a whole multiple) so that no side exceeds this (a reduced preview,
        as the HTML report draws; each pixel keeps one camera pixel's light and noise).
    max_seconds : float
        Refuse (WorkloadError) a preview estimated to take longer. [s]
    grid : ViewGrid, optional
        The pixel grid to draw on (default the rig's view grid, :func:`view_grid`).
    speed : float, optional
        Speed of sound to draw the field at (default the plan's). [m/s]

    Returns
    -------
    Preview
    """
    from .solve import build_schedule, solve

    if rig.emitter is None:
        raise PreviewError("preview: the rig has no [emitter]; there is no sound field to draw")
    if frames is not None and not (1 <= int(frames) <= MAX_FRAMES):
        raise PreviewError(f"--frames: {frames} is out of range, expected 1 to {MAX_FRAMES}")
    if plan is None:
        plan = solve(rig)
    if plan.timing is None or plan.air is None:
        raise PreviewError("preview: the plan has no timing; check the rig with "
                           "'strobeplan check' first")
    grid = view_grid(rig, plan) if grid is None else grid
    if max_pixels is not None:
        grid = reduced_grid(grid, max_pixels)
    f = float(rig.wave.frequency)
    speed = float(plan.air.speed_of_sound_m_s if speed is None else speed)
    lam = speed / f
    img = plan.image
    double = img is not None and img.layout == "double-pass"
    offset = float(img.double_image_m or 0.0) if double else 0.0
    n_frames = int(frames) if frames is not None else None
    schedule = build_schedule(plan, steps=n_frames)
    rows = schedule.rows[:MAX_FRAMES]
    n_rows = len(rows)

    from .stages.field import pressure_at, view_point

    at_view = pressure_at(rig, view_point(rig), f, speed=speed)
    n_src = at_view[3]
    seconds, memory, points = estimate_work(grid, lam, n_src, n_rows, offset)
    _require_within(grid, seconds, memory, n_rows, max_seconds)

    u_nodes, v_nodes, s_pos, s_w = _lattice(grid, lam, offset)
    total = v_nodes.size + n_rows
    from .stages.field import line_of_sight_phase, room_pressure
    from .stages.optics import gladstone_dale

    def pressure(pts):
        return room_pressure(rig, pts, f, speed=speed)

    q_lat, peak_p = project(pressure, grid, u_nodes, v_nodes, s_pos, s_w,
                            None if progress is None else (lambda i: progress(i, total)))
    p_view = complex(at_view[0])
    scale, level_source = _level_scale(rig, plan, p_view)
    q_lat *= scale
    peak_p *= scale
    theta = math.atan2(p_view.imag, p_view.real)

    # Deflection map: dQ/dv at the pixels, one or two passes.
    k_gd = gladstone_dale(rig)

    def one_pass(shift):
        return los.deflection_map(pixel_maps(q_lat, u_nodes, v_nodes, grid, shift)[1], k_gd,
                                  speed)

    deflection = los.double_pass(one_pass, offset) if double else one_pass(0.0)
    peak_eps = float(np.abs(deflection).max(initial=0.0))
    o = _optics(rig, plan, peak_eps)
    deflection = _blur(deflection, o.resolution / FWHM_PER_SIGMA / grid.pixel_m)

    # Frames.
    retention = float(plan.exposure.retention) if plan.exposure is not None else 1.0
    gains = np.array([retention * float(r.smear) for r in rows])
    phases = np.array([float(r.achieved_phase_deg) for r in rows])
    amp_shift = o.f2 * np.abs(deflection) * (gains.max() if n_rows else 1.0)
    s_tab, t_tab = _transmission_table(o, 1.05 * float(amp_shift.max(initial=0.0)))
    rng = np.random.default_rng(int(seed)) if (noise and o.noise_known) else None
    full = 2**o.bit_depth - 1
    out = np.empty((n_rows, grid.ny, grid.nx), dtype=np.uint16)
    for k in range(n_rows):
        eps = los.frame_deflection(deflection, math.radians(phases[k]) - 0.5 * math.pi - theta,
                                   gains[k])
        trans = np.interp(o.f2 * eps, s_tab, t_tab)
        electrons = o.unit * trans + o.dark
        out[k] = cam_model.digitise(electrons, o.read_noise, o.full_well, o.bit_depth, rng)
        if progress is not None:
            progress(v_nodes.size + k + 1, total)

    summary, findings = _summarise(rig, plan, grid, o, deflection, amp_shift, s_tab, t_tab,
                                   out, full, peak_p, lam, offset, double, u_nodes, v_nodes,
                                   points, n_src, k_gd, level_source, phases, gains, noise,
                                   seed)
    summary["pressure_phase_at_view_deg"] = math.degrees(theta)
    summary["line_of_sight_phase_deg"] = line_of_sight_phase(rig, grid, f, speed)
    sigma = o.resolution / FWHM_PER_SIGMA
    summary["blur_fwhm_m"] = o.resolution
    summary["blur_contrast_at_sound_wavelength"] = (
        math.exp(-0.5 * (2 * math.pi * sigma / lam) ** 2)
        if sigma / grid.pixel_m >= 0.3 else 1.0)
    summary["frame_phase_reference"] = ("frame k shows Re(gain_k E exp(j (phase_k - 90 deg - "
                                        "pressure_phase_at_view_deg)))")
    return Preview(frames=out, phases_deg=phases, grid=grid, deflection=deflection,
                   summary=summary, findings=findings, bit_depth=o.bit_depth,
                   rig_name=rig.name)


def _level_scale(rig, plan, p_view):
    """(factor, source) bringing the model's level to the plan's level at the view."""
    em = rig.emitter
    fld, optics = plan.field, plan.optics
    known = fld is not None and fld.level_known
    target = optics.pressure_amplitude_pa if optics is not None else None
    if (em.spl_at_view is not None or not known) and target and abs(p_view) > 0:
        how = "emitter.spl_at_view" if em.spl_at_view is not None else "optics level"
        return float(target) / abs(p_view), how
    return 1.0, "field model (rated pistons)" if known else "field model (1 m/s, level unknown)"


def _summarise(rig, plan, grid, o, deflection, amp_shift, s_tab, t_tab, frames, full, peak_p,
               lam, offset, double, u_nodes, v_nodes, points, n_src, k_gd, level_source,
               phases, gains, noise, seed):
    findings = []
    # Per-pixel response over a cycle: peak-to-peak of the transmission at the shift's
    # amplitude (16 phases), its electrons against the noise at the mean level.
    theta = np.linspace(0.0, 2.0 * np.pi, 16, endpoint=False)
    t_cycle = np.stack([np.interp(amp_shift * np.sin(t), s_tab, t_tab) for t in theta])
    signal_e = o.unit * 0.5 * (t_cycle.max(axis=0) - t_cycle.min(axis=0))
    mean_e = o.unit * t_cycle.mean(axis=0) + o.dark
    if o.noise_known:
        sigma = cam_model.noise(mean_e, o.read_noise, o.full_well, o.bit_depth, o.dark)
        snr = signal_e / np.maximum(sigma, 1e-30)
        below = float(np.mean(snr < o.min_snr))
    else:
        below = None
    linear = float(cut_model.linear_range(o.height, o.rod, o.cut, o.width))
    clipped = float(np.mean(amp_shift > linear))
    sat = float(np.mean(frames >= full)) if frames.size else 0.0
    zero = float(np.mean(frames == 0)) if frames.size else 0.0

    if o.chain and clipped > SATURATED_FRACTION:
        findings.append(_finding("preview.cutoff_saturated",
                                 f"{clipped:.1%} of the view", clipped, SATURATED_FRACTION,
                                 "ratio"))
    if below is not None and below > DARK_FRACTION:
        findings.append(_finding("preview.below_snr",
                                 f"{below:.0%} of the pixels under SNR {o.min_snr:g}", below,
                                 DARK_FRACTION, "ratio"))
    step_light = grid.depth_m / (grid.samples - 1)
    if step_light > lam / LIGHT_SAMPLING:
        findings.append(_finding(
            "preview.light_sampling",
            f"{grid.samples} samples over {grid.depth_m * 1e3:.1f} mm are "
            f"{step_light * 1e3:.2f} mm apart, more than lambda/{LIGHT_SAMPLING} = "
            f"{lam / LIGHT_SAMPLING * 1e3:.2f} mm", step_light, lam / LIGHT_SAMPLING, "m"))
    image_wl = lam / (2.0 if o.rod else 1.0)
    if grid.pixel_m > image_wl / VIEW_SAMPLING:
        findings.append(_finding(
            "preview.view_sampling",
            f"pixels of {grid.pixel_m * 1e3:.3f} mm against an image wavelength of "
            f"{image_wl * 1e3:.2f} mm (want at most {image_wl / VIEW_SAMPLING * 1e3:.2f} mm)",
            grid.pixel_m, image_wl / VIEW_SAMPLING, "m"))
    contrast_kept = None
    if double and offset > grid.pixel_m:
        contrast_kept = float(np.abs(deflection).max(initial=0.0))
        if offset < max(grid.width_m, grid.height_m):
            findings.append(_finding(
                "preview.double_image",
                f"the copies are {offset * 1e3:.2f} mm apart ({offset / lam:.2f} sound "
                "wavelengths) inside a view of "
                f"{grid.width_m * 1e3:.0f} x {grid.height_m * 1e3:.0f} mm", offset, None,
                "m"))
    if not o.chain:
        findings.append(_finding("preview.no_image_chain", "contrast normalised to the "
                                 "largest deflection in the view"))

    summary = {
        "rig": rig.name,
        "frames": int(frames.shape[0]),
        "phases_deg": [round(float(p), 6) for p in phases],
        "gain_per_frame": [round(float(g), 6) for g in gains],
        "width_px": grid.nx, "height_px": grid.ny,
        "pixel_m": grid.pixel_m,
        "view_width_m": grid.width_m, "view_height_m": grid.height_m,
        "view_centre_m": [float(c) for c in grid.centre],
        "u": [float(c) for c in grid.u], "v": [float(c) for c in grid.v],
        "light_axis": [float(c) for c in grid.light_axis],
        "depth_m": grid.depth_m, "samples_along_light": grid.samples,
        "light_step_m": step_light,
        "sound_wavelength_m": lam,
        "lattice_spacing_m": float(u_nodes[1] - u_nodes[0]),
        "lattice_fraction_of_wavelength": LATTICE_FRACTION,
        "lattice_points": int(points), "sources": int(n_src),
        "field_evaluations": int(points * n_src),
        "level_from": level_source,
        "gladstone_dale_m3_kg": k_gd,
        "peak_pressure_pa": peak_p,
        "peak_deflection_rad": float(np.abs(deflection).max(initial=0.0)),
        "layout": plan.image.layout if plan.image is not None else None,
        "cutoff": ("rod" if o.rod else "knife") if o.chain else "knife (normalised)",
        "cutoff_sensitive_direction": "v (picture up)",
        "double_image_m": offset if double else None,
        "double_image_peak_deflection_rad": contrast_kept,
        "bit_depth": o.bit_depth,
        "grey_min": int(frames.min()) if frames.size else None,
        "grey_max": int(frames.max()) if frames.size else None,
        "fraction_saturated": sat,
        "fraction_black": zero,
        "fraction_below_snr": below,
        "min_snr": o.min_snr,
        "fraction_cutoff_saturated": clipped,
        "cutoff_linear_range_m": linear,
        "noise": bool(noise and o.noise_known),
        "seed": int(seed),
        "light_budget": bool(o.noise_known),
    }
    return summary, findings


# --- files -------------------------------------------------------------------------------


def to_8bit(frame, bit_depth):
    """Grey levels at a bit depth scaled to 0..255 (rounded)."""
    full = 2**int(bit_depth) - 1
    return np.round(frame.astype(np.float64) * (255.0 / full)).astype(np.uint8)


def _png_bytes(image, level=1) -> bytes:
    """PNG bytes of an 8-bit array (zlib level 1 for the frames: noisy frames compress little
    and level 6 is four times slower)."""
    import io

    from PIL import Image

    buf = io.BytesIO()
    Image.fromarray(image).save(buf, format="PNG", optimize=False, compress_level=level)
    return buf.getvalue()


def _tiff_bytes(frame, bit_depth, phase) -> bytes:
    import io

    import tifffile

    buf = io.BytesIO()
    tifffile.imwrite(buf, frame, photometric="minisblack", metadata=None,
                     description=f"strobeplan preview; bit depth {bit_depth}; "
                                 f"image phase {phase:.3f} deg")
    return buf.getvalue()


def _gif_bytes(frames8, fps=12.0) -> bytes:
    import io

    from PIL import Image

    images = [Image.fromarray(f).convert("P") for f in frames8]
    buf = io.BytesIO()
    images[0].save(buf, format="GIF", save_all=True, append_images=images[1:],
                   duration=int(round(1000.0 / fps)), loop=0, optimize=False)
    return buf.getvalue()


def contact_sheet(preview: Preview, max_frames: int | None = None, tile: int | None = None):
    """The contact sheet as an 8-bit grey array: tiles with phase labels and a scale bar."""
    from PIL import Image, ImageDraw, ImageFont

    frames = preview.frames
    idx = np.arange(frames.shape[0])
    if max_frames is not None and frames.shape[0] > max_frames:
        idx = np.unique(np.round(np.linspace(0, frames.shape[0] - 1, max_frames)).astype(int))
    ny, nx = frames.shape[1:]
    width = tile or min(nx, 320)
    scale = width / nx
    height = max(1, int(round(ny * scale)))
    cols = min(len(idx), 6)
    rows = -(-len(idx) // cols)
    label_h, pad = 14, 4
    sheet = Image.new("L", (cols * (width + pad) + pad,
                            rows * (height + label_h + pad) + pad + 24), 255)
    draw = ImageDraw.Draw(sheet)
    font = ImageFont.load_default()
    for n, k in enumerate(idx):
        im = Image.fromarray(to_8bit(frames[k], preview.bit_depth)).resize(
            (width, height), Image.Resampling.BILINEAR)
        x0 = pad + (n % cols) * (width + pad)
        y0 = pad + (n // cols) * (height + label_h + pad)
        sheet.paste(im, (x0, y0 + label_h))
        draw.text((x0, y0), f"#{k}  {preview.phases_deg[k]:.1f} deg", fill=0, font=font)
    # Scale bar: a round length near a quarter of a tile's width.
    metres_per_px = preview.grid.pixel_m / scale
    target = 0.25 * width * metres_per_px
    exp = 10.0 ** math.floor(math.log10(target))
    bar = max(m * exp for m in (1, 2, 5) if m * exp <= target)
    bar_px = int(round(bar / metres_per_px))
    y = sheet.height - 14
    draw.rectangle([pad, y, pad + bar_px, y + 4], fill=0)
    draw.text((pad + bar_px + 6, y - 6), f"{bar * 1e3:g} mm", fill=0, font=font)
    return np.asarray(sheet)


def _json_bytes(preview: Preview, files: list) -> bytes:
    import json

    from .plan import jsonable

    doc = dict(preview.summary)
    doc["files"] = files
    doc["findings"] = [jsonable(f) for f in preview.findings]
    return (json.dumps(doc, indent=2, sort_keys=True, allow_nan=False,
                       default=_json_default) + "\n").encode()


def _json_default(x):
    if isinstance(x, (np.floating, np.integer)):
        return x.item()
    raise TypeError(type(x).__name__)


def write_preview(preview: Preview, outdir, rig_path=None) -> list:
    """Write the frames (16-bit TIFF, 8-bit PNG), loop.gif, contact_sheet.png, preview.json.

    Each file is written atomically through the output policy (``strobeplan.io``).
    Returns the names written.
    """
    from .io import check_target, output_dir, write_atomic

    folder = output_dir(outdir, rig_path, create=True, what="the preview's files")
    files = []

    def put(name, data):
        target = folder / name
        check_target(target, rig_path)
        write_atomic(target, data, rig_path)
        files.append(name)

    frames8 = [to_8bit(f, preview.bit_depth) for f in preview.frames]
    for k, frame in enumerate(preview.frames):
        put(f"frame_{k:03d}.tif", _tiff_bytes(frame, preview.bit_depth,
                                              float(preview.phases_deg[k])))
        put(f"frame_{k:03d}.png", _png_bytes(frames8[k]))
    if frames8:
        put("loop.gif", _gif_bytes(frames8))
        put("contact_sheet.png", _png_bytes(contact_sheet(preview, max_frames=36)))
    put("preview.json", _json_bytes(preview, files + ["preview.json"]))
    return files
