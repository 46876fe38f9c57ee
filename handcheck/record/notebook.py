"""A report shown in a notebook: ``Report._repr_html_``.

The fragment is drawn by the record's jinja2 environment with autoescaping on, so every
worksheet text is escaped (and control characters shown, see
:mod:`handcheck.record.visible`); it holds no script and fetches nothing. It shows what
the terminal shows (steps, verdicts, what each was checked against, notes, likely
mistakes, cautions); the full record with typeset formulas is ``handcheck record``.
"""

from __future__ import annotations

from handcheck.record.render import environment
from handcheck.record.text import step_notes
from handcheck.verify.findings import Report

__all__ = ["report_html"]


def report_html(report: Report) -> str:
    """The report as an HTML fragment (a ``<div>``) for a notebook cell.

    Examples
    --------
    >>> from handcheck.verify.findings import StepFinding
    >>> step = StepFinding("Vout", "agrees", "4 V", "4 V", basis="circuit")
    >>> html = report_html(Report("a.toml", "0" * 64, "Divider <b>", (step,)))
    >>> "Divider &lt;b&gt;" in html, "<script" in html
    (True, False)
    """
    lines = {step.name: step_notes(report, step) for step in report.steps}
    return environment(True).get_template("report.html.j2").render(report=report, lines=lines)
