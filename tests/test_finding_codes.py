"""Every finding code is reachable: each rule carries a rig that fires it.

A rule's ``example`` (strobeplan/checks/) is a bundled example and the keys to change
(dotted paths; None deletes a key). Solving it must raise the rule's code, and a hazard or
fault must fail the verdict; a rule without an example fails here. The same examples are
printed in docs/findings.md, so there is one table, in the rules.
"""

from __future__ import annotations

import pytest

from strobeplan.checks import RULES, load_all
from strobeplan.rig import rig_from_dict
from strobeplan.solve import solve
from tests.conftest import EXAMPLES, patched

load_all()


def test_every_rule_has_an_example():
    missing = sorted(code for code, r in RULES.items() if r.example is None)
    assert not missing, f"rules without an example rig: {missing}"
    bases = {r.example[0] for r in RULES.values() if r.example is not None}
    assert bases <= set(EXAMPLES)


@pytest.mark.parametrize("code", sorted(RULES))
def test_code_is_reachable(code):
    rule = RULES[code]
    assert rule.example is not None, f"{code} has no example"
    base, patch = rule.example
    plan = solve(rig_from_dict(patched(base, patch)))
    codes = {f.code for f in plan.findings}
    assert code in codes, f"{code} not raised by its example; got {sorted(codes)}"
    if rule.severity in ("hazard", "fault"):
        assert plan.verdict == "fail"
