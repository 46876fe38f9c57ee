"""Check output format 1: one JSON object (see DESIGN.md, "Check output format 1")."""

from __future__ import annotations

import math
from typing import Any

from handcheck.verify.findings import Report, StepFinding

__all__ = ["evidence_dict", "report_dict"]


def _number(x: float | None) -> float | None:
    if x is None or not math.isfinite(x):
        return None
    return float(f"{x:.15g}")


def _step(step: StepFinding) -> dict[str, Any]:
    return {
        "name": step.name,
        "verdict": step.verdict,
        "claimed": step.claimed,
        "expected": step.expected,
        "expected_si": [_number(v) for v in step.expected_si] if step.expected_si else None,
        "error": _number(step.error),
        "caused_by": step.caused_by,
        "diagnosis": [{"mistake": d.mistake, "detail": d.detail} for d in step.diagnosis],
        # Second edition (DESIGN.md, "Check output format 1: second-edition keys"):
        "basis": step.basis,
        "notes": list(step.notes),
        # Extensions of format 1 (new keys only):
        "quantity": step.quantity,
        "formula": step.formula,
        "recomputed": step.recomputed,
        "message": step.message,
        "line": step.line,
    }


def report_dict(report: Report, version: str, audit: tuple[Any, ...] = ()) -> dict[str, Any]:
    """The report as check output format 1 (plus extension keys); ``audit`` holds the
    formula audit's findings (an audit formula that differs makes ``ok`` false)."""
    audited: list[dict[str, Any]] = []
    if audit:  # the audit's modules are loaded only for a worksheet that has one
        from handcheck.record.audit import audit_dict

        audited = [audit_dict(finding) for finding in audit]
    return {
        "handcheck": version,
        "worksheet": report.path,
        "sha256": report.sha256,
        "ok": report.ok and all(finding.ok for finding in audit),
        "first_divergence": report.first_divergence,
        "steps": [_step(step) for step in report.steps],
        "audit": audited,
        "title": report.title,
        "analysis": report.analysis,
        "cautions": list(report.cautions),
        "notes": list(report.notes),
    }


def evidence_dict(evidence: Any) -> dict[str, Any]:
    """The numerical evidence as plain data (an extension of check output format 1)."""
    return {
        "rules": evidence.rules,
        "step": _number(evidence.step),
        "span": _number(evidence.span),
        "samples": evidence.samples,
        "settling": evidence.settling,
        "long_enough": evidence.long_enough,
        "periods_to_settle": _number(evidence.periods_to_settle),
        "kcl_residual": _number(evidence.kcl_relative),
        "phasor_agreement": _number(evidence.phasor_agreement),
        # the evidence's phasors are peak values whatever the worksheet's convention (said here)
        "phasors_are": "peak",
        "phasors": [
            {"signal": name, "fitted": [_number(f.real), _number(f.imag)], "exact": [_number(e.real), _number(e.imag)]}
            for name, f, e in evidence.phasors
        ],
        "waveform_agreement": {name: _number(value) for name, value in evidence.waveforms},
        "agreement": _number(evidence.agreement),
        "problems": list(evidence.problems),
        "notes": list(evidence.notes),
    }
