"""Text output of ``strobeplan tune`` for people: best design, runner-ups, frontier,
exclusions. Reads a :class:`strobeplan.tune.TuneResult`; computes nothing."""

from __future__ import annotations

import math

from ..units import render

_COLUMNS = ["pulse width", "resistor", "every", "supply", "objective", "light/frame [A s]",
            "retention", "margin [K]", "peak current", "flashes/frame", "verdict"]


def _row(d) -> list[str]:
    return [render(d.pulse_width_s, "time"), render(d.series_resistor_ohm, "resistance"),
            str(d.every), render(d.supply_voltage_v, "voltage"), f"{d.score:.4g}",
            f"{d.light_per_frame:.4g}",
            f"{d.retention:.4f}", f"{d.thermal_margin_k:.1f}", render(d.peak_current_a, "current"),
            str(d.flashes_per_frame), d.verdict]


def _table(rows: list[list[str]]) -> list[str]:
    widths = [max(len(r[i]) for r in [_COLUMNS, *rows]) for i in range(len(_COLUMNS))]
    return ["  " + "  ".join(c.rjust(w) for c, w in zip(r, widths, strict=True))
            for r in [_COLUMNS, *rows]]


def result_text(result, frontier_rows: int = 12) -> str:
    """The search result for people."""
    from ..tune import AVOID

    lines = [f"[tune] {result.candidates} candidates in {result.seconds:.2f} s, "
             f"{result.feasible} feasible (check does not fail them and none of "
             f"{', '.join(AVOID)} fires; retention >= {result.min_retention:.4g}, thermal "
             f"margin >= {result.min_margin:.3g} K"
             + (f", blur <= {result.max_blur:.3g} px)" if result.max_blur is not None else ")")]
    if not result.objective.startswith("image SNR") and result.plan is not None \
            and "image" in result.plan.skipped:
        needs = result.plan.skipped["image"]
        lines.append(f"  (ranked by light per frame: the image's SNR {needs})")
    b = result.best
    if b is None:
        lines.append("no feasible design")
        if result.explanation:
            lines.append("  " + result.explanation)
    else:
        lines += [f"best ({result.objective}, ties to the larger margin):",
                  f"  strobe.pulse_width     {render(b.pulse_width_s, 'time')}",
                  f"  supply.series_resistor {render(b.series_resistor_ohm, 'resistance')}",
                  f"  strobe.every           {b.every}",
                  f"  supply.voltage         {render(b.supply_voltage_v, 'voltage')}",
                  f"  objective              {b.score:.4g} ({result.objective})",
                  f"  light per frame        {b.light_per_frame:.4g} A s",
                  f"  limited by             {b.limited_by}",
                  f"  retention {b.retention:.4f}, junction peak {b.junction_peak_c:.1f} degC "
                  f"(margin {b.thermal_margin_k:.1f} K), peak current "
                  f"{render(b.peak_current_a, 'current')}, {b.flashes_per_frame} flashes/frame"]
        if result.refined_from is not None:
            lines.append(f"  refined from the grid's {render(result.refined_from, 'time')} "
                         "(every whole tick up to the next grid width tried)")
        if result.plan is not None:
            lines.append(f"  check verdict of the tuned rig: {result.plan.verdict}")
        lines += ["", "best and runner-ups:", *_table([_row(d) for d in
                                                      [b, *result.runner_ups]])]
    if result.rejected_by_check:
        lines += ["", "search and check disagree (please report):"]
        for r in result.rejected_by_check:
            lines.append(f"  {render(r['pulse_width_s'], 'time')}, "
                         f"{render(r['series_resistor_ohm'], 'resistance')}, every "
                         f"{r['every']}: search {r['search_verdict']}, check "
                         f"{r['check_verdict']}")
    if result.frontier:
        front = result.frontier
        step = max(1, math.ceil(len(front) / frontier_rows))
        shown = front[::step]
        if shown[-1] is not front[-1]:
            shown.append(front[-1])
        lines += ["", f"frontier, objective against retention ({len(front)} points over the "
                      "designs that meet every other constraint):",
                  *_table([_row(d) for d in shown])]
    lines += ["", "candidates excluded by each finding (alone):"]
    for name, n in sorted(result.excluded.items(), key=lambda kv: -kv[1]):
        lines.append(f"  {name:<32} {n:>10} ({result.only_excluded.get(name, 0)})")
    return "\n".join(lines) + "\n"
