"""The command line: exit codes, the terminal report, check output format 1 (JSON).

Runs ``handcheck.cli.main`` in-process (capsys) on the bundled demo worksheets and
on temporary ones, plus one real subprocess ``python -m handcheck.cli``. Expected
numbers for the demo anti-alias filter are recomputed here with numpy from the
textbook forms X_C = -1/(wC), parallel and divider impedances (Alexander & Sadiku,
Fundamentals of Electric Circuits, 5th ed., ch. 9, from memory). The extra-low
voltage thresholds (50 V AC rms, 120 V ripple-free DC) are those of IEC 61140 /
IEC 60364-4-41, from memory.
"""

from __future__ import annotations

import cmath
import hashlib
import json
import math
import os
import subprocess
import sys
from pathlib import Path

import pytest
from numpy.testing import assert_allclose

from handcheck.testing import run_command

REPO = Path(__file__).resolve().parents[1]
DEMOS = REPO / "worksheets"
ADC = DEMOS / "adc-antialias.toml"
SNUBBER = DEMOS / "coil-snubber.toml"
MOTOR = DEMOS / "motor-pf-correction.toml"

FORMAT1_KEYS = {"handcheck", "worksheet", "sha256", "ok", "first_divergence", "steps"}
STEP_KEYS = {"name", "verdict", "claimed", "expected", "expected_si", "error", "caused_by", "diagnosis"}
VERDICTS = {"agrees", "arithmetic", "formula", "carried", "differs", "unit", "unchecked"}
MISTAKES = {
    "hertz-as-angular", "angular-as-hertz", "degrees-as-radians", "radians-as-degrees", "peak-as-rms",
    "rms-as-peak", "power-half", "reactance-sign", "sine-reference", "phase-sign", "series-as-parallel",
    "parallel-as-series", "impedance-as-admittance", "prefix",
    # second edition
    "magnitude-as-phasor", "other-frequency", "sign-convention", "reversed-nodes",
}  # fmt: skip


run = run_command  # exit status, stdout and stderr of the command line


def run_json(capsys, path: Path | str) -> tuple[int, dict]:
    code, out, err = run(capsys, "check", str(path), "--json")
    assert err == ""
    data = json.loads(out)  # the whole of stdout is one JSON value
    assert isinstance(data, dict)
    return code, data


def write(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


DIVIDER = """[worksheet]
format = 1
title = "Divider"

[parts]
V1 = {{ voltage = "{volts}", nodes = ["in", "gnd"] }}
R1 = {{ resistor = "3 kohm", nodes = ["in", "out"] }}
R2 = {{ resistor = "2 kohm", nodes = ["out", "gnd"] }}

[[step]]
name = "Vout"
quantity = "voltage(out)"
formula = "V1*R2/(R1 + R2)"
claim = "{claim}"
"""


# --------------------------------------------------------------------------
# exit status 0 and 1
# --------------------------------------------------------------------------


def test_all_agreeing_demo_exits_0(capsys):
    code, out, err = run(capsys, "check", str(SNUBBER))
    assert code == 0
    assert err == ""
    assert "OK" in out and "NOT OK" not in out
    for name in ("XL", "XC", "Zcoil", "Zsnub", "Zload", "I", "P", "pf"):
        assert name in out


def test_all_agreeing_temporary_worksheet_exits_0(tmp_path, capsys):
    # voltage divider: 10 V * 2/(3 + 2) = 4 V (Ohm's law)
    path = write(tmp_path, "divider.toml", DIVIDER.format(volts="10 V", claim="4 V"))
    assert run(capsys, "check", str(path))[0] == 0
    code, data = run_json(capsys, path)
    assert code == 0
    assert data["ok"] is True
    assert data["first_divergence"] is None
    assert [s["verdict"] for s in data["steps"]] == ["agrees"]


def test_unchecked_step_does_not_fail(tmp_path, capsys):
    # DESIGN: ok is true when no step has a verdict other than agrees or unchecked.
    text = DIVIDER.format(volts="10 V", claim="4 V") + '\n[[step]]\nname = "note"\nclaim = "7 V"\n'
    code, data = run_json(capsys, write(tmp_path, "unchecked.toml", text))
    assert code == 0
    assert [s["verdict"] for s in data["steps"]] == ["agrees", "unchecked"]
    assert data["ok"] is True


def test_wrong_claim_exits_1(tmp_path, capsys):
    path = write(tmp_path, "wrong.toml", DIVIDER.format(volts="10 V", claim="6 V"))
    code, out, _ = run(capsys, "check", str(path))
    assert code == 1
    assert "NOT OK" in out
    code, data = run_json(capsys, path)
    assert code == 1
    assert data["ok"] is False
    assert data["first_divergence"] == "Vout"
    # 6 V claimed against 4 V: relative error |6 - 4| / 4 = 0.5
    assert_allclose(data["steps"][0]["error"], 0.5, rtol=1e-9)
    assert_allclose(data["steps"][0]["expected_si"], [4.0, 0.0], rtol=1e-12, atol=1e-12)


def test_adc_demo_exits_1_with_first_divergence_xc(capsys):
    code, out, err = run(capsys, "check", str(ADC))
    assert code == 1
    assert err == ""
    assert "XC" in out and "hertz-as-angular" in out and "NOT OK" in out


def test_adc_demo_json_verdicts_and_diagnosis(capsys):
    code, data = run_json(capsys, ADC)
    assert code == 1
    assert data["ok"] is False
    assert data["first_divergence"] == "XC"
    steps = {s["name"]: s for s in data["steps"]}
    assert [s["name"] for s in data["steps"]] == ["XC", "Zp", "H"]
    # XC = -1/(w*Cf) was worked with f where w belongs: the claim does not follow from
    # the formula with the true w, so the step itself is wrong; Zp and H only carry it.
    assert steps["XC"]["verdict"] not in ("agrees", "carried", "unchecked")
    assert steps["XC"]["verdict"] == "arithmetic"
    assert steps["XC"]["caused_by"] is None
    assert "hertz-as-angular" in [d["mistake"] for d in steps["XC"]["diagnosis"]]
    for name in ("Zp", "H"):
        assert steps[name]["verdict"] == "carried"
        assert steps[name]["caused_by"] == "XC"


def test_adc_demo_expected_values_against_numpy(capsys):
    # Independent recomputation with floats (textbook forms named in the module doc).
    _, data = run_json(capsys, ADC)
    steps = {s["name"]: s for s in data["steps"]}
    w = 2 * math.pi * 2000.0
    rf, cf, radc = 1600.0, 10e-9, 100e3
    xc = -1 / (w * cf)
    zp = 1 / (1 / radc + 1 / (1j * xc))
    h = zp / (rf + zp)
    for name, true in (("XC", complex(xc)), ("Zp", zp), ("H", h)):
        assert_allclose(steps[name]["expected_si"], [true.real, true.imag], rtol=1e-9, atol=1e-9 * abs(true))
    # relative error of each claim: |claim - true| / |true|
    claims = {"XC": -50000.0, "Zp": 20000 - 40000j, "H": cmath.rect(0.9838, math.radians(-1.80))}
    for name, claim in claims.items():
        true = complex(*steps[name]["expected_si"])
        assert_allclose(steps[name]["error"], abs(claim - true) / abs(true), rtol=1e-6)
    # and the claim with f = 2 kHz used as w reproduces -50000 ohm (the diagnosis)
    assert_allclose(-1 / (2000.0 * cf), -50000.0, rtol=1e-12)


# --------------------------------------------------------------------------
# check output format 1
# --------------------------------------------------------------------------


@pytest.mark.parametrize("path", [ADC, SNUBBER, MOTOR], ids=lambda p: p.name)
def test_json_has_format1_keys_and_sha256(capsys, path):
    _, data = run_json(capsys, path)
    assert set(data) >= FORMAT1_KEYS
    assert data["handcheck"] == "0.1.0"  # pyproject.toml [project] version
    assert data["worksheet"] == str(path)
    assert data["sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()
    assert isinstance(data["ok"], bool)
    assert data["steps"]
    for step in data["steps"]:
        assert set(step) >= STEP_KEYS, step["name"]
        assert step["verdict"] in VERDICTS
        assert isinstance(step["claimed"], str)
        assert step["expected_si"] is None or (
            len(step["expected_si"]) == 2 and all(isinstance(v, float) for v in step["expected_si"])
        )
        assert isinstance(step["diagnosis"], list)
        for item in step["diagnosis"]:
            assert set(item) >= {"mistake", "detail"}
            assert item["mistake"] in MISTAKES
    assert data["ok"] == all(s["verdict"] in ("agrees", "unchecked") for s in data["steps"])


def test_sha256_is_of_the_file_bytes(tmp_path, capsys):
    # CRLF line ends and a non-ASCII title: the hash is of the bytes on disk.
    text = DIVIDER.format(volts="10 V", claim="4 V").replace('title = "Divider"', 'title = "Teiler Ω 10 V → 4 V"')
    path = tmp_path / "crlf.toml"
    path.write_bytes(text.replace("\n", "\r\n").encode("utf-8"))
    code, data = run_json(capsys, path)
    assert code == 0
    assert data["sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()
    assert data["sha256"] != hashlib.sha256(text.encode("utf-8")).hexdigest()


# --------------------------------------------------------------------------
# exit status 2
# --------------------------------------------------------------------------

MALFORMED = {
    "bad-toml": ("[worksheet\nformat = 1\n", 1),
    "no-format": ('[worksheet]\ntitle = "x"\n[parts]\nR1 = { resistor = "1 ohm", nodes = ["a", "gnd"] }\n', None),
    "unknown-kind": (
        '[worksheet]\nformat = 1\ntitle = "x"\n[parts]\nR1 = { resistr = "1 ohm", nodes = ["a", "gnd"] }\n',
        5,
    ),
    "bad-claim": (
        '[worksheet]\nformat = 1\ntitle = "x"\n[parts]\nV1 = { voltage = "1 V", nodes = ["a", "gnd"] }\n'
        'R1 = { resistor = "1 ohm", nodes = ["a", "gnd"] }\n[[step]]\nname = "v"\nquantity = "voltage(a)"\nclaim = "1 V +"\n',
        None,
    ),
    "bad-formula": (
        '[worksheet]\nformat = 1\ntitle = "x"\n[parts]\nV1 = { voltage = "1 V", nodes = ["a", "gnd"] }\n'
        'R1 = { resistor = "1 ohm", nodes = ["a", "gnd"] }\n[[step]]\nname = "v"\nformula = "V1 * (R1"\nclaim = "1 V"\n',
        None,
    ),
    "voltage-loop": (
        '[worksheet]\nformat = 1\ntitle = "x"\n[parts]\nV1 = { voltage = "1 V", nodes = ["a", "gnd"] }\n'
        'V2 = { voltage = "2 V", nodes = ["a", "gnd"] }\n',
        None,
    ),
    "empty": ("", None),
}


@pytest.mark.parametrize("case", sorted(MALFORMED))
def test_malformed_worksheet_exits_2_with_one_line(tmp_path, capsys, case):
    text, line = MALFORMED[case]
    path = write(tmp_path, f"{case}.toml", text)
    code, out, err = run(capsys, "check", str(path))
    assert code == 2
    assert out == ""
    assert "Traceback" not in err
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert str(path) in lines[0]
    if line is not None:  # DESIGN: the line where known
        assert f"{path}:{line}:" in lines[0]
    # --json changes nothing about a bad worksheet
    code, out, err = run(capsys, "check", str(path), "--json")
    assert (code, out, len(err.splitlines())) == (2, "", 1)


def test_non_utf8_worksheet_exits_2(tmp_path, capsys):
    path = tmp_path / "utf16.toml"
    path.write_bytes('[worksheet]\nformat = 1\ntitle = "Widerstand 10 Ω"\n'.encode("utf-16"))
    code, _, err = run(capsys, "check", str(path))
    assert code == 2
    assert len(err.splitlines()) == 1 and str(path) in err and "Traceback" not in err


def test_missing_file_exits_2(tmp_path, capsys):
    path = tmp_path / "no-such-worksheet.toml"
    code, out, err = run(capsys, "check", str(path))
    assert code == 2
    assert out == ""
    assert len(err.splitlines()) == 1
    assert str(path) in err and "Traceback" not in err


def test_folder_instead_of_file_exits_2(tmp_path, capsys):
    code, _, err = run(capsys, "check", str(tmp_path))
    assert code == 2
    assert str(tmp_path) in err and "Traceback" not in err


@pytest.mark.parametrize("argv", [(), ("check",), ("frobnicate",), ("check", "--bogus", str(SNUBBER))])
def test_bad_command_line_exits_2(capsys, argv):
    code, out, err = run(capsys, *argv)
    assert code == 2
    assert out == ""
    assert err and "Traceback" not in err


# --------------------------------------------------------------------------
# cautions above extra-low voltage
# --------------------------------------------------------------------------


def test_mains_demo_carries_caution_in_text_and_json(capsys):
    # 230 V rms > 50 V AC rms (IEC 61140, from memory)
    code, out, _ = run(capsys, "check", str(MOTOR))
    assert code == 0
    assert "CAUTION" in out
    assert "safety" in out
    _, data = run_json(capsys, MOTOR)
    assert data["ok"] is True
    assert isinstance(data["cautions"], list) and len(data["cautions"]) >= 1
    assert all(isinstance(c, str) and c for c in data["cautions"])


def test_24v_demo_carries_no_caution(capsys):
    code, out, _ = run(capsys, "check", str(SNUBBER))
    assert code == 0
    assert "CAUTION" not in out
    _, data = run_json(capsys, SNUBBER)
    assert not data.get("cautions")


AC_SOURCE = """[worksheet]
format = 1
title = "threshold"
phasors = "{phasors}"

[parts]
V1 = {{ voltage = "{volts}", {freq}nodes = ["in", "gnd"] }}
R1 = {{ resistor = "1 kohm", nodes = ["in", "gnd"] }}

[[step]]
name = "I"
quantity = "current(R1)"
claim = "{amps}"
"""


@pytest.mark.parametrize(
    ("volts", "freq", "phasors", "amps", "caution"),
    [
        ("50 V rms", 'frequency = "50 Hz", ', "rms", "50 mA", False),  # at the limit: extra-low
        ("51 V rms", 'frequency = "50 Hz", ', "rms", "51 mA", True),
        ("70 V", 'frequency = "50 Hz", ', "peak", "70 mA", False),  # 49.5 V rms
        ("72 V", 'frequency = "50 Hz", ', "peak", "72 mA", True),  # 50.9 V rms
        ("120 V", "", "peak", "120 mA", False),  # DC limit 120 V
        ("121 V", "", "peak", "121 mA", True),
        ("-150 V", "", "peak", "-150 mA", True),
    ],
)
def test_caution_thresholds(tmp_path, capsys, volts, freq, phasors, amps, caution):
    path = write(tmp_path, "v.toml", AC_SOURCE.format(volts=volts, freq=freq, phasors=phasors, amps=amps))
    code, data = run_json(capsys, path)
    assert code == 0  # the arithmetic itself agrees (Ohm's law)
    assert bool(data.get("cautions")) is caution
    _, out, _ = run(capsys, "check", str(path))
    assert ("CAUTION" in out) is caution


# --------------------------------------------------------------------------
# a real process
# --------------------------------------------------------------------------


@pytest.mark.slow
def test_subprocess_python_m_handcheck_cli(tmp_path):
    env = dict(os.environ)
    env["PYTHONPATH"] = os.pathsep.join(filter(None, [str(REPO), env.get("PYTHONPATH")]))
    command = [sys.executable, "-m", "handcheck.cli", "check", str(ADC), "--json"]
    done = subprocess.run(command, capture_output=True, text=True, env=env, cwd=tmp_path, timeout=120, check=False)
    assert done.returncode == 1, done.stderr
    assert "Traceback" not in done.stderr
    data = json.loads(done.stdout)
    assert data["first_divergence"] == "XC"
    assert data["sha256"] == hashlib.sha256(ADC.read_bytes()).hexdigest()
    assert [s["verdict"] for s in data["steps"]] == ["arithmetic", "carried", "carried"]
    # and a missing file through the real process: status 2, one line, no traceback
    missing = str(tmp_path / "absent.toml")
    done = subprocess.run(
        [sys.executable, "-m", "handcheck.cli", "check", missing],
        capture_output=True, text=True, env=env, cwd=tmp_path, timeout=120, check=False,
    )  # fmt: skip
    assert done.returncode == 2
    assert done.stdout == ""
    assert done.stderr.count("\n") == 1 and missing in done.stderr and "Traceback" not in done.stderr


@pytest.mark.parametrize("command", ["check", "simulate", "record", "reverify"])
def test_every_command_states_its_default_time_limit(capsys, command):
    from handcheck.budget import DEFAULT_TIME_LIMIT
    from handcheck.testing import run_command

    code, out, _ = run_command(capsys, command, "--help")
    assert code == 0
    assert f"default {DEFAULT_TIME_LIMIT:g} s" in " ".join(out.split())
