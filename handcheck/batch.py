"""Many worksheets in one command: files and folders, in order, in process or in parallel.

Each worksheet goes through the one pipeline (:func:`handcheck.pipeline.run`) with a
budget of its own; what comes back is plain data (:class:`Outcome`: the check output
format 1 object, or an error object, and the terminal block), so that it crosses from
a worker process unchanged. A worksheet that cannot be read, or runs out of its time,
is reported and counted; it never stops the others.

>>> status_of(())
0
>>> summary_line(())
'0 worksheets'
"""

from __future__ import annotations

import sys
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

from handcheck.errors import HandcheckError, TimeLimitError, WorksheetError
from handcheck.record.visible import visible

__all__ = [
    "Options",
    "Outcome",
    "check_all",
    "check_one",
    "expand",
    "print_summary_table",
    "record_all",
    "status_of",
    "summary_line",
    "summary_rows",
    "summary_table",
]

EXIT_OK, EXIT_DISAGREES, EXIT_BAD_INPUT = 0, 1, 2

Kind = Literal["ok", "differ", "refused"]


@dataclass(frozen=True)
class Options:
    """How each worksheet of a batch is checked.

    Parameters
    ----------
    evidence
        Add the independent numerical time-domain solution.
    time_limit
        Seconds allowed for each worksheet (``None``: the default limit).
    """

    evidence: bool = False
    time_limit: float | None = None


@dataclass(frozen=True)
class Outcome:
    """The check of one worksheet of a batch, as plain data.

    ``data`` is the check output format 1 object, or for a worksheet that could not be
    checked an error object ``{"handcheck", "worksheet", "ok": false, "error"}``;
    ``text`` is its block for the terminal; ``status`` its exit status (0, 1 or 2).
    """

    path: str
    status: int
    data: dict[str, Any] = field(compare=False)
    text: str
    seconds: float = field(default=0.0, compare=False)

    @property
    def kind(self) -> Kind:
        """``"ok"``, ``"differ"`` (a step, audit formula or the evidence does not agree) or
        ``"refused"`` (the worksheet could not be read or checked)."""
        return ("ok", "differ", "refused")[min(self.status, EXIT_BAD_INPUT)]

    @property
    def error(self) -> str | None:
        """The one-line message of a refused worksheet, else ``None``."""
        return self.data.get("error")


def expand(paths: Sequence[str]) -> tuple[str, ...]:
    """The worksheets named by files and folders, in the order given.

    A folder stands for every ``*.toml`` file below it (at any depth, sorted, hidden
    files and folders left out); a file stands for itself, whatever its name, and one
    that does not exist is kept, so that its check reports it. A worksheet named twice
    is checked once.

    Parameters
    ----------
    paths
        Files and folders from the command line.

    Returns
    -------
    tuple of str

    Raises
    ------
    WorksheetError
        When a folder holds no worksheet.
    """
    found: dict[str, None] = {}
    for name in paths:
        place = Path(name)
        if not place.is_dir():
            found.setdefault(name, None)
            continue
        below = sorted(
            path
            for path in place.rglob("*.toml")
            if path.is_file() and not any(part.startswith(".") for part in path.relative_to(place).parts)
        )
        if not below:
            raise WorksheetError("this folder holds no worksheet (no *.toml file below it)", file=name)
        for path in below:
            found.setdefault(str(path), None)
    return tuple(found)


def refused_data(path: str, message: str) -> dict[str, Any]:
    """The error object of a worksheet that could not be checked (check output format 1)."""
    from handcheck import __version__

    return {"handcheck": __version__, "worksheet": path, "ok": False, "error": message}


def _refused(path: str, message: str, started: float) -> Outcome:
    return Outcome(path, EXIT_BAD_INPUT, refused_data(path, message), f"refused: {message}", time.monotonic() - started)


def check_one(path: str, options: Options = Options()) -> Outcome:
    """Check one worksheet through the pipeline, with a budget of its own.

    Safe to run in a worker process: it returns plain data and reports every error a
    worksheet can cause (a malformed file, a time limit) in the outcome instead of
    raising it.

    Parameters
    ----------
    path
        The worksheet file.
    options
        Evidence and time limit.

    Returns
    -------
    Outcome
    """
    from handcheck import __version__
    from handcheck.budget import DEFAULT_TIME_LIMIT, Budget, watchdog
    from handcheck.pipeline import run
    from handcheck.record.jsonout import evidence_dict, report_dict
    from handcheck.record.text import render

    started = time.monotonic()
    budget = Budget(DEFAULT_TIME_LIMIT if options.time_limit is None else options.time_limit)
    timer = watchdog(budget, path)
    try:
        result = run(path, evidence=options.evidence, budget=budget)
    except (HandcheckError, TimeLimitError) as exc:
        where = "" if getattr(exc, "file", None) else f"{path}: "
        return _refused(path, f"{where}{exc}", started)
    except OSError as exc:
        return _refused(path, f"{exc.filename or path}: {exc.strerror or exc}", started)
    except RecursionError:
        return _refused(path, f"{path}: an expression is nested too deeply to read", started)
    finally:
        if timer is not None:
            timer.cancel()
    report = result.report
    assert report is not None
    data = report_dict(report, __version__, result.audit)
    if result.evidence is not None:
        data["evidence"] = evidence_dict(result.evidence)
    text = render(report, __version__, result.evidence, result.audit)
    status = EXIT_OK if result.ok else EXIT_DISAGREES
    return Outcome(path, status, data, text, time.monotonic() - started)


def _record_one(path: str, folder: Path, name: str, evidence: bool, time_limit: float | None) -> Any:
    from handcheck.budget import DEFAULT_TIME_LIMIT, Budget, watchdog
    from handcheck.pipeline import record_inputs
    from handcheck.record.index import Entry
    from handcheck.record.write import write_record
    from handcheck.worksheet.load import load

    started = time.monotonic()

    def refused(message: str) -> Entry:
        return Entry(path, EXIT_BAD_INPUT, error=message, seconds=time.monotonic() - started)

    budget = Budget(DEFAULT_TIME_LIMIT if time_limit is None else time_limit)
    timer = watchdog(budget, path)
    try:
        inputs = record_inputs(load(path), evidence=evidence, budget=budget)
        write_record(inputs, folder / name)
    except (HandcheckError, TimeLimitError) as exc:
        return refused(f"{'' if getattr(exc, 'file', None) else f'{path}: '}{exc}")
    except OSError as exc:
        return refused(f"{exc.filename or path}: {exc.strerror or exc}")
    except RecursionError:
        return refused(f"{path}: an expression is nested too deeply to read")
    finally:
        if timer is not None:
            timer.cancel()
    report = inputs.report
    ok = report.ok and all(f.ok for f in inputs.audit) and (inputs.evidence is None or inputs.evidence.ok)
    verdicts: dict[str, int] = {}
    for step in report.steps:
        verdicts[step.verdict] = verdicts.get(step.verdict, 0) + 1
    audited: dict[str, int] = {}
    for finding in inputs.audit:
        audited[finding.verdict] = audited.get(finding.verdict, 0) + 1
    return Entry(
        path,
        EXIT_OK if ok else EXIT_DISAGREES,
        file=name,
        title=report.title,
        steps=len(report.steps),
        verdict_counts=dict(sorted(verdicts.items())),
        audit_counts=dict(sorted(audited.items())),
        seconds=time.monotonic() - started,
    )


def record_all(
    paths: Sequence[str],
    folder: str | Path,
    fmt: str = "html",
    *,
    evidence: bool = True,
    time_limit: float | None = None,
    done: Callable[[Any], None] | None = None,
) -> tuple[tuple[Any, ...], Path]:
    """Write one record per worksheet into ``folder``, then the index page.

    Parameters
    ----------
    paths
        Worksheet files (see :func:`handcheck.batch.expand`).
    folder
        The output folder (made if missing).
    fmt
        The records' format: ``"html"``, ``"md"`` or ``"json"``.
    evidence
        Add the numerical time-domain solution to each record.
    time_limit
        Seconds allowed for each worksheet (``None``: the default limit).
    done
        Called with each entry as it is finished.

    Returns
    -------
    tuple
        The entries (:class:`handcheck.record.index.Entry`) in the order of ``paths``, and the index file written.

    Raises
    ------
    HandcheckError
        When ``folder`` exists and is no folder.
    OSError
        When the folder or the index cannot be written.
    """
    from handcheck.record.document import write_atomic
    from handcheck.record.index import index_name, record_name, render_index

    target = Path(folder)
    if target.exists() and not target.is_dir():
        raise HandcheckError(f'"{target}" is a file; records of several worksheets go into a folder: name one with -o')
    target.mkdir(parents=True, exist_ok=True)
    taken: set[str] = set()
    entries = []
    for path in paths:
        name = record_name(path, f".{fmt}", taken)
        taken.add(name)
        entries.append(_record_one(path, target, name, evidence, time_limit))
        if done is not None:
            done(entries[-1])
    index = target / index_name("md" if fmt == "md" else "html")
    write_atomic(index, render_index(entries, "md" if fmt == "md" else "html").encode("utf-8"))
    return tuple(entries), index


def _pool_context() -> Any:
    import multiprocessing

    # forkserver: workers start from a clean process, not a fork of one that runs threads
    methods = multiprocessing.get_all_start_methods()
    return multiprocessing.get_context("forkserver" if "forkserver" in methods else "spawn")


def check_all(
    paths: Sequence[str],
    options: Options = Options(),
    *,
    jobs: int = 1,
    done: Callable[[Outcome], None] | None = None,
) -> tuple[Outcome, ...]:
    """Check every worksheet; the outcomes come back in the order of ``paths``.

    Parameters
    ----------
    paths
        Worksheet files (see :func:`expand`).
    options
        How each is checked.
    jobs
        Worker processes; 1 checks in this process, one after the other.
    done
        Called with each outcome as it is finished (for a progress display).

    Returns
    -------
    tuple of Outcome
    """
    if jobs <= 1 or len(paths) <= 1:
        outcomes = []
        for path in paths:
            outcomes.append(check_one(path, options))
            if done is not None:
                done(outcomes[-1])
        return tuple(outcomes)
    from concurrent.futures import ProcessPoolExecutor, as_completed
    from concurrent.futures.process import BrokenProcessPool

    results: dict[int, Outcome] = {}
    lost: list[int] = []
    with ProcessPoolExecutor(max_workers=min(jobs, len(paths)), mp_context=_pool_context(), initializer=warm) as pool:
        futures = {pool.submit(check_one, path, options): index for index, path in enumerate(paths)}
        for future in as_completed(futures):
            index = futures[future]
            try:
                results[index] = future.result()
            except BrokenProcessPool:
                lost.append(index)
                continue
            if done is not None:
                done(results[index])
    # A worker that ended (the watchdog, or the system out of memory) breaks the whole
    # pool: every worksheet it had not finished is checked again, each in a pool of its
    # own, so that only the one that ends its worker again is refused.
    for index in sorted(lost):
        results[index] = _alone(paths[index], options)
        if done is not None:
            done(results[index])
    return tuple(results[index] for index in range(len(paths)))


def warm() -> None:
    """Import the stages and build the unit registry in a new worker, before any
    worksheet's budget starts: a worksheet's time limit is for checking it, not for
    the worker's first imports (several seconds on a busy machine)."""
    import handcheck.pipeline  # noqa: F401  (the stages it imports)
    from handcheck.worksheet.units import lookup_unit

    lookup_unit("kohm")


def _alone(path: str, options: Options) -> Outcome:
    from concurrent.futures import ProcessPoolExecutor
    from concurrent.futures.process import BrokenProcessPool

    started = time.monotonic()
    with ProcessPoolExecutor(max_workers=1, mp_context=_pool_context(), initializer=warm) as pool:
        try:
            return pool.submit(check_one, path, options).result()
        except BrokenProcessPool:
            return _refused(path, f"{path}: the worker process ended before this worksheet was checked", started)


def status_of(outcomes: Sequence[Outcome]) -> int:
    """The exit status of a batch: the highest of its worksheets' (0 for none)."""
    return max((outcome.status for outcome in outcomes), default=EXIT_OK)


def summary_line(outcomes: Sequence[Outcome]) -> str:
    """One line: how many worksheets, and how many of them are ok, differ, refused."""
    count = len(outcomes)
    line = f"{count} worksheet{'s' if count != 1 else ''}"
    if not outcomes:
        return line
    kinds = [outcome.kind for outcome in outcomes]
    seconds = sum(outcome.seconds for outcome in outcomes)
    return f"{line}: {kinds.count('ok')} ok, {kinds.count('differ')} differ, {kinds.count('refused')} refused ({seconds:.1f} s of checking)"


SUMMARY_HEADER = ("worksheet", "steps", "verdicts", "seconds")


def summary_rows(outcomes: Sequence[Outcome]) -> list[tuple[str, str, str, str]]:
    """One row per worksheet: path, number of steps, verdict counts (steps, then audited
    formulas), seconds of checking; a refused worksheet shows ``refused``.

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


def summary_table(outcomes: Sequence[Outcome]) -> str:
    """:func:`summary_rows` as plain text in aligned columns (for logs and pipes)."""
    rows = [SUMMARY_HEADER, *summary_rows(outcomes)]
    widths = [max(len(row[i]) for row in rows) for i in range(len(SUMMARY_HEADER))]
    lines = []
    for row in rows:
        cells = [row[0].ljust(widths[0]), row[1].rjust(widths[1]), row[2].ljust(widths[2]), row[3].rjust(widths[3])]
        lines.append("  ".join(cells).rstrip())
    return "\n".join(lines)


def print_summary_table(outcomes: Sequence[Outcome]) -> None:
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

    def __enter__(self) -> Callable[[Outcome], None]:
        self._bar.__enter__()
        return self._advance

    def __exit__(self, *exc: object) -> None:
        self._bar.__exit__(None, None, None)

    def _advance(self, outcome: Outcome) -> None:
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
