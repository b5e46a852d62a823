"""Banding stage: what a camera sees of a continuous flash train (physics/banding.py).

Present when the LED flashes in every slot while a camera looks (``strobe.continuous =
true`` or a free-running camera, ``camera.trigger = "none"``). A rolling shutter's rows each
integrate the train over their own exposure, so the all-rows window of a triggered burst no
longer matters; what matters is how evenly the rows (or, for a free-running global shutter,
the frames) collect flashes.
"""

from __future__ import annotations

import math

import numpy as np

from ..physics import banding as banding_model
from ..plan import Section, q
from ..quickdc import dataclass
from ..timing import continuous_train


@dataclass
class BandingSection(Section):
    """Flashes per row (or frame) and the row-to-row (frame-to-frame) brightness step."""

    shutter: str = q()
    free_running: bool = q()
    flash_period_s: float = q("time")
    flashes_per_row_min: int = q()
    flashes_per_row_max: int = q()
    light_per_row_min_s: float = q("time")
    light_per_row_max_s: float = q("time")
    banding: float = q("ratio")
    bands_per_frame: float | None = q()
    band_free_exposure_s: float = q("time")


def _plain(x, kind=float):
    """A 0-d result as a plain number; an array (a grid of designs) stays an array."""
    return kind(x) if np.ndim(x) == 0 else np.asarray(x)


def compute(rig, design, plan) -> BandingSection | None:
    """The banding section, or None unless a camera watches a continuous train.

    Broadcasts: with a timing section over a grid of designs (arrays of flash periods and
    light lengths) every figure is an array of that shape."""
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
        flash_period_s=_plain(period),
        flashes_per_row_min=_plain(n_lo, int),
        flashes_per_row_max=_plain(n_hi, int),
        light_per_row_min_s=_plain(lo),
        light_per_row_max_s=_plain(hi),
        banding=_plain(banding_model.banding(cam.exposure, period, light, spread)),
        bands_per_frame=_plain(banding_model.bands_per_frame(cam.readout, period))
        if rolling else None,
        band_free_exposure_s=_plain(banding_model.banding_free_exposure(cam.exposure, period)),
    )
