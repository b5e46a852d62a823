"""Banding stage: what a camera sees of a continuous flash train (physics/banding.py).

Present when the LED flashes in every slot while a camera looks (``strobe.continuous =
true`` or a free-running camera, ``camera.trigger = "none"``). A rolling shutter's rows each
integrate the train over their own exposure, so the all-rows window of a triggered burst no
longer matters; what matters is how evenly the rows (or, for a free-running global shutter,
the frames) collect flashes.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..physics import banding as banding_model
from ..plan import Section
from ..timing import continuous_train


@dataclass
class BandingSection(Section):
    """Flashes per row (or frame) and the row-to-row (frame-to-frame) brightness step."""

    shutter: str
    free_running: bool
    flash_period_s: float
    flashes_per_row_min: int
    flashes_per_row_max: int
    light_per_row_min_s: float
    light_per_row_max_s: float
    banding: float
    bands_per_frame: float | None
    band_free_exposure_s: float


def compute(rig, design, plan) -> BandingSection | None:
    """The banding section, or None unless a camera watches a continuous train."""
    cam = rig.camera
    if cam is None or not continuous_train(rig):
        return None
    t = plan.timing
    period = t.flash_period_ticks * t.tick_s
    light = plan.flash.light_length_s
    free = cam.trigger == "none"
    rolling = cam.shutter == "rolling"
    # rows spread over the readout; a free-running global shutter's frames land anywhere
    # (frame-to-frame flicker); a triggered global shutter sees the same light every frame
    spread = (cam.readout or 0.0) if rolling else (math.inf if free else 0.0)
    lo, hi = banding_model.window_light_range(cam.exposure, period, light)
    n_lo, n_hi = banding_model.flashes_per_window(cam.exposure, period)
    return BandingSection(
        shutter=cam.shutter,
        free_running=free,
        flash_period_s=period,
        flashes_per_row_min=int(n_lo),
        flashes_per_row_max=int(n_hi),
        light_per_row_min_s=float(lo),
        light_per_row_max_s=float(hi),
        banding=float(banding_model.banding(cam.exposure, period, light, spread)),
        bands_per_frame=float(banding_model.bands_per_frame(cam.readout, period))
        if rolling else None,
        band_free_exposure_s=float(banding_model.banding_free_exposure(cam.exposure, period)),
    )
