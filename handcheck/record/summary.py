"""What a person reads of a batch: the summary table and line, the progress display.

The rows come from the outcomes of :func:`handcheck.batch.check_all` (any object with
``path``, ``kind``, ``error``, ``data`` and ``seconds``); plain aligned text where the
output is no terminal, so that CI logs stay clean, rich's table and progress bar where
it is.

>>> summary_line(())
'0 worksheets'
"""

from __future__ import annotations

import sys
from collections.abc import Callable, Sequence
from typing import Any

from handcheck.record.visible import visible

__all__ = [
    "PROGRESS_FROM",
    "divergence_text",
    "print_summary_table",
    "progress",
    "stderr_is_terminal",
    "summary_line",
    "summary_rows",
    "summary_table",
]


def summary_line(outcomes: Sequence[Any]) -> str:
    """One line: how many worksheets, and how many of them are ok, differ, refused."""
    count = len(outcomes)
    line = f"{count} worksheet{'s' if count != 1 else ''}"
    if not outcomes:
        return line
    kinds = [outcome.kind for outcome in outcomes]
    seconds = sum(outcome.seconds for outcome in outcomes)
    return f"{line}: {kinds.count('ok')} ok, {kinds.count('differ')} differ, {kinds.count('refused')} refused ({seconds:.1f} s of checking)"


SUMMARY_HEADER = ("worksheet", "steps", "verdicts", "seconds")


def summary_rows(outcomes: Sequence[Any]) -> list[tuple[str, str, str, str]]:
    """One row per worksheet: path, number of steps, verdict counts (steps, then audited
    formulas), seconds of checking; a refused worksheet shows ``refused``.

    >>> from handcheck.batch import Outcome
    >>> summary_rows([Outcome("a.toml", 0, {"steps": [{"verdict": "agrees"}] * 2, "audit": []}, "", 0.25)])
    [('a.toml', '2', '2 agrees', '0.2')]
    """
    rows = []
    for outcome in outcomes:
        if outcome.error:
            rows.append((visible(outcome.path), "-", "refused", f"{outcome.seconds:.1f}"))
            continue
        steps = outcome.data.get("steps") or []
        counts: dict[str, int] = {}
        for step in steps:
            counts[step["verdict"]] = counts.get(step["verdict"], 0) + 1
        shown = ", ".join(f"{n} {verdict}" for verdict, n in sorted(counts.items()))
        audited: dict[str, int] = {}
        for finding in outcome.data.get("audit") or []:
            verdict = str(finding.get("verdict", "?"))
            audited[verdict] = audited.get(verdict, 0) + 1
        if audited:
            shown += "; audit " + ", ".join(f"{n} {verdict}" for verdict, n in sorted(audited.items()))
        rows.append((visible(outcome.path), str(len(steps)), shown, f"{outcome.seconds:.1f}"))
    return rows


def summary_table(outcomes: Sequence[Any]) -> str:
    """:func:`summary_rows` as plain text in aligned columns (for logs and pipes)."""
    rows = [SUMMARY_HEADER, *summary_rows(outcomes)]
    widths = [max(len(row[i]) for row in rows) for i in range(len(SUMMARY_HEADER))]
    lines = []
    for row in rows:
        cells = [row[0].ljust(widths[0]), row[1].rjust(widths[1]), row[2].ljust(widths[2]), row[3].rjust(widths[3])]
        lines.append("  ".join(cells).rstrip())
    return "\n".join(lines)


def print_summary_table(outcomes: Sequence[Any]) -> None:
    """The summary table on stdout: drawn with rich when stdout is a terminal, else plain text."""
    if getattr(sys.stdout, "isatty", None) and sys.stdout.isatty():
        try:
            from rich.console import Console
            from rich.table import Table
        except ImportError:
            pass
        else:
            table = Table(*SUMMARY_HEADER)
            for column in (1, 3):
                table.columns[column].justify = "right"
            from rich.markup import escape

            for row in summary_rows(outcomes):
                table.add_row(*(escape(cell) for cell in row))
            Console().print(table)
            return
    print(summary_table(outcomes))


def stderr_is_terminal() -> bool:
    """Whether stderr is a terminal (a progress display is shown only then)."""
    return bool(getattr(sys.stderr, "isatty", None)) and sys.stderr.isatty()


#: From how many worksheets on a progress display is shown (on a terminal only).
PROGRESS_FROM = 4


class _NoProgress:
    def __enter__(self) -> None:
        return None

    def __exit__(self, *exc: object) -> None:
        return None


class _Progress:
    def __init__(self, total: int) -> None:
        from rich.console import Console
        from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

        self._bar = Progress(
            TextColumn("checking"),
            BarColumn(),
            MofNCompleteColumn(),
            TimeElapsedColumn(),
            TextColumn("{task.description}"),
            console=Console(stderr=True),
            transient=True,
        )
        self._task = self._bar.add_task("", total=total)

    def __enter__(self) -> Callable[[Any], None]:
        self._bar.__enter__()
        return self._advance

    def __exit__(self, *exc: object) -> None:
        self._bar.__exit__(None, None, None)

    def _advance(self, outcome: Any) -> None:
        from rich.markup import escape

        self._bar.update(self._task, advance=1, description=escape(f"{visible(outcome.path)}: {outcome.kind}"))


def progress(total: int) -> Any:
    """A context manager giving the ``done`` callback of :func:`check_all`, or ``None``.

    A progress bar (rich) is drawn on stderr only when stderr is a terminal and there
    are at least :data:`PROGRESS_FROM` worksheets, so that CI logs stay clean.
    """
    if total < PROGRESS_FROM or not stderr_is_terminal():
        return _NoProgress()
    try:
        return _Progress(total)
    except ImportError:  # rich is missing: check without a bar
        return _NoProgress()


def divergence_text(report: Any) -> str:
    """What a failing test says of a worksheet that does not check out.

    Parameters
    ----------
    report
        A :class:`~handcheck.verify.findings.Report` that is not ``ok``.

    Returns
    -------
    str
        The first divergence, then each step that does not agree (or is unchecked) with
        its claimed and exact values and its likely mistakes, one per line.
    """
    lines = [f"{report.path}: first divergence at {report.first_divergence}"]
    for step in report.steps:
        if step.verdict not in ("agrees", "unchecked"):
            cause = f" (from {step.caused_by})" if step.caused_by else ""
            lines.append(f"  {step.name}: {step.verdict}{cause}: claimed {step.claimed}, exact {step.expected}")
            lines.extend(f"    likely {d.mistake}: {d.detail}" for d in step.diagnosis)
    return "\n".join(lines)
