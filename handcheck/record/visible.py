"""Worksheet text made safe to show: nothing in it can move the cursor, recolour or
hide output, or reorder what follows.

A worksheet is untrusted. Its title, reference, author and file name reach the
terminal, the Markdown record and the plots; a control character (an escape sequence,
a bell, a carriage return), a format character (a right-to-left override, a zero-width
joiner) or a line or paragraph separator in them could print a fake report or hide the
real one. :func:`visible` writes each such character as its Python escape, so the
reader sees that it is there and what it is.
"""

from __future__ import annotations

import unicodedata

__all__ = ["visible"]

#: Unicode general categories shown escaped: control, format, line and paragraph
#: separators, surrogates, private use and unassigned (Unicode 15.1, ch. 4.5, table 4-4).
_HIDDEN = frozenset({"Cc", "Cf", "Zl", "Zp", "Cs", "Co", "Cn"})


def _escape(ch: str) -> str:
    code = ord(ch)
    if ch == "\n":
        return "\\n"
    if ch == "\t":
        return "\\t"
    if ch == "\r":
        return "\\r"
    if code < 0x100:
        return f"\\x{code:02x}"
    if code < 0x10000:
        return f"\\u{code:04x}"
    return f"\\U{code:08x}"


def visible(text: str) -> str:
    """``text`` with every control, format and separator character escaped.

    Spaces other than the ASCII one (a no-break space, an ideographic space) become
    one ASCII space, so columns line up; every other character is kept.

    Examples
    --------
    >>> visible("OK\\x1b[8m hidden")
    'OK\\\\x1b[8m hidden'
    >>> visible("a\\u202eb")
    'a\\\\u202eb'
    >>> visible("10 k\\u03a9 \\u2220 45 deg")
    '10 kΩ ∠ 45 deg'
    """
    if text.isascii() and text.isprintable():
        return text
    out = []
    for ch in text:
        category = unicodedata.category(ch)
        if category in _HIDDEN:
            out.append(_escape(ch))
        elif category == "Zs":
            out.append(" ")
        else:
            out.append(ch)
    return "".join(out)
