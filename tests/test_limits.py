"""Limits instead of hangs: the wall-clock budget and the size caps."""

from __future__ import annotations

import subprocess
import sys
import time

import pytest

import handcheck
from handcheck.worksheet.load import MAX_PARTS


def ladder(sections: int) -> str:
    lines = [
        "[worksheet]",
        "format = 1",
        'title = "Long RLC ladder"',
        "[parts]",
        'V1 = { voltage = "1 V", frequency = "50 Hz", nodes = ["n0", "gnd"] }',
    ]
    for k in range(sections):
        lines.append(f'R{k} = {{ resistor = "{k + 1} ohm", nodes = ["n{k}", "m{k}"] }}')
        lines.append(f'L{k} = {{ inductor = "{k + 2} mH", nodes = ["m{k}", "n{k + 1}"] }}')
        lines.append(f'C{k} = {{ capacitor = "{k + 3} uF", nodes = ["n{k + 1}", "gnd"] }}')
    lines += ["[[step]]", 'name = "v"', f'quantity = "peak(voltage(n{sections}))"', 'claim = "1 V"']
    return "\n".join(lines) + "\n"


@pytest.mark.slow
def test_time_limit_is_honoured(tmp_path):
    # A 60-section ladder's peak needs a closed form of order 120: far longer than 1 s.
    path = tmp_path / "long.toml"
    path.write_text(ladder(60), encoding="utf-8")
    started = time.monotonic()
    result = subprocess.run(
        [sys.executable, "-m", "handcheck.cli", "check", str(path), "--time-limit", "1"],
        capture_output=True,
        text=True,
        timeout=120,
        check=False,
    )
    elapsed = time.monotonic() - started
    assert result.returncode == 2
    assert "Traceback" not in result.stderr
    assert result.stderr.count("\n") == 1
    # Python start-up and imports come on top of the budget; the check itself stops at 1 s.
    assert elapsed < 30
    assert "ran out of its time limit of 1 s" in result.stderr


def test_too_many_parts_are_refused():
    with pytest.raises(handcheck.LimitError, match=f"handcheck checks at most {MAX_PARTS:,} in one worksheet"):
        handcheck.loads(ladder(MAX_PARTS // 3 + 1))
