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

import os
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from functools import partial
from pathlib import Path
from typing import Any, Literal

from handcheck.errors import HandcheckError, TimeLimitError, WorksheetError
from handcheck.record.summary import (
    print_summary_table,
    progress,
    stderr_is_terminal,
    summary_line,
    summary_rows,
    summary_table,
)

__all__ = [
    "Options",
    "Outcome",
    "check_all",
    "check_one",
    "expand",
    "expand_records",
    "message_of",
    "print_summary_table",
    "progress",
    "record_all",
    "reverify_all",
    "reverify_one",
    "status_of",
    "stderr_is_terminal",
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
    return _gather(
        paths,
        lambda path: path.suffix == ".toml",
        lambda name: WorksheetError("this folder holds no worksheet (no *.toml file below it)", file=name),
    )


def _gather(
    paths: Sequence[str], keep: Callable[[Path], bool], empty: Callable[[str], HandcheckError]
) -> tuple[str, ...]:
    """Files as given, folders as every file below them that ``keep`` takes (sorted,
    hidden ones left out); each once, where it first came. ``empty`` is the error of a
    folder with none."""
    found: dict[str, None] = {}
    for name in paths:
        place = Path(name)
        if not place.is_dir():
            found.setdefault(name, None)
            continue
        below = sorted(
            path
            for path in place.rglob("*")
            if keep(path) and path.is_file() and not any(part.startswith(".") for part in path.relative_to(place).parts)
        )
        if not below:
            raise empty(name)
        for path in below:
            found.setdefault(str(path), None)
    return tuple(found)


def refused_data(path: str, message: str) -> dict[str, Any]:
    """The error object of a worksheet that could not be checked (check output format 1)."""
    from handcheck import __version__

    return {"handcheck": __version__, "worksheet": path, "ok": False, "error": message}


#: What a worksheet (or a record) can cause; each is reported, never raised, in a batch.
_REFUSALS = (HandcheckError, TimeLimitError, OSError, RecursionError)


def message_of(path: str, exc: BaseException) -> str:
    """The one-line message of an error that refuses a worksheet or record at ``path``."""
    if isinstance(exc, RecursionError):
        return f"{path}: an expression is nested too deeply to read"
    if isinstance(exc, OSError):
        return f"{exc.filename or path}: {exc.strerror or exc}"
    return f"{'' if getattr(exc, 'file', None) else f'{path}: '}{exc}"


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
    except _REFUSALS as exc:
        return _refused(path, message_of(path, exc), started)
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


def _record_one(item: tuple[str, str], folder: Path, evidence: bool, time_limit: float | None) -> Any:
    """Record one worksheet (``item``: its path and its record's file name) into ``folder``.

    Safe to run in a worker process, as :func:`check_one` is: every error a worksheet
    can cause comes back in the entry instead of being raised.
    """
    from handcheck.budget import DEFAULT_TIME_LIMIT, Budget, watchdog
    from handcheck.pipeline import record_inputs
    from handcheck.record.index import Entry
    from handcheck.record.write import write_record
    from handcheck.worksheet.load import load

    path, name = item
    started = time.monotonic()

    def refused(message: str) -> Entry:
        return Entry(path, EXIT_BAD_INPUT, error=message, seconds=time.monotonic() - started)

    budget = Budget(DEFAULT_TIME_LIMIT if time_limit is None else time_limit)
    timer = watchdog(budget, path)
    try:
        inputs = record_inputs(load(path), evidence=evidence, budget=budget)
        write_record(inputs, folder / name)
    except _REFUSALS as exc:
        return refused(message_of(path, exc))
    finally:
        if timer is not None:
            timer.cancel()
    return _entry(path, name, inputs, time.monotonic() - started)


def _entry(path: str, name: str, inputs: Any, seconds: float) -> Any:
    """The index row of a written record."""
    from handcheck.record.index import Entry

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
        seconds=seconds,
    )


def _record_ended(item: tuple[str, str], started: float) -> Any:
    from handcheck.record.index import Entry

    path = item[0]
    message = f"{path}: the worker process ended before this worksheet was recorded"
    return Entry(path, EXIT_BAD_INPUT, error=message, seconds=time.monotonic() - started)


def record_all(
    paths: Sequence[str],
    folder: str | Path,
    fmt: str = "html",
    *,
    evidence: bool = True,
    time_limit: float | None = None,
    jobs: int = 1,
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
    jobs
        Worker processes; 1 records in this process, one after the other. The records
        and the index are the same bytes whatever the number.
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
    items = []
    for path in paths:
        items.append((path, record_name(path, f".{fmt}", taken)))
        taken.add(items[-1][1])
    work = partial(_record_one, folder=target, evidence=evidence, time_limit=time_limit)
    entries = _map(work, items, jobs=jobs, done=done, ended=_record_ended)
    index = target / index_name("md" if fmt == "md" else "html")
    write_atomic(index, render_index(entries, "md" if fmt == "md" else "html").encode("utf-8"))
    return tuple(entries), index


def expand_records(paths: Sequence[str]) -> tuple[str, ...]:
    """The records named by files and folders: a folder stands for every ``.html``,
    ``.md`` and ``.json`` file below it (sorted, hidden ones left out), but its index
    pages (``index.html``, ``index.md``, which :func:`record_all` writes and which
    no record is ever named).

    Raises
    ------
    RecordError
        When a folder holds no record.
    """
    from handcheck.record.document import RecordError
    from handcheck.record.write import FORMATS

    return _gather(
        paths,
        lambda path: path.suffix.lower() in FORMATS and path.name.lower() not in ("index.html", "index.md"),
        lambda name: RecordError("this folder holds no record (no .html, .md or .json file below it)", file=name),
    )


def reverify_one(path: str, time_limit: float | None = None) -> Any:
    """Re-run the worksheet embedded in the record at ``path`` and compare every result.

    Safe in a worker process: a file that is no record, or was altered, or whose
    worksheet runs out of time, comes back as a :class:`~handcheck.record.write.Reverified`
    with its ``error`` instead of being raised.
    """
    from handcheck.budget import DEFAULT_TIME_LIMIT, Budget, watchdog
    from handcheck.pipeline import record_inputs
    from handcheck.record.write import Reverified, compare, read_record, recorded_worksheet

    budget = Budget(DEFAULT_TIME_LIMIT if time_limit is None else time_limit)
    timer = watchdog(budget, path)
    try:
        stored = read_record(path)
        worksheet = recorded_worksheet(stored, path)
        inputs = record_inputs(worksheet, evidence="evidence" in stored["results"], budget=budget, curves=False)
    except _REFUSALS as exc:
        return Reverified(path, (), error=message_of(path, exc))
    finally:
        if timer is not None:
            timer.cancel()
    return compare(path, stored, inputs)


def _reverify_ended(path: str, started: float) -> Any:
    from handcheck.record.write import Reverified

    return Reverified(path, (), error=f"{path}: the worker process ended before this record was re-verified")


def reverify_all(
    paths: Sequence[str],
    *,
    time_limit: float | None = None,
    jobs: int = 1,
    done: Callable[[Any], None] | None = None,
) -> tuple[Any, ...]:
    """Re-verify every record (see :func:`expand_records`), in order, in ``jobs`` workers.

    Returns
    -------
    tuple of handcheck.record.write.Reverified
        Each with its ``status``: 0 every result the same, 1 one changed, 2 no record
        or altered.
    """
    work = partial(reverify_one, time_limit=time_limit)
    return _map(work, list(paths), jobs=jobs, done=done, ended=_reverify_ended)


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
    return _map(partial(check_one, options=options), list(paths), jobs=jobs, done=done, ended=_check_ended)


def _check_ended(path: str, started: float) -> Outcome:
    return _refused(path, f"{path}: the worker process ended before this worksheet was checked", started)


def _map(
    work: Callable[[Any], Any],
    items: Sequence[Any],
    *,
    jobs: int,
    done: Callable[[Any], None] | None,
    ended: Callable[[Any, float], Any],
) -> tuple[Any, ...]:
    """``work`` on every item, in this process or in ``jobs`` workers; results in order.

    ``work`` reports every error of its item in its result; ``ended`` makes the result
    of an item whose worker process ended twice (see below).
    """
    if jobs <= 1 or len(items) <= 1:
        results = []
        for item in items:
            results.append(work(item))
            if done is not None:
                done(results[-1])
        return tuple(results)
    from concurrent.futures import ProcessPoolExecutor, as_completed
    from concurrent.futures.process import BrokenProcessPool

    found: dict[int, Any] = {}
    lost: list[int] = []
    with ProcessPoolExecutor(
        max_workers=min(jobs, len(items)), mp_context=_pool_context(), initializer=warm, initargs=(dict(os.environ),)
    ) as pool:
        futures = {pool.submit(work, item): index for index, item in enumerate(items)}
        for future in as_completed(futures):
            index = futures[future]
            try:
                found[index] = future.result()
            except BrokenProcessPool:
                lost.append(index)
                continue
            if done is not None:
                done(found[index])
    # A worker that ended (the watchdog, or the system out of memory) breaks the whole
    # pool: every item it had not finished is tried again, each in a pool of its own,
    # so that only the one that ends its worker again is refused.
    for index in sorted(lost):
        found[index] = _alone(work, items[index], ended)
        if done is not None:
            done(found[index])
    return tuple(found[index] for index in range(len(items)))


def warm(environment: dict[str, str] | None = None) -> None:
    """Import the stages and build the unit registry in a new worker, before any
    worksheet's budget starts: a worksheet's time limit is for checking it, not for
    the worker's first imports (several seconds on a busy machine).

    ``environment`` is the parent's environment when the pool starts: a forkserver
    keeps the environment of the moment it was first started, so without it a worker
    would miss a ``SOURCE_DATE_EPOCH`` set since and date its records otherwise."""
    if environment is not None:
        os.environ.clear()
        os.environ.update(environment)
    import handcheck.pipeline  # noqa: F401  (the stages it imports)
    from handcheck.worksheet.units import lookup_unit

    lookup_unit("kohm")


def _alone(work: Callable[[Any], Any], item: Any, ended: Callable[[Any, float], Any]) -> Any:
    from concurrent.futures import ProcessPoolExecutor
    from concurrent.futures.process import BrokenProcessPool

    started = time.monotonic()
    with ProcessPoolExecutor(
        max_workers=1, mp_context=_pool_context(), initializer=warm, initargs=(dict(os.environ),)
    ) as pool:
        try:
            return pool.submit(work, item).result()
        except BrokenProcessPool:
            return ended(item, started)


def status_of(outcomes: Sequence[Outcome]) -> int:
    """The exit status of a batch: the highest of its worksheets' (0 for none)."""
    return max((outcome.status for outcome in outcomes), default=EXIT_OK)
