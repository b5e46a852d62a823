"""Image rules: dark, overexposed, noisy or clipped images; layout limits; the eye hazard.

Written for scalar plans and grids of designs alike: each hit's condition ``when`` is a
numpy expression of the section's fields (a bool, or a bool array over the designs), and
its texts are callables formatted only for a scalar plan whose condition holds.
"""

from __future__ import annotations

import math

import numpy as np

# HAZARD_TIME [s]: IEC 62471's aversion response, risk group 3 below it (a design search's
# plans resolve the eye's time to the limit just as far as it: stages/image.py)
from ..physics.photobiology import HAZARD_TIME
from ..stages.image import TOO_DARK
from ..units import render
from .registry import Hit, rule

OBJECT_PIXEL_TOLERANCE = 0.05  # a given object_pixel more than 5 % off the layout's


def _f(x) -> float:
    return float(np.asarray(x)) if np.ndim(x) == 0 else math.nan


@rule("image.too_dark", "fault",
      trigger=f"the background (undisturbed) level is under {TOO_DARK:.0%} of the full well "
              "(a documented default; with a dark-field rod stop, the wave's brightest "
              "level): the wave drowns in read and quantisation noise",
      fix="more light per frame: a longer strobe.pulse_width (within the blur limit), a "
          "higher LED current (supply.voltage, a smaller series_resistor), a wider slit "
          "(optics.source), more flashes per exposure (camera.exposure), or camera.binning",
      example=("levitator-40k", {"supply.voltage": "2 V"}))
def too_dark(plan):
    i = plan.image
    if i is None or i.too_dark is None:
        return None
    return Hit(lambda: f"the background is {_f(i.grey_fraction):.1%} of full scale "
                       f"({_f(i.electrons_per_frame):.3g} e- of {i.full_well:.3g}); under "
                       f"{TOO_DARK:.0%} the image is too dark",
               value=i.grey_fraction, limit=TOO_DARK, unit="1", when=np.asarray(i.too_dark))


@rule("image.overexposed", "warning",
      trigger="the brightest part of the wave's image reaches the full well: the sensor clips "
              "and the image no longer follows the pressure",
      fix="less light per frame: a narrower slit (optics.source width), a larger "
          "optics.cut_fraction, fewer flashes per exposure, a shorter pulse, or a neutral "
          "density filter before the camera",
      example=("levitator-40k", {"optics.source": {"width": "1 mm", "height": "1 mm"}}))
def overexposed(plan):
    i = plan.image
    if i is None or i.sensor_saturated is None:
        return None
    return Hit(lambda: f"the image reaches the full well ({i.full_well:.3g} e-): the "
                       f"background alone is {_f(i.grey_fraction):.0%} of full scale",
               value=i.grey_fraction, limit=1.0, unit="1", when=np.asarray(i.sensor_saturated))


@rule("image.snr_low", "fault",
      trigger="the wave's signal-to-noise ratio per pixel (after camera.binning and "
              "camera.average_frames) is below optics.min_snr (default 5, Rose criterion, "
              "common practice): the wave is not visible",
      fix="raise the SPL at the view, cut more of the source image (a smaller opening raises "
          "the sensitivity f2/a), add light (see image.too_dark), or bin pixels / average "
          "frames",
      example=("levitator-40k", {"supply.voltage": "2 V"}))
def snr_low(plan):
    i = plan.image
    if i is None or i.snr_binned is None:
        return None
    when = np.asarray(i.snr_binned) < i.min_snr
    return Hit(lambda: f"the wave's SNR is {_f(i.snr_binned):.3g} per pixel (signal "
                       f"{_f(i.signal_electrons):.3g} e-, noise {_f(i.noise_electrons):.3g} "
                       f"e-); seeing it needs {i.min_snr:g}. The smallest level seen: "
                       f"{_f(i.min_detectable_spl_db):.1f} dB at the view",
               value=i.snr_binned, limit=i.min_snr, unit="1", when=when)


@rule("image.cutoff_saturated", "warning",
      trigger="the wave's deflection moves the source image past the cutoff's linear range "
              "(measuring range): the image clips and no longer scales with the pressure",
      fix="widen the opening (a smaller optics.cut_fraction or a taller source) or lower the "
          "drive; a rod stop has a wider range",
      example=("levitator-40k", {"optics.cut_fraction": 0.97}))
def cutoff_saturated(plan):
    i = plan.image
    if i is None or i.saturated is None:
        return None
    return Hit(lambda: f"deflection {_f(i.deflection_rad) * 1e6:.3g} urad exceeds the "
                       f"measuring range {i.measuring_range_rad * 1e6:.3g} urad",
               value=i.deflection_rad, limit=i.measuring_range_rad, unit="rad",
               when=np.asarray(i.saturated))


@rule("image.resolution_coarse", "warning",
      trigger="the image resolution (the larger of the diffraction limit lambda f2 / a, two "
              "binned object pixels and the lens's Airy disc) is coarser than half the period of "
              "the wave's image (the sound wavelength, halved for a rod stop)",
      fix="a larger opening a (smaller cut_fraction or taller source), a shorter f2, a "
          "longer lens focal length (smaller object pixel) or a smaller f-number",
      example=("levitator-40k", {"optics.cut_fraction": 0.9}))
def resolution_coarse(plan):
    i = plan.image
    if i is None:
        return None
    limit = i.sound_wavelength_m / i.image_frequency_factor / 2.0
    return Hit(lambda: f"resolution {render(i.resolution_m, 'length')} against a wave "
                       f"image period of {render(2 * limit, 'length')}",
               value=i.resolution_m, limit=limit, unit="m", when=i.resolution_m > limit)


@rule("image.object_pixel_mismatch", "warning",
      trigger="camera.object_pixel is given and differs by more than 5 % from the one the "
              "lens, the pixel pitch and the layout give",
      fix="remove camera.object_pixel (it is derived) or correct the lens or the layout",
      example=("unsafe-bench", {}))
def object_pixel_mismatch(plan):
    i = plan.image
    if i is None or i.object_pixel_given_m is None:
        return None
    ratio = i.object_pixel_given_m / i.object_pixel_m
    return Hit(lambda: f"camera.object_pixel {render(i.object_pixel_given_m, 'length')} but "
                       f"the layout gives {render(i.object_pixel_m, 'length')}",
               value=i.object_pixel_given_m, limit=i.object_pixel_m, unit="m",
               when=abs(ratio - 1.0) > OBJECT_PIXEL_TOLERANCE)


@rule("image.astigmatism", "warning",
      trigger="z-type: the astigmatic blur between the sagittal and tangential foci (both "
              "mirrors, from the offset angle) exceeds the source image's opening a",
      fix="a smaller optics.offset_angle (the blur grows as its square), longer focal "
          "lengths, or a larger opening",
      example=("unsafe-bench", {}))
def astigmatism(plan):
    i = plan.image
    if i is None or i.astigmatic_blur_m is None:
        return None
    return Hit(lambda: f"astigmatic blur {render(i.astigmatic_blur_m, 'length')} at the "
                       f"cutoff against an opening of {render(i.opening_m, 'length')}",
               value=i.astigmatic_blur_m, limit=i.opening_m, unit="m",
               when=i.astigmatic_blur_m > i.opening_m)


@rule("image.double_image", "warning",
      trigger="double-pass: the two passes image the test region more than a quarter of the "
              "sound wavelength apart (source and cutoff separated at the centre of curvature)",
      fix="use a beamsplitter (source_separation = 0), bring the test region closer to the "
          "mirror, or separate source and cutoff less",
      example=("rangefinder-58k", {"optics.source_separation": "30 mm"}))
def double_image(plan):
    i = plan.image
    if i is None or i.double_image_m is None:
        return None
    limit = i.sound_wavelength_m / 4.0
    return Hit(lambda: f"double image {render(i.double_image_m, 'length')} apart against a "
                       f"sound wavelength of {render(i.sound_wavelength_m, 'length')}",
               value=i.double_image_m, limit=limit, unit="m", when=i.double_image_m > limit)


@rule("image.bench_too_short", "warning",
      trigger="optics.bench_length is given and the layout needs more (an estimate: mirror "
              "separation or focal lengths, the camera behind the cutoff, the mounts)",
      fix="shorter focal lengths, a folded beam (flat mirrors), or a double-pass layout",
      example=("levitator-40k", {"optics.bench_length": "2 m"}))
def bench_too_short(plan):
    i = plan.image
    if i is None or i.bench_length_m is None:
        return None
    return Hit(lambda: f"the layout needs about {render(i.bench_needed_m, 'length')}; the "
                       f"room has {render(i.bench_length_m, 'length')}",
               value=i.bench_needed_m, limit=i.bench_length_m, unit="m",
               when=i.bench_needed_m > i.bench_length_m)


@rule("image.lens_clips", "note",
      trigger="the camera lens's entrance pupil (focal length / f-number) is smaller than the "
              "source image at the cutoff: it clips the light",
      fix="open the lens (a smaller camera.lens.f_number) or use a smaller source",
      example=("levitator-40k", {"camera.lens": {"focal_length": "50 mm", "f_number": 64}}))
def lens_clips(plan):
    i = plan.image
    if i is None:
        return None
    return Hit(lambda: f"the lens passes {i.lens_pass:.0%} of the source image",
               value=i.lens_pass, limit=1.0, unit="1", when=i.lens_pass < 0.999)


@rule("image.mirror_underfills", "note",
      trigger="the mirror's image spans under half of the sensor's short side (or more than "
              "it): pixels are wasted (or the field is cut)",
      fix="a lens whose focal length fills the sensor (image.filling_focal_length_m)",
      example=("levitator-40k", {"camera.lens": {"focal_length": "25 mm", "f_number": 4}}))
def mirror_underfills(plan):
    i = plan.image
    if i is None or i.sensor_fill is None:
        return None
    return Hit(lambda: f"the mirror fills {i.sensor_fill:.0%} of the sensor's height; a "
                       f"{render(i.filling_focal_length_m, 'length')} lens fills it",
               value=i.sensor_fill, limit=1.0, unit="1",
               when=(i.sensor_fill < 0.5) | (i.sensor_fill > 1.0))


@rule("led.optical_exceeds_electrical", "warning",
      trigger="the optical output implied by led.optical_power and led.relative_output at the "
              "peak current exceeds the electrical power into the LED: the ratings or the "
              "curve are inconsistent",
      fix="check led.optical_power (radiant watts, not lumens) and the relative_output curve; "
          "set led.efficiency to the datasheet's wall-plug efficiency",
      example=("levitator-40k", {"led.optical_power": {"current": "700 mA", "power": "7 W"}}))
def optical_exceeds_electrical(plan):
    i = plan.image
    if i is None or i.wall_plug_efficiency is None:
        return None
    eff = np.nan_to_num(np.asarray(i.wall_plug_efficiency, dtype=float), nan=0.0)
    return Hit(lambda: f"optical {_f(i.flux_peak_w):.3g} W is "
                       f"{_f(i.wall_plug_efficiency):.0%} of the electrical input",
               value=i.wall_plug_efficiency, limit=1.0, unit="1", when=eff > 1.0)


@rule("led.output_extrapolated", "note",
      trigger="the peak current is beyond the last point of led.relative_output (or the flux "
              "rating): the output continues the last segment's slope, an extrapolation",
      fix="add the datasheet's relative output at the pulse current, or measure it",
      example=("levitator-40k", {}))
def output_extrapolated(plan):
    i = plan.image
    if i is None or i.output_extrapolated is None:
        return None
    return Hit(lambda: f"the light at {_f(plan.led.peak_current_a):.3g} A is extrapolated "
                       "from the relative-output curve",
               when=np.asarray(i.output_extrapolated))


@rule("eye.hazard", "hazard",
      trigger="the source image seen at the cutoff (where people look while aligning) reaches "
              "an IEC 62471 retinal limit (blue light or thermal, time-averaged over the flash "
              f"pattern) in under {HAZARD_TIME} s: risk group 3. A caution, not a "
              "certification",
      fix="never look into the cutoff: align with a card or a camera, at reduced current "
          "(continuous low-current alignment mode), or with a neutral-density filter",
      example=("unsafe-bench", {"led.emitting_size": "50 um"}))
def eye_hazard(plan):
    e = plan.eye
    if e is None:
        return None
    t = np.asarray(e.time_to_limit_s if e.time_to_limit_s is not None else np.inf,
                   dtype=float)
    return Hit(lambda: f"looking into the source image at the cutoff reaches the IEC 62471 "
                       f"{e.limited_by} limit in {_f(t):.3g} s (risk group {e.risk_group}); "
                       "a caution, not a certification",
               value=e.time_to_limit_s, limit=HAZARD_TIME, unit="s",
               when=t < HAZARD_TIME)


@rule("image.steps_alias", "warning",
      trigger="the phase sweep has fewer steps than the cutoff's response needs: N equal "
              "steps resolve harmonics up to (N - 1)/2 only, and the clipped knife's (or the "
              "rod's) higher harmonics over 2 % of the signal alias onto the harmonics "
              "`strobeplan analyse` fits",
      fix="raise sweep.steps to image.min_phase_steps or more, or keep the deflection inside "
          "the cutoff's linear range (a smaller optics.cut_fraction)",
      example=("levitator-40k", {"optics.cut_fraction": 0.97, "sweep.steps": 6}))
def steps_alias(plan):
    i = plan.image
    sweep = plan.rig.sweep
    if i is None or i.min_phase_steps is None or sweep is None or sweep.steps is None \
            or sweep.slow_motion is not None:
        return None
    n = sweep.steps
    return Hit(lambda: f"{n} phase steps resolve harmonics up to {(n - 1) // 2}; the cutoff's "
                       f"response carries harmonics up to order {int(i.harmonic_order)}, which "
                       f"needs {int(i.min_phase_steps)} steps or more",
               value=n, limit=i.min_phase_steps, unit="1",
               when=np.asarray(i.min_phase_steps) > n)
