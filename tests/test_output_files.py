"""No output file is lost or half-written (hardening).

Outputs are written to a temporary file in the same folder and renamed over the
target: POSIX rename() replaces the target atomically (IEEE Std 1003.1-2017, rename()),
so a reader sees the old file or the new one. A plot is drawn after the report is
printed, so a plot that cannot be written loses nothing else (common practice).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from handcheck.testing import run_command

_SHEET = """
[worksheet]
format = 1
title = "Sensor bias divider (invented)"

[parts]
Vs = { voltage = "5 V", nodes = ["a", "gnd"] }
R1 = { resistor = "3 kohm", nodes = ["a", "b"] }
R2 = { resistor = "2 kohm", nodes = ["b", "gnd"] }

[[step]]
name = "Vb"
quantity = "voltage(b)"
formula = "Vs*R2/(R1 + R2)"
claim = "2 V"
"""


@pytest.fixture
def sheet(tmp_path: Path) -> Path:
    path = tmp_path / "divider.toml"
    path.write_text(_SHEET, encoding="utf-8")
    return path


def test_a_plot_that_cannot_be_written_keeps_the_report(capsys, sheet, tmp_path):
    target = tmp_path / "no such folder" / "divider.svg"
    code, out, err = run_command(capsys, "check", str(sheet), "--plot", str(target))
    assert code == 2
    assert "OK: 1 step (1 agrees)" in out  # the whole report, summary line included
    assert f"{target}: the plot could not be written" in err
    assert "Traceback" not in err


def test_a_failed_write_leaves_the_old_file_and_no_temporary(capsys, sheet, tmp_path, monkeypatch):
    from handcheck.record import document

    target = tmp_path / "divider.svg"
    target.write_text("the plot of yesterday", encoding="utf-8")

    def full_disk(fd: int) -> None:
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(document.os, "fsync", full_disk)
    code, out, err = run_command(capsys, "check", str(sheet), "--plot", str(target))
    assert code == 2 and "OK: 1 step" in out
    assert f"{target}: the plot could not be written (No space left on device)" in err
    assert target.read_text(encoding="utf-8") == "the plot of yesterday"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["divider.svg", "divider.toml"]


def test_a_replaced_file_is_said(capsys, sheet, tmp_path):
    target = tmp_path / "divider.md"
    code, _, err = run_command(capsys, "record", str(sheet), "--no-evidence", "-o", str(target))
    assert code == 0 and "replacing" not in err
    code, _, err = run_command(capsys, "record", str(sheet), "--no-evidence", "-o", str(target))
    assert code == 0 and f"record written to {target} (replacing the file that was there)" in err


def test_a_record_write_error_names_the_record(capsys, sheet, tmp_path):
    target = tmp_path / "missing" / "divider.html"
    code, out, err = run_command(capsys, "record", str(sheet), "--no-evidence", "-o", str(target))
    assert code == 2 and out == ""
    assert f"{target}: No such file or directory" in err
