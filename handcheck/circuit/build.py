"""Worksheet parts to an exact :class:`Circuit`, with every value checked."""

from __future__ import annotations

import dataclasses
import re

import sympy

from handcheck.circuit.model import GROUND, Circuit, Part, Source
from handcheck.circuit.structure import check_structure
from handcheck.errors import HandcheckError, UnitError, WorksheetError
from handcheck.worksheet.evaluate import evaluate
from handcheck.worksheet.expr import Number, one_line, parse, walk
from handcheck.worksheet.model import PartSpec, Worksheet
from handcheck.worksheet.units import DIMENSIONLESS, Dim, dim_of

__all__ = ["build", "read_frequency", "read_span", "read_value"]

_KIND_UNIT = {
    "resistor": "ohm",
    "inductor": "H",
    "capacitor": "F",
    "voltage": "V",
    "current": "A",
    "vccs": "S",
    "ccvs": "ohm",
}
_EXAMPLE = {
    "ohm": "4.7 kohm",
    "H": "95 mH",
    "F": "0.22 uF",
    "V": "24 V",
    "A": "10 mA",
    "S": "2 mS",
    "s": "1.5 ms",
    "Hz": "50 Hz",
    "": "10",
}


def read_value(text: str, unit: str, what: str, *, file: str | None = None, line: int | None = None) -> sympy.Expr:
    """Read a constant value such as ``"0.22 uF"`` and check it is in ``unit``.

    A dimensionless value (``unit == ""``) may be a plain number. A value that
    needs a unit must be written with one.
    """
    try:
        return _read_value(text, unit, what, file=file, line=line)
    except HandcheckError as exc:
        raise one_line(exc) from None


def _read_value(text: str, unit: str, what: str, *, file: str | None, line: int | None) -> sympy.Expr:
    try:
        tree = parse(text)
        value = evaluate(tree, {}, text)
    except HandcheckError as exc:
        raise exc.located(file, line) from None
    expected = dim_of(unit) if unit else DIMENSIONLESS
    if value.dim != expected:
        has_unit = any(isinstance(n, Number) and n.unit for n in walk(tree))
        if unit and not has_unit:
            raise UnitError(f'{what} "{text}" has no unit; write it with one, like "{_EXAMPLE.get(unit, "1 " + unit)}"', file=file, line=line)
        found = str(value.dim) or "no unit"
        want = unit or "a plain number"
        raise UnitError(f'{what} "{text}" is in {found}, but must be in {want}', file=file, line=line)
    if value.expr.has(sympy.I) or not value.expr.is_real:
        raise WorksheetError(f'{what} "{text}" must be a real number', file=file, line=line)
    return value.expr


def read_frequency(text: str, what: str, *, file: str | None = None, line: int | None = None) -> sympy.Expr:
    """Read a frequency in Hz or rad/s and return the angular frequency in rad/s.

    The radian is dimensionless in SI, so pint alone cannot tell 1000 rad/s from
    1000 Hz; a value whose unit names ``rad`` is taken as angular.
    """
    try:
        return _read_frequency(text, what, file=file, line=line)
    except HandcheckError as exc:
        raise one_line(exc) from None


def _read_frequency(text: str, what: str, *, file: str | None, line: int | None) -> sympy.Expr:
    try:
        tree = parse(text)
        value = evaluate(tree, {}, text)
    except HandcheckError as exc:
        raise exc.located(file, line) from None
    if value.dim != Dim(time=-1) or not value.expr.is_positive:
        raise UnitError(f'{what} "{text}" must be a positive frequency in Hz or rad/s, like "60 Hz" or "377 rad/s"', file=file, line=line)
    angular = any(isinstance(n, Number) and any(w.startswith("rad") for w, _ in n.unit) for n in walk(tree))
    return value.expr if angular else 2 * sympy.pi * value.expr


def read_span(worksheet: Worksheet) -> float | None:
    """The ``[transient] span`` in seconds, or None when it is not given."""
    written = dict(worksheet.transient).get("span")
    if not written:
        return None
    value = read_value(written, "s", "span in [transient]", file=worksheet.path)
    if value <= 0:
        raise WorksheetError(f'span = "{written}" in [transient] must be more than 0 s', file=worksheet.path)
    return float(value)


def _phase(spec: PartSpec, path: str) -> sympy.Expr:
    if spec.phase is None:
        return sympy.Integer(0)
    try:
        value = evaluate(parse(spec.phase), {}, spec.phase)
    except HandcheckError as exc:
        raise exc.located(path, spec.line) from None
    has_unit = any(isinstance(n, Number) and n.unit for n in walk(parse(spec.phase)))
    if not value.dim.dimensionless or not value.expr.is_real or (not has_unit and value.expr != 0):
        raise UnitError(f'phase "{spec.phase}" of part "{spec.id}" must be an angle in deg or rad, like "30 deg"', file=path, line=spec.line)
    return value.expr


_AMPLITUDE_KIND = re.compile(r"^(.*?[^\s])\s*(rms|peak|pk)$", re.IGNORECASE | re.S)


def _source(spec: PartSpec, path: str) -> tuple[sympy.Expr, Source]:
    """A source's amplitude: peak unless written with the word rms ("24 V rms" or "24 Vrms")."""
    match = _AMPLITUDE_KIND.match(spec.value.strip())
    rms = bool(match) and match.group(2).lower() == "rms"  # type: ignore[union-attr]
    text = match.group(1) if match else spec.value
    what = f"the {spec.kind} of {spec.id}"
    amplitude = read_value(text, _KIND_UNIT[spec.kind], what, file=path, line=spec.line)
    omega = None
    if spec.frequency is not None:
        omega = read_frequency(spec.frequency, f"the frequency of {spec.id}", file=path, line=spec.line)
    elif rms:
        raise WorksheetError(
            f'{spec.id} is a constant source (no frequency), so "rms" has no meaning; remove it or give a frequency',
            file=path,
            line=spec.line,
        )
    if spec.phase is not None and omega is None:
        raise WorksheetError(f"{spec.id} has a phase but no frequency; give it a frequency", file=path, line=spec.line)
    peak = amplitude * sympy.sqrt(2) if rms else amplitude
    return peak, _time_keys(spec, path, Source(peak=peak, omega=omega, phase=_phase(spec, path), rms_written=rms))


_SHAPES = ("constant", "sine", "step", "pulse", "points")


def _time_keys(spec: PartSpec, path: str, source: Source) -> Source:
    """Read a source's time-domain keys (shape, offset, delay, damping, pulse, points)."""
    unit = _KIND_UNIT[spec.kind]
    shape = str(spec.get("shape") or ("sine" if source.omega is not None else "points" if spec.get("points") else "constant"))
    where = {"file": path, "line": spec.line}
    if shape not in _SHAPES:
        raise WorksheetError(f'shape "{shape}" of {spec.id} must be one of: {", ".join(_SHAPES)}', **where)
    if (shape == "sine") != (source.omega is not None):
        raise WorksheetError(
            f'{spec.id} has shape "{shape}"' + (" but no frequency" if shape == "sine" else " and a frequency")
            + '; only shape "sine" takes a frequency',
            **where,
        )
    if source.rms_written and shape != "sine":
        raise WorksheetError(f'{spec.id} is not a sinusoid, so "rms" has no meaning; remove it', **where)

    def time(key: str, *, positive: bool = False) -> sympy.Expr | None:
        text = spec.get(key)
        if text is None:
            return None
        value = read_value(str(text), "s", f"{key} of {spec.id}", **where)
        if value < 0 or (positive and value == 0):
            raise WorksheetError(f"{key} of {spec.id} is {text}; it must be {'more than' if positive else 'at least'} 0 s", **where)
        return value

    def level(key: str) -> sympy.Expr | None:
        text = spec.get(key)
        return None if text is None else read_value(str(text), unit, f"{key} of {spec.id}", **where)

    damping_text = spec.get("damping")
    damping = sympy.Integer(0)
    if damping_text is not None:
        damping = read_value(str(damping_text), "Hz", f"damping of {spec.id}", **where)
        if damping < 0:
            raise WorksheetError(f"damping of {spec.id} is {damping_text}; a growing envelope is not accepted", **where)
        if shape != "sine":
            raise WorksheetError(f"damping of {spec.id} applies to a sinusoid only (shape \"sine\")", **where)
    pulse_keys = ("width", "period", "rise", "fall")
    if shape != "pulse" and any(spec.get(k) is not None for k in pulse_keys):
        raise WorksheetError(f'width, period, rise and fall of {spec.id} need shape = "pulse"', **where)
    if spec.get("low") is not None and shape not in ("pulse", "step"):
        raise WorksheetError(f'low of {spec.id} needs shape = "pulse" or "step"', **where)
    changes: dict[str, object] = {
        "shape": shape,
        "offset": level("offset") or sympy.Integer(0),
        "delay": time("delay") or sympy.Integer(0),
        "damping": damping,
        "low": level("low") or sympy.Integer(0),
    }
    if shape == "pulse":
        width, period = time("width", positive=True), time("period", positive=True)
        if width is None or period is None:
            raise WorksheetError(f'{spec.id} has shape "pulse" and needs width and period', **where)
        rise, fall = time("rise") or sympy.Integer(0), time("fall") or sympy.Integer(0)
        if rise + width + fall > period:
            raise WorksheetError(f"rise + width + fall of {spec.id} is longer than its period", **where)
        changes.update(width=width, period=period, rise=rise, fall=fall)
    points = spec.get("points")
    if shape == "points":
        if not points:
            raise WorksheetError(f'{spec.id} has shape "points" and needs points = [["0 s", "0 V"], ...]', **where)
        pairs = tuple(
            (read_value(t, "s", f"a time in points of {spec.id}", **where), read_value(v, unit, f"a value in points of {spec.id}", **where))
            for t, v in points  # type: ignore[union-attr]
        )
        times = [t for t, _ in pairs]
        if times[0] < 0 or any(b <= a for a, b in zip(times, times[1:])):
            raise WorksheetError(f"the times in points of {spec.id} must start at 0 s or later and increase", **where)
        changes["points"] = pairs
    elif points:
        raise WorksheetError(f'points of {spec.id} need shape = "points"', **where)
    return dataclasses.replace(source, **changes)  # type: ignore[arg-type]


_RATIO = re.compile(r"\s*([0-9.]+(?:[eE][+-]?\d+)?)\s*:\s*([0-9.]+(?:[eE][+-]?\d+)?)\s*\Z")


def _part(spec: PartSpec, path: str) -> Part:
    kind = spec.kind
    line = spec.line
    source = None
    initial = None
    if kind in ("voltage", "current"):
        value, source = _source(spec, path)
    elif kind == "switch":
        action = spec.value.strip().lower()
        if action not in ("opens", "closes"):
            raise WorksheetError(f'switch {spec.id} must be written switch = "opens" or "closes" (at t = 0)', file=path, line=line)
        value = sympy.Integer(1 if action == "closes" else 0)
    elif kind == "opamp":
        if spec.value.strip().lower() != "ideal":
            raise WorksheetError(f'op-amp {spec.id} must be written opamp = "ideal"', file=path, line=line)
        value = sympy.Integer(0)
    elif kind == "transformer":
        match = _RATIO.match(spec.value)
        if not match:
            raise WorksheetError(f'transformer {spec.id} needs a turns ratio like "10:1", not "{spec.value}"', file=path, line=line)
        n1, n2 = (read_value(g, "", f"the turns of {spec.id}", file=path, line=line) for g in match.groups())
        if n1 <= 0 or n2 <= 0:
            raise WorksheetError(f'transformer {spec.id} has a turns ratio "{spec.value}" with a zero; both turns must be positive', file=path, line=line)
        value = n2 / n1
    elif kind == "coupling":
        value = read_value(spec.value, "", f"the coupling coefficient of {spec.id}", file=path, line=line)
        if not -1 <= value <= 1:
            raise WorksheetError(f"the coupling coefficient of {spec.id} is {spec.value}; it must lie in [-1, 1]", file=path, line=line)
    else:
        value = read_value(spec.value, _KIND_UNIT.get(kind, ""), f"the {kind} value of {spec.id}", file=path, line=line)
        if kind in ("resistor", "inductor", "capacitor") and value <= 0:
            hint = (
                "; for a short circuit use a 0 V voltage source, for an open circuit leave the part out"
                if value == 0
                else ""
            )
            raise WorksheetError(f"{spec.id} has {kind} value {spec.value}; it must be positive{hint}", file=path, line=line)
        if spec.initial is not None:
            unit = {"capacitor": "V", "inductor": "A"}.get(kind)
            if unit is None:
                raise WorksheetError(f'{spec.id} is a {kind}; only capacitors and inductors take "initial"', file=path, line=line)
            initial = read_value(spec.initial, unit, f"the initial value of {spec.id}", file=path, line=line)
    return Part(
        id=spec.id,
        kind=kind,
        nodes=spec.nodes,
        value=value,
        source=source,
        control=spec.control,
        inductors=spec.inductors,
        initial=initial,
        line=line,
    )


def _analysis_omega(worksheet: Worksheet, parts: tuple[Part, ...]) -> sympy.Expr:
    if worksheet.frequency is not None:
        return read_frequency(
            worksheet.frequency, "the analysis frequency", file=worksheet.path, line=worksheet.line_of("frequency")
        )
    omegas: list[sympy.Expr] = []
    for part in parts:
        if part.source is not None and part.source.omega is not None:
            if not any(sympy.simplify(part.source.omega - o) == 0 for o in omegas):
                omegas.append(part.source.omega)
    if len(omegas) > 1:
        raise WorksheetError(
            "the sources run at more than one frequency; set frequency = \"...\" in [worksheet] to choose the analysis frequency",
            file=worksheet.path,
            line=dict(worksheet.lines).get("title"),
        )
    return omegas[0] if omegas else sympy.Integer(0)


def build(worksheet: Worksheet) -> Circuit:
    """Turn the worksheet's parts into a checked, exact circuit.

    Raises
    ------
    WorksheetError, UnitError
        For a value in the wrong unit or out of range.
    CircuitError
        For a circuit that cannot be solved as drawn (see :func:`check_structure`).
    """
    try:
        return _build(worksheet)
    except HandcheckError as exc:
        raise one_line(exc) from None


def _build(worksheet: Worksheet) -> Circuit:
    parts = tuple(_part(spec, worksheet.path) for spec in worksheet.parts)
    nodes: dict[str, None] = {}
    for part in parts:
        for node in part.nodes:
            if node != GROUND:
                nodes.setdefault(node, None)
    circuit = Circuit(
        parts=parts,
        nodes=tuple(nodes),
        omega=_analysis_omega(worksheet, parts),
        phasors=worksheet.phasors,
        path=worksheet.path,
        start=dict(worksheet.transient).get("start", "rest"),  # type: ignore[arg-type]
    )
    named = frozenset(
        word for step in worksheet.steps if step.quantity for word in re.findall(r"[A-Za-z0-9_]+", step.quantity)
    )
    check_structure(circuit, named)
    return circuit
