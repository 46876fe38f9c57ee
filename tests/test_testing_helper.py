"""handcheck.testing, the helper for users' own test suites."""

from __future__ import annotations

import os
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


# --- folders: one pytest item per worksheet ------------------------------------------

pytest_plugins = ["pytester"]

#: Inner runs are processes of their own (an in-process run forgets the modules it
#: imported, and numpy's extensions cannot be loaded twice), without plugins of the
#: machine that react to a parallel run.
QUIET = ("-p", "no:benchmark", "-p", "no:cacheprovider")

BROKEN = '[worksheet]\nformat = 1\ntitle = "no circuit"\n[[part]]\nid = "R1"\nkind = "resistor"\n'


@pytest.fixture
def notes(pytester, monkeypatch):
    """A repository-like folder: two worksheets (one right, one wrong), one broken
    worksheet, and TOML files that are no worksheets."""
    root = str(WORKSHEETS.parent)  # the inner runs import this checkout's handcheck
    monkeypatch.setenv("PYTHONPATH", os.pathsep.join(filter(None, [root, os.environ.get("PYTHONPATH")])))
    folder = pytester.mkdir("design-notes")
    (folder / "snubber.toml").write_text((WORKSHEETS / "coil-snubber.toml").read_text())
    (folder / "antialias.toml").write_text((WORKSHEETS / "adc-antialias.toml").read_text())
    (folder / "broken.toml").write_text(BROKEN)
    (folder / "settings.toml").write_text('[tool.other]\nworksheet = "no"\n')
    pytester.makefile(".toml", pyproject='[project]\nname = "x"\n')
    return folder


@pytest.mark.slow  # runs pytest in a subprocess
def test_the_plugin_makes_one_item_per_worksheet(pytester, notes):
    result = pytester.runpytest_subprocess(*QUIET, "-p", "handcheck.testing", "-v", str(pytester.path))
    result.assert_outcomes(passed=1, failed=2)
    text = result.stdout.str()
    assert "snubber.toml::check PASSED" in text
    assert "antialias.toml::check FAILED" in text
    assert "settings.toml" not in text and "pyproject.toml::" not in text
    # the failures speak the check's words, not a traceback
    assert "first divergence at XC" in text and "likely hertz-as-angular" in text
    assert "broken.toml" in text and "Traceback" not in text


@pytest.mark.slow  # runs pytest in a subprocess
def test_a_conftest_loads_the_plugin(pytester, notes):
    pytester.makeconftest('pytest_plugins = ["handcheck.testing"]\n')
    result = pytester.runpytest_subprocess(*QUIET, str(notes / "snubber.toml"))
    result.assert_outcomes(passed=1)


@pytest.mark.slow  # runs pytest in a subprocess
def test_worksheet_cases_parametrize_a_folder(pytester, notes):
    (notes / "broken.toml").unlink()
    pytester.makepyfile(
        test_notes=f"""
        import pytest
        from handcheck.testing import assert_checks_out, worksheet_cases

        @pytest.mark.parametrize("path", worksheet_cases({str(notes)!r}))
        def test_worksheet(path):
            assert_checks_out(path)
        """
    )
    result = pytester.runpytest_subprocess(*QUIET, "-v", "test_notes.py")
    # settings.toml is a *.toml below the folder, as for `handcheck check FOLDER`: refused
    result.assert_outcomes(passed=1, failed=2)
    assert "snubber.toml] PASSED" in result.stdout.str()


def test_worksheet_cases_of_an_empty_folder_is_refused(tmp_path):
    from handcheck.errors import WorksheetError
    from handcheck.testing import worksheet_cases

    with pytest.raises(WorksheetError, match="holds no worksheet"):
        worksheet_cases(tmp_path)
