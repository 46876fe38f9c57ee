"""Every example in docs/transients.md runs, and every value it quotes is what handcheck gives.

- The ```toml block that starts with ``[parts]`` loads, and both the closed form and
  the numerical path give the same waveforms for it.
- The ```toml block that starts with ``[worksheet]`` checks out.
- The table of values: each source function at each time, against the value quoted
  (compared as a claim is, to the digits written).
- The table of drives: the phasors read from each function.
- The table of the first version's keys: the old form is refused with the new form
  in its message, and the new form loads.

The values in the docs are examples computed by handcheck itself; what this file
checks is that the docs and the program still agree. The behaviour itself is checked
against outside sources in tests/test_source_functions.py.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np
import pytest
import sympy
from numpy.testing import assert_allclose

import handcheck
from handcheck.circuit.build import build
from handcheck.verify.claims import Tolerance, agrees, read_claim
from handcheck.worksheet.sourcefunction import read_function
from handcheck.worksheet.values import read_frequency, read_value

DOC = Path(__file__).resolve().parents[1] / "docs" / "transients.md"
TEXT = DOC.read_text(encoding="utf-8")
HEADER = '[worksheet]\nformat = 1\ntitle = "docs example"\n'


def _blocks(language: str) -> list[str]:
    return re.findall(rf"```{language}\n(.*?)```", TEXT, re.S)


def _table(header: str) -> list[list[str]]:
    lines = TEXT.splitlines()
    for index, line in enumerate(lines):
        if line.startswith(f"| {header}"):
            rows = []
            for row in lines[index + 2 :]:
                if not row.startswith("|"):
                    break
                cells = [c.strip() for c in row.strip().strip("|").split(" | ")]
                rows.append([c[1:-1] if c.startswith("`") and c.endswith("`") else c for c in cells])
            return rows
    raise AssertionError(f"docs/transients.md has no table headed {header!r}")


@pytest.mark.slow
def test_the_sources_example_loads_and_both_paths_agree():
    from handcheck.simulate import simulate
    from handcheck.solve.transient import transient_solution

    (parts,) = [b for b in _blocks("toml") if b.startswith("[parts]")]
    circuit = build(handcheck.loads(HEADER + 'frequency = "2000 rad/s"\n' + parts))
    closed = transient_solution(circuit, until=sympy.Rational(6, 1000))
    numerical = simulate(circuit, span=6e-3)
    times = numerical.times[numerical.times < 5.99e-3][::40]
    for node in ("a", "b", "e", "f"):
        exact = np.array([closed.node_voltage(node).value(t) for t in times])
        index = np.searchsorted(numerical.times, times)
        assert_allclose(numerical.voltages[node][index], exact, rtol=0, atol=1e-9 * max(1, abs(exact).max()))


def test_the_complete_worksheet_checks_out():
    (sheet,) = [b for b in _blocks("toml") if b.startswith("[worksheet]")]
    report = handcheck.check_text(sheet)
    assert report.ok, [(s.name, s.verdict) for s in report.steps]


@pytest.mark.parametrize("row", _table("source | at"), ids=lambda r: f"{r[0]} at {r[1]}")
def test_quoted_values(row):
    function_text, at, quoted = row
    unit = "V" if function_text.endswith(" V") else "A"
    function = read_function(function_text, unit, "the source")
    value = function.value(float(read_value(at, "s", "the time")))
    claim = read_claim(quoted)
    assert agrees(claim, complex(value), Tolerance())


def _phasors(text: str) -> dict[str, complex]:
    """``"2.5 V at DC, 0.1 V /_ -90 deg at 50 Hz"`` as {frequency text: phasor}."""
    out = {}
    for part in text.split(", "):
        value, _, where = part.rpartition(" at ")
        out[where] = complex(sympy.N(read_claim(value.strip("`")).value.expr))
    return out


@pytest.mark.parametrize("row", _table("source | drives"), ids=lambda r: r[0])
def test_quoted_drives(row):
    function_text, drives = row
    function = read_function(function_text, "V", "the source")
    if drives == "nothing":
        assert function.frequencies == () and function.steady(sympy.Integer(0)) == 0
        return
    wanted = _phasors(drives.replace("`", ""))
    found = {}
    for where, phasor in wanted.items():
        omega = sympy.Integer(0) if where == "DC" else read_frequency(where, "f")
        found[where] = complex(sympy.N(function.steady(omega)))
        assert_allclose(found[where], phasor, rtol=1e-3)
    assert len(function.frequencies) + (function.steady(sympy.Integer(0)) != 0) == len(wanted)


@pytest.mark.parametrize("row", _table("first version"), ids=lambda r: r[0][:40])
def test_old_keys_are_refused_with_the_new_form(row):
    old, new = row
    text = (
        HEADER
        + "[parts]\n"
        + f'Vs = {{ {old}, nodes = ["a", "gnd"] }}\nRl = {{ resistor = "1 kohm", nodes = ["a", "gnd"] }}\n'
    )
    with pytest.raises(handcheck.WorksheetError) as caught:
        handcheck.loads(text)
    assert new in str(caught.value)
    fixed = (
        HEADER
        + "[parts]\n"
        + f'Vs = {{ {new}, nodes = ["a", "gnd"] }}\nRl = {{ resistor = "1 kohm", nodes = ["a", "gnd"] }}\n'
    )
    build(handcheck.loads(fixed))
