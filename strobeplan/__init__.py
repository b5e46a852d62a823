"""strobeplan: plan and check phase-locked LED strobe rigs for imaging ultrasound.

Public API (imported lazily so that ``strobeplan --help`` stays fast)::

    from strobeplan import load_rig, solve
    plan = solve(load_rig("configs/levitator-40k.toml"))
    plan.verdict, plan.findings, plan.timing.flash_edge_ticks
"""

from __future__ import annotations

import sys as _sys

if _sys.argv and _sys.argv[0].replace("\\", "/").rsplit("/", 1)[-1] == "strobeplan":
    # The console command: Ctrl-C before the CLI has set up its handlers exits 130 with no
    # traceback (strobeplan.cli.main installs the KeyboardInterrupt handler again).
    import _signal

    def _quiet_interrupt(signum, frame):  # pragma: no cover - timing dependent
        import os

        os._exit(130)

    try:
        if _signal.getsignal(_signal.SIGINT) is not _signal.SIG_IGN:
            _signal.signal(_signal.SIGINT, _quiet_interrupt)
    except (ValueError, OSError):
        pass

__version__ = "0.1.0"
__all__ = ["load_rig", "loads_rig", "solve", "build_schedule", "Plan", "Finding", "RigError"]


_EXPORTS = {
    "load_rig": "strobeplan.rig", "loads_rig": "strobeplan.rig",
    "solve": "strobeplan.solve", "build_schedule": "strobeplan.solve",
    "Plan": "strobeplan.plan", "Finding": "strobeplan.plan", "RigError": "strobeplan.errors",
}


def __getattr__(name):
    # The function ``solve`` shares its name with the module ``strobeplan.solve``: import
    # the module by its full name (no attribute lookup on this package, which would recurse)
    # and then bind the public names here, over the submodule attribute.
    if name not in _EXPORTS:
        raise AttributeError(f"module 'strobeplan' has no attribute {name!r}")
    import importlib

    module = importlib.import_module(_EXPORTS[name])
    for public, where in _EXPORTS.items():
        if where == _EXPORTS[name]:
            globals()[public] = getattr(module, public)
    return globals()[name]
