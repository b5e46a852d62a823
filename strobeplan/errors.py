"""Exceptions of the core. The CLI maps them to exit codes; the core never imports click."""

from __future__ import annotations


class StrobeplanError(Exception):
    """Base of strobeplan's own errors."""


class RigError(StrobeplanError):
    """Bad input: one line naming the key path, the value and what was expected."""

    def __init__(self, path: str, value, expected: str):
        self.path = path
        self.value = value
        self.expected = expected
        shown = _show(value)
        if path:
            where = f"{path} = {shown}: " if shown else f"{path}: "
        else:
            where = f"{shown}: " if shown else ""
        super().__init__(f"{where}{expected}")


class OutputError(StrobeplanError):
    """An output file cannot be written (missing folder, a directory in the way, ...)."""


def _show(value) -> str:
    if value is _MISSING:
        return "(missing)"
    if value is None:
        return ""
    text = repr(value) if isinstance(value, str) else str(value)
    if len(text) > 60:
        text = text[:57] + "..."
    return text.replace("\n", " ")


class _Missing:
    def __repr__(self):
        return "(missing)"


_MISSING = _Missing()
MISSING = _MISSING
