"""The pytest items of :mod:`handcheck.testing`'s plugin: one worksheet, one test.

Kept apart from :mod:`handcheck.testing` because these classes need pytest at import,
and the helpers there must import without it.
"""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest

from handcheck.errors import HandcheckError
from handcheck.pipeline import run
from handcheck.record.summary import divergence_text

__all__ = ["WorksheetFile", "WorksheetItem"]


class WorksheetFile(pytest.File):
    """A worksheet file: one test item, the whole check."""

    def collect(self) -> Iterator[pytest.Item]:
        """Yield the one item of the worksheet."""
        yield WorksheetItem.from_parent(self, name="check")


class WorksheetItem(pytest.Item):
    """The check of one worksheet: passes when every step agrees or is unchecked."""

    def runtest(self) -> None:
        """Check the worksheet, as :func:`handcheck.testing.assert_checks_out` does."""
        report = run(self.path).report
        assert report is not None
        if not report.ok:
            raise AssertionError(divergence_text(report))

    def repr_failure(self, excinfo: Any, style: Any = None) -> Any:
        """The check's own words, not a traceback, for a disagreement or a refusal.

        Parameters
        ----------
        excinfo
            What the check raised.
        style
            pytest's traceback style, used for anything else (a fault of handcheck).
        """
        if isinstance(excinfo.value, (AssertionError, HandcheckError)):
            return str(excinfo.value)
        return super().repr_failure(excinfo, style=style)

    def reportinfo(self) -> tuple[Path, int | None, str]:
        """Where the item comes from, for pytest's report."""
        return self.path, None, f"worksheet {self.path.name}"
