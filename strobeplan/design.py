"""The choices the design search varies, as floats or broadcastable numpy arrays.

A :class:`Design` is what ``tune`` changes in a rig: the gate pulse width, ``every`` (flash
on every N-th drive cycle), the series resistor and the supply voltage. Stages take the rig
*and* a design: ``compute(rig, design, plan) -> Section`` reads the design, never the rig's
copies of these four values, so the same stage code solves the rig as written
(``Design.of(rig)``, scalars) and a whole grid of candidates (arrays that broadcast against
one another; every section field then has the broadcast shape of what it depends on).
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

import numpy as np

from .quickdc import dataclass


def realised_width(width, clock):
    """The gate pulse a timer of ``clock`` realises for a requested ``width``: the nearest
    whole number of ticks. [s]

    Raises RigError when that is zero ticks (the gate would never open).
    """
    from .errors import RigError

    ticks = np.rint(np.asarray(width, dtype=float) * clock)
    if np.any(ticks < 1):
        raise RigError("strobe.pulse_width", width,
                       f"at least one timer tick ({1e9 / clock:.4g} ns at controller.clock); "
                       "the gate pulse is a whole number of ticks")
    out = ticks / clock
    return float(out) if out.ndim == 0 else out


@dataclass(frozen=True)
class Design:
    """Pulse width [s], every [1], series resistor [ohm], supply voltage [V].

    Each is a float (int for ``every``) or a numpy array; arrays must broadcast together.
    ``series_resistor`` and ``supply_voltage`` are NaN when the rig has no ``[supply]``.
    """

    pulse_width: Any
    every: Any
    series_resistor: Any
    supply_voltage: Any

    @classmethod
    def of(cls, rig) -> Design:
        """The design the rig file states, with the pulse width realised in whole timer
        ticks (the gate pulse is a compare value: 250 ns on a 1 MHz clock is 0 ticks, which
        is bad input, and 1.6 ticks becomes 2)."""
        sup = rig.supply
        return cls(
            pulse_width=realised_width(rig.strobe.pulse_width, rig.controller.clock),
            every=int(rig.strobe.every),
            series_resistor=sup.series_resistor if sup is not None else float("nan"),
            supply_voltage=sup.voltage if sup is not None else float("nan"),
        )

    @property
    def is_scalar(self) -> bool:
        """True when every choice is a single value (the ``check`` path)."""
        return all(np.ndim(v) == 0 for v in (self.pulse_width, self.every,
                                              self.series_resistor, self.supply_voltage))

    @property
    def shape(self) -> tuple[int, ...]:
        """The broadcast shape of the four choices (``()`` for a scalar design)."""
        return np.broadcast_shapes(*(np.shape(v) for v in (
            self.pulse_width, self.every, self.series_resistor, self.supply_voltage)))

    def with_(self, **changes) -> Design:
        """A copy with some choices replaced."""
        return replace(self, **changes)
