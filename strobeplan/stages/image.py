"""Image stage: what the camera records, and the eye hazard of the source image.

Runs after the power stage (it needs the LED's currents in ``plan.led``, the last flash's
current in ``plan.supply``, the flashes per frame in ``plan.timing``, the retention in
``plan.exposure`` and the deflection in ``plan.optics``). Sections: ``image`` and ``eye``.

* Layout (strobeplan.physics.imaging): magnification of the lens behind the cutoff focused
  on the mirror, object pixel, field of view, the lens that fills the sensor, the source
  image and the unobstructed height a, sensitivity f2/a and measuring range, the diffraction
  limit, z-type astigmatism and coma, the double-pass double image, the bench length.
* Cutoff (physics.cutoff): the transmission of a blurred source image shifted by f2 x the
  wave's deflection amplitude; the image's mean, fundamental and second harmonic. A rod stop
  has no fundamental: its signal is the second harmonic (the wave at twice its spatial
  frequency).
* Light budget (physics.camera): the LED's flux at each current from its datasheet rating
  and relative-output curve, Simpson-averaged over the pulse (peak, mean, end current) and
  over the burst (first, middle, last flash: capacitor droop), radiance over the emitting
  area, the camera equation to photoelectrons per pixel, then noise, grey level and SNR.
* Eye (physics.photobiology): the time-averaged radiance seen at the cutoff, weighted by
  IEC 62471's B and R functions, against the standard's limits.

Every figure that depends on the design (pulse width, every, series resistor, supply
voltage) is computed with numpy on the earlier sections' fields, so the stage serves a
scalar rig and a grid of designs alike (fields are then arrays).
"""

from __future__ import annotations

from dataclasses import field
from typing import Any

import numpy as np

from ..physics import camera as cam_model
from ..physics import cutoff as cut_model
from ..physics import demod, imaging
from ..physics import photobiology as eye_model
from ..physics.arrays import compact, expand, expanded
from ..plan import Section, q
from ..quickdc import dataclass

TOO_DARK = 0.10  # background under 10 % of full scale: "too dark" (documented default)
HARMONICS_CHECKED = 12  # cutoff harmonics examined for the phase sweep's aliasing
ALIAS_FRACTION = 0.02  # a harmonic over 2 % of the signal's must be resolved (~1 deg)


@dataclass
class ImageSection(Section):
    """``image``: layout, cutoff response, light budget, noise and visibility."""

    layout: str = q()
    cutoff: str = q()
    magnification: float = q()
    object_pixel_m: float = q("length")
    object_pixel_given_m: float | None = q("length")
    field_of_view_m: float | None = q("length")
    field_of_view_height_m: float | None = q("length")
    sensor_fill: float | None = q("ratio")
    filling_focal_length_m: float | None = q("length")
    source_image_m: float = q("length")
    opening_m: float = q("length")
    cutoff_distance_m: float = q("length")
    sensitivity_per_rad: float = q("/rad")
    measuring_range_rad: float = q("rad")
    response_order: int = q()
    image_frequency_factor: int = q()
    resolution_m: float = q("length")
    diffraction_limit_m: float = q("length")
    sound_wavelength_m: float = q("length")
    astigmatic_split_m: float | None = q("length")
    astigmatic_blur_m: float | None = q("length")
    coma_per_mirror_m: float | None = q("length")
    double_image_m: float | None = q("length")
    bench_needed_m: float = q("length")
    bench_length_m: float | None = q("length")
    lens_pass: float = q("ratio")
    deflection_rad: float | None = q("rad")
    shift_amplitude_m: float | None = q("length")
    saturated: bool | None = q()
    background_transmission: float = q("ratio")
    fundamental: float | None = q()
    second_harmonic: float | None = q()
    harmonic_order: int | None = q(default=None)
    min_phase_steps: int | None = q(default=None)
    light_wavelength_m: float | None = q("length", default=None)
    flux_peak_w: float | None = q("power", default=None)
    wall_plug_efficiency: float | None = q("ratio", default=None)
    output_extrapolated: bool | None = q(default=None)
    radiance_w_m2_sr: float | None = q("W/(m2 sr)", default=None)
    electrons_per_flash: float | None = q(default=None)
    electrons_per_frame: float | None = q(default=None)
    electrons_open: float | None = q(default=None)
    peak_electrons: float | None = q("e-", default=None)
    full_well: float | None = q(default=None)
    grey_level: float | None = q(default=None)
    grey_fraction: float | None = q("ratio", default=None)
    too_dark: bool | None = q(default=None)
    sensor_saturated: bool | None = q(default=None)
    signal_electrons: float | None = q("e-", default=None)
    noise_electrons: float | None = q("e-", default=None)
    shot_noise_electrons: float | None = q("e-", default=None)
    read_noise_electrons: float | None = q("e-", default=None)
    quantisation_noise_electrons: float | None = q("e-", default=None)
    snr: float | None = q(default=None)
    snr_binned: float | None = q(default=None)
    binning: int | None = q(default=None)
    average_frames: int | None = q(default=None)
    min_snr: float | None = q(default=None)
    min_detectable_spl_db: float | None = q("dB", default=None)
    visible: bool | None = q(default=None)
    # (flashes per frame, one flash's optical energy, peak flux): ``_emitted``, for the eye
    _emitted: Any = field(default=None, repr=False, compare=False)


@dataclass
class EyeSection(Section):
    """``eye``: IEC 62471 retinal hazards of the source image seen at the cutoff."""

    radiance_average_w_m2_sr: float = q("W/(m2 sr)")
    blue_radiance_w_m2_sr: float = q("W/(m2 sr)")
    thermal_radiance_w_m2_sr: float = q("W/(m2 sr)")
    angular_subtense_rad: float = q("rad")
    blue_time_to_limit_s: float | None = q("time")
    thermal_time_to_limit_s: float | None = q("time")
    time_to_limit_s: float | None = q("time")
    limited_by: str = q()
    risk_group: int = q()
    standard: str = q(default="IEC 62471:2006 (an estimate, not a certification)")


def _val(x):
    """A figure for the section: a plain float for 0-d values, the array otherwise."""
    if x is None:
        return None
    return float(x) if np.ndim(x) == 0 else np.asarray(x)


def _int(x):
    if x is None:
        return None
    return int(x) if np.ndim(x) == 0 else np.asarray(x, dtype=np.int64)


def _flag(x):
    if x is None:
        return None
    return bool(x) if np.ndim(x) == 0 else np.asarray(x, dtype=bool)


def _source(rig):
    """(width, height) of the lit source: the slit within the LED die. [m]"""
    opt, led = rig.optics, rig.led
    die = led.emitting_size if led is not None else None
    sizes = []
    for key in ("width", "height"):
        slit = getattr(opt.source, key) if opt.source is not None else None
        given = [v for v in (slit, die) if v is not None]
        sizes.append(min(given) if given else None)
    return sizes


def compute(rig, design, plan) -> ImageSection | None:
    """The ``image`` section, or None without a layout, a lens and a pixel pitch."""
    opt, cam = rig.optics, rig.camera
    if opt is None or opt.layout is None or cam is None or cam.lens is None \
            or cam.pixel_pitch is None or plan.timing is None:
        return None
    double = opt.layout == "double-pass"
    f, d = opt.focal_length, opt.mirror_diameter
    u = imaging.lens_object_distance(double, f)
    m = imaging.magnification(cam.lens.focal_length, u)
    pixel = imaging.object_pixel(cam.pixel_pitch, m)
    given_pixel = cam.object_pixel if "object_pixel" in cam.model_fields_set else None
    fov_w = imaging.field_of_view(cam.pixel_pitch, cam.width_px, m) if cam.width_px else None
    fov_h = imaging.field_of_view(cam.pixel_pitch, cam.height_px, m) if cam.height_px else None
    sensor_h = cam.pixel_pitch * cam.height_px if cam.height_px else None
    fill = imaging.sensor_fill(d, m, sensor_h) if sensor_h else None
    fill_f = imaging.filling_focal_length(d, sensor_h, u) if sensor_h else None

    src_w, src_h = _source(rig)
    f2 = opt.cutoff_distance
    img_h = imaging.source_image_size(src_h, f2, f2) if src_h else opt.cutoff_opening / (
        1.0 - opt.cut_fraction)
    img_w = imaging.source_image_size(src_w, f2, f2) if src_w else img_h
    rod = opt.cutoff == "rod"
    width = opt.cutoff_width or 0.0
    a = opt.cutoff_opening
    lam = opt.light_wavelength
    blur = cutoff_blur(rig)
    speed = plan.air.speed_of_sound_m_s
    sound_wl = speed / plan.timing.drive_frequency_hz
    order = 2 if rod else 1
    aperture = img_h if rod else a
    diffraction = imaging.diffraction_resolution(lam, f2, aperture)
    lens_airy = 2.44 * lam * cam.lens.f_number / m
    resolution = max(float(diffraction), 2.0 * cam.binning * float(pixel), float(lens_airy))
    split = blur_astig = coma = None
    if not double:
        split = 2.0 * imaging.astigmatic_split(f, opt.offset_angle)
        blur_astig = imaging.astigmatic_blur(split, d, f)
        coma = imaging.coma_length(d, f, opt.offset_angle)
    dbl = None
    if double and opt.test_distance is not None:
        dbl = imaging.double_image_offset(opt.source_separation, 2.0 * f, opt.test_distance)
    separation = opt.mirror_separation or 2.0 * f
    bench = imaging.bench_length(double, f, d, cam.lens.focal_length, separation)
    pupil = cam.lens.focal_length / cam.lens.f_number
    lens_pass = cam_model.lens_pass(pupil, img_w, img_h)
    t0 = _cutoff("transmission", 0.0, img_h, rod, opt.cut_fraction, width, blur)
    rng = cut_model.linear_range(img_h, rod, opt.cut_fraction, width)

    section = ImageSection(
        layout=opt.layout, cutoff=opt.cutoff, magnification=float(m),
        object_pixel_m=float(pixel), object_pixel_given_m=given_pixel,
        field_of_view_m=_val(fov_w), field_of_view_height_m=_val(fov_h),
        sensor_fill=_val(fill), filling_focal_length_m=_val(fill_f),
        source_image_m=float(img_h), opening_m=float(a), cutoff_distance_m=float(f2),
        sensitivity_per_rad=0.0 if rod else float(imaging.sensitivity(f2, a)),
        measuring_range_rad=float(rng / f2), response_order=order,
        image_frequency_factor=order, resolution_m=resolution,
        diffraction_limit_m=float(diffraction), sound_wavelength_m=float(sound_wl),
        astigmatic_split_m=_val(split), astigmatic_blur_m=_val(blur_astig),
        coma_per_mirror_m=_val(coma), double_image_m=_val(dbl), bench_needed_m=float(bench),
        bench_length_m=opt.bench_length, lens_pass=float(lens_pass), deflection_rad=None,
        shift_amplitude_m=None, saturated=None, background_transmission=float(t0),
        fundamental=None, second_harmonic=None,
    )

    optics = plan.optics
    retention = plan.exposure.retention if plan.exposure is not None else 1.0
    if optics is not None and optics.deflection_rad is not None:
        eps = optics.deflection_rad
        shift = f2 * np.asarray(eps)
        mean, first, second = _cutoff("harmonics", shift, img_h, rod, opt.cut_fraction, width,
                                      blur)
        section.deflection_rad = _val(eps)
        section.shift_amplitude_m = _val(shift)
        section.saturated = _flag(shift > rng)
        section.fundamental = _val(first)
        section.second_harmonic = _val(second)
        # the highest harmonic the phase sweep must resolve, and the fewest equal steps
        # that do (N steps resolve orders up to (N - 1) / 2: physics/demod.py)
        amps = _cutoff("harmonic_amplitudes", shift, img_h, rod, opt.cut_fraction, width, blur,
                       HARMONICS_CHECKED)
        top = demod.highest_significant_order(amps, order, ALIAS_FRACTION)
        section.harmonic_order = _int(top)
        section.min_phase_steps = _int(demod.min_steps(top))
    _light_budget(rig, design, plan, section, img_w, img_h, lens_pass, retention)
    return section


_CUTOFF_MEMO: dict = {}


def _cutoff(name, shift, *args):
    """``physics.cutoff.<name>(shift, *args)``, remembered for a scalar shift and scalar
    arguments: every chunk of a design search shares one deflection, so the cutoff's
    response (a pure function of these numbers) is computed once. Arrays are returned
    read-only."""
    fn = getattr(cut_model, name)
    if np.ndim(shift) != 0 or any(np.ndim(a) != 0 for a in args):
        return fn(shift, *args)
    key = (name,) + tuple(repr(float(a)) for a in (shift,) + args)
    if key not in _CUTOFF_MEMO:
        if len(_CUTOFF_MEMO) >= 256:
            _CUTOFF_MEMO.clear()
        out = fn(shift, *args)
        for a in out if isinstance(out, tuple) else (out,):
            if isinstance(a, np.ndarray):
                a.flags.writeable = False
        _CUTOFF_MEMO[key] = out
    return _CUTOFF_MEMO[key]


def _flux(led, current):
    ref = led.optical_power
    table = led.relative_output or []
    return cam_model.radiant_flux(current, ref.current, ref.power,
                                  [p.current for p in table], [p.ratio for p in table])


def _times(a, b):
    """``a * b`` on expanded operands (physics.arrays.expanded: faster, same numbers)."""
    a, b = expanded(a, b)
    return a * b


def _emitted(rig, plan):
    """(flashes per frame, optical energy of one mean flash, peak flux), each at the fewest
    dimensions of the design it depends on.

    The flash's energy is Simpson-averaged over the pulse (peak, mean and end current) and
    over the burst (first, middle and last flash). Where the last flash's current equals the
    peak's (no droop over the burst) every flash is the first: the middle and last flashes
    are computed only where the current droops (elementwise, so with the same numbers).
    """
    led = rig.led
    lp = plan.led
    pk = compact(np.asarray(lp.peak_current_a, dtype=float))
    mean = compact(np.asarray(lp.mean_current_a, dtype=float))
    end = compact(np.asarray(lp.end_current_a, dtype=float))
    last = plan.supply.last_flash_current_a if plan.supply is not None else lp.peak_current_a
    safe = np.where(pk > 0, pk, 1.0)
    lit, safe, last = expanded(pk > 0, safe, compact(np.asarray(last, dtype=float)))
    s_last = np.where(lit, last / safe, 1.0)
    width = compact(np.asarray(plan.flash.current_width_s, dtype=float))

    def flash(scale, pk, mean, end, width):  # Simpson over the pulse: peak, mean, end current
        return width * (_flux(led, scale * pk) + 4.0 * _flux(led, scale * mean)
                        + _flux(led, scale * end)) / 6.0

    n = plan.timing.flashes_per_frame
    n = compact(np.asarray(n if n is not None else 1, dtype=float))
    n = np.where(n > 0, n, 0.0)
    first = flash(1.0, pk, mean, end, width)
    one = (first + 4.0 * first + first) / 6.0  # where s_last == 1
    droops = s_last != 1.0  # (nan included)
    if droops.any() and np.ndim(droops) == 0:  # one design
        one = (first + 4.0 * flash((1.0 + s_last) / 2.0, pk, mean, end, width)
               + flash(s_last, pk, mean, end, width)) / 6.0
    elif droops.any():
        shape = np.broadcast_shapes(one.shape, droops.shape)
        at = np.unravel_index(np.flatnonzero(np.broadcast_to(droops, shape)), shape)

        def pick(x):
            return np.broadcast_to(x, shape)[at]

        s, args = pick(s_last), [pick(x) for x in (pk, mean, end, width)]
        one = expand(one, shape)
        one[at] = (pick(first) + 4.0 * flash((1.0 + s) / 2.0, *args) + flash(s, *args)) / 6.0
    return n, one, _flux(led, pk)


def _emitted_per_frame(rig, design, plan, section=None):
    """(optical energy of the flashes in one frame, of one mean flash, flashes, peak flux);
    ``_emitted`` is kept on ``section`` (the image section) for the eye stage."""
    n, one, flux_pk = _emitted(rig, plan)
    if section is not None:
        section._emitted = (n, one, flux_pk)
    return _times(n, one), one, n, flux_pk


def _light_budget(rig, design, plan, section, img_w, img_h, lens_pass, retention):
    """The light budget's figures on ``section``. In a design search's plan
    (``plan.rules_only``) the figures that no rule and no search figure reads (grey level,
    electrons per flash, shot noise, smallest detectable SPL, visible) stay None."""
    led, cam, opt = rig.led, rig.camera, rig.optics
    needed = (led is not None and led.optical_power is not None and led.emitting_size
              and cam.quantum_efficiency is not None and cam.full_well is not None
              and cam.read_noise is not None and plan.led is not None)
    if not needed:
        return
    every_figure = not plan.rules_only
    double = opt.layout == "double-pass"
    white = led.spectrum == "white"
    peak = led.wavelength or 0.0
    lam = eye_model.photon_wavelength(peak, white)
    energy_frame, energy_flash, n, flux_pk = _emitted_per_frame(rig, design, plan, section)
    area = led.emitting_size**2
    src_w, src_h = _source(rig)
    src_area = src_w * src_h
    d_src = 2.0 * opt.focal_length if double else opt.focal_length
    mirrors = opt.mirror_reflectance * (opt.beamsplitter * (1.0 - opt.beamsplitter)
                                        if double else opt.mirror_reflectance)
    tau = mirrors * opt.lens_transmission * lens_pass
    pixel = section.object_pixel_m

    def electrons(energy):  # whole source image passing the cutoff
        radiance_energy = cam_model.lambertian_radiance(energy, area)
        at_pixel = cam_model.pixel_power(radiance_energy, tau, pixel, src_area, d_src)
        return cam_model.photoelectrons(at_pixel, lam, cam.quantum_efficiency)

    unit = np.asarray(electrons(energy_frame))
    t0 = section.background_transmission
    dark = cam.dark_current * cam.exposure
    background = unit * t0 + dark
    mean_t = t0 if section.fundamental is None else _mean_transmission(rig, section, img_h)
    mean_e = _times(unit, mean_t) + dark
    order = section.response_order
    if section.fundamental is not None:
        harmonic = section.second_harmonic if order == 2 else section.fundamental
        signal = _times(_times(unit, harmonic), np.asarray(retention) ** order)
        peak_t = np.minimum(1.0, mean_t + np.asarray(section.fundamental)
                            + np.asarray(section.second_harmonic))
    else:
        signal = None
        peak_t = t0
    noise = cam_model.noise(mean_e, cam.read_noise, cam.full_well, cam.bit_depth, dark)
    v_pk = compact(np.asarray(plan.led.forward_voltage_peak_v, dtype=float))
    i_pk = compact(np.asarray(plan.led.peak_current_a, dtype=float))
    electrical = np.where(i_pk * v_pk > 0, i_pk * v_pk, np.nan)
    table = led.relative_output or []
    top = max([p.current for p in table] + [led.optical_power.current])

    section.light_wavelength_m = float(lam)
    section.flux_peak_w = _val(flux_pk)
    section.wall_plug_efficiency = _val(flux_pk / electrical)
    section.output_extrapolated = _flag(i_pk > top * 1.0001)
    section.radiance_w_m2_sr = _val(cam_model.lambertian_radiance(flux_pk, area))
    if every_figure:
        per_flash = np.where(n > 0, unit * t0 / np.where(n > 0, n, 1.0), 0.0)
        section.electrons_per_flash = _val(per_flash)
        section.grey_level = _val(cam_model.grey_level(background, cam.full_well,
                                                       cam.bit_depth))
        section.grey_fraction = _val(background / cam.full_well)
    section.electrons_per_frame = _val(background)
    section.full_well = cam.full_well
    peak_level = _times(unit, peak_t) + dark
    section.electrons_open = _val(unit)
    section.peak_electrons = _val(peak_level)
    # dark field (rod): the background is dark by design; judge the wave's brightest level
    section.too_dark = _flag((peak_level if order == 2 else background)
                             < TOO_DARK * cam.full_well)
    section.sensor_saturated = _flag(peak_level >= cam.full_well)
    section.noise_electrons = _val(noise)
    if every_figure:
        # the parts of that noise (EMVA 1288): shot, read and quantisation, for the budget
        section.shot_noise_electrons = _val(np.sqrt(np.maximum(mean_e, 0.0)))
    section.read_noise_electrons = cam.read_noise
    section.quantisation_noise_electrons = _val(cam_model.quantisation_noise(cam.full_well,
                                                                             cam.bit_depth))
    section.binning = cam.binning
    section.average_frames = cam.average_frames
    section.min_snr = opt.min_snr
    if signal is not None:
        snr = cam_model.snr(signal, noise)
        # snr() scales its ratio by binning x sqrt(frames): by 1 x 1.0 it is that ratio
        binned = (snr if cam.binning == 1 and cam.average_frames == 1
                  else cam_model.snr(signal, noise, cam.binning, cam.average_frames))
        section.signal_electrons = _val(signal)
        section.snr = _val(snr)
        section.snr_binned = _val(binned)
        if every_figure:
            section.min_detectable_spl_db = _val(cam_model.min_detectable_spl(
                plan.optics.spl_at_view_db, binned, opt.min_snr, order))
            section.visible = _flag(binned >= opt.min_snr)


def cutoff_blur(rig) -> float:
    """Diffraction blur of the source image at the cutoff (the light's wavelength, the
    cutoff distance f2 and the mirror's aperture; physics.cutoff.diffraction_blur): the
    one value the image section, its traces, the preview and analyse use. [m]"""
    opt = rig.optics
    return float(cut_model.diffraction_blur(opt.light_wavelength, opt.cutoff_distance,
                                            opt.mirror_diameter))


def _mean_transmission(rig, section, img_h):
    opt = rig.optics
    blur = cutoff_blur(rig)
    mean, _, _ = _cutoff("harmonics", np.asarray(section.shift_amplitude_m), img_h,
                                     opt.cutoff == "rod", opt.cut_fraction,
                                     opt.cutoff_width or 0.0, blur)
    return np.asarray(mean)


def compute_eye(rig, design, plan) -> EyeSection | None:
    """The ``eye`` section: needs the LED's optics and the power stage's flash pattern.

    In a design search's plan (``plan.rules_only``) only ``time_to_limit_s`` is given, the one
    figure a rule reads (eye.hazard: under ``photobiology.HAZARD_TIME``), and only as far as
    that rule needs: when no candidate's radiance can reach either limit within that time
    (a bound over the chunk), it is inf for all; otherwise it is exact.
    """
    led, opt, img = rig.led, rig.optics, plan.image
    if img is None or img.flux_peak_w is None or plan.supply is None:
        return None
    double = opt.layout == "double-pass"
    _, energy_flash, _ = img._emitted if img._emitted is not None else _emitted(rig, plan)
    rate = compact(np.asarray(plan.supply.flash_rate_average_hz, dtype=float))
    mirrors = opt.mirror_reflectance * ((1.0 - opt.beamsplitter) * opt.beamsplitter
                                        if double else opt.mirror_reflectance)
    area = led.emitting_size**2
    white = led.spectrum == "white"
    peak = led.wavelength or 0.0
    blue = eye_model.weighted_fraction(peak, white, eye_model.blue_light_weight)
    thermal = eye_model.weighted_fraction(peak, white, eye_model.thermal_weight)
    alpha = opt.mirror_diameter / opt.cutoff_distance
    if plan.rules_only and _eye_limits_out_of_reach(energy_flash, rate, mirrors, area, blue,
                                                   thermal, alpha):
        return _eye_time_only(alpha, np.inf)
    average = mirrors * cam_model.lambertian_radiance(_times(energy_flash, rate), area)
    lb = average * blue
    lr = average * thermal
    tb = eye_model.blue_time_to_limit(lb)
    tt = eye_model.thermal_time_to_limit(lr, alpha)
    t = np.minimum(tb, tt)
    if plan.rules_only:
        return _eye_time_only(alpha, _val(t))
    group = eye_model.risk_group(tb, tt)
    limited = np.where(tt < tb, "retinal thermal", "blue light")
    return EyeSection(
        radiance_average_w_m2_sr=_val(average), blue_radiance_w_m2_sr=_val(lb),
        thermal_radiance_w_m2_sr=_val(lr), angular_subtense_rad=float(alpha),
        blue_time_to_limit_s=_val(tb), thermal_time_to_limit_s=_val(tt),
        time_to_limit_s=_val(t),
        limited_by=str(limited) if np.ndim(limited) == 0 else limited,
        risk_group=int(group) if np.ndim(group) == 0 else group,
    )


def _eye_time_only(alpha, time_to_limit) -> EyeSection:
    """The eye section of a design search's plan: the time to the limit alone."""
    return EyeSection(
        radiance_average_w_m2_sr=None, blue_radiance_w_m2_sr=None,
        thermal_radiance_w_m2_sr=None, angular_subtense_rad=float(alpha),
        blue_time_to_limit_s=None, thermal_time_to_limit_s=None,
        time_to_limit_s=time_to_limit, limited_by=None, risk_group=None)


_BOUND_MARGIN = 1e-9  # relative: far above the rounding of the few operations bounded


def _eye_limits_out_of_reach(energy_flash, rate, mirrors, area, blue, thermal, alpha) -> bool:
    """True when no candidate's time-averaged radiance, mirrors x (E_flash x rate) /
    (pi A), reaches the blue-light or the retinal thermal limit within
    ``photobiology.HAZARD_TIME``: then each candidate's time to the limit exceeds it.

    Each rounded operation is monotonic in the flash rate, so a candidate's radiance lies
    between its values at the chunk's lowest and highest rates; the largest of those is held
    against the radiances that reach a limit in HAZARD_TIME
    (``photobiology.radiances_reaching_limits``), less a margin far above the rounding.
    Anything not finite, or negative weights, answers False (compute it).
    """
    if not (np.isfinite(blue) and np.isfinite(thermal) and blue >= 0 and thermal >= 0):
        return False
    r = np.asarray(rate)
    if r.size == 0 or not np.all(np.isfinite(r)):
        return False
    ends = [mirrors * cam_model.lambertian_radiance(energy_flash * x, area)
            for x in (r.min(), r.max())]
    if np.size(ends[0]) == 0:
        return True  # no candidates
    top = float(np.max(np.maximum(ends[0], ends[1])))  # nan propagates
    if not np.isfinite(top):
        return False
    blue_reach, thermal_reach = eye_model.radiances_reaching_limits(eye_model.HAZARD_TIME,
                                                                   alpha)
    keep = 1.0 - _BOUND_MARGIN
    return top * blue <= blue_reach * keep and top * thermal <= thermal_reach * keep
