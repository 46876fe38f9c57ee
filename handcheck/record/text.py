"""The terminal report: a table of steps, the notes and diagnosis under each, one summary line.

A step that agrees only with its own formula (basis ``formula``) is marked ``ok?`` and
counted apart from the agreements with the circuit.
"""

from __future__ import annotations

import shutil
import sys
import textwrap
from collections import Counter
from typing import Any

from handcheck.record.visible import visible
from handcheck.verify.findings import Report, StepFinding

__all__ = ["render", "step_notes"]

_MARK = {"agrees": "ok", "unchecked": "--"}
#: The wrapping width when standard output is no terminal.
_PLAIN_WIDTH = 100


def _own_formula_only(step: StepFinding) -> bool:
    """An agreement with the step's own formula, not checked against the circuit."""
    return step.verdict == "agrees" and step.basis == "formula"


def _verdict(step: StepFinding) -> str:
    if step.verdict == "carried" and step.caused_by:
        return f"carried from {step.caused_by}"
    if _own_formula_only(step):
        return "agrees with its own formula only"
    return step.verdict


def _marker(step: StepFinding, first: str | None) -> str:
    if step.name == first:
        return ">>"
    if _own_formula_only(step):
        return "ok?"
    return _MARK.get(step.verdict, "!!")


#: The order of the summary's counts: agreement first, then the verdicts of the
#: divergence in the order the causes are looked for, then what was not checked.
_ORDER = {v: i for i, v in enumerate(("agrees", "arithmetic", "formula", "carried", "differs", "unit", "unchecked"))}


def _counts(steps: tuple[StepFinding, ...]) -> str:
    """``"2 agrees, 1 unit"``; where a step agrees only with its own formula, the
    agreements are split: ``"2 agree with the circuit, 1 agrees with its own formula only"``."""
    counts = Counter(step.verdict for step in steps)
    own = sum(_own_formula_only(step) for step in steps)
    shown = []
    for verdict, n in sorted(counts.items(), key=lambda item: _ORDER.get(item[0], len(_ORDER))):
        if verdict == "agrees" and own:
            circuit = n - own
            if circuit:
                shown.append(f"{circuit} agree{'s' if circuit == 1 else ''} with the circuit")
            shown.append(f"{own} agree{'s' if own == 1 else ''} with {'its' if own == 1 else 'their'} own formula only")
        else:
            shown.append(f"{n} {verdict}")
    return ", ".join(shown)


def _wrap_to(text: str, indent: int, width: int = 100) -> list[str]:
    return textwrap.wrap(text, width=width, initial_indent=" " * indent, subsequent_indent=" " * (indent + 2))


def step_notes(report: Report, step: StepFinding) -> list[str]:
    """What is said under a step: the author's own recomputed value where it went wrong,
    every note, each likely mistake, and the steps it is carried into."""
    notes = []
    if step.recomputed and step.verdict in ("arithmetic", "formula", "carried"):
        notes.append(f"from the author's own formula and numbers: {step.recomputed}")
    notes.extend(step.notes or ((step.message,) if step.message and step.verdict != "agrees" else ()))
    notes.extend(f"likely mistake ({d.mistake}): {d.detail}" for d in step.diagnosis)
    carried = [s.name for s in report.steps if s.caused_by == step.name and s.verdict == "carried"]
    if carried:
        notes.append(f"carried into: {', '.join(carried)}")
    return notes


def _one_line(text: str) -> str:
    """Free text of several lines (a TOML multi-line title or reference) on one line."""
    return " ".join(text.split())


def terminal_width() -> int:
    """The width notes are wrapped to: the terminal's (60 to 160 columns) when standard
    output is one, else 100, so piped and logged output does not depend on a window."""
    if not sys.stdout.isatty():
        return _PLAIN_WIDTH
    return max(60, min(160, shutil.get_terminal_size((_PLAIN_WIDTH, 24)).columns))


def render(
    report: Report, version: str, evidence: Any = None, audit: tuple[Any, ...] = (), width: int | None = None
) -> str:
    """The whole report as text for a terminal (with the numerical evidence and the
    formula audit, if given); notes wrapped to ``width`` (default :func:`terminal_width`)."""
    columns = terminal_width() if width is None else width

    def _wrap(text: str, indent: int) -> list[str]:
        return _wrap_to(text, indent, columns)

    lines = [
        f"handcheck {version}: {_one_line(report.title)}",
        f"worksheet {report.path} (sha256 {report.sha256[:16]})",
    ]
    if report.reference:
        lines.append(f"reference {_one_line(report.reference)}")
    if report.analysis:
        lines.append(f"analysis  {report.analysis}")
    lines.append("")
    rows = [("", "step", "claimed", "exact", "verdict")]
    first = report.first_divergence
    for step in report.steps:
        marker = _marker(step, first)
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
        for note in step_notes(report, step):
            lines.extend(_wrap(note, indent))
    if evidence is not None:
        from handcheck.record.evidence_text import evidence_lines

        lines.append("")
        lines.extend(evidence_lines(evidence, columns))
    if audit:  # the audit's modules are loaded only for a worksheet that has one
        from handcheck.record.audit import audit_lines

        lines.extend(audit_lines(audit))
    for note in report.notes:
        lines.append("")
        lines.extend(_wrap("NOTE: " + note, 0))
    for caution in report.cautions:
        lines.append("")
        lines.extend(_wrap("CAUTION: " + caution, 0))
    summary = _counts(report.steps)
    lines.append("")
    ok = report.ok and all(finding.ok for finding in audit)
    status = "OK" if ok else "NOT OK"
    tail = f"; first divergence: {first}" if first else ""
    count = f"{len(report.steps)} step{'s' if len(report.steps) != 1 else ''}"
    count += f" ({summary})" if summary else ""
    if audit:
        differ = sum(not finding.ok for finding in audit)
        count += f", {len(audit)} audited formula{'s' if len(audit) != 1 else ''} ({differ} not equivalent)"
    lines.append(f"{status}: {count}{tail}")
    # worksheet text (title, reference, file name) is untrusted: escape what could spoof the terminal
    return "\n".join(visible(line) for line in lines)
