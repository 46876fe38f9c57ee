"""The numerical evidence speaks the worksheet's phasor convention (peak or rms).

Source: an RC low-pass driven at w = 1/(RC) passes 1/sqrt(2) of the drive at -45 deg
(Alexander & Sadiku, Fundamentals of Electric Circuits, 5th edition, section 14.3,
from memory); an rms phasor is the peak phasor over sqrt(2) for a sinusoid (IEC 60050-103,
from memory).
"""

from __future__ import annotations

import math

import matplotlib
import pytest

from handcheck.pipeline import run_text
from handcheck.record.evidence_text import evidence_lines
from handcheck.record.jsonout import evidence_dict
from handcheck.record.plots import evidence_figure

matplotlib.use("Agg")


def _sheet(convention: str) -> str:
    # a source's amplitude is peak unless written with the word rms (worksheet format 1)
    drive = "10 V rms" if convention == "rms" else "10 V"
    return f"""[worksheet]
format = 1
title = "Sensor filter, drive at its corner"
phasors = "{convention}"
frequency = "1000 rad/s"

[parts]
Vs = {{ voltage = "{drive}", frequency = "1000 rad/s", nodes = ["in", "gnd"] }}
R1 = {{ resistor = "1 kohm", nodes = ["in", "out"] }}
C1 = {{ capacitor = "1 uF", nodes = ["out", "gnd"] }}

[[step]]
name = "Vout"
quantity = "voltage(out)"
claim = "7.071 V /_ -45 deg"
"""


def _row(lines: list[str], signal: str) -> str:
    return next(line for line in lines if line.strip().startswith(signal))


@pytest.mark.parametrize("convention", ["peak", "rms"])
def test_evidence_phasors_are_shown_in_the_worksheets_convention(convention: str) -> None:
    result = run_text(_sheet(convention), evidence=True)
    assert result.report.ok
    row = _row(evidence_lines(result.evidence), "voltage(out)")
    # 10 V in the worksheet's convention: |Vout| = 10/sqrt(2) in that same convention
    assert f"exact {10 / math.sqrt(2):.6g} ∠ -45.0000 deg ({convention})" in row
    assert f"fitted {10 / math.sqrt(2):.6g} ∠" in row
    # the drive's angle is 0: a fitted -1e-12 deg is shown as 0.0000, not -0.0000
    drive = _row(evidence_lines(result.evidence), "voltage(in)")
    assert drive.count("∠ 0.0000 deg") == 2 and "-0.0000" not in drive
    # the JSON keeps peak values, and says so
    data = evidence_dict(result.evidence)
    assert data["phasors_are"] == "peak"
    out = next(p for p in data["phasors"] if p["signal"] == "voltage(out)")
    peak = 10 / math.sqrt(2) * (math.sqrt(2) if convention == "rms" else 1.0)
    assert math.hypot(*out["exact"]) == pytest.approx(peak, rel=1e-12)


def test_the_phasor_diagram_is_drawn_in_rms_for_an_rms_worksheet() -> None:
    import matplotlib.pyplot as plt

    result = run_text(_sheet("rms"), evidence=True)
    figure = evidence_figure(result.report, result.evidence)
    diagram = next(a for a in figure.axes if a.get_title().startswith("phasors [V"))
    assert diagram.get_title() == "phasors [V, rms]"
    tip = next(line for line in diagram.get_lines() if line.get_marker() == "o")
    claimed = 7.071 * complex(math.cos(math.radians(-45)), math.sin(math.radians(-45)))
    assert tip.get_xdata()[0] == pytest.approx(claimed.real) and tip.get_ydata()[0] == pytest.approx(claimed.imag)
    plt.close("all")
