"""handcheck: verify hand calculations on linear electric circuits, exactly.

>>> from handcheck import check_text
>>> report = check_text('''
... [worksheet]
... format = 1
... title = "Divider"
... [parts]
... V1 = { voltage = "10 V", nodes = ["in", "gnd"] }
... R1 = { resistor = "3 kohm", nodes = ["in", "out"] }
... R2 = { resistor = "2 kohm", nodes = ["out", "gnd"] }
... [[step]]
... name = "Vout"
... quantity = "voltage(out)"
... claim = "4 V"
... ''')
>>> report.ok, report.steps[0].verdict
(True, 'agrees')
"""

from __future__ import annotations

from importlib.metadata import PackageNotFoundError, version

from handcheck.errors import (
    CircuitError,
    HandcheckError,
    LimitError,
    ParseError,
    TimeLimitError,
    UnitError,
    WorksheetError,
)
from handcheck.verify.check import check
from handcheck.verify.findings import Report, StepFinding
from handcheck.worksheet.load import load, loads


def _repr_html_(self: Report) -> str:
    """The report as HTML in a notebook (see :mod:`handcheck.record.notebook`)."""
    from handcheck.record.notebook import report_html

    return report_html(self)


# Presentation is attached here, at the top of the package, so that verify/ (where
# Report lives) never imports record/: the data flows one way.
Report._repr_html_ = _repr_html_  # type: ignore[attr-defined]

try:
    __version__ = version("handcheck")
except PackageNotFoundError:  # pragma: no cover - running from a source tree
    __version__ = "0.1.0"

__all__ = [
    "CircuitError",
    "HandcheckError",
    "LimitError",
    "ParseError",
    "Report",
    "StepFinding",
    "TimeLimitError",
    "UnitError",
    "WorksheetError",
    "__version__",
    "check",
    "check_file",
    "check_text",
    "load",
    "loads",
]


def check_file(path: str, *, time_limit: float | None = None) -> Report:
    """Load and check the worksheet at ``path``.

    Parameters
    ----------
    path
        The worksheet file (TOML, format 1).
    time_limit
        Seconds allowed (default :data:`handcheck.budget.DEFAULT_TIME_LIMIT`).

    Returns
    -------
    Report
    """
    from handcheck.pipeline import run

    report = run(path, time_limit=time_limit).report
    assert report is not None
    return report


def check_text(
    text: str, path: str = "<worksheet>", *, name: str | None = None, time_limit: float | None = None
) -> Report:
    """Check a worksheet given as text.

    Parameters
    ----------
    text
        The worksheet's TOML text.
    path
        The name shown for it in messages and reports (kept for compatibility).
    name
        The same as ``path``; wins when both are given.
    time_limit
        Seconds allowed (default :data:`handcheck.budget.DEFAULT_TIME_LIMIT`).

    Returns
    -------
    Report
    """
    from handcheck.pipeline import run_text

    report = run_text(text, name or path, time_limit=time_limit).report
    assert report is not None
    return report
