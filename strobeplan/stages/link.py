"""Link stage: controller -> camera trigger divider, and controller -> gate-driver input.

``trigger_link``: between ``controller.output`` and ``camera.trigger_input``. With
``[trigger_link] top/bottom`` the given pair is checked; without, a pair is proposed by the
worst-case E-series search (physics/divider.py). The edge limit is 1 % of the shorter of the
flash pulse width and the camera's trigger latency (common practice: a trigger edge that is a
small fraction of the timing it serves adds no visible jitter); the proposal first looks for
pairs within it, and falls back to the best pair without it (the edge finding then says so).

``gate_link``: the controller output wired straight to ``gate_driver.input``, whose input is
rated to the driver's own supply + 0.3 V (common practice for gate-driver logic inputs).
"""

from __future__ import annotations

import copy
from dataclasses import field
from types import SimpleNamespace

import numpy as np

from ..errors import RigError
from ..physics import divider, eseries
from ..physics import logic_families as families
from ..plan import Plan, Section, q, scalar
from ..quickdc import dataclass
from ..units import render

EDGE_FRACTION = 0.01  # edge limit = 1 % of the pulse width / trigger latency (project choice)


@dataclass
class LinkAlternative:
    """One ranked divider pair."""

    top_ohm: float
    bottom_ohm: float
    margin_v: float
    current_a: float
    edge_time_s: float

    def __str__(self) -> str:
        return (f"{render(self.top_ohm, 'resistance')}/{render(self.bottom_ohm, 'resistance')}"
                f" (margin {render(self.margin_v, 'voltage')}, "
                f"{render(self.current_a, 'current')}, edge {render(self.edge_time_s, 'time')})")


@dataclass
class TriggerLinkSection(Section):
    source_family: str = q()
    destination_family: str = q()
    mode: str = q()  # "checked" | "proposed" | "infeasible"
    series: str = q()
    tolerance: float = q("ratio")
    tolerant: bool = q()
    top_ohm: float | None = q("resistance")
    bottom_ohm: float | None = q("resistance")
    v_nominal_v: float | None = q("voltage")
    v_high_min_v: float | None = q("voltage")
    v_high_max_v: float | None = q("voltage")
    v_low_max_v: float | None = q("voltage")
    vih_v: float = q("voltage")
    vil_v: float = q("voltage")
    input_max_v: float = q("voltage")
    margin_high_v: float | None = q("voltage")
    margin_max_v: float | None = q("voltage")
    margin_low_v: float | None = q("voltage")
    current_a: float | None = q("current")
    rated_current_a: float = q("current")
    thevenin_ohm: float | None = q("resistance")
    capacitance_f: float = q("capacitance")
    edge_time_s: float | None = q("time")  # nominal 10-90 %, ln 9 * Rth * C
    edge_time_max_s: float | None = q("time")  # resistors at + tolerance
    delay_to_vih_s: float | None = q("time")
    edge_limit_s: float | None = q("time")
    pairs_evaluated: int | None = q(default=None)
    pairs_feasible: int | None = q(default=None)
    alternatives: list[LinkAlternative] = q(default_factory=list)
    reason: str | None = q(default=None)
    recommendation: str | None = q(default=None)
    _check: object = field(default=None, repr=False)


@dataclass
class GateLinkSection(Section):
    source_family: str = q()
    destination_family: str = q()
    v_high_min_v: float = q("voltage")
    v_high_max_v: float = q("voltage")
    v_low_max_v: float = q("voltage")
    vih_v: float = q("voltage")
    vil_v: float = q("voltage")
    input_max_v: float = q("voltage")
    margin_high_v: float = q("voltage")
    margin_max_v: float = q("voltage")
    margin_low_v: float = q("voltage")


def resolve_family(name: str, path: str, custom=None) -> families.Family:
    """A family by name: custom ones from ``[trigger_link.families]`` first, then the table."""
    if custom and name in custom:
        c = custom[name]
        return families.Family.custom(name, c.vdd, c.vih, c.vil, c.voh, c.vol, c.output_current,
                                   c.vdd_min, c.vdd_max, c.input_leakage)
    try:
        return families.family(name)
    except KeyError:
        known = ", ".join(list(families.FAMILIES) + sorted(custom or {}))
        raise RigError(path, name, f"unknown logic family (known: {known}; or define it "
                                   "in [trigger_link.families])") from None


def edge_limit_for(pulse_width, trigger_latency: float | None):
    """1 % of the longer of the pulse width and the trigger latency (None: no limit). [s]

    The trigger edge shifts when the exposure opens; against a camera whose own latency is
    microseconds, an edge of 1 % of that latency is lost in the latency's own spread
    (project default, common practice for "negligible"). ``pulse_width`` may be an array.
    """
    if pulse_width is None and not trigger_latency:
        return None
    width = np.asarray(0.0 if pulse_width is None else pulse_width, dtype=float)
    return scalar(EDGE_FRACTION * np.maximum(width, trigger_latency or 0.0))


def link_section(source: families.Family, destination: families.Family, *, series: str = "E24",
                 tolerance: float | None = None, capacitance: float = 10e-12,
                 tolerant: bool = False, top: float | None = None,
                 bottom: float | None = None, edge_limit: float | None = None,
                 source_resistance: float | None = None, count: int = 5
                 ) -> TriggerLinkSection:
    """Check the given pair, or propose one, and return the ``trigger_link`` section."""
    tol = eseries.series_tolerance(series) if tolerance is None else tolerance
    limit = float("inf") if edge_limit is None else edge_limit
    kw = dict(tolerant=tolerant, source_resistance=source_resistance or 0.0)
    n_eval = n_feas = None
    alternatives: list[LinkAlternative] = []
    reason = recommendation = None
    if top is not None and bottom is not None:
        mode = "checked"
        chk = divider.evaluate_divider(top, bottom, source, destination, tol, capacitance,
                                     edge_limit=limit, **kw)
        if not chk.feasible:
            found = divider.search_dividers(source, destination, series, tol, capacitance,
                                          edge_limit=limit, count=count, **kw)
            if not found.best:  # nothing meets the edge limit: the best without it
                found = divider.search_dividers(source, destination, series, tol, capacitance,
                                              count=count, **kw)
            n_eval, n_feas = found.pairs_evaluated, found.pairs_feasible
            alternatives = [_alt(b) for b in found.best]
            reason, recommendation = found.reason, found.recommendation
    else:
        found = divider.search_dividers(source, destination, series, tol, capacitance,
                                      edge_limit=limit, count=count, **kw)
        if not found.best and edge_limit is not None:
            found = divider.search_dividers(source, destination, series, tol, capacitance,
                                          count=count, **kw)
        n_eval, n_feas = found.pairs_evaluated, found.pairs_feasible
        reason, recommendation = found.reason, found.recommendation
        if found.best:
            mode = "proposed"
            chk = divider.evaluate_divider(found.best[0].top, found.best[0].bottom, source,
                                         destination, tol, capacitance, edge_limit=limit, **kw)
            alternatives = [_alt(b) for b in found.best[1:]]
        else:
            mode, chk = "infeasible", None
    some = chk is not None

    def g(name):
        return getattr(chk, name) if some else None

    return TriggerLinkSection(
        source_family=source.name, destination_family=destination.name, mode=mode,
        series=series.upper(), tolerance=tol, tolerant=tolerant,
        top_ohm=g("top"), bottom_ohm=g("bottom"), v_nominal_v=g("v_nominal"),
        v_high_min_v=g("v_high_min"), v_high_max_v=g("v_high_max"), v_low_max_v=g("v_low_max"),
        vih_v=destination.vih_worst, vil_v=destination.vil_worst,
        input_max_v=destination.input_max(tolerant),
        margin_high_v=g("margin_high"), margin_max_v=g("margin_max"),
        margin_low_v=g("margin_low"), current_a=g("current"),
        rated_current_a=source.rated_current, thevenin_ohm=g("thevenin"),
        capacitance_f=capacitance, edge_time_s=g("edge_time"),
        edge_time_max_s=g("edge_time_max"), delay_to_vih_s=g("delay_to_vih"),
        edge_limit_s=edge_limit, pairs_evaluated=n_eval, pairs_feasible=n_feas,
        alternatives=alternatives, reason=reason, recommendation=recommendation, _check=chk,
    )


def _alt(c: divider.DividerCheck) -> LinkAlternative:
    return LinkAlternative(c.top, c.bottom, c.margin, c.current, c.edge_time)


def compute(rig, design, plan) -> dict:
    """The link stage: ``trigger_link`` and ``gate_link`` when their inputs are given (a
    dict slot -> section).

    The edge limit follows the design's pulse width (an array over a grid); a proposed
    pair is sized for the design's shortest pulse, so it holds for every wider one.
    """
    out = {}
    custom = rig.trigger_link.families if rig.trigger_link else None
    ctrl = rig.controller
    cam = rig.camera
    if cam is not None and cam.trigger_input is not None:
        ti = cam.trigger_input
        src = resolve_family(ctrl.output, "controller.output", custom)
        dst = resolve_family(ti.family, "camera.trigger_input.family", custom)
        tl = rig.trigger_link
        limit = edge_limit_for(design.pulse_width, cam.trigger_latency)
        args = dict(series=tl.series if tl else "E24", tolerance=tl.tolerance if tl else None,
                    capacitance=ti.capacitance, tolerant=ti.tolerant,
                    top=tl.top if tl else None, bottom=tl.bottom if tl else None,
                    edge_limit=None if limit is None else float(np.min(limit)),
                    source_resistance=ctrl.output_resistance)
        if design.is_scalar:
            section = link_section(src, dst, **args)
        else:
            section = copy.copy(_shared_link(src, dst, args))
        section.edge_limit_s = limit
        out["trigger_link"] = section
    gd = rig.gate_driver
    if gd is not None:
        src = resolve_family(ctrl.output, "controller.output", custom)
        dst = resolve_family(gd.input, "gate_driver.input", custom)
        d = families.direct_link(src, dst, tolerant=True, tolerant_max=gd.supply + 0.3)
        out["gate_link"] = GateLinkSection(
            source_family=src.name, destination_family=dst.name, v_high_min_v=d.v_high_min,
            v_high_max_v=d.v_high_max, v_low_max_v=d.v_low_max, vih_v=d.vih, vil_v=d.vil,
            input_max_v=d.input_max, margin_high_v=d.margin_high, margin_max_v=d.margin_max,
            margin_low_v=d.margin_low)
    return out


_LINK_MEMO: dict = {}


def _shared_link(src, dst, args: dict) -> TriggerLinkSection:
    """``link_section(src, dst, **args)`` remembered for a design search: its chunks mostly
    share one edge limit (set by the trigger latency when it exceeds the pulse widths), so
    the divider search runs once. The caller copies the section before changing it."""
    key = (src, dst) + tuple(sorted((k, repr(v)) for k, v in args.items()))
    if key not in _LINK_MEMO:
        if len(_LINK_MEMO) >= 64:
            _LINK_MEMO.clear()
        _LINK_MEMO[key] = link_section(src, dst, **args)
    return _LINK_MEMO[key]


def standalone(source: str, destination: str, **kwargs) -> Plan:
    """The ``divider`` command's plan: only a trigger_link section and its findings.

    Only the ``trigger_link.*`` rules run (the others need sections this plan lacks).
    """
    from ..checks import run_checks

    src = resolve_family(source, "--from")
    dst = resolve_family(destination, "--to")
    plan = Plan(rig=SimpleNamespace(name=f"divider {src.name} -> {dst.name}"))
    plan.trigger_link = link_section(src, dst, **kwargs)
    plan.findings = run_checks(plan, only=("trigger_link.",))
    return plan
