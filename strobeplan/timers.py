"""Hardware counter profiles and the arithmetic of fitting counts into them.

A *counter* counts ticks of the controller clock (divided by its prescaler) from 0 up to
its period - 1 and starts again; a *compare* channel fires an output edge when the counter
takes a given value. ``bits`` bounds the period (at most 2**bits counts), ``prescaler_max``
bounds the clock divider (and ``prescaler_power_of_two`` restricts it to 1, 2, 4 ...),
``channels`` is the number of compare channels per counter, ``reload_per_period`` says
whether a compare value can be replaced at every period boundary (a shadow register or DMA
update) and ``chainable`` whether one counter can count another's overflows, so that two
act as one counter of twice the bits.

The bundled profiles are named by those properties, not after any part: they stand for the
common classes of general-purpose timers in microcontrollers. Pure Python, no numpy.
"""

from __future__ import annotations

from .quickdc import dataclass


@dataclass(frozen=True)
class TimerModel:
    """What one general-purpose counter can do (see the module docstring)."""

    name: str
    bits: int
    prescaler_max: int
    prescaler_power_of_two: bool
    channels: int
    reload_per_period: bool
    chainable: bool

    @property
    def max_period(self) -> int:
        """Largest period in counts. [counts]"""
        return 1 << self.bits

    def prescalers(self) -> list[int]:
        """The clock dividers the counter offers, ascending (1 always included)."""
        if self.prescaler_power_of_two:
            out, p = [], 1
            while p <= self.prescaler_max:
                out.append(p)
                p <<= 1
            return out
        return list(range(1, self.prescaler_max + 1))


# name -> (bits, prescaler_max, prescaler_power_of_two, channels, reload_per_period, chainable)
PROFILES: dict[str, TimerModel] = {
    m.name: m for m in (
        TimerModel("counter8-prescale-pow2", 8, 1024, True, 2, False, False),
        TimerModel("counter16", 16, 1, False, 4, True, True),
        TimerModel("counter16-prescale16", 16, 65536, False, 4, True, True),
        TimerModel("counter24", 24, 1, False, 2, False, False),
        TimerModel("counter32", 32, 1, False, 4, True, False),
        TimerModel("counter32-prescale16", 32, 65536, False, 4, True, False),
    )
}

PROFILE_MEANINGS = {
    "counter8-prescale-pow2": "8-bit counter, clock divided by a power of two up to 1024, "
                              "2 compare channels, compare written by software, no chaining "
                              "(the small 8-bit microcontroller class)",
    "counter16": "16-bit counter, no prescaler, 4 channels, reload per period, chainable",
    "counter16-prescale16": "16-bit counter with a 16-bit prescaler (any divider 1-65536), "
                            "4 channels, reload per period (shadow registers, DMA), "
                            "chainable (the common general-purpose timer class)",
    "counter24": "24-bit counter, no prescaler, 2 channels, no reload, no chaining "
                 "(the system-tick class)",
    "counter32": "32-bit counter, no prescaler, 4 channels, reload per period, no chaining",
    "counter32-prescale16": "32-bit counter with a 16-bit prescaler, 4 channels, reload per "
                            "period, no chaining (the wide general-purpose timer class)",
}

DEFAULT_PROFILE = "counter32"


def profile_table() -> str:
    """Markdown table of the bundled profiles (for docs/rig-format.md)."""
    rows = ["| profile | bits | prescaler_max | power of two | channels | reload_per_period "
            "| chainable | class |", "|---|---|---|---|---|---|---|---|"]
    for m in PROFILES.values():
        rows.append(f"| `{m.name}` | {m.bits} | {m.prescaler_max} | "
                    f"{str(m.prescaler_power_of_two).lower()} | {m.channels} | "
                    f"{str(m.reload_per_period).lower()} | {str(m.chainable).lower()} | "
                    f"{PROFILE_MEANINGS[m.name]} |")
    return "\n".join(rows)


@dataclass(frozen=True)
class Fit:
    """How one counter holds a period (and its compare values) of the plan.

    ``how`` is "direct" (fits as it is), "chained" (two counters, no loss), "prescaler"
    (the counter counts every ``prescaler``-th tick) or "none" (nothing fits).
    ``period_exact``: the period is a whole number of prescaled counts (a locked counter
    needs it); ``compares_exact``: so is every compare value.
    """

    how: str
    prescaler: int
    chained: bool
    period_exact: bool
    compares_exact: bool

    @property
    def resolution_ticks(self) -> int:
        """Smallest step of a compare value, in controller clock ticks. [ticks]"""
        return self.prescaler


def fit_counter(period: int, compares: list[int] | tuple[int, ...],
                timer: TimerModel) -> Fit:
    """Place a counter of ``period`` ticks with its compare values on ``timer``.

    Preference: no prescaler and no chain; then two chained counters (exact, one more
    counter); then the smallest prescaler that makes the period fit and divides the period
    and every compare exactly; then the smallest that divides the period; then the smallest
    that fits at all (the period is then not realised: a locked counter loses its lock).

    Parameters
    ----------
    period : int
        Counter period. [ticks]
    compares : sequence of int
        Compare values the counter must hold, each below the period. [ticks]
    timer : TimerModel
        The counter's capabilities.
    """
    def cap(chained: bool) -> int:
        return 1 << (timer.bits * (2 if chained else 1))

    chains = (False, True) if timer.chainable else (False,)
    for chained in chains:
        if period <= cap(chained):
            return Fit("chained" if chained else "direct", 1, chained, True, True)
    best = None
    for chained in chains:
        p_min = -(-period // cap(chained))
        first_any = first_period = None
        for p in timer.prescalers():
            if p < p_min:
                continue
            period_ok = period % p == 0
            if period_ok and all(c % p == 0 for c in compares):
                cand = ((0, p), Fit("prescaler", p, chained, True, True))
                break
            if period_ok and first_period is None:
                first_period = p
            if first_any is None:
                first_any = p
        else:
            if first_period is not None:
                cand = ((1, first_period), Fit("prescaler", first_period, chained, True, False))
            elif first_any is not None:
                cand = ((2, first_any), Fit("prescaler", first_any, chained, False, False))
            else:
                continue
        if best is None or cand[0] < best[0]:
            best = cand
    return best[1] if best is not None else Fit("none", 1, False, False, False)


def wrap_time(clock: float, bits: int = 32) -> float:
    """Run time before an absolute tick count of ``bits`` bits wraps. [s]

    Parameters
    ----------
    clock : float
        Controller clock. [Hz]
    bits : int
        Width of the count. [1]
    """
    return float(1 << bits) / clock
