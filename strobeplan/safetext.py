"""The one message sanitiser: text from a rig file or the command line, made safe to print.

Rig names, key names, family names and file names come from the user and reach the
terminal. :func:`clean` escapes every control character (Unicode category Cc, line and
paragraph separators, and the bidirectional overrides that reorder what a terminal shows)
as a Python-style escape (``\\x1b``, ``\\n``, ``\\u202e``), so a message is always one line
and never drives the terminal (title changes, screen clears). :func:`shorten` cuts a long
text with an ellipsis. JSON output is left to ``json.dumps``, whose escapes are already
safe.
"""

from __future__ import annotations

import unicodedata

__all__ = ["clean", "clean_block", "shorten", "MAX_MESSAGE"]

MAX_MESSAGE = 1000
"""Longest message line printed (characters); longer ones end in an ellipsis."""

_BIDI = {0x061C, 0x200E, 0x200F, *range(0x202A, 0x202F), *range(0x2066, 0x206A)}


def _unsafe(ch: str) -> bool:
    code = ord(ch)
    if code < 0x20 or 0x7F <= code <= 0x9F or code in _BIDI:
        return True
    return unicodedata.category(ch) in ("Zl", "Zp")


def _escape(ch: str) -> str:
    special = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}
    if ch in special:
        return special[ch]
    code = ord(ch)
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def clean(text, limit: int | None = MAX_MESSAGE) -> str:
    """``text`` as one printable line: control characters escaped, cut at ``limit``.

    Parameters
    ----------
    text : object
        Anything; non-strings go through ``str``.
    limit : int or None
        Longest result in characters (an ellipsis marks the cut); None keeps all.
    """
    s = text if isinstance(text, str) else str(text)
    if any(_unsafe(c) for c in s):
        s = "".join(_escape(c) if _unsafe(c) else c for c in s)
    return shorten(s, limit) if limit is not None else s


def clean_block(text: str) -> str:
    """A multi-line text with each line cleaned (line breaks kept, nothing cut)."""
    return "\n".join(clean(line, None) for line in text.split("\n"))


def shorten(text: str, limit: int) -> str:
    """``text`` cut to at most ``limit`` characters, ending in an ellipsis when cut."""
    if len(text) <= limit:
        return text
    return text[: max(0, limit - 1)] + "\u2026"
