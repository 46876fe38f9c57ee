"""The terminal report: a table of steps, the diagnosis under each, one summary line."""

from __future__ import annotations

import textwrap
from collections import Counter
from typing import Any

from handcheck.verify.findings import Report, StepFinding

__all__ = ["render"]

_MARK = {"agrees": "ok", "unchecked": "--"}


def _verdict(step: StepFinding) -> str:
    if step.verdict == "carried" and step.caused_by:
        return f"carried from {step.caused_by}"
    return step.verdict


def _wrap(text: str, indent: int, width: int = 100) -> list[str]:
    return textwrap.wrap(text, width=width, initial_indent=" " * indent, subsequent_indent=" " * (indent + 2))


def render(report: Report, version: str, evidence: Any = None, audit: tuple[Any, ...] = ()) -> str:
    """The whole report as text for a terminal (with the numerical evidence and the formula audit, if given)."""
    from handcheck.record.audit import audit_lines

    lines = [f"handcheck {version}: {report.title}", f"worksheet {report.path} (sha256 {report.sha256[:16]})"]
    if report.reference:
        lines.append(f"reference {report.reference}")
    if report.analysis:
        lines.append(f"analysis  {report.analysis}")
    lines.append("")
    rows = [("", "step", "claimed", "exact", "verdict")]
    first = report.first_divergence
    for step in report.steps:
        marker = ">>" if step.name == first else _MARK.get(step.verdict, "!!")
        rows.append((marker, step.name, step.claimed, step.expected or "", _verdict(step)))
    widths = [max(len(row[k]) for row in rows) for k in range(5)]
    for index, row in enumerate(rows):
        lines.append("  ".join(cell.ljust(widths[k]) for k, cell in enumerate(row)).rstrip())
        if index == 0:
            continue
        step = report.steps[index - 1]
        indent = widths[0] + 2
        if step.name == first:
            lines.extend(_wrap("first divergence: the hand calculation goes wrong here", indent))
        if step.recomputed and step.verdict in ("arithmetic", "formula", "carried"):
            lines.extend(_wrap(f"from the author's own formula and numbers: {step.recomputed}", indent))
        if step.message and step.verdict != "agrees":
            lines.extend(_wrap(step.message, indent))
        for diagnosis in step.diagnosis:
            lines.extend(_wrap(f"likely mistake ({diagnosis.mistake}): {diagnosis.detail}", indent))
        carried = [s.name for s in report.steps if s.caused_by == step.name and s.verdict == "carried"]
        if carried:
            lines.extend(_wrap(f"carried into: {', '.join(carried)}", indent))
    if evidence is not None:
        from handcheck.verify.evidence import describe

        lines.append("")
        lines.extend(describe(evidence))
    lines.extend(audit_lines(audit))
    for note in report.notes:
        lines.append("")
        lines.extend(_wrap("NOTE: " + note, 0))
    for caution in report.cautions:
        lines.append("")
        lines.extend(_wrap("CAUTION: " + caution, 0))
    counts = Counter(step.verdict for step in report.steps)
    summary = ", ".join(f"{n} {verdict}" for verdict, n in counts.items())
    lines.append("")
    ok = report.ok and all(finding.ok for finding in audit)
    status = "OK" if ok else "NOT OK"
    tail = f"; first divergence: {first}" if first else ""
    count = f"{len(report.steps)} step{'s' if len(report.steps) != 1 else ''}"
    if audit:
        differ = sum(not finding.ok for finding in audit)
        count += f", {len(audit)} audited formula{'s' if len(audit) != 1 else ''} ({differ} not equivalent)"
    summary = f" ({summary})" if summary else ""
    lines.append(f"{status}: {count}{summary}{tail}")
    return "\n".join(lines)
