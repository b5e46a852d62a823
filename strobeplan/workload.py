"""Work estimates for long jobs: how much a command would compute, refused beyond a budget.

A job is a grid of independent candidates (``tune``: pulse widths x series resistors x
``every`` x supply voltages). :func:`estimate` multiplies the axes and divides by a measured
rate; :func:`require_within` refuses a job above the budget with one line giving the
estimate and which options narrow the grid. :func:`tune_estimate` works out the tune grid's
shape from the command's options alone (no search, no arrays of candidates), so the check
runs before any work.

Budget (README "Limits"): :data:`MAX_CANDIDATES` = 2e7 candidates, about four minutes at
the measured rate (:data:`CANDIDATES_PER_SECOND`).
"""

from __future__ import annotations

import math

from .errors import StrobeplanError
from .quickdc import dataclass

__all__ = ["Estimate", "WorkloadError", "estimate", "require_within", "tune_estimate",
           "require_schedule_rows", "MAX_CANDIDATES", "CANDIDATES_PER_SECOND",
           "MAX_SCHEDULE_ROWS"]

MAX_CANDIDATES = 2e7
"""Largest tune grid accepted (candidates)."""

CANDIDATES_PER_SECOND = 8.0e4
"""Search rate of the one engine (every stage and rule on array designs, the stuck-on
transient included): 8.7e4 candidates/s measured on 1.4e5 levitator-40k candidates (E96,
8 `every`, 2 voltages) on one core of the development machine; bench/bench_tune.py
measures it."""


MAX_SCHEDULE_ROWS = 20_000_000
"""Longest schedule accepted (rows). The schedule is streamed (its memory does not grow
with its length), so the bound is time and disk: about 2e5 rows/s and 240 bytes per JSON
row, about 2 min and 5 GB at the bound."""

SCHEDULE_ROWS_PER_SECOND = 2.0e5
"""Rows computed and written per second (JSON), bench/bench_cli.py measures it."""


class WorkloadError(StrobeplanError):
    """A job above the budget (bad input: exit 2 in the CLI)."""


@dataclass(frozen=True)
class Estimate:
    """The size of a job: its axes (name -> (points, the option that sets them)), the
    candidates (their product) and the seconds expected at ``rate``."""

    axes: dict[str, tuple[int, str]]
    candidates: float
    seconds: float


def estimate(axes: dict[str, tuple[int, str]], rate: float = CANDIDATES_PER_SECOND
             ) -> Estimate:
    """Candidates and seconds of a grid job.

    Parameters
    ----------
    axes : dict
        Axis name -> (number of points, the option that sets it).
    rate : float
        Candidates evaluated per second. [1/s]
    """
    candidates = float(math.prod(max(0, n) for n, _ in axes.values()))
    return Estimate(dict(axes), candidates, candidates / rate)


def _num(x: float) -> str:
    """``3.07e13`` style for large counts, plain below 100,000."""
    if abs(x) < 1e5:
        return f"{x:.3g}" if x != int(x) else f"{int(x)}"
    mantissa, exponent = f"{x:.2e}".split("e")
    return f"{mantissa.rstrip('0').rstrip('.')}e{int(exponent)}"


def duration_text(seconds: float) -> str:
    """A rough duration, e.g. ``'about 3 min'`` or ``'about 15 years'``."""
    for unit, size in (("years", 3.156e7), ("days", 86400.0), ("h", 3600.0), ("min", 60.0)):
        if seconds >= size:
            return f"about {_num(round(seconds / size, 1))} {unit}"
    return f"about {_num(round(max(seconds, 0.0), 1))} s"


def require_within(est: Estimate, budget: float = MAX_CANDIDATES, job: str = "tune") -> None:
    """Raise :class:`WorkloadError` when ``est`` exceeds ``budget`` candidates; the one
    line gives the estimate and the options of the largest axes to narrow."""
    if est.candidates <= budget:
        return
    biggest = sorted(est.axes.items(), key=lambda kv: -kv[1][0])[:3]
    narrow = ", ".join(f"{option} ({name}: {n})" for name, (n, option) in biggest)
    raise WorkloadError(
        f"{job} would evaluate {_num(est.candidates)} candidates "
        f"({duration_text(est.seconds)} at {_num(CANDIDATES_PER_SECOND)}/s), above the "
        f"budget of {_num(budget)}; narrow the grid: {narrow}")


def tune_estimate(rig, *, widths: int, series: str, resistor_range: tuple[float, float],
                  max_every: int, supply_range: tuple[float, float] | None,
                  supply_steps: int) -> Estimate:
    """The tune grid's size from the command's options (an upper bound: widths that round
    to the same timer tick are merged by the search).

    Axes as the search builds them: ``widths`` pulse widths, the ``series`` values in
    ``resistor_range``, ``every`` from 1 to ``max_every`` (no more than the flash rate
    allows against the camera's frame rate), and ``supply_steps`` voltages when a
    ``supply_range`` is given.
    """
    from .physics import eseries

    n_r = int(eseries.series_values(series, *resistor_range).size)
    top = int(max_every)
    if rig.camera is not None:
        top = min(top, max(1, int(math.floor(rig.wave.frequency / rig.camera.frame_rate))))
    ticks_per_period = max(1, int(rig.controller.clock / rig.wave.frequency))
    axes = {
        "pulse widths": (min(int(widths), ticks_per_period), "--widths"),
        "resistors": (n_r, "--resistor-range/--series"),
        "every": (max(1, top), "--max-every"),
        "supply voltages": (int(supply_steps) if supply_range is not None else 1,
                            "--supply-steps"),
    }
    return estimate(axes)


def require_schedule_rows(rows: int, budget: int = MAX_SCHEDULE_ROWS) -> None:
    """Raise :class:`WorkloadError` when a schedule of ``rows`` frames exceeds ``budget``
    (one line: the length, the time it would take, the bound and the option to lower)."""
    if rows <= budget:
        return
    raise WorkloadError(
        f"schedule --steps {rows}: {_num(rows)} rows would take "
        f"{duration_text(rows / SCHEDULE_ROWS_PER_SECOND)} at {_num(SCHEDULE_ROWS_PER_SECOND)}"
        f" rows/s, above the budget of {_num(budget)} rows; lower --steps (or sweep.steps)")


# --- pictures: preview draws them, analyse reads them ------------------------------------

MAX_PREVIEW_SECONDS = 240.0
"""Largest estimated preview run accepted (its cost model is preview.estimate_work). [s]"""

MAX_PREVIEW_BYTES = 2.0e9
"""Largest estimated preview memory (frames plus work arrays) accepted. [B]"""

MAX_PIXEL_FRAMES = 4e10
"""Largest stack analyse accepts: frames x pixels (about 33 min at the rate below)."""

PIXEL_FRAMES_PER_SECOND = 2.0e7
"""Frame-pixels demodulated per second on one core (bench/bench_analyse.py measures it)."""


def require_frames(count: int, pixels: int, budget: float | None = None) -> None:
    """Refuse a stack of ``count`` frames of ``pixels`` pixels above the budget (default
    MAX_PIXEL_FRAMES), before the work (one line, exit 2)."""
    budget = MAX_PIXEL_FRAMES if budget is None else budget
    total = float(count) * float(pixels)
    if total > budget:
        raise WorkloadError(f"{count} frames of {pixels} pixels are {total:.3g} frame-pixels "
                            f"({duration_text(total / PIXEL_FRAMES_PER_SECOND)}), above the "
                            f"budget of {budget:.3g}; analyse fewer or smaller frames (crop "
                            "or bin them)")
