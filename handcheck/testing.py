"""Helpers for users' own test suites: one worksheet, or every worksheet of a folder.

Three ways in, from the smallest:

- :func:`assert_checks_out` in a test of your own checks one worksheet;
- :func:`worksheet_cases` gives one ``pytest.param`` per worksheet of files and
  folders, for ``@pytest.mark.parametrize``;
- as a pytest plugin (``pytest -p handcheck.testing design-notes/``, or
  ``pytest_plugins = ["handcheck.testing"]`` in a ``conftest.py``), every worksheet
  pytest meets while collecting becomes one test item of its own.

>>> from handcheck.testing import assert_checks_out
>>> assert_checks_out("worksheets/coil-snubber.toml")  # doctest: +SKIP
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Any

from handcheck.verify.findings import Report

__all__ = [
    "assert_checks_out",
    "is_worksheet",
    "pytest_collect_file",
    "run_command",
    "worksheet_cases",
]

#: A TOML file is taken for a worksheet when a line of it opens the ``[worksheet]``
#: table: a worksheet too broken to parse is still collected (and fails, saying why),
#: while ``pyproject.toml`` and other TOML files of a repository are left alone.
_WORKSHEET_TABLE = re.compile(r"^[ \t]*\[[ \t]*worksheet[ \t]*\][ \t]*(#.*)?$", re.MULTILINE)


def assert_checks_out(path: str | Path, time_limit: float | None = None) -> Report:
    """Check a worksheet and raise ``AssertionError`` listing every step that does not agree.

    Parameters
    ----------
    path
        The worksheet file.
    time_limit
        Seconds the check may take; by default the command line's default.

    Returns
    -------
    Report
        The report, when every step agrees (or is unchecked), so a test can look further.

    Raises
    ------
    AssertionError
        When a step or an audited formula does not agree: the first divergence, each
        such step with its claimed and exact values and its likely mistakes.
    HandcheckError
        When the worksheet is refused (its message says what is wrong and where) or the
        check runs out of time.
    """
    from handcheck.pipeline import run
    from handcheck.record.summary import divergence_text

    report = run(path, time_limit=time_limit).report
    assert report is not None
    if not report.ok:
        raise AssertionError(divergence_text(report))
    return report


def worksheet_cases(*paths: str | Path) -> list[Any]:
    """One ``pytest.param`` per worksheet named by files and folders, for ``parametrize``.

    A folder stands for every ``*.toml`` file below it, exactly as for
    ``handcheck check FOLDER`` (sorted, hidden files and folders left out); each case's
    id is its path, so a failing worksheet is named in pytest's summary.

    Parameters
    ----------
    *paths
        Worksheet files and folders.

    Returns
    -------
    list of pytest.param

    Raises
    ------
    WorksheetError
        When a folder holds no worksheet (a suite that would check nothing).

    Examples
    --------
    >>> import pytest
    >>> from handcheck.testing import assert_checks_out, worksheet_cases
    >>> @pytest.mark.parametrize("path", worksheet_cases("design-notes"))
    ... def test_worksheet(path):
    ...     assert_checks_out(path)
    """
    import pytest

    from handcheck.batch import expand

    return [pytest.param(Path(name), id=name) for name in expand([str(path) for path in paths])]


def is_worksheet(path: Path) -> bool:
    """Whether ``path`` is a ``.toml`` file with a ``[worksheet]`` table line.

    Parameters
    ----------
    path
        A file pytest meets while collecting.

    Returns
    -------
    bool
    """
    if path.suffix != ".toml":
        return False
    try:
        text = path.read_text(encoding="utf-8", errors="replace")
    except OSError:
        return True  # unreadable: collect it, so that its item says so
    return _WORKSHEET_TABLE.search(text) is not None


def pytest_collect_file(file_path: Path, parent: Any) -> Any:
    """The pytest hook: a worksheet file becomes a collector of one test item
    (:class:`handcheck.testing_items.WorksheetItem`).

    Parameters
    ----------
    file_path
        The file pytest meets.
    parent
        Its collector.

    Returns
    -------
    pytest.File or None
        None for every file that is no worksheet.
    """
    if not is_worksheet(file_path):
        return None
    from handcheck.testing_items import WorksheetFile

    return WorksheetFile.from_parent(parent, path=file_path)


def run_command(capsys: Any, *argv: str) -> tuple[int, str, str]:
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
