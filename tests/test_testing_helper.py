"""handcheck.testing, the helper for users' own test suites."""

from __future__ import annotations

from pathlib import Path

import pytest

from handcheck.testing import assert_checks_out

WORKSHEETS = Path(__file__).resolve().parent.parent / "worksheets"


def test_a_correct_worksheet_passes():
    report = assert_checks_out(WORKSHEETS / "coil-snubber.toml")
    assert report.ok


def test_a_wrong_worksheet_fails_with_the_divergence_and_diagnosis():
    with pytest.raises(AssertionError) as info:
        assert_checks_out(WORKSHEETS / "adc-antialias.toml")
    text = str(info.value)
    assert "first divergence at XC" in text
    assert "likely hertz-as-angular" in text
    assert "Zp: carried (from XC)" in text
