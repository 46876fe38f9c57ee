"""The record model: everything a calculation record shows, as plain data.

:func:`build_record` turns the inputs (:mod:`handcheck.record.inputs`) into one
dictionary in the order of the record (docs/record.md). The JSON record is this
dictionary; the HTML and Markdown records are rendered from it. Formulas and exact
values carry their typeset forms (presentation MathML and LaTeX from sympy's
printers, :mod:`handcheck.record.formula`).
"""

from __future__ import annotations

import cmath
import math
import os
import platform
from collections import Counter
from datetime import UTC, datetime
from typing import Any

import sympy

from handcheck.record.formula import (
    exact_display,
    latex_of,
    mathml_of,
    number_display,
    typeset_formula,
    written_value,
)
from handcheck.record.inputs import Inputs

__all__ = ["RECORD_FORMAT", "build_record", "record_date", "results_of", "versions"]

#: The version of the record format (docs/record.md); raised on any incompatible change.
RECORD_FORMAT = 1
#: Libraries whose versions a record names: every one that computed a result or wrote the record.
LIBRARIES = ("sympy", "python-flint", "mpmath", "numpy", "scipy", "pint", "matplotlib", "jinja2")
_PREFIXES = (
    (1e12, "T"),
    (1e9, "G"),
    (1e6, "M"),
    (1e3, "k"),
    (1, ""),
    (1e-3, "m"),
    (1e-6, "µ"),
    (1e-9, "n"),
    (1e-12, "p"),
)
_UNITS = {"resistor": "Ω", "inductor": "H", "capacitor": "F", "voltage": "V", "current": "A", "vccs": "S", "ccvs": "Ω"}


def versions() -> dict[str, str]:
    """The versions of handcheck, Python and each library a record depends on."""

    found = {"handcheck": _version("handcheck"), "python": platform.python_version()}
    for name in LIBRARIES:
        found[name] = _version(name)
    return found


def _version(name: str) -> str:
    from importlib import metadata

    try:
        return metadata.version(name)
    except metadata.PackageNotFoundError:
        return "not installed"


def record_date() -> str:
    """The record's date: ``SOURCE_DATE_EPOCH`` when set (reproducible builds), else now (UTC)."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    if epoch and epoch.strip().isdigit():
        moment = datetime.fromtimestamp(int(epoch), tz=UTC)
    else:
        moment = datetime.now(tz=UTC).replace(microsecond=0)
    return moment.strftime("%Y-%m-%dT%H:%M:%SZ")


def engineering(value: float, unit: str, digits: int = 4) -> str:
    """``value`` with an SI prefix, ``digits`` significant digits: ``4.7 kΩ``, ``470 nF``."""
    if value == 0 or not math.isfinite(value):
        return f"{value:g} {unit}".strip()
    scale, prefix = next(((s, p) for s, p in _PREFIXES if abs(value) >= s * 0.9999995), _PREFIXES[-1])
    return f"{value / scale:.{digits}g} {prefix}{unit}".strip()


def _typeset(expr: sympy.Expr | None) -> dict[str, str | None]:
    if expr is None:
        return {"mathml": None, "latex": None}
    try:
        return {"mathml": mathml_of(expr), "latex": latex_of(expr)}
    except (TypeError, ValueError, RecursionError, AttributeError):
        return {"mathml": None, "latex": None}


def _number(x: float | None) -> float | None:
    if x is None or not math.isfinite(x):
        return None
    return float(f"{x:.15g}")


def _written_keys(text: str) -> dict[str, dict[str, Any]]:
    """The ``[parts]`` table as written (TOML data, for the keys beside a source's value)."""
    import tomllib

    try:
        parts = tomllib.loads(text).get("parts", {})
    except tomllib.TOMLDecodeError:
        return {}
    return {k: v for k, v in parts.items() if isinstance(v, dict)} if isinstance(parts, dict) else {}


def _source_phasor(spec: Any, circuit: Any) -> sympy.Expr | None:
    function = getattr(spec, "source", None)
    if function is None:
        return None
    try:
        return function.steady(circuit.omega)
    except (AttributeError, TypeError, ValueError):
        return None


def _engineering_phasor(phasor: sympy.Expr, unit: str) -> str:
    """A phasor as its size in engineering notation and its angle in degrees."""
    value = complex(sympy.N(phasor, 15))
    size = engineering(abs(value), unit)
    angle = math.degrees(cmath.phase(value))
    return size if abs(angle) < 1e-9 else f"{size} ∠ {angle:.6g}°"


def _circuit(inputs: Inputs) -> dict[str, Any]:
    circuit, sheet = inputs.circuit, inputs.worksheet
    written = {part.id: part for part in sheet.parts}
    keys = _written_keys(sheet.text)
    parts, sources = [], []
    for part in circuit.parts:
        spec = written.get(part.id)
        value = part.value
        is_source = part.kind in ("voltage", "current") and spec is not None
        phasor = _source_phasor(spec, circuit) if is_source else None
        if phasor is not None and value == 0 and phasor != 0:
            # A sinusoidal source: its value is the phasor (the DC value is zero).
            engineered = _engineering_phasor(phasor, _UNITS.get(part.kind, ""))
            value = phasor.xreplace({sympy.I: sympy.Symbol("j")})
        else:
            try:
                numeric = float(sympy.N(value, 15)) if value.is_real else None
            except (TypeError, ValueError):
                numeric = None
            engineered = engineering(numeric, _UNITS.get(part.kind, "")) if numeric is not None else sympy.sstr(value)
        parts.append(
            {
                "id": part.id,
                "kind": part.kind,
                "nodes": list(part.nodes),
                "written": spec.value if spec else "",
                "exact": sympy.sstr(value),
                "exact_typeset": _typeset(value),
                "engineering": engineered,
            }
        )
        if is_source and spec is not None:
            raw = keys.get(part.id, {})
            sources.append(
                {
                    "id": part.id,
                    "kind": part.kind,
                    "nodes": list(part.nodes),
                    "time_function": spec.value,
                    "frequency": raw.get("frequency") if isinstance(raw.get("frequency"), str) else None,
                    "phase": raw.get("phase") if isinstance(raw.get("phase"), str) else None,
                    "phasor": sympy.sstr(phasor) if phasor is not None else None,
                    "phasor_typeset": _typeset(
                        phasor.xreplace({sympy.I: sympy.Symbol("j")}) if phasor is not None else None
                    ),
                }
            )
    return {
        "analysis": inputs.report.analysis,
        "phasors": circuit.phasors,
        "start": circuit.start,
        "nodes": ["gnd", *circuit.nodes],
        "parts": parts,
        "sources": sources,
    }


def _step_values(sheet: Any, circuit: Any) -> dict[str, sympy.Expr]:
    """The author's numbers for each name a formula may use: part values as written, a
    source's phasor and the gain of a dependent source as the formula sees them, ``f``
    and ``w`` (the analysis frequency; ``w`` as 2*pi*f when f is a whole or decimal
    number), and (added by the caller) earlier claims as claimed."""
    from handcheck.circuit.kinds import KINDS

    values: dict[str, sympy.Expr] = {}
    for part in sheet.parts:
        shown = written_value(part.value) if isinstance(part.value, str) else None
        if shown is not None and part.kind in ("resistor", "inductor", "capacitor"):
            values[part.id] = shown
    for part in circuit.parts:
        if part.source is not None:
            values[part.id] = number_display(part.source.phasor(circuit.phasors, circuit.omega), KINDS[part.kind].unit)
        elif part.kind in ("vcvs", "cccs", "vccs", "ccvs") and part.value is not None:
            values.setdefault(part.id, number_display(part.value, KINDS[part.kind].unit))
    f = circuit.frequency
    values["f"] = number_display(f, "Hz")
    if f.is_Rational and f != 0:
        values["w"] = sympy.Mul(2, sympy.pi, values["f"], evaluate=False)
    else:
        values["w"] = number_display(circuit.omega, "rad/s")
    return values


def _step(step: Any, spec: Any, names: frozenset[str], values: dict[str, sympy.Expr]) -> dict[str, Any]:
    formula = typeset_formula(step.formula, names) if step.formula else None
    substituted = typeset_formula(step.formula, names, values) if step.formula else None
    exact_expr, decimal = (None, None)
    if step.exact is not None:
        try:
            exact_expr, decimal = exact_display(step.exact)
        except (TypeError, ValueError, AttributeError):
            exact_expr, decimal = None, None
    claimed = written_value(step.claimed)
    return {
        "name": step.name,
        "line": step.line,
        "quantity": step.quantity,
        "formula": step.formula,
        "formula_typeset": _typeset(formula),
        "substituted_typeset": _typeset(substituted),
        "claimed": step.claimed,
        "claimed_typeset": _typeset(claimed),
        "exact": sympy.sstr(step.exact) if step.exact is not None and exact_expr is not None else None,
        "exact_typeset": _typeset(exact_expr),
        "exact_decimal": decimal,
        "expected": step.expected,
        "expected_si": [_number(v) for v in step.expected_si] if step.expected_si else None,
        "error": _number(step.error),
        "tolerance": spec.tolerance if spec is not None else None,
        "verdict": step.verdict,
        "caused_by": step.caused_by,
        "basis": step.basis,
        "recomputed": step.recomputed,
        "message": step.message,
        "diagnosis": [{"mistake": d.mistake, "detail": d.detail} for d in step.diagnosis],
        "notes": list(step.notes),
    }


def _audit_entry(finding: Any) -> dict[str, Any]:
    """One audited formula: the ``audit`` keys of check output format 1, and the rows
    the terminal shows (label, text) for the record's table."""
    from handcheck.record.audit import audit_dict, audit_rows

    return {**audit_dict(finding), "ok": finding.ok, "rows": [[label, text] for label, text in audit_rows(finding)]}


def _summary(report: Any, steps: list[dict[str, Any]], audit: tuple[Any, ...]) -> dict[str, Any]:
    verdicts = Counter(step["verdict"] for step in steps)
    audited = Counter(finding.verdict for finding in audit)
    bases = Counter(step["basis"] for step in steps if step["basis"])
    first = report.first_divergence
    mistake = None
    ordered = sorted(steps, key=lambda s: s["name"] != first)
    for step in ordered:
        if step["diagnosis"]:
            mistake = {"step": step["name"], **step["diagnosis"][0]}
            break
    steps_ok = report.ok
    audit_ok = all(finding.ok for finding in audit)
    if steps_ok and audit_ok:
        status = "Every step agrees or is unchecked" + (", and every audited formula holds." if audit else ".")
    elif steps_ok:
        status = "Every step agrees or is unchecked, but an audited formula differs from the circuit."
    else:
        status = "Not every step agrees" + ("." if audit_ok else ", and an audited formula differs from the circuit.")
    return {
        "ok": steps_ok and audit_ok,
        "status": status,
        "steps": len(steps),
        "audit_counts": dict(sorted(audited.items())) if audit else None,
        "verdict_counts": dict(sorted(verdicts.items())),
        "basis_counts": dict(sorted(bases.items())) if bases else None,
        "first_divergence": first,
        "likely_mistake": mistake,
    }


def results_of(record: dict[str, Any]) -> dict[str, Any]:
    """The results a later re-run must reproduce: per step and per audit entry."""
    results: dict[str, Any] = {}
    for step in record["steps"]:
        results[f"step {step['name']}"] = {
            key: step[key] for key in ("verdict", "expected", "expected_si", "error", "caused_by", "basis", "exact")
        } | {"diagnosis": [d["mistake"] for d in step["diagnosis"]]}
    for index, entry in enumerate(record["audit"]):
        name = entry.get("name", str(index)) if isinstance(entry, dict) else str(index)
        results[f"audit {name}"] = entry
    evidence = record.get("evidence")
    if evidence is not None:
        results["evidence"] = {"ok": not evidence.get("problems"), "problems": evidence.get("problems", [])}
    return results


def build_record(inputs: Inputs, plots: list[dict[str, str]] | None = None) -> dict[str, Any]:
    """The whole record as plain data, in the record's order.

    Parameters
    ----------
    inputs : Inputs
        The worksheet, circuit, report and evidence.
    plots : list of dict, optional
        Plots already drawn (``title`` and ``svg`` text).

    Returns
    -------
    dict
        The record (docs/record.md), without its digest.
    """
    from handcheck.record.jsonout import evidence_dict

    sheet, report = inputs.worksheet, inputs.report
    specs = {spec.name: spec for spec in sheet.steps}
    names = frozenset([p.id for p in sheet.parts] + [s.name for s in sheet.steps] + ["f", "w", "j", "pi"])
    values = _step_values(sheet, inputs.circuit)
    steps = []
    for step in report.steps:
        steps.append(_step(step, specs.get(step.name), names, values))
        shown = written_value(step.claimed)
        if shown is not None:
            values[step.name] = shown
    record: dict[str, Any] = {
        "record_format": RECORD_FORMAT,
        "kind": "handcheck calculation record",
        "title": report.title,
        "reference": report.reference,
        "date": record_date(),
        "author": getattr(sheet, "author", None),
        "checker": getattr(sheet, "checker", None),
        "summary": _summary(report, steps, inputs.audit),
        "circuit": _circuit(inputs),
        "steps": steps,
        "audit": [_audit_entry(finding) for finding in inputs.audit],
        "evidence": evidence_dict(inputs.evidence) if inputs.evidence is not None else None,
        "evidence_problem": inputs.evidence_problem,
        "plots": [{"title": p["title"], "file": p.get("file")} for p in plots or []],
        "cautions": list(report.cautions),
        "notes": list(report.notes),
        "worksheet": {"path": sheet.path, "sha256": sheet.sha256, "text": sheet.text},
        "versions": versions(),
    }
    record["results"] = results_of(record)
    return record
