"""Third-party text made safe to show: on a terminal, in CSV/JSON and in XLSX cells.

A vendor's file may hold control characters (ESC sequences that retitle or clear
a terminal, NUL, bidirectional overrides).  Nothing read from their file reaches
an output raw: ``terminal`` and ``report`` write every control or non-printing
character as a visible escape (``\\x1b``, ``\\u202e``); ``xlsx_cell`` does the same
and guards formula starts, so openpyxl never refuses a cell.  None of these
functions raises, whatever the input.
"""

from __future__ import annotations

import unicodedata

from ..fileio import safe_cell_text

# Unicode categories that print nothing visible or move the cursor: controls, format
# characters (bidi overrides, zero-width), surrogates, private use, unassigned, and the
# line / paragraph separators.
_HIDDEN = {"Cc", "Cf", "Cs", "Co", "Cn", "Zl", "Zp"}


def _escape(ch: str) -> str:
    o = ord(ch)
    if o < 0x100:
        return f"\\x{o:02x}"
    if o < 0x10000:
        return f"\\u{o:04x}"
    return f"\\U{o:08x}"


def escape(s, keep: str = "") -> str:
    """Every hidden character (but those in ``keep``) written as a visible escape."""
    try:
        s = "" if s is None else str(s)
    except Exception:  # a str() that fails: show the type instead of stopping the audit
        return "<unprintable>"
    if s.isprintable():
        return s
    out = []
    for ch in s:
        cat = unicodedata.category(ch)
        if ch in keep or (cat not in _HIDDEN and (ch.isprintable() or cat == "Zs")):
            out.append(ch)
        else:
            out.append(_escape(ch))
    return "".join(out)


def terminal(s) -> str:
    """One or more lines for a terminal: newlines kept, every other hidden character escaped."""
    return escape(s, keep="\n")


def report(s) -> str:
    """A report cell (CSV / JSON): one line, every hidden character escaped."""
    return escape(s)


def xlsx_cell(s) -> str:
    """A spreadsheet cell: escaped (openpyxl refuses control characters) and formula-safe."""
    return safe_cell_text(escape(s))
