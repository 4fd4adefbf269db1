"""What text exports do with names so no name can forge a line, a field or a formula.

Ids, labels and names are one line of printable text when they come from a file
(:func:`arena_studio.core.scene.fields.line`), but a scene built in Python skips the parser, so
every text export also escapes what it writes:

- :func:`escape_line` writes a backslash as ``\\\\`` and any control character or line
  separator as ``\\uXXXX``, so a value always stays inside its line and field (WKT labels,
  comment lines); :func:`unescape_line` reverses it;
- :func:`csv_cell` neutralises a text cell that a spreadsheet would run as a formula: one
  that starts with ``=``, ``+``, ``-``, ``@``, TAB or CR gets a leading apostrophe, as the
  OWASP guidance on CSV injection says. Numbers are left as numbers (a negative value is
  data, not a formula); quoting of commas, quotes and newlines is the csv module's.
"""

from __future__ import annotations

import re

from arena_studio.core.scene.fields import UNSAFE_CHARACTERS

#: First characters a spreadsheet reads as the start of a formula (OWASP, CSV injection).
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")

_UNESCAPE = re.compile(r"\\(\\|u[0-9A-Fa-f]{4})")


def escape_line(text: str) -> str:
    """``text`` with ``\\`` and unsafe characters escaped; printable text is unchanged."""
    if "\\" not in text and not any(ch in UNSAFE_CHARACTERS for ch in text):
        return text
    out = []
    for ch in text:
        if ch == "\\":
            out.append("\\\\")
        elif ch in UNSAFE_CHARACTERS:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    return "".join(out)


def unescape_line(text: str) -> str:
    """The inverse of :func:`escape_line`."""

    def one(match: re.Match[str]) -> str:
        code = match.group(1)
        return "\\" if code == "\\" else chr(int(code[1:], 16))

    return _UNESCAPE.sub(one, text)


def csv_cell(value: object) -> object:
    """A CSV cell that no spreadsheet runs as a formula (text cells only)."""
    if isinstance(value, str) and value.startswith(FORMULA_STARTS):
        return "'" + value
    return value


__all__ = ["FORMULA_STARTS", "csv_cell", "escape_line", "unescape_line"]
