"""Compose physics and timing into a Plan: rig -> stages -> checks -> findings."""

from __future__ import annotations

import numpy as np

from . import timing
from .checks import run_checks
from .design import Design
from .plan import Plan
from .stages import air as air_stage
from .stages import exposure as exposure_stage
from .stages import field as field_stage
from .stages import flash as flash_stage
from .stages import link as link_stage
from .stages import optics as optics_stage
from .stages import power as power_stage


def solve(rig) -> Plan:
    """Compute every section the rig has inputs for, then run all checks.

    Stage order matters: air (speed of sound), flash (delays, edges, centroid) and the
    trigger link (its edge's delay to the camera's VIH) feed the timing core; later stages
    read the timing (flashes per frame, duty) and one another.
    Floating-point overflow in an absurd but valid rig becomes inf/nan in a figure (shown as
    null, with the checks saying why) rather than a warning on stderr.
    """
    with np.errstate(over="ignore", divide="ignore", invalid="ignore", under="ignore"):
        return _solve(rig)


def _solve(rig) -> Plan:
    plan = Plan(rig=rig)
    air_stage.build(rig, plan)
    plan.field = field_stage.compute(rig, Design.of(rig), plan)
    flash_stage.build(rig, plan)
    link_stage.build(rig, plan)  # before timing: the trigger edge delays the exposure
    plan.lock = timing.build(rig, plan)
    exposure_stage.build(rig, plan)
    optics_stage.build(rig, plan)
    power_stage.build(rig, plan)
    plan.findings = run_checks(plan)
    return plan


def build_schedule(plan: Plan, steps: int | None = None) -> timing.Schedule:
    """The per-frame schedule of a solved plan."""
    return timing.schedule(plan.rig, plan, plan.lock, steps=steps)
