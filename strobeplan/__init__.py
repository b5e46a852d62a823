"""strobeplan: plan and check phase-locked LED strobe rigs for imaging ultrasound.

Public API (imported lazily so that ``strobeplan --help`` stays fast)::

    from strobeplan import load_rig, solve
    plan = solve(load_rig("configs/levitator-40k.toml"))
    plan.verdict, plan.findings, plan.timing.flash_edge_ticks
"""

from __future__ import annotations

__version__ = "0.1.0"
__all__ = ["load_rig", "loads_rig", "solve", "build_schedule", "Plan", "Finding", "RigError"]


def __getattr__(name):
    if name in ("load_rig", "loads_rig"):
        from . import rig

        return getattr(rig, name)
    if name in ("solve", "build_schedule"):
        from . import solve as _solve

        return getattr(_solve, name)
    if name in ("Plan", "Finding"):
        from . import plan

        return getattr(plan, name)
    if name == "RigError":
        from .errors import RigError

        return RigError
    raise AttributeError(f"module 'strobeplan' has no attribute {name!r}")
