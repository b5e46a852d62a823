"""``strobeplan tune``: the brightest design that ``check`` passes, found by the same engine.

The search varies the four choices of a :class:`~strobeplan.design.Design` over a grid:

* the gate pulse width, on a log grid of whole timer ticks from the switching limit (the
  current's rise plus fall time, at least two ticks) up to (not including) one wave period;
* the series resistor, every value of an IEC 60063 E-series in a range;
* ``every`` (flash on every N-th wave cycle), 1..N;
* optionally the supply (boost) voltage, on a linear grid within a range.

There is no second model here: each chunk of the grid is a :class:`Design` of broadcast
arrays solved by :func:`strobeplan.solve.solve` (the stages run on arrays), and the rules of
``check`` are evaluated on that grid plan (:func:`strobeplan.checks.masks`). A candidate's
verdict is therefore ``check``'s verdict of the rig with that design written in. A candidate
is *feasible* when its verdict is not "fail" and it trips none of the warnings in
:data:`AVOID` (legal, but not what a practitioner would choose: a thin thermal margin, an
extrapolated pulse rating, a capacitor that does not recharge between bursts, a blurred
wave). ``--min-retention``, ``--min-margin`` and ``--max-blur`` set the rig's own
``strobe.min_retention``, ``led.min_margin`` and ``camera.max_blur`` for the search (and for
the written rig), so they are one limit too.

Objective (:func:`objective`): the wave's signal-to-noise ratio per pixel per frame
(``image.snr``) when the rig models the camera, else the light per frame
(``led.light_per_frame_a_s``: the LED's mean current over the gate times the optical area of
the pulse times the flashes per frame, ampere-seconds of LED current); ties go to the larger
thermal margin. After the grid, every whole tick between
the best width and the next grid width is tried at the winner's resistor, ``every`` and
supply (the grid is not left a step short of the limit); the best is verified through the
scalar ``solve`` and its checks.
"""

from __future__ import annotations

import math
import time
from dataclasses import field
from typing import Any

import numpy as np

from .design import Design
from .physics.air import ZERO_CELSIUS
from .physics.arrays import compact, expand
from .physics.supply import forget_circuits
from .quickdc import dataclass
from .search_space import (
    AVOID,
    Candidate,
    Cloud,
    Grid,
    Limits,
    TuneResult,
    default_grid,
    require,
    search_options,
)

__all__ = ["AVOID", "Grid", "Limits", "Candidate", "TuneResult", "Cloud", "default_grid",
           "evaluate", "search_options", "tune", "candidate_rig", "require"]

DEFAULT_CHUNK = 1 << 16  # candidates per evaluated chunk (bounds memory)
# What the frontier trades against light: it is drawn over the designs passing the rest.
TRADED = ("exposure.retention_low", "optics.not_visible")
_VERDICTS = ("pass", "warn", "fail")


# --- the engine on a grid -------------------------------------------------------------------


@dataclass
class Evaluation:
    """A grid plan and its rules: every array has the design's broadcast shape."""

    plan: Any
    masks: dict[str, np.ndarray]  # code -> fires (read-only; a broadcast view: checks.masks)
    verdict: np.ndarray  # 0 pass, 1 warn, 2 fail
    feasible: np.ndarray
    light: np.ndarray
    margin: np.ndarray
    retention: np.ndarray
    score: np.ndarray  # what the search maximises (see :func:`objective`)
    _constraints: dict | None = field(default=None, repr=False, compare=False)

    def constraint_masks(self) -> dict[str, np.ndarray]:
        """The masks that exclude candidates: hazards, faults and the avoided warnings
        (worked out once per evaluation: each listed candidate asks)."""
        from .checks import RULES

        if self._constraints is None:
            self._constraints = {c: m for c, m in self.masks.items()
                                 if RULES[c].severity in ("hazard", "fault") or c in AVOID}
        return dict(self._constraints)


def evaluate(rig, design: Design, known: dict | None = None, *,
             rules_only: bool = False) -> Evaluation:
    """Solve ``rig`` for an (array) design and evaluate every rule over it (``known``: sections
    that do not depend on the design, computed once per search: see :func:`rig_constants`;
    ``rules_only``: the search's own evaluations, whose plan feeds only the masks, the
    search's figures and its candidates, see ``Plan.rules_only``)."""
    from .checks import RULES, masks
    from .solve import solve

    shape = design.shape
    plan = solve(rig, design, checks=False, known=known, rules_only=rules_only)
    fired = masks(plan, shape)
    fail, warn, avoid = [], [], []
    for code, m in fired.items():
        sev = RULES[code].severity
        if sev in ("hazard", "fault"):
            fail.append(m)
        elif sev == "warning":
            warn.append(m)
        if code in AVOID:
            avoid.append(m)
    fail = _any_of(fail, shape)
    warn = _any_of(warn, shape) | fail
    verdict = np.add(fail, warn, dtype=np.int64)  # 2 fail, 1 warn, 0 pass

    def full(x):
        return np.broadcast_to(np.asarray(x, dtype=float), shape)

    name, score = objective(plan)
    score = compact(np.asarray(score, dtype=float))
    return Evaluation(plan=plan, masks=fired, verdict=verdict,
                      feasible=~(fail | _any_of(avoid, shape)),
                      light=full(plan.led.light_per_frame_a_s),
                      margin=full(plan.led.thermal_margin_k),
                      retention=full(plan.exposure.retention),
                      score=expand(np.nan_to_num(score, nan=-np.inf), shape))


def _any_of(masks: list, shape: tuple) -> np.ndarray:
    """A new bool array of ``shape``: where any of ``masks`` (arrays broadcasting to it)
    holds. Masks of the same design dimensions are combined at those dimensions first."""
    by_shape: dict[tuple, np.ndarray] = {}
    for m in masks:
        c = compact(m)
        c = c.reshape((1,) * (len(shape) - c.ndim) + c.shape)
        by_shape[c.shape] = by_shape[c.shape] | c if c.shape in by_shape else c
    out = np.zeros(shape, dtype=bool)
    for c in by_shape.values():
        out |= c if c.shape == tuple(shape) else expand(c, shape)
    return out


# Sections that depend on the rig alone (not on the design): solved once per search.
CONSTANT_SLOTS = ("air", "field")


def rig_constants(rig) -> dict:
    """The sections of :data:`CONSTANT_SLOTS` solved once for ``rig`` (they read no design
    choice), for :func:`evaluate` to reuse on every chunk of a search."""
    from .solve import solve

    plan = solve(rig, checks=False, upto=CONSTANT_SLOTS[-1])
    return {slot: getattr(plan, slot) for slot in CONSTANT_SLOTS}


def objective(plan) -> tuple[str, Any]:
    """(name, value) the search maximises: the wave's signal-to-noise ratio per pixel per
    frame when the rig models the camera (``image.snr``), else the light per frame."""
    if plan.image is not None and plan.image.snr is not None:
        return "image SNR per pixel per frame", plan.image.snr
    return "light per frame [A s]", plan.led.light_per_frame_a_s


def _candidate(ev: Evaluation, index, design: Design) -> Candidate:
    p = ev.plan
    shape = design.shape

    def pick(x):
        return np.broadcast_to(np.asarray(x), shape)[index].item()

    return Candidate(
        pulse_width_s=pick(design.pulse_width), series_resistor_ohm=pick(design.series_resistor),
        every=int(pick(design.every)), supply_voltage_v=pick(design.supply_voltage),
        light_per_frame=float(ev.light[index]), score=float(ev.score[index]),
        retention=float(ev.retention[index]),
        thermal_margin_k=float(ev.margin[index]),
        junction_peak_c=pick(p.led.junction_peak_k) - ZERO_CELSIUS,
        peak_current_a=pick(p.led.peak_current_a),
        flashes_per_frame=int(pick(p.timing.flashes_per_frame if p.rig.camera else 1) or 0),
        verdict=_VERDICTS[int(ev.verdict[index])],
        violates=sorted(c for c, m in ev.constraint_masks().items() if m[index]))


def _design_of(values: list[tuple[float, float, int, float]]) -> Design:
    """A 1-D design of explicit candidates (width, resistor, every, voltage)."""
    a = np.array(values, dtype=float).reshape(-1, 4)
    return Design(pulse_width=a[:, 0], series_resistor=a[:, 1],
                  every=a[:, 2].astype(np.int64), supply_voltage=a[:, 3])


# --- the search -----------------------------------------------------------------------------


def tune(rig, limits: Limits | None = None, grid: Grid | None = None, *,
         chunk: int = DEFAULT_CHUNK, runner_ups: int = 5, progress=None,
         grid_options: dict | None = None, refine: bool = True) -> TuneResult:
    """Search the grid for the brightest feasible design; refine its width; verify it.

    Parameters
    ----------
    rig : strobeplan.rig.Rig
        The validated rig.
    limits : Limits, optional
        Targets overriding the rig's ``strobe.min_retention`` / ``led.min_margin``.
    grid : Grid, optional
        Decision variables; default :func:`default_grid` (with ``grid_options``).
    chunk : int
        Candidates per evaluated chunk (bounds memory).
    runner_ups : int
        How many next-best designs to report.
    progress : callable, optional
        ``progress(done, total)`` after each chunk (the CLI's progress bar).
    refine : bool
        Try every whole tick between the grid's best width and the next grid width.
    """
    from .solve import solve

    t0 = time.perf_counter()
    require(rig)
    limits = limits or Limits()
    rig = limits.apply(rig)
    # The rig's stages up to the flash: the design-free sections every chunk reuses (air,
    # field: see rig_constants) and the edges the default grid starts from.
    head = solve(rig, checks=False, upto="flash")
    if grid is None:
        grid = default_grid(rig, head, **(grid_options or {}))
    known = {slot: getattr(head, slot) for slot in CONSTANT_SLOTS}
    forget_circuits()  # the stuck-on circuit response is shared by this search's chunks only
    try:
        return _search(rig, limits, grid, known, t0, chunk=chunk, runner_ups=runner_ups,
                       progress=progress, refine=refine)
    finally:
        forget_circuits()


def _search(rig, limits, grid, known, t0, *, chunk, runner_ups, progress, refine):
    """The body of :func:`tune` (see there) once the grid and the rig's constants are set."""
    from .solve import solve

    nw, nr, ne, nv = grid.shape
    rows = max(1, chunk // (nr * ne * nv))
    keep = runner_ups + 1
    top: list[tuple[float, float, int]] = []  # (light, margin, flat)
    excluded: dict[str, int] = {}
    only: dict[str, int] = {}
    reached = {"retention": -np.inf, "margin": -np.inf}
    cloud = Cloud(retention=np.full((nw, ne), np.nan), safe_light=np.full((nw, ne), -np.inf),
                  any_light=np.full((nw, ne), -np.inf),
                  safe_flat=np.full((nw, ne), -1, dtype=np.int64))
    feasible = 0
    goal = None
    for start in range(0, nw, rows):
        sl = slice(start, min(nw, start + rows))
        ev = evaluate(rig, grid.design(sl), known, rules_only=True)
        goal = goal or objective(ev.plan)[0]
        # whole arrays: a mask may be a broadcast view (checks.masks), slow to reduce
        cons = {c: expand(m, m.shape) for c, m in ev.constraint_masks().items()}
        n_bad = sum((m.astype(np.int64) for m in cons.values()), np.zeros(ev.light.shape, int))
        alone = n_bad == 1
        for code, m in cons.items():
            excluded[code] = excluded.get(code, 0) + int(np.count_nonzero(m))
            only[code] = only.get(code, 0) + int(np.count_nonzero(m & alone))
        reached["retention"] = max(reached["retention"], float(np.nanmax(ev.retention)))
        reached["margin"] = max(reached["margin"], float(np.nanmax(ev.margin)))
        ok = ev.feasible
        feasible += int(ok.sum())
        base = start * nr * ne * nv
        if ok.any():
            idx = np.flatnonzero(ok)
            li, ma = ev.score.ravel()[idx], ev.margin.ravel()[idx]
            best_k = np.lexsort((-ma, -li))[:keep]
            top += [(float(li[k]), float(ma[k]), base + int(idx[k])) for k in best_k]
            top = sorted(top, key=lambda t: (-t[0], -t[1]))[:keep]
        traded = np.zeros(ev.light.shape, dtype=bool)
        for code, m in cons.items():
            if code not in TRADED:
                traded |= m
        cloud.retention[sl] = np.nanmax(ev.retention, axis=(1, 3))
        safe = np.where(~traded, ev.score, -np.inf).transpose(0, 2, 1, 3)
        k = safe.shape[0]
        flat_rv = np.argmax(safe.reshape(k, ne, nr * nv), axis=2)
        cloud.safe_light[sl] = np.take_along_axis(safe.reshape(k, ne, nr * nv),
                                                  flat_rv[..., None], axis=2)[..., 0]
        ir, iv = np.unravel_index(flat_rv, (nr, nv))
        iw = np.arange(start, start + k)[:, None]
        cloud.safe_flat[sl] = np.ravel_multi_index((np.broadcast_to(iw, ir.shape), ir,
                                                    np.arange(ne)[None, :], iv), grid.shape)
        cloud.any_light[sl] = np.max(ev.score, axis=(1, 3))
        if progress is not None:
            progress(min(nw, start + rows) * nr * ne * nv, grid.size)

    # The kept candidates, the refinement's ticks (at the best's circuit) and the
    # frontier's cells, evaluated in one design (each row as on its own).
    rows = [grid.at(flat) for _l, _m, flat in top]
    ticks = _refine_rows(rig, grid, rows[0]) if rows and refine else []
    cells = _frontier_rows(grid, cloud)
    # (and the grid best's brighter neighbours, which name the binding constraint when
    # neither the refinement nor the verification replaces it)
    near = _neighbours(grid, rows[0])[0] if rows else []
    done = iter(_evaluate_rows(rig, rows + ticks + cells + near, known))
    kept, ticked, front = ([next(done) for _ in part] for part in (rows, ticks, cells))
    near = dict(zip(near, done, strict=True))
    frontier = [_candidate(*one) for one in front]
    cands = [_candidate(*one) for one in kept]
    best = cands[0] if cands else None
    refined_from = None
    if best is not None and ticks:
        better = _refined(best, ticked)
        if better is not None:
            refined_from = best.pulse_width_s
            best = better
            cands = [best] + [c for c in cands if c.score < best.score]
    rejected: list[dict] = []
    best_plan = None
    # Verify through check, in order: a disagreement can only come from the rules that are
    # not evaluated over a grid (the timer counters' discrete fits); such a candidate is
    # listed and the next one tried.
    for cand in cands:
        plan = solve(candidate_rig(rig, cand), known=known)  # air, field: the rig's own
        if plan.verdict == cand.verdict:
            best, best_plan = cand, plan
            break
        rejected.append({"pulse_width_s": cand.pulse_width_s, "every": cand.every,
                         "series_resistor_ohm": cand.series_resistor_ohm,
                         "supply_voltage_v": cand.supply_voltage_v,
                         "search_verdict": cand.verdict, "check_verdict": plan.verdict,
                         "codes": sorted(f.code for f in plan.findings
                                         if f.severity in ("hazard", "fault"))})
    else:
        best = None
    if best is not None:
        best.limited_by = _limited_by(rig, grid, best, known, near)
        cands = [best] + [c for c in cands if c is not best and c.score <= best.score]
    explanation = None if best is not None else _explain(excluded, only, reached, rig, grid)
    return TuneResult(
        best=best, runner_ups=cands[1:keep], frontier=frontier,
        candidates=grid.size, feasible=feasible, seconds=time.perf_counter() - t0,
        excluded=excluded, only_excluded=only, best_reached=reached, explanation=explanation,
        grid=grid, min_retention=rig.strobe.min_retention, min_margin=rig.led.min_margin,
        cloud=cloud, objective=goal or "light per frame [A s]", refined_from=refined_from,
        rejected_by_check=rejected, plan=best_plan,
        max_blur=rig.camera.max_blur if rig.camera is not None else None)


def _evaluate_rows(rig, rows: list, known: dict | None = None) -> list:
    """Each row (width, resistor, every, supply) evaluated as if on its own, all in one
    design. Returns (evaluation, index, design) per row, in order (the arguments of
    ``_candidate``).

    Nothing in a row's evaluation depends on the other rows: the stages are elementwise
    over the design, and every iterative solver (the diode's current, the end of a pulse,
    the stuck-on time grid) stops or sizes itself per candidate, so a row's figures are the
    bits it gets alone (tests/test_tune_grouped.py, tests/test_tune_equals_check.py).
    """
    if not rows:
        return []
    design = _design_of(rows)
    ev = evaluate(rig, design, known, rules_only=True)
    return [(ev, k, design) for k in range(len(rows))]


def _refine_rows(rig, grid: Grid, best: tuple) -> list[tuple[float, float, int, float]]:
    """The refinement's rows for the best row (width, resistor, every, supply): every whole
    tick between its width and the next grid width (at most 256 of them, evenly spread) at
    its resistor, every and supply."""
    clock = rig.controller.clock
    width, resistor, every, supply = best
    i = int(np.searchsorted(grid.widths, width))
    lo = round(width * clock)
    hi = (round(grid.widths[i + 1] * clock) if i + 1 < grid.widths.size
          else math.ceil(clock / rig.wave.frequency))
    ticks = np.unique(np.linspace(lo + 1, hi - 1, min(256, max(0, hi - lo - 1))).round())
    return [(t / clock, resistor, every, supply) for t in ticks]


def _refined(best: Candidate, done: list) -> Candidate | None:
    """The brightest feasible of the refinement's evaluated rows ((evaluation, index,
    design) each, in tick order) when it beats ``best``, else None."""
    feasible = np.array([ev.feasible[k] for ev, k, _d in done], dtype=bool)
    score = np.array([ev.score[k] for ev, k, _d in done], dtype=float)
    ok = np.flatnonzero(feasible & (score > best.score))
    if ok.size == 0:
        return None
    return _candidate(*done[int(ok[np.argmax(score[ok])])])


_AXES = ("pulse width", "series resistor", "every", "supply voltage")


def _neighbours(grid: Grid, values: tuple) -> tuple[list[tuple], list[str]]:
    """The brighter neighbours of a design (width, resistor, every, supply): one grid step
    wider, lower resistor, smaller every or higher supply, each axis on its own; and the
    axes along which it sits at the grid's edge."""
    steps = [(grid.widths, +1), (grid.resistors, -1), (grid.everys, -1), (grid.voltages, +1)]
    neighbours, ends = [], []
    for axis, (axis_values, step) in enumerate(steps):
        j = int(np.argmin(np.abs(axis_values - values[axis]))) + step
        if axis_values.size > 1 and 0 <= j < axis_values.size:
            v = list(values)
            v[axis] = axis_values[j]
            neighbours.append(tuple(v))
        elif axis_values.size > 1:
            ends.append(_AXES[axis])
    return neighbours, ends


def _values(c: Candidate) -> tuple:
    return (c.pulse_width_s, c.series_resistor_ohm, c.every, c.supply_voltage_v)


def _limited_by(rig, grid: Grid, best: Candidate, known: dict | None = None,
                done: dict | None = None) -> str:
    """The constraint that a brighter neighbour (:func:`_neighbours`) violates most often;
    else the grid's edge. ``done``: rows already evaluated ({row: (evaluation, index,
    design)}), used when they hold every neighbour."""
    neighbours, ends = _neighbours(grid, _values(best))
    counts: dict[str, int] = {}
    if neighbours:
        if done is None or any(n not in done for n in neighbours):
            done = dict(zip(neighbours, _evaluate_rows(rig, neighbours, known), strict=True))
        for n in neighbours:
            ev, k, _design = done[n]
            if not ev.score[k] > best.score:
                continue
            for code, m in ev.constraint_masks().items():
                if m[k]:
                    counts[code] = counts.get(code, 0) + 1
    if counts:
        return max(sorted(counts), key=lambda c: counts[c])
    return "search range (" + ", ".join(ends) + ")" if ends else "search range"


def _frontier_rows(grid: Grid, cloud: Cloud) -> list[tuple[float, float, int, float]]:
    """The rows of the Pareto front of (retention, light) over the (width, every) cells'
    brightest safe candidates (safe: passing every constraint but the traded ones), in
    order of falling retention."""
    light = cloud.safe_light.ravel()
    ret = cloud.retention.ravel()
    idx = np.flatnonzero(np.isfinite(light) & (light > 0))
    if idx.size == 0:
        return []
    order = idx[np.lexsort((-light[idx], -ret[idx]))]
    cells, best = [], -np.inf
    for c in order:
        if light[c] > best:
            cells.append(int(c))
            best = light[c]
    return [grid.at(cloud.safe_flat.ravel()[c]) for c in cells]


def _explain(excluded, only, reached, rig, grid) -> str:
    from .checks import RULES

    if not excluded:
        return "the grid is empty"
    total = grid.size
    every_one = sorted(c for c, n in excluded.items() if n == total)
    worst = max(sorted(excluded), key=lambda c: excluded[c])
    named = every_one if len(every_one) > 1 else [worst]
    if len(every_one) > 1:
        parts = [f"nothing feasible among {total} candidates: "
                 + ", ".join(every_one) + " each exclude every candidate"]
    else:
        parts = [f"nothing feasible among {total} candidates: {worst} excludes the most "
                 f"({excluded[worst]}, {100.0 * excluded[worst] / total:.3g} %)"]
    if "exposure.retention_low" in named and math.isfinite(reached["retention"]):
        parts.append(f"the best retention on the grid is {reached['retention']:.5f} against "
                     f"the target {rig.strobe.min_retention:.4g}")
    if {"led.thermal_margin_low", "led.junction_over_limit"} & set(named) \
            and math.isfinite(reached["margin"]):
        parts.append(f"the largest thermal margin on the grid is {reached['margin']:.4g} K "
                     f"against the {rig.led.min_margin:.4g} K asked")
    parts += [f"change ({c}): {RULES[c].fix}" for c in named]
    blockers = sorted((c for c, n in only.items() if n > 0), key=lambda c: -only[c])
    if blockers:
        parts.append("constraints that alone exclude some candidates: "
                     + ", ".join(f"{c} ({only[c]})" for c in blockers))
    return "; ".join(parts)


def candidate_rig(rig, candidate: Candidate):
    """The rig with a candidate's values written in (a model copy, then the loader's
    cross-check): what ``check`` of the tuned rig file sees."""
    from .rig import cross_check

    out = rig.model_copy(update={
        "strobe": rig.strobe.model_copy(update={"pulse_width": float(candidate.pulse_width_s),
                                                "every": int(candidate.every)}),
        "supply": rig.supply.model_copy(update={
            "series_resistor": float(candidate.series_resistor_ohm),
            "voltage": float(candidate.supply_voltage_v)}),
    })
    cross_check(out)
    return out
