"""The formula audit for people and programs: the ``audit`` list of check output format 1
and one terminal block per formula (Format 1, second edition)."""

from __future__ import annotations

import math
import textwrap
from typing import Any

from handcheck.audit.findings import AuditFinding

__all__ = ["audit_dict", "audit_lines"]


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
    }


def _percent(x: float | None) -> str:
    if x is None:
        return "-"
    if x == 0:
        return "0 %"
    return f"{x * 100:+.4g} %"


def _wrap(text: str, indent: int = 2) -> list[str]:
    return textwrap.wrap(text, width=100, initial_indent=" " * indent, subsequent_indent=" " * (indent + 4))


def audit_lines(findings: tuple[AuditFinding, ...]) -> list[str]:
    """The terminal block of the audit: per formula its verdict, true expression, where
    it holds, and its errors at the nominal values, in the worst case and by Monte Carlo."""
    if not findings:
        return []
    lines = ["", "formula audit"]
    for f in findings:
        mark = "ok" if f.ok else "!!"
        lines.append(f"{mark} {f.name}: {f.quantity}  {f.verdict}")
        if f.expression:
            lines.extend(_wrap(f"formula  {f.expression}" + (f"  ({f.reference})" if f.reference else "")))
        lines.extend(_wrap(f"exact    {f.true_expression}" + (f"  [{f.unit}]" if f.unit else "")))
        lines.extend(_wrap(f"how      {f.method}"))
        if f.verdict == "differs":
            lines.extend(
                _wrap("holds when " + (", ".join(f.holds_when) if f.holds_when else "no single condition found"))
            )
        if f.nominal_error is not None:
            what = "spread" if f.verdict == "spread" else "error"
            lines.extend(_wrap(f"{what} at nominal {_percent(f.nominal_error)}"))
        if f.worst_case is not None:
            w = f.worst_case
            at = ", ".join(f"{name} = {value:.6g}" for name, value in w.at)
            lines.extend(
                _wrap(
                    f"worst case {_percent(w.low)} to {_percent(w.high)} ({w.method}{'' if w.complete else ', budget spent: bounds wider'}), largest at {at}"
                )
            )
        if f.monte_carlo is not None:
            m = f.monte_carlo
            lines.extend(
                _wrap(
                    f"Monte Carlo ({m.samples:,} {m.distribution} samples, seed {m.seed}): mean {_percent(m.mean)}, "
                    f"std {m.std * 100:.4g} %, 1st to 99th percentile {_percent(m.p01)} to {_percent(m.p99)}"
                )
            )
        for d in f.diagnosis:
            lines.extend(_wrap(f"likely mistake ({d.mistake}): {d.detail}"))
        for note in f.notes:
            lines.extend(_wrap(f"note: {note}"))
    return lines
