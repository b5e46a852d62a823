"""Drive rules: frequency error, detuning from the transducer, carrier filtering."""

from __future__ import annotations

from ..units import render
from .registry import Hit, rule

FREQUENCY_ERROR_PPM = 1000.0  # 0.1 %: common practice for "the wave you asked for"
DETUNING_DB = 1.0             # more than 1 dB below resonance output (project default)
CARRIER_ATTENUATION_DB = 30.0  # issue requirement: carrier at least 30 dB below the wave
PWM_BITS_MIN = 6.0            # common practice: 64 duty levels for a clean sine


@rule("drive.frequency_error", "warning",
      trigger=f"the integer tick counts realise a drive frequency more than "
              f"{FREQUENCY_ERROR_PPM:.0f} ppm from wave.frequency",
      fix="choose a controller.clock that is a multiple of the drive frequency (times the "
          "carrier periods per cycle), or accept the realised frequency",
      example=("rangefinder-58k", {"controller.clock": "1 MHz"}))
def frequency_error(plan):
    t = plan.timing
    if abs(t.drive_frequency_error_ppm) <= FREQUENCY_ERROR_PPM:
        return None
    return Hit(lambda: f"the drive runs at {render(t.drive_frequency_hz, 'frequency')}, "
               f"{t.drive_frequency_error_ppm:+.0f} ppm from the requested "
               f"{render(plan.rig.wave.frequency, 'frequency')}",
               value=t.drive_frequency_error_ppm, limit=FREQUENCY_ERROR_PPM, unit="ppm")


@rule("drive.off_resonance", "warning",
      trigger=f"the realised drive frequency is far enough from emitter.resonance that the "
              f"transducer's motional response is more than {DETUNING_DB:.0f} dB down "
              "(Butterworth-Van Dyke, from resonance and Q)",
      fix="drive at the transducer's resonance (measure it: it moves with temperature and "
          "load), or lower Q expectations for SPL and phase stability",
      example=("levitator-40k", {"emitter.resonance": "40.6 kHz"}))
def off_resonance(plan):
    d = plan.drive
    if d.detuning_db is None or d.detuning_db <= DETUNING_DB:
        return None
    return Hit(lambda: f"the transducer is {d.detuning_db:.1f} dB below its resonance output and "
               f"shifts the phase by {d.transducer_phase_deg:+.0f} deg",
               value=d.detuning_db, limit=DETUNING_DB, unit="dB")


@rule("drive.carrier_not_filtered", "warning",
      trigger=f"the reconstruction filter and amplifier attenuate the PWM carrier less than "
              f"{CARRIER_ATTENUATION_DB:.0f} dB relative to the wave",
      fix="lower the filter cutoff, raise its order, or raise the carrier frequency",
      example=("levitator-40k", {"emitter.synthesis.filter": {"kind": "rc", "cutoff": "200 kHz"}}))
def carrier_not_filtered(plan):
    d = plan.drive
    if d.carrier_attenuation_db is None or d.carrier_attenuation_db >= CARRIER_ATTENUATION_DB:
        return None
    return Hit(lambda: f"the carrier at {render(plan.timing.carrier_frequency_hz, 'frequency')} "
                       f"is only "
               f"{d.carrier_attenuation_db:.1f} dB below the wave after the filter",
               value=d.carrier_attenuation_db, limit=CARRIER_ATTENUATION_DB, unit="dB")


@rule("drive.pwm_resolution_low", "note",
      trigger=f"the carrier period has fewer than {2**PWM_BITS_MIN:.0f} ticks, so the "
              "sine-weighted duty has fewer than 64 levels",
      fix="use a faster controller.clock or a lower carrier frequency",
      example=("levitator-40k", {"controller.clock": "20 MHz"}))
def pwm_resolution_low(plan):
    d = plan.drive
    if d.pwm_resolution_bits is None or d.pwm_resolution_bits >= PWM_BITS_MIN:
        return None
    return Hit(lambda: f"the PWM has {d.carrier_period_ticks} ticks per carrier period "
               f"({d.pwm_resolution_bits:.1f} bits)", value=d.pwm_resolution_bits,
               limit=PWM_BITS_MIN, unit="bit")
