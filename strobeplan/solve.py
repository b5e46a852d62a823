"""Compose the stages into a Plan: rig + design -> stages -> rules -> findings.

Each stage is a pure function ``compute(rig, design, plan) -> section`` (or a dict slot ->
section) that reads the rig, the design and the sections computed before it; ``solve``
assigns what it returns. The same code solves the rig as written (``Design.of(rig)``,
scalars: ``check``) and a grid of candidate designs (arrays: ``tune``).
"""

from __future__ import annotations

import numpy as np

from . import timing
from .checks import run_checks
from .design import Design
from .plan import Plan
from .stages import air as air_stage
from .stages import banding as banding_stage
from .stages import exposure as exposure_stage
from .stages import field as field_stage
from .stages import flash as flash_stage
from .stages import image as image_stage
from .stages import link as link_stage
from .stages import optics as optics_stage
from .stages import power as power_stage
from .stages import timer as timer_stage
from .stages import timing as timing_stage

# (stage function, the slot it fills, or None when it returns a dict of slots). Order
# matters: air and flash and the trigger link (its edge's delay to the camera's VIH) feed
# the timing core; later stages read the timing (flashes per frame, duty) and one another.
STAGES = (
    (air_stage.compute, "air"),
    (field_stage.compute, "field"),  # the phase at the view: before the timing core
    (flash_stage.compute, "flash"),
    (link_stage.compute, None),
    (timing_stage.drive_section, "drive"),
    (timing_stage.compute, "timing"),
    (timer_stage.compute, "timer"),
    (exposure_stage.compute, "exposure"),
    (banding_stage.compute, "banding"),
    (optics_stage.compute, "optics"),
    (power_stage.compute, None),
    (image_stage.compute, "image"),  # after power: the LED's currents
    (image_stage.compute_eye, "eye"),
)

# Sections a rig can lack, and what they need.
_NEEDS = {
    "led": "needs [led] and [supply] (the LED current comes from the supply's operating point)",
    "switch": "needs [switch] and [gate_driver] (and the LED stage)",
    "supply": "needs [led] and [supply]",
    "stuck_on": "needs [led] and [supply]",
    "optics": "needs [emitter] with a datasheet SPL or emitter.spl_at_view",
    "field": "needs [emitter] with radius and distance_to_view (or a [view] point)",
    "image": "needs the optical layout ([optics] layout, mirror, source, cutoff), the LED's "
             "optical output ([led] optical_power) and the camera sensor ([camera] pixel_pitch, "
             "quantum_efficiency, full_well)",
    "eye": "needs the LED's optical output and the source size",
    "trigger_link": "needs camera.trigger_input",
    "gate_link": "needs [gate_driver]",
}


def solve(rig, design: Design | None = None, *, checks: bool = True,
          upto: str | None = None, known: dict | None = None,
          rules_only: bool = False) -> Plan:
    """Compute every section the rig has inputs for, then run all rules.

    Parameters
    ----------
    rig : strobeplan.rig.Rig
        The validated rig.
    design : Design, optional
        The choices to solve for; default the rig as written (``Design.of(rig)``). Arrays
        give a plan whose design-dependent figures are arrays (the design search).
    checks : bool
        Run the rules into ``plan.findings`` (scalar designs; the search evaluates the rules
        itself over its grid).
    upto : str, optional
        Stop after the stage that fills this slot (e.g. "timing"), without the rules.
    known : dict, optional
        Slot -> section already solved for this rig, used instead of running its stage
        (only for stages that read no design choice: ``tune.rig_constants``).
    rules_only : bool
        A plan of the design search (``Plan.rules_only``): figures that only a rule's
        threshold reads may be resolved just as far as the verdict needs, and figures that
        no rule, search figure or candidate reads may be left out.

    Floating-point overflow in an absurd but valid rig becomes inf/nan in a figure (shown as
    null, with the checks saying why) rather than a warning on stderr.
    """
    with np.errstate(over="ignore", divide="ignore", invalid="ignore", under="ignore"):
        if design is None:
            design = Design.of(rig)
        plan = Plan(rig=rig, design=design, rules_only=rules_only)
        for stage, slot in STAGES:
            if known is not None and slot in known:
                setattr(plan, slot, known[slot])
                continue
            result = stage(rig, design, plan)
            if slot is None:
                for name, section in result.items():
                    setattr(plan, name, section)
            else:
                setattr(plan, slot, result)
            if upto is not None and slot == upto:
                return plan
        plan.skipped = {name: why for name, why in _NEEDS.items()
                        if getattr(plan, name) is None}
        if checks and design.is_scalar:
            plan.findings = run_checks(plan)
        return plan


def build_schedule(plan: Plan, steps: int | None = None) -> timing.Schedule:
    """The per-frame schedule of a solved plan (scalar design)."""
    return timing.schedule(plan.rig, plan, plan.lock, steps=steps)


class _SolveModule(type(np)):
    """This module, callable as :func:`solve`.

    ``from strobeplan import solve`` must give the function, but once any code has imported
    the submodule ``strobeplan.solve`` the package's attribute of that name is the module
    (the import system binds it after the module runs). Making the module call ``solve``
    makes both spellings work in any import order.
    """

    def __call__(self, *args, **kwargs):
        return solve(*args, **kwargs)


def _make_callable():
    import sys

    sys.modules[__name__].__class__ = _SolveModule


_make_callable()
