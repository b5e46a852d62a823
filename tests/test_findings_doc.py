"""docs/findings.md and the rule registry list the same codes (regenerate on change)."""

from __future__ import annotations

import re

from strobeplan.checks import RULES, findings_markdown, load_all
from tests.conftest import ROOT


def test_findings_doc_is_current():
    text = (ROOT / "docs" / "findings.md").read_text(encoding="utf-8")
    assert text == findings_markdown(), (
        "docs/findings.md is stale: run `python -m strobeplan.checks > docs/findings.md`")


def test_doc_and_registry_list_the_same_codes():
    load_all()
    text = (ROOT / "docs" / "findings.md").read_text(encoding="utf-8")
    documented = set(re.findall(r"^## `([a-z_.]+)`", text, flags=re.M))
    assert documented == set(RULES)
    for r in RULES.values():
        assert r.trigger and r.fix  # every code says what triggers it and how to fix it
        assert r.code.split(".")[0] in {
            "timing", "drive", "field", "air", "exposure", "optics", "led", "switch", "supply",
            "stuck_on", "trigger_link", "gate_link", "safety", "plan", "image", "eye",
            "timer", "banding"}


def test_rig_format_doc_is_current():
    from strobeplan.rigdoc import rig_markdown

    text = (ROOT / "docs" / "rig-format.md").read_text(encoding="utf-8")
    assert text == rig_markdown(), (
        "docs/rig-format.md is stale: run `python -m strobeplan.rigdoc > docs/rig-format.md`")


def test_rig_format_doc_explains_every_key():
    from strobeplan.rigdoc import rig_markdown

    # every row of every table has a meaning column that is not empty
    rows = [ln for ln in rig_markdown().splitlines() if ln.startswith("| `")]
    assert rows and all(not ln.rstrip().endswith("|  |") for ln in rows), \
        [ln for ln in rows if ln.rstrip().endswith("|  |")]
