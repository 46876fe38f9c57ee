"""The first version's source keys, and the same source written as a function of t.

The keys ``shape``, ``offset``, ``delay``, ``damping``, ``low``, ``width``,
``period``, ``rise``, ``fall`` and ``points`` are gone; a worksheet that still uses
one is refused with the same source written in the new form, so the fix is a copy.
The meanings are those of the first version: with tau = t - delay,
``offset + peak*exp(-damping*tau)*cos(2*pi*f*tau + phase)`` from the delay on for a
sinusoid; ``offset + low`` plus ``peak - low`` times a trapezoid train (rising over
``rise`` from tau = k*period, high for ``width``, falling over ``fall``); a step
that sat at ``offset + low`` until its delay (in a steady start).
"""

from __future__ import annotations

import re
from typing import Any

import sympy

from handcheck.errors import HandcheckError
from handcheck.worksheet.sourcefunction import OLD_KEYS, decimal
from handcheck.worksheet.values import read_value

__all__ = ["OLD_KEYS", "rewrite"]


def _level(body: dict[str, Any], key: str, unit: str) -> sympy.Expr:
    text = body.get(key)
    if text is None:
        return sympy.Integer(0)
    return read_value(str(text), unit, key)


_SIMPLE = re.compile(r"^\s*[\d.]+(?:[eE][+-]?\d+)?\s*[A-Za-zΩµμ°][A-Za-z0-9/^]*\s*$")


def _shifted(delay: str | None) -> str:
    return f"t - {delay}" if delay else "t"


def _tau(delay: str | None) -> str:
    """``t`` or ``(t - delay)``, ready to multiply."""
    return f"(t - {delay})" if delay else "t"


def _factor(text: str) -> str:
    """A value as written, ready to multiply: in parentheses unless a number and a unit."""
    return text.strip() if _SIMPLE.match(text) else f"({text.strip()})"


def _sum(*parts: str) -> str:
    kept = [p for p in parts if p and p != "0"]
    if not kept:
        return "0"
    text = kept[0]
    for part in kept[1:]:
        text += f" - {part[1:]}" if part.startswith("-") else f" + {part}"
    return text


def _times(scale: sympy.Expr, body: str) -> str:
    if scale == 0:
        return "0"
    if scale == 1:
        return body
    if scale == -1:
        return f"-{body}"
    return f"{decimal(scale)}*{body}"


def rewrite(ident: str, kind: str, value: Any, body: dict[str, Any]) -> str:
    """The TOML value of the same source written as a function of t (or a list of points).

    Parameters
    ----------
    ident, kind : str
        The part's id and kind (``"voltage"`` or ``"current"``).
    value : str
        The source's own value as written (its amplitude).
    body : dict
        The part's keys as written.

    Returns
    -------
    str
        For example ``voltage = "5*repeat(4 ms, edge(t, 10 us) - edge(t - 10 us - 1 ms, 10 us)) V"``;
        empty when a key's value cannot be read (the message then names the keys only).
    """
    unit = "V" if kind == "voltage" else "A"
    try:
        return f"{kind} = {_rewrite(str(value), body, unit)}"
    except (HandcheckError, ArithmeticError, TypeError, ValueError):
        return ""


def _rewrite(value: str, body: dict[str, Any], unit: str) -> str:
    text = value.strip()
    rms = text.lower().endswith("rms")
    amplitude_text = text[:-3].strip() if rms else text
    peak = read_value(amplitude_text, unit, "the amplitude")
    peak_text = f"{decimal(peak)}*sqrt(2)" if rms else decimal(peak)
    offset = _level(body, "offset", unit)
    low = _level(body, "low", unit)
    delay = body.get("delay")
    delay = None if delay is None or read_value(str(delay), "s", "delay") == 0 else str(delay)
    frequency = body.get("frequency")
    shape = str(body.get("shape") or ("sine" if frequency else "points" if body.get("points") else "constant"))
    if shape == "points":
        pairs = []
        for t, v in body.get("points") or []:
            time = f"{t} + {delay}" if delay else str(t)
            level = f"{v} + {decimal(offset)} {unit}" if offset != 0 else str(v)
            pairs.append(f'["{time}", "{level}"]')
        return "[" + ", ".join(pairs) + "]"
    if shape == "sine":
        f = str(frequency)
        angular = "rad" in f
        argument = f"{_factor(f)}*{_tau(delay)}" if angular else f"2*pi*{_factor(f)}*{_tau(delay)}"
        if body.get("phase"):
            argument += f" + {body['phase']}"
        wave = f"cos({argument})"
        if body.get("damping"):
            wave = f"exp(-{_factor(str(body['damping']))}*{_tau(delay)})*{wave}"
        wave = f"{peak_text}*{wave}" if peak_text != "1" else wave
        function = _sum(decimal(offset), wave) if offset != 0 else wave
        if delay:
            function = f"({function})*step(t - {delay})"
        return f'"{function} {unit}"'
    if shape == "pulse":
        period = body.get("period")
        width = body.get("width")
        rise = body.get("rise")
        fall = body.get("fall")
        start = _shifted(delay)
        up = f"edge({start}, {rise})" if rise else f"step({start})"
        later = " - ".join(str(x) for x in (delay, rise, width) if x)
        down_at = f"t - {later}"
        down = f"edge({down_at}, {fall})" if fall else f"step({down_at})"
        train = f"repeat({period}, {up} - {down})"
        function = _sum(decimal(offset + low), _times(peak - low, train))
        return f'"{function} {unit}"'
    # constant or step
    if shape == "step" and low != 0:
        function = _sum(decimal(offset + low), _times(peak - low, f"step({_shifted(delay)})"))
    elif delay or shape == "step":
        function = _times(offset + peak, f"step({_shifted(delay)})")
    else:
        function = decimal(offset + peak)
    return f'"{function} {unit}"'
