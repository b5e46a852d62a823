"""``python -m strobeplan.checks`` prints docs/findings.md from the registry."""

from . import findings_markdown

print(findings_markdown(), end="")
