"""Reading a value text before it is evaluated: its trailing unit (of a source function
or a claim), and whether a source's value is a function of time at all."""

from __future__ import annotations

import re

from handcheck.errors import HandcheckError
from handcheck.worksheet.expr import Name, Number, parse, walk

__all__ = ["split_unit", "uses_time"]

_UNIT = r"\s*([A-Za-zΩµμ°][A-Za-z0-9_Ωµμ/*^]*)\s*$"
_TRAILING_UNIT = re.compile(r"^(.*?[\d.)])" + _UNIT, re.S)
#: After a complex number too: ``"12.3 - 4.5j ohm"``.
_AFTER_COMPLEX = re.compile(r"^(.*?[\d.)jJ])" + _UNIT, re.S)


def split_unit(text: str, *, imaginary: bool = False) -> tuple[str, str]:
    """Split ``"12*step(t - 1 ms) V"`` into ``("12*step(t - 1 ms)", "V")``; no unit gives ``""``.

    With ``imaginary``, a unit may follow an imaginary part (``"12.3 - 4.5j ohm"``), and a
    trailing ``j`` is the imaginary unit, not a unit.
    """
    match = (_AFTER_COMPLEX if imaginary else _TRAILING_UNIT).match(text)
    if not match:
        return text, ""
    body, unit = match.group(1), match.group(2)
    if imaginary and unit == "j":
        return text, ""
    try:
        tree = parse("1 " + unit)
    except HandcheckError:
        return text, ""
    if isinstance(tree, Number) and tree.unit:
        return body, unit
    return text, ""


def uses_time(text: str) -> bool:
    """Whether a value text is a function of ``t`` (it names t, step, edge or repeat)."""
    try:
        tree = parse(split_unit(text)[0], {"t"})
    except HandcheckError:
        return bool(re.search(r"\b(t|step|edge|repeat)\b", text))
    return any(isinstance(n, Name) and n.ident == "t" for n in walk(tree)) or bool(
        re.search(r"\b(step|edge|repeat)\s*\(", text)
    )
