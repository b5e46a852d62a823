"""What ``strobeplan tune`` searches and what it reports: the grid of designs, the search
options (validated here, with the same words and limits as the rig keys they override), the
targets, and the result types. The search itself is :mod:`strobeplan.tune`.
"""

from __future__ import annotations

import math
from dataclasses import field
from typing import Any

import numpy as np

from .design import Design
from .errors import RigError
from .quickdc import dataclass

# Warnings the search avoids besides every hazard and fault (legal, but not what a
# practitioner would choose: a thin thermal margin, an extrapolated pulse rating, a capacitor
# that does not recharge between bursts, a blurred wave).
AVOID = ("led.thermal_margin_low", "led.rating_outside_table", "supply.recharge_slow",
         "exposure.blur_over_pixel")


@dataclass(frozen=True)
class Limits:
    """Targets that override the rig's for the search (None: the rig's own)."""

    min_retention: float | None = None
    min_margin: float | None = None
    max_blur: float | None = None

    def apply(self, rig):
        """The rig with these targets written in (``strobe.min_retention``,
        ``led.min_margin``, ``camera.max_blur``); the rig itself when all are None."""
        update = {}
        if self.max_blur is not None and rig.camera is not None:
            update["camera"] = rig.camera.model_copy(update={"max_blur": float(self.max_blur)})
        if self.min_retention is not None:
            update["strobe"] = rig.strobe.model_copy(
                update={"min_retention": float(self.min_retention)})
        if self.min_margin is not None and rig.led is not None:
            update["led"] = rig.led.model_copy(update={"min_margin": float(self.min_margin)})
        return rig.model_copy(update=update) if update else rig


@dataclass(frozen=True)
class Grid:
    """The decision variables: the search covers their full Cartesian product."""

    widths: np.ndarray  # [s] gate-on times (whole ticks)
    resistors: np.ndarray  # [ohm]
    everys: np.ndarray  # [1] integers
    voltages: np.ndarray  # [V]
    series: str = "E24"

    @property
    def shape(self) -> tuple[int, int, int, int]:
        """(widths, resistors, everys, voltages)."""
        return (self.widths.size, self.resistors.size, self.everys.size, self.voltages.size)

    @property
    def size(self) -> int:
        return int(np.prod(self.shape))

    def design(self, rows=slice(None)) -> Design:
        """The design of the widths ``rows`` (a slice) times every other axis."""
        return Design(pulse_width=self.widths[rows][:, None, None, None],
                      series_resistor=self.resistors[None, :, None, None],
                      every=self.everys[None, None, :, None],
                      supply_voltage=self.voltages[None, None, None, :])

    def at(self, flat: int) -> tuple[float, float, int, float]:
        iw, ir, ie, iv = np.unravel_index(int(flat), self.shape)
        return (float(self.widths[iw]), float(self.resistors[ir]), int(self.everys[ie]),
                float(self.voltages[iv]))


@dataclass
class Candidate:
    """One design with its figures (SI)."""

    pulse_width_s: float
    series_resistor_ohm: float
    every: int
    supply_voltage_v: float
    light_per_frame: float  # [A s]
    score: float  # the objective's value (image SNR, else light per frame)
    retention: float
    thermal_margin_k: float
    junction_peak_c: float
    peak_current_a: float
    flashes_per_frame: int
    verdict: str
    violates: list[str] = field(default_factory=list)
    limited_by: str | None = None

    def to_json(self) -> dict:
        from .plan import jsonable

        return jsonable(self)


@dataclass
class Cloud:
    """Per (width, every) cell of the grid: the retention, the brightest candidate passing
    every constraint but the traded ones, and the brightest of all (the trade-off plot)."""

    retention: np.ndarray
    safe_light: np.ndarray
    any_light: np.ndarray
    safe_flat: np.ndarray  # flat grid index of each cell's brightest safe candidate


@dataclass
class TuneResult:
    """What :func:`tune` found."""

    best: Candidate | None
    runner_ups: list[Candidate]
    frontier: list[Candidate]  # light against retention, retention descending
    candidates: int
    feasible: int
    seconds: float
    excluded: dict[str, int]  # candidates each code excludes
    only_excluded: dict[str, int]  # candidates that code alone excludes
    best_reached: dict[str, float]
    explanation: str | None
    grid: Grid
    min_retention: float
    min_margin: float | None
    cloud: Cloud
    objective: str = "light per frame [A s]"
    refined_from: float | None = None  # [s] the grid's best width before the refinement
    rejected_by_check: list[dict] = field(default_factory=list)
    plan: Any = None  # the solved Plan of the best rig
    max_blur: float | None = None  # [px] camera.max_blur of the search (None: no camera)

    def to_json(self) -> dict:
        from .plan import jsonable

        g = self.grid
        return jsonable({
            "format": "strobeplan.tune", "version": 1,
            "best": self.best.to_json() if self.best is not None else None,
            "runner_ups": [d.to_json() for d in self.runner_ups],
            "frontier": [d.to_json() for d in self.frontier],
            "candidates": self.candidates, "feasible": self.feasible, "seconds": self.seconds,
            "objective": self.objective,
            "light_unit": "A s (LED current integrated over the optical pulse, per frame)",
            "limits": {"min_retention": self.min_retention, "min_margin_k": self.min_margin,
                       "max_blur_px": self.max_blur},
            "avoided_warnings": list(AVOID),
            "grid": {"pulse_width_min_s": float(g.widths[0]),
                     "pulse_width_max_s": float(g.widths[-1]),
                     "pulse_widths": int(g.widths.size), "series": g.series,
                     "series_resistor_min_ohm": float(g.resistors[0]),
                     "series_resistor_max_ohm": float(g.resistors[-1]),
                     "series_resistors": int(g.resistors.size), "every_max": int(g.everys[-1]),
                     "supply_voltage_min_v": float(g.voltages[0]),
                     "supply_voltage_max_v": float(g.voltages[-1]),
                     "supply_voltages": int(g.voltages.size)},
            "refined_from_s": self.refined_from,
            "excluded": self.excluded, "excluded_only_by": self.only_excluded,
            "explanation": self.explanation, "rejected_by_check": self.rejected_by_check,
            "plan": self.plan.to_json() if self.plan is not None else None,
        })


# --- the grid -------------------------------------------------------------------------------


def require(rig) -> None:
    for name in ("led", "supply"):
        if getattr(rig, name) is None:
            raise RigError(name, None, f"tune needs a [{name}] section (the search varies the "
                                       "LED current and checks its heating)")


def default_grid(rig, plan, *, widths: int = 160, series: str = "E24",
                 resistor_range: tuple[float, float] = (0.1, 100.0), max_every: int = 8,
                 supply_range: tuple[float, float] | None = None,
                 supply_steps: int = 13) -> Grid:
    """The search grid of a rig (see the module docstring); ``plan`` is ``solve(rig)`` (only
    its ``flash`` section is read: a plan solved up to it will do)."""
    from .physics.eseries import series_values

    require(rig)
    clock = rig.controller.clock
    lo = max(plan.flash.rise_s + plan.flash.fall_s, 2.0 / clock)
    period = 1.0 / rig.wave.frequency
    if lo >= period:
        raise RigError("strobe.pulse_width", None,
                       "the switching limit (rise + fall) is not shorter than one wave period: "
                       "nothing to search")
    ticks = np.unique(np.round(np.geomspace(lo, period, widths) * clock).astype(np.int64))
    ticks = ticks[(ticks >= math.ceil(lo * clock - 1e-9)) & (ticks < period * clock - 1e-9)]
    r = series_values(series, *resistor_range)
    if r.size == 0:
        raise RigError("--resistor-range", None, f"no {series} value between "
                                                 f"{resistor_range[0]:g} and "
                                                 f"{resistor_range[1]:g} ohm")
    top = max_every
    if rig.camera is not None:
        top = min(top, max(1, int(math.floor(rig.wave.frequency / rig.camera.frame_rate))))
    v = (np.array([rig.supply.voltage]) if supply_range is None
         else np.linspace(supply_range[0], supply_range[1], max(1, supply_steps)))
    return Grid(widths=ticks / clock, resistors=r, everys=np.arange(1, max(1, top) + 1),
                voltages=v, series=series)


def search_options(rig, *, min_retention=None, min_margin=None, max_blur=None, series="E24",
                   resistor_range=("0.1 ohm", "100 ohm"), max_every=8, supply_range=None,
                   supply_steps=13, widths=160) -> tuple[Limits, dict]:
    """Validate the search options (texts with units, as typed) into Limits and the keyword
    arguments of :func:`default_grid`.

    Each option takes the limits of the rig key it stands for (:mod:`strobeplan.limits`:
    one definition); the grid's size is estimated and refused beyond the work budget
    (:mod:`strobeplan.workload`). Bad values raise RigError naming the option.
    """
    from .limits import option_range, option_value
    from .workload import require_within, tune_estimate

    ret = None if min_retention is None else option_value("--min-retention", min_retention)
    margin = None if min_margin is None else option_value("--min-margin", min_margin)
    blur = None if max_blur is None else option_value("--max-blur", max_blur)
    grid = {"widths": int(widths), "series": series.upper(),
            "resistor_range": option_range("--resistor-range", resistor_range),
            "max_every": int(max_every), "supply_steps": int(supply_steps)}
    if supply_range is not None:
        grid["supply_range"] = option_range("--supply-range", supply_range)
    if rig is not None:
        require(rig)
        require_within(tune_estimate(rig, widths=grid["widths"], series=grid["series"],
                                     resistor_range=grid["resistor_range"],
                                     max_every=grid["max_every"],
                                     supply_range=grid.get("supply_range"),
                                     supply_steps=grid["supply_steps"]))
    return Limits(min_retention=ret, min_margin=margin, max_blur=blur), grid


