"""Banding rules: a camera collecting a continuous flash train (strobe.continuous, or a
free-running camera with camera.trigger = "none")."""

from __future__ import annotations

import numpy as np

from ..units import render
from .registry import Hit, rule

# Row-to-row (or frame-to-frame) brightness step above which banding is reported: 2 %
# (common practice: about one grey level at 6 bits, the same bound as the timing smear).
BANDING_LIMIT = 0.02


def _where(b) -> str:
    if b.shutter == "rolling":
        return "row to row"
    return "frame to frame" if b.free_running else "between frames"


@rule("banding.visible", "warning",
      trigger=f"the continuous flash train lights the rows of a rolling shutter (or the "
              f"frames of a free-running global shutter) unevenly: the brightest and the "
              f"darkest differ by more than {BANDING_LIMIT:.0%}, because the exposure is not "
              f"a whole number of flash periods",
      fix="set camera.exposure to a whole number of flash periods "
          "(banding.band_free_exposure_s), or lengthen it so that one flash more or less "
          "matters less",
      example=("levitator-40k", {"camera.trigger": "none", "camera.exposure": "1.01 ms"}))
def banding_visible(plan):
    b = plan.banding
    if b is None:
        return None

    def message():
        return (f"brightness changes by {b.banding:.1%} {_where(b)}: each exposure collects "
                f"{b.flashes_per_row_min} or {b.flashes_per_row_max} flashes of the "
                f"{render(b.flash_period_s, 'time')} train")

    def hint():
        return (f"set camera.exposure to {render(b.band_free_exposure_s, 'time')} (a whole "
                f"number of flash periods), or lengthen it")

    # vectorised condition (tune evaluates it over a grid of designs); dark rows are
    # banding.dark_rows
    when = (np.asarray(b.banding) > BANDING_LIMIT) & (np.asarray(b.light_per_row_min_s) > 0)
    return Hit(message, value=b.banding, limit=BANDING_LIMIT, unit="1", hint=hint, when=when)


@rule("banding.dark_rows", "fault",
      trigger="the exposure is shorter than the dark gap between two flashes of the "
              "continuous train, so some rows (rolling shutter) or frames (free-running "
              "global shutter) get no light at all",
      fix="lengthen camera.exposure to at least one flash period plus the light pulse, or "
          "flash more often (a smaller strobe.every)",
      example=("levitator-40k", {"camera.trigger": "none", "camera.exposure": "20 us"}))
def dark_rows(plan):
    b = plan.banding
    if b is None or not (b.free_running or b.shutter == "rolling"):
        return None
    return Hit(lambda: f"a {render(plan.rig.camera.exposure, 'time')} exposure can fall "
                       f"between two flashes {render(b.flash_period_s, 'time')} apart: "
                       f"some {'rows' if b.shutter == 'rolling' else 'frames'} stay dark",
               value=plan.rig.camera.exposure, limit=b.flash_period_s, unit="s",
               when=np.asarray(b.light_per_row_min_s) <= 0)


@rule("banding.sweep_unsynchronised", "warning",
      trigger="a free-running camera (camera.trigger = \"none\") with a [sweep] of phase "
              "steps: nothing tells the controller when a frame starts, so the steps do not "
              "follow the frames and one frame can mix two phases",
      fix="use sweep.slow_motion instead (the phase advances smoothly and every frame "
          "samples it), or a camera with a trigger input",
      example=("rangefinder-58k", {"camera.trigger": "none", "camera.exposure": "8.28 ms"}))
def sweep_unsynchronised(plan):
    b, t = plan.banding, plan.timing
    if b is None or not b.free_running or t.mode != "sweep":
        return None
    return Hit(f"{plan.rig.sweep.steps} phase steps cannot be tied to the frames of a "
               f"free-running camera", value=plan.rig.sweep.steps, unit="1")
