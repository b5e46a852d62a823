"""The one registry of rules: plan -> findings.

A rule is a small function registered with :func:`rule`. It takes the plan and returns
None, one :class:`Hit` or a list of hits; the registry turns hits into
:class:`~strobeplan.plan.Finding` objects carrying the rule's code and severity. One code
has one severity (a condition that can be a warning or a hazard gets two codes).

One rule serves ``check`` and ``tune``: a hit's condition is ``when`` (a bool, or a numpy
bool array when the plan was solved for an array of designs), and its message and hint may
be callables, formatted only for a scalar plan whose condition holds. A rule whose inputs
depend on the design (pulse width, every, series resistor, supply voltage) must compute
``when`` with numpy on the section fields, never branch on them with ``if``.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any

import numpy as np

from ..physics.arrays import compact
from ..plan import SEVERITIES, SEVERITY_RANK, Finding
from ..quickdc import dataclass


@dataclass(frozen=True)
class Hit:
    """What a rule found: the message, the figure and its limit (SI, with unit), a hint.

    ``when`` is the condition (True, or a bool array over a grid of designs); ``message``
    and ``hint`` are strings or callables returning one (called only for a scalar plan
    whose condition holds, so they may format scalar figures).
    """

    message: str | Callable[[], str]
    value: Any = None
    limit: Any = None
    unit: str | None = None
    hint: str | Callable[[], str] | None = None
    subject: str | None = None
    when: Any = True

    def text(self) -> str:
        return self.message() if callable(self.message) else self.message

    def hint_text(self) -> str | None:
        return self.hint() if callable(self.hint) else self.hint


@dataclass(frozen=True)
class Rule:
    code: str
    severity: str
    trigger: str
    fix: str
    func: Callable
    example: tuple[str, dict] | None = None  # (bundled example, {dotted.key: value}) firing it

    @property
    def subject(self) -> str:
        return self.code.split(".", 1)[0]


RULES: dict[str, Rule] = {}


def rule(code: str, severity: str, trigger: str, fix: str,
         example: tuple[str, dict] | None = None):
    """Register a rule under a stable dotted lower-case code (``section.condition``).

    ``example`` is a rig that fires it: a bundled example's name and the keys to change
    (dotted paths; None deletes a key). The docs show it and the tests solve it.
    """
    if severity not in SEVERITIES:
        raise ValueError(f"unknown severity {severity!r}")
    if code in RULES:
        raise ValueError(f"duplicate finding code {code!r}")
    if code != code.lower() or "." not in code:
        raise ValueError(f"finding code {code!r} must be dotted lower case")

    def register(func):
        RULES[code] = Rule(code, severity, trigger, fix, func, example)
        return func

    return register


def _scalar(x):
    """A figure as a plain float (numpy 0-d values included); None stays None."""
    if x is None or isinstance(x, (int, float, str)):
        return x
    try:
        return float(x)
    except (TypeError, ValueError):
        return x


def rule_masks(plan, shape: tuple[int, ...] = ()) -> dict[str, Any]:
    """code -> where the rule fires (bool array of ``shape``, the plan's design shape), for
    every rule that fires somewhere. The design search's view of the same rules.

    A mask is a read-only array of ``shape``: a broadcast view when the rule's condition
    depends on fewer design dimensions (the condition is combined and tested for any hit
    at those dimensions only).
    """
    shape = tuple(shape)
    empty = math.prod(shape) == 0
    out: dict[str, Any] = {}
    for r in RULES.values():
        result = r.func(plan)
        if result is None:
            continue
        hits = result if isinstance(result, list) else [result]
        mask = None
        for h in hits:
            when = compact(np.asarray(h.when, dtype=bool))
            mask = when if mask is None else mask | when
        if mask is None or empty or not mask.any():
            continue
        view = np.broadcast_to(mask, shape)  # a read-only view (raises if it does not fit)
        out[r.code] = view
    return out


def run_rules(plan, only: tuple[str, ...] | None = None) -> list[Finding]:
    """Every registered rule (or those whose code starts with one of ``only``) over the
    plan; findings sorted by severity, then code."""
    found: list[Finding] = []
    for r in RULES.values():
        if only is not None and not r.code.startswith(only):
            continue
        result = r.func(plan)
        if result is None:
            continue
        hits = result if isinstance(result, list) else [result]
        for h in hits:
            if not bool(h.when):
                continue
            found.append(Finding(
                code=r.code, severity=r.severity, subject=h.subject or r.subject,
                message=h.text(), value=_scalar(h.value), limit=_scalar(h.limit),
                unit=h.unit, hint=h.hint_text() or r.fix,
            ))
    found.sort(key=lambda f: (SEVERITY_RANK[f.severity], f.code))
    return found
