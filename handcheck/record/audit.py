"""The formula audit for people and programs: the ``audit`` list of check output format 1
and one terminal block per formula (Format 1, second edition)."""

from __future__ import annotations

import math
import re
import textwrap
from typing import Any

from handcheck.audit.findings import AuditFinding
from handcheck.record.model import engineering

__all__ = ["audit_dict", "audit_lines", "audit_rows", "error_subject"]


def _number(x: float | None) -> float | None:
    if x is None or not math.isfinite(x):
        return None
    return float(f"{x:.15g}")


def audit_dict(finding: AuditFinding) -> dict[str, Any]:
    """One entry of the ``audit`` list: the contract's keys, then extension keys."""
    worst, mc = finding.worst_case, finding.monte_carlo
    return {
        "name": finding.name,
        "quantity": finding.quantity,
        "verdict": finding.verdict,
        "true_expression": finding.true_expression,
        "holds_when": list(finding.holds_when),
        "nominal_error": _number(finding.nominal_error),
        "worst_case_error": [_number(worst.low), _number(worst.high)] if worst else None,
        "worst_case_at": {name: _number(value) for name, value in worst.at} if worst else None,
        "monte_carlo": (
            {
                "samples": mc.samples,
                "mean": _number(mc.mean),
                "std": _number(mc.std),
                "p01": _number(mc.p01),
                "p99": _number(mc.p99),
            }
            if mc
            else None
        ),
        "diagnosis": [{"mistake": d.mistake, "detail": d.detail} for d in finding.diagnosis],
        # Extensions (new keys only):
        "expression": finding.expression,
        "reference": finding.reference,
        "unit": finding.unit,
        "method": finding.method,
        "worst_case_method": worst.method if worst else None,
        "worst_case_bounds": [_number(b) for b in worst.bounds] if worst and worst.bounds else None,
        "worst_case_complete": worst.complete if worst else None,
        "distribution": mc.distribution if mc else None,
        "seed": mc.seed if mc else None,
        "notes": list(finding.notes),
        "line": finding.line,
        "error_frequency": _number(finding.error_frequency),
    }


def _percent(x: float | None) -> str:
    if x is None:
        return "-"
    if x == 0:
        return "0 %"
    return f"{x * 100:+.4g} %"


def _part_value(value: float, unit: str) -> str:
    """A part's SI value as an engineer writes it (``17.6 uH``); a plain number (a gain) as is."""
    return engineering(value, unit, digits=6) if unit else f"{value:.6g}"


def error_subject(finding: AuditFinding) -> str:
    """What a function of s's errors are taken of: its value at DC, or its magnitude at the analysis frequency."""
    hz = finding.error_frequency
    if not hz:
        return "the value at DC (s = 0)"
    ratio = "|F(jw)|/|T(jw)| - 1" if finding.verdict != "spread" else "|T(jw)|/|T_nominal(jw)| - 1"
    return f"the magnitude at {engineering(hz, 'Hz')}: {ratio}"


#: A number and the unit after it (and ``name = value``), kept on one line when a row is wrapped.
_VALUE_UNIT = re.compile(r"(\d) (?=\S{0,2}(?:ohm|F|H|S|Hz)\b)")


def _wrap(text: str, indent: int = 2) -> list[str]:
    joined = _VALUE_UNIT.sub("\\1\u00a0", text).replace(" = ", "\u00a0=\u00a0")
    lines = textwrap.wrap(joined, width=100, initial_indent=" " * indent, subsequent_indent=" " * (indent + 4))
    return [line.replace("\u00a0", " ") for line in lines]


def audit_rows(finding: AuditFinding) -> list[tuple[str, str]]:
    """One formula's audit as (label, text) rows: its formula, true expression, where it
    holds, and its errors at the nominal values, in the worst case and by Monte Carlo.

    The terminal block and the calculation record both show these rows.
    """
    f = finding
    rows: list[tuple[str, str]] = [("quantity", f.quantity)]
    if f.expression:
        rows.append(("formula", f.expression + (f"  ({f.reference})" if f.reference else "")))
    rows.append(("exact", f.true_expression.replace("**", "^") + (f"  [{f.unit}]" if f.unit else "")))
    rows.append(("how", f.method))
    if f.verdict == "differs":
        rows.append(("holds when", ", ".join(f.holds_when) if f.holds_when else "no single condition found"))
    if f.verdict == "equivalent" and _exactly_zero(f):
        rows.append(("error", "none: the formula is the quantity exactly, at every value of the symbols"))
        rows.extend(("note", note) for note in f.notes)
        return rows
    what = "spread" if f.verdict == "spread" else "error"
    if f.error_frequency is not None and f.nominal_error is not None:
        rows.append((f"{what} of", error_subject(f)))
    if f.nominal_error is not None and f.verdict != "spread":  # a spread is 0 at nominal by definition
        rows.append((f"{what} at nominal", _percent(f.nominal_error)))
    if f.worst_case is not None:
        w = f.worst_case
        units = dict(f.units)
        at = ", ".join(f"{name} = {_part_value(value, units.get(name, ''))}" for name, value in w.at)
        spent = "" if w.complete else ", budget spent: bounds wider"
        where = f", largest in size at {at}" if at else ", the same everywhere"
        rows.append(("worst case", f"{_percent(w.low)} to {_percent(w.high)} ({w.method}{spent}){where}"))
    if f.monte_carlo is not None:
        m = f.monte_carlo
        rows.append(
            (
                "Monte Carlo",
                f"({m.samples:,} {m.distribution} samples, seed {m.seed}): mean {_percent(m.mean)}, "
                f"std {m.std * 100:.4g} %, 1st to 99th percentile {_percent(m.p01)} to {_percent(m.p99)}",
            )
        )
    rows.extend(("likely mistake", f"({d.mistake}): {d.detail}") for d in f.diagnosis)
    rows.extend(("note", note) for note in f.notes)
    return rows


def _exactly_zero(f: AuditFinding) -> bool:
    """Whether every error the audit found is exactly 0 (the nominal one, both ends of the
    worst case, and every Monte Carlo figure), so that rows of zeros would say nothing."""
    figures = [f.nominal_error]
    if f.worst_case is not None:
        figures += [f.worst_case.low, f.worst_case.high]
    if f.monte_carlo is not None:
        m = f.monte_carlo
        figures += [m.mean, m.std, m.p01, m.p99]
    return all(x == 0 for x in figures)


def _terminal_row(label: str, text: str) -> str:
    if label in ("formula", "exact", "how", "error"):
        return f"{label:<8} {text}"
    if label == "note":
        return f"note: {text}"
    return f"{label} {text}"


def audit_lines(findings: tuple[AuditFinding, ...]) -> list[str]:
    """The terminal block of the audit: per formula a verdict line, then its rows
    (:func:`audit_rows`)."""
    if not findings:
        return []
    lines = ["", "formula audit"]
    for f in findings:
        mark = "ok" if f.ok else "!!"
        lines.append(f"{mark} {f.name}: {f.quantity}  {f.verdict}")
        for label, text in audit_rows(f)[1:]:  # the quantity is on the verdict line
            lines.extend(_wrap(_terminal_row(label, text)))
    return lines
