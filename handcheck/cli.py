"""The command line: parse arguments, call the library, map errors to exit codes.

Exit status: 0 every step agrees (or is unchecked); 1 a step does not agree;
2 the worksheet or the command is wrong (one line on stderr, no traceback).
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from collections.abc import Sequence
from pathlib import Path
from typing import Any

from handcheck.budget import DEFAULT_TIME_LIMIT
from handcheck.errors import HandcheckError, TimeLimitError, WorksheetError
from handcheck.record.visible import visible

__all__ = ["main"]

EXIT_OK, EXIT_DISAGREES, EXIT_BAD_INPUT = 0, 1, 2


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        say(f"{message}")
        raise SystemExit(EXIT_BAD_INPUT)


def say(message: str) -> None:
    """One line on stderr, ``handcheck: message``, with worksheet text (file names, titles
    quoted in errors) escaped so it cannot spoof the terminal."""
    sys.stderr.write(f"handcheck: {visible(message)}\n")


#: The help of every command's --time-limit (the default is budget.DEFAULT_TIME_LIMIT).
_LIMIT_HELP = (
    "stop with exit status 2 if {what} takes longer than this (wall clock; default " + f"{DEFAULT_TIME_LIMIT:g} s)"
)


def _time_limit(command: argparse.ArgumentParser, what: str) -> None:
    """Give a command its --time-limit option; ``what`` names the work in the help."""
    command.add_argument(
        "--time-limit", type=_seconds, default=None, metavar="SECONDS", help=_LIMIT_HELP.format(what=what)
    )


def _parser() -> argparse.ArgumentParser:
    from handcheck import __version__

    parser = _Parser(prog="handcheck", description="Verify hand calculations on linear circuits, exactly.")
    parser.add_argument("--version", action="version", version=f"handcheck {__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    check = commands.add_parser("check", help="check every step of a worksheet (or of many: docs/ci.md)")
    check.add_argument("paths", nargs="+", metavar="PATH", help="worksheets (TOML, format 1) and folders of them")
    check.add_argument(
        "--json", action="store_true", help="print check output format 1 (JSON) on stdout; an array for several"
    )
    check.add_argument("--junit", metavar="OUT", help="also write JUnit XML to OUT (one test suite per worksheet)")
    check.add_argument("--jobs", type=_jobs, default=1, metavar="N", help="check N worksheets at once (default 1)")
    check.add_argument("--evidence", action="store_true", help="add the independent numerical time-domain evidence")
    check.add_argument(
        "--plot", metavar="OUT", help="write the evidence plots to OUT (.svg or .png); implies --evidence"
    )
    _time_limit(check, "the check")
    simulate = commands.add_parser("simulate", help="solve a worksheet's circuit numerically in time and compare")
    simulate.add_argument("file", metavar="FILE", help="the worksheet (TOML, format 1)")
    simulate.add_argument("--plot", metavar="OUT", help="write the plots to OUT (.svg or .png)")
    simulate.add_argument("--json", action="store_true", help="print the evidence as JSON")
    _time_limit(simulate, "the simulation")
    record = commands.add_parser("record", help="check a worksheet and write its calculation record")
    record.add_argument(
        "paths", nargs="+", metavar="PATH", help="the worksheet (TOML, format 1), or several and folders"
    )
    record.add_argument(
        "-o", "--output", required=True, metavar="OUT", help="the record (.html, .md or .json), or a folder for several"
    )
    record.add_argument(
        "--format",
        choices=("html", "md", "json"),
        default=None,
        help="records into the folder OUT in this format (default html)",
    )
    record.add_argument("--no-evidence", action="store_true", help="leave out the numerical solution and its plots")
    record.add_argument("--jobs", type=_jobs, default=1, metavar="N", help="record N worksheets at once (default 1)")
    _time_limit(record, "writing the record")
    reverify = commands.add_parser("reverify", help="re-run the worksheet embedded in a record and compare")
    reverify.add_argument(
        "paths", nargs="+", metavar="RECORD", help="a record written by handcheck record, or several and folders"
    )
    reverify.add_argument("--jobs", type=_jobs, default=1, metavar="N", help="re-verify N records at once (default 1)")
    _time_limit(reverify, "reverifying")
    return parser


def _seconds(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"--time-limit takes a number of seconds, not {text!r}") from None
    if not 0 < value <= 86400:
        raise argparse.ArgumentTypeError("--time-limit must be more than 0 and at most 86400 seconds")
    return value


def _jobs(text: str) -> int:
    if not text.isdigit() or not 1 <= int(text) <= 64:
        raise argparse.ArgumentTypeError(f"--jobs takes a whole number of worker processes from 1 to 64, not {text!r}")
    return int(text)


def _is_batch(args: argparse.Namespace) -> bool:
    if args.command == "record":
        return len(args.paths) > 1 or Path(args.paths[0]).is_dir() or args.format is not None
    return args.command in ("check", "reverify") and (len(args.paths) > 1 or Path(args.paths[0]).is_dir())


def _records(args: argparse.Namespace) -> int:
    from handcheck.batch import expand, record_all
    from handcheck.record.index import status_of

    paths = expand(args.paths)
    if not args.no_evidence:
        say("solving the circuits numerically in time...")
    entries, index = record_all(
        paths,
        args.output,
        args.format or "html",
        evidence=not args.no_evidence,
        time_limit=args.time_limit,
        jobs=args.jobs,
    )
    for entry in entries:
        if entry.error:
            say(f"{entry.error}")
    say(f"{sum(1 for e in entries if e.file)} records and the index written to {index}")
    return status_of(entries)


def _reverify_all(args: argparse.Namespace) -> int:
    from handcheck.batch import expand_records, reverify_all

    outcomes = reverify_all(expand_records(args.paths), time_limit=args.time_limit, jobs=args.jobs)
    for outcome in outcomes:
        for line in outcome.lines():
            print(visible(line))
        if outcome.error:
            say(outcome.error)
    statuses = [outcome.status for outcome in outcomes]
    count = len(statuses)
    print(
        f"{count} record{'s' if count != 1 else ''}: {statuses.count(0)} the same, "
        f"{statuses.count(1)} changed, {statuses.count(2)} refused"
    )
    return max(statuses, default=EXIT_OK)


def _batch(args: argparse.Namespace) -> int:
    from handcheck.batch import Options, check_all, expand, print_summary_table, progress, status_of, summary_line

    if args.plot:
        raise WorksheetError("--plot draws the evidence of one worksheet: give one FILE, not several or a folder")
    paths = expand(args.paths)
    if args.evidence:
        say("solving the circuits numerically in time...")
    with progress(len(paths)) as done:
        options = Options(evidence=args.evidence, time_limit=args.time_limit)
        outcomes = check_all(paths, options, jobs=args.jobs, done=done)
    for outcome in outcomes:
        if outcome.error:
            say(f"{outcome.error}")
    if args.json:
        print(json.dumps([outcome.data for outcome in outcomes], ensure_ascii=False))
    else:
        print("\n\n".join(f"== {visible(outcome.path)} ==\n{outcome.text}" for outcome in outcomes))
        print()
        print_summary_table(outcomes)
        print(f"\n{summary_line(outcomes)}")
    if args.junit:
        _junit([(outcome.data, outcome.seconds) for outcome in outcomes], args.junit)
    return status_of(outcomes)


def _junit(entries: list[tuple[dict[str, Any], float]], out: str) -> None:
    from handcheck.record.junit import write_junit

    existed = Path(out).exists()
    path = write_junit(entries, out)
    _written("JUnit report", path, existed)


def _junit_refused(args: argparse.Namespace, message: str) -> None:
    """The JUnit file of one worksheet that could not be checked (one test case with an error)."""
    from handcheck.batch import refused_data

    try:
        _junit([(refused_data(args.file, message), 0.0)], args.junit)
    except OSError as exc:
        say(f"{exc.filename or args.junit}: {exc.strerror or exc}")


def _run(args: argparse.Namespace) -> int:
    from handcheck import __version__
    from handcheck.budget import DEFAULT_TIME_LIMIT, Budget, watchdog
    from handcheck.pipeline import run
    from handcheck.record.jsonout import evidence_dict, report_dict
    from handcheck.record.text import render

    plot = getattr(args, "plot", None)
    if plot and not plot.lower().endswith((".svg", ".png")):
        raise WorksheetError(f'--plot writes .svg or .png files, not "{plot}"')
    budget = Budget(DEFAULT_TIME_LIMIT if args.time_limit is None else args.time_limit)
    timer = watchdog(budget, args.file)
    if args.command in ("record", "reverify"):
        try:
            return _record(args, budget)
        finally:
            if timer is not None:
                timer.cancel()
    try:
        simulating = args.command == "simulate"
        wants_evidence = simulating or args.evidence or bool(plot)
        if wants_evidence:
            say("solving the circuit numerically in time...")
        result = run(args.file, check=not simulating or bool(plot), evidence=wants_evidence, budget=budget)
    finally:
        if timer is not None:
            timer.cancel()
    evidence = result.evidence
    if simulating:
        from handcheck.record.evidence_text import evidence_lines
        from handcheck.record.text import terminal_width

        print(
            json.dumps(evidence_dict(evidence), ensure_ascii=False)
            if args.json
            else "\n".join(visible(line) for line in evidence_lines(evidence, terminal_width()))
        )
        if plot and not _plots(result, plot):
            return EXIT_BAD_INPUT
        return EXIT_OK if evidence.ok else EXIT_DISAGREES
    report = result.report
    assert report is not None
    data = report_dict(report, __version__, result.audit)
    if evidence is not None:
        data["evidence"] = evidence_dict(evidence)
    if args.json:
        print(json.dumps(data, ensure_ascii=False))
    else:
        print(render(report, __version__, evidence, result.audit))
    if args.junit:
        _junit([(data, time.monotonic() - budget.started)], args.junit)
    if plot and not _plots(result, plot):
        return EXIT_BAD_INPUT
    return EXIT_OK if result.ok else EXIT_DISAGREES


def _plots(result: Any, plot: str) -> bool:
    """Draw the plots after the report is out, so a plot that fails loses nothing else;
    False (after saying which file and why) when one could not be written."""
    try:
        _plot(result, plot)
        _plot_bode(result, plot)
        if result.audit:
            _plot_audit(result.audit, plot)
    except OSError as exc:
        say(f"{exc.filename or plot}: the plot could not be written ({exc.strerror or exc}); the report is complete")
        return False
    except HandcheckError as exc:
        say(f"{plot}: the plot could not be drawn ({exc}); the report is complete")
        return False
    return True


def _written(what: str, path: Any, existed: bool) -> None:
    """Say where an output went, and when it replaced a file that was there."""
    say(f"{what} written to {path}" + (" (replacing the file that was there)" if existed else ""))


def _plot_audit(findings: tuple[Any, ...], out: str) -> None:
    from handcheck.record.audit_plot import audit_plot_path, plot_audit

    existed = audit_plot_path(out).exists()
    path = plot_audit(findings, out)
    if path is not None:
        _written("audit histogram", path, existed)


def _plot_bode(result: Any, out: str) -> None:
    from handcheck.pipeline import curves_for
    from handcheck.record.bode import bode_path, plot_bode

    target = bode_path(out)
    existed = target.exists()
    path = plot_bode(result.report, curves_for(result.report, result.exact), target) if result.report else None
    if path is not None:
        _written("Bode plot", path, existed)


def _record(args: argparse.Namespace, budget: Any) -> int:
    from handcheck.pipeline import record_inputs
    from handcheck.record.write import check_suffix, compare, read_record, recorded_worksheet, write_record
    from handcheck.worksheet.load import load

    if args.command == "record":
        check_suffix(args.output)
        worksheet = load(args.file)
        if not args.no_evidence:
            say("solving the circuit numerically in time...")
        inputs = record_inputs(worksheet, evidence=not args.no_evidence, budget=budget)
        existed = Path(args.output).exists()
        path = write_record(inputs, args.output)
        _written("record", path, existed)
        ok = inputs.report.ok and all(f.ok for f in inputs.audit) and (inputs.evidence is None or inputs.evidence.ok)
        return EXIT_OK if ok else EXIT_DISAGREES
    stored = read_record(args.file)
    inputs = record_inputs(
        recorded_worksheet(stored, args.file), evidence="evidence" in stored["results"], budget=budget, curves=False
    )
    outcome = compare(args.file, stored, inputs)
    for line in outcome.lines():
        print(visible(line))
    return outcome.status


def _plot(result: Any, out: str) -> None:
    from handcheck.record.plots import plot_evidence

    existed = Path(out).exists()
    path = plot_evidence(result.report, result.evidence, out)
    _written("plots", path, existed)


def _refuse(args: argparse.Namespace, message: str) -> int:
    """Exit status 2: the one-line message on stderr. With --json, stdout of one worksheet
    stays empty, as the first edition's callers rely on (a batch's array holds an error
    object instead)."""
    say(f"{message}")
    return EXIT_BAD_INPUT


def _not_over_inputs(args: argparse.Namespace) -> None:
    """Refuse an output path (record -o, --plot, --junit) that is one of the input worksheets."""
    inputs = [Path(p) for p in getattr(args, "paths", None) or [args.file] if not Path(p).is_dir()]
    for option in ("output", "plot", "junit"):
        out = getattr(args, option, None)
        if not out:
            continue
        for path in inputs:
            try:
                same = Path(out).resolve() == path.resolve() or (
                    Path(out).exists() and path.exists() and Path(out).samefile(path)
                )
            except OSError:
                same = False
            if same:
                flag = "-o" if option == "output" else f"--{option}"
                raise WorksheetError(f"{flag} {out} is the worksheet itself; write the output to another file")


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit status."""
    parser = _parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help(sys.stderr)
        return EXIT_BAD_INPUT
    if args.command in ("check", "record", "reverify"):
        args.file = args.paths[0]
    try:
        _not_over_inputs(args)
        if args.command == "record" and _is_batch(args):
            return _records(args)
        if args.command == "reverify" and _is_batch(args):
            return _reverify_all(args)
        return _batch(args) if _is_batch(args) else _run(args)
    except (HandcheckError, TimeLimitError) as exc:
        where = "" if exc.file else f"{args.file}: "
        if getattr(args, "junit", None) and not _is_batch(args) and "is the worksheet itself" not in str(exc):
            _junit_refused(args, f"{where}{exc}")
        return _refuse(args, f"{where}{exc}")
    except OSError as exc:  # a plot that cannot be written, for one
        target = exc.filename or args.file
        return _refuse(args, f"{target}: {exc.strerror or exc}")
    except RecursionError:
        return _refuse(args, f"{args.file}: an expression is nested too deeply to read")
    except KeyboardInterrupt:
        say("interrupted")
        return 130


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
