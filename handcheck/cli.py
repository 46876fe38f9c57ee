"""The command line: parse arguments, call the library, map errors to exit codes.

Exit status: 0 every step agrees (or is unchecked); 1 a step does not agree;
2 the worksheet or the command is wrong (one line on stderr, no traceback).
"""

from __future__ import annotations

import argparse
import contextlib
import signal
import sys
from collections.abc import Iterator, Sequence

from handcheck.errors import HandcheckError, TimeLimitError

__all__ = ["main"]

EXIT_OK, EXIT_DISAGREES, EXIT_BAD_INPUT = 0, 1, 2


class _Parser(argparse.ArgumentParser):
    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        sys.stderr.write(f"handcheck: {message}\n")
        raise SystemExit(EXIT_BAD_INPUT)


def _parser() -> argparse.ArgumentParser:
    from handcheck import __version__

    parser = _Parser(prog="handcheck", description="Verify hand calculations on linear circuits, exactly.")
    parser.add_argument("--version", action="version", version=f"handcheck {__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    check = commands.add_parser("check", help="check every step of a worksheet")
    check.add_argument("file", metavar="FILE", help="the worksheet (TOML, format 1)")
    check.add_argument("--json", action="store_true", help="print check output format 1 (JSON) on stdout")
    check.add_argument(
        "--time-limit",
        type=_seconds,
        default=None,
        metavar="SECONDS",
        help="stop with exit status 2 if the check takes longer than this (wall clock)",
    )
    return parser


def _seconds(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"--time-limit takes a number of seconds, not {text!r}") from None
    if not 0 < value <= 86400:
        raise argparse.ArgumentTypeError("--time-limit must be more than 0 and at most 86400 seconds")
    return value


@contextlib.contextmanager
def _time_limit(seconds: float | None) -> Iterator[None]:
    """Raise LimitError when the wall-clock budget runs out (POSIX interval timer)."""
    if seconds is None or not hasattr(signal, "setitimer"):
        yield
        return

    def expire(signum: int, frame: object) -> None:
        raise TimeLimitError(f"the check ran out of its time limit of {seconds:g} s; simplify the worksheet or raise --time-limit")

    previous = signal.signal(signal.SIGALRM, expire)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)


def _check(args: argparse.Namespace) -> int:
    from handcheck import __version__
    from handcheck.record.jsonout import to_json
    from handcheck.record.text import render
    from handcheck.verify.check import check
    from handcheck.worksheet.load import load

    with _time_limit(args.time_limit):
        report = check(load(args.file))
    print(to_json(report, __version__) if args.json else render(report, __version__))
    return EXIT_OK if report.ok else EXIT_DISAGREES


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit status."""
    parser = _parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help(sys.stderr)
        return EXIT_BAD_INPUT
    try:
        return _check(args)
    except HandcheckError as exc:
        where = "" if exc.file else f"{args.file}: "
        sys.stderr.write(f"handcheck: {where}{exc}\n")
        return EXIT_BAD_INPUT
    except RecursionError:
        sys.stderr.write(f"handcheck: {args.file}: an expression is nested too deeply to read\n")
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        sys.stderr.write("handcheck: interrupted\n")
        return 130


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
