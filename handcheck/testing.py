"""Helpers for users' own test suites.

>>> from handcheck.testing import assert_checks_out
>>> assert_checks_out("worksheets/coil-snubber.toml")  # doctest: +SKIP
"""

from __future__ import annotations

from pathlib import Path

from handcheck.verify.findings import Report

__all__ = ["assert_checks_out", "run_command"]


def assert_checks_out(path: str | Path) -> Report:
    """Check a worksheet and raise ``AssertionError`` listing every step that does not agree.

    Returns the report when every step agrees (or is unchecked), so a test can look
    further.
    """
    from handcheck.pipeline import run

    report = run(path).report
    assert report is not None
    if not report.ok:
        lines = [f"{report.path}: first divergence at {report.first_divergence}"]
        for step in report.steps:
            if step.verdict not in ("agrees", "unchecked"):
                cause = f" (from {step.caused_by})" if step.caused_by else ""
                lines.append(f"  {step.name}: {step.verdict}{cause}: claimed {step.claimed}, exact {step.expected}")
                lines.extend(f"    likely {d.mistake}: {d.detail}" for d in step.diagnosis)
        raise AssertionError("\n".join(lines))
    return report


def run_command(capsys, *argv: str) -> tuple[int, str, str]:
    """Run the command line in this process under pytest's ``capsys``.

    Returns the exit status (an argparse exit counts too), stdout and stderr.
    """
    from handcheck.cli import main

    try:
        code = main(list(argv))
    except SystemExit as exc:
        code = exc.code  # type: ignore[assignment]
    out, err = capsys.readouterr()
    return code, out, err
