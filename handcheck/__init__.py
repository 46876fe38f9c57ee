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

from handcheck.errors import CircuitError, HandcheckError, LimitError, ParseError, UnitError, WorksheetError
from handcheck.verify.check import check
from handcheck.verify.findings import Report, StepFinding
from handcheck.worksheet.load import load, loads

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
    "UnitError",
    "WorksheetError",
    "__version__",
    "check",
    "check_file",
    "check_text",
    "load",
    "loads",
]


def check_file(path: str) -> Report:
    """Load and check the worksheet at ``path``."""
    return check(load(path))


def check_text(text: str, path: str = "<worksheet>") -> Report:
    """Check a worksheet given as text."""
    return check(loads(text, path))
