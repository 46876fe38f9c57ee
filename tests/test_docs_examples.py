"""Every example in docs/worksheet.md runs, and every value it quotes is what handcheck gives.

- A ```toml block that starts with ``[worksheet]`` is a complete worksheet: it must
  load and check. A ```text block right after it that starts with
  ``$ handcheck check NAME`` is its terminal output, compared line by line (the
  wording of a "likely mistake" is not compared, only its code).
- A ```toml block that starts with ``[parts]`` is a circuit: with a minimal
  ``[worksheet]`` table in front, it must load and solve.
- Every other ```toml block is a fragment: each quantity, formula, claim, tolerance,
  frequency and phasor convention in it must be read by handcheck; together the
  fragments form a worksheet that checks.
- The tables of quantities, formulas, claims, tolerances, peak/rms and frequencies
  are run: each example is read, and each value quoted beside it is compared with
  handcheck's own value the way a claim is ("digits": half a unit in the last digit
  written).

The values in the docs are invented examples computed by handcheck itself; what this
file checks is that the docs and the program still agree.
"""

from __future__ import annotations

import itertools
import json
import math
import re
import tomllib
from pathlib import Path

import pytest
import sympy

import handcheck
from handcheck.circuit.build import build
from handcheck.circuit.kinds import KINDS as PART_KINDS
from handcheck.cli import main
from handcheck.record.jsonout import report_dict
from handcheck.record.text import render
from handcheck.solve.phasor import solve
from handcheck.solve.quantities import QUANTITIES, TIME_DOMAIN, evaluate_quantity, parse_quantity
from handcheck.verify.check import part_environment
from handcheck.verify.claims import Tolerance, agrees, read_claim, read_tolerance, to_complex
from handcheck.verify.findings import BASES, VERDICTS
from handcheck.worksheet.evaluate import FUNCTIONS, Value, evaluate, evaluate_text
from handcheck.worksheet.expr import parse
from handcheck.worksheet.values import read_frequency

DOC = Path(__file__).resolve().parents[1] / "docs" / "worksheet.md"
TEXT = DOC.read_text(encoding="utf-8")
DIGITS = Tolerance()
HEADER = '[worksheet]\nformat = 1\ntitle = "docs example"\n'


# -- reading the page -------------------------------------------------------------
def _blocks() -> list[tuple[str, str, int]]:
    """Fenced blocks as (language, text, line of the opening fence)."""
    blocks = []
    lines = TEXT.splitlines()
    index = 0
    while index < len(lines):
        match = re.match(r"```(\w*)\s*$", lines[index])
        if match:
            start = index
            index += 1
            body = []
            while not lines[index].startswith("```"):
                body.append(lines[index])
                index += 1
            blocks.append((match.group(1), "\n".join(body) + "\n", start + 1))
        index += 1
    return blocks


BLOCKS = _blocks()
TOML = [(text, line) for lang, text, line in BLOCKS if lang == "toml"]
COMPLETE = [(text, line) for text, line in TOML if text.startswith("[worksheet]")]
CIRCUITS = [(text, line) for text, line in TOML if text.startswith("[parts]")]
FRAGMENTS = [(text, line) for text, line in TOML if not text.startswith(("[worksheet]", "[parts]"))]


def _outputs() -> list[tuple[str, str, str, int]]:
    """(worksheet text, file name, shown output, line) for each shown terminal output."""
    found = []
    for (lang, text, _), (next_lang, shown, shown_line) in itertools.pairwise(BLOCKS):
        first = shown.splitlines()[0] if shown.strip() else ""
        if lang == "toml" and next_lang == "text" and first.startswith("$ handcheck check "):
            name = first.removeprefix("$ handcheck check ").strip()
            found.append((text, name, shown.split("\n", 1)[1], shown_line))
    return found


OUTPUTS = _outputs()


def _table(header: str) -> list[list[str]]:
    """Rows of the table whose header line starts with ``| header``: cells with
    backticks removed and GFM's escaped pipes (``\\|``) restored."""
    lines = TEXT.splitlines()
    for index, line in enumerate(lines):
        if line.startswith(f"| {header}"):
            rows = []
            for row in lines[index + 2 :]:
                if not row.startswith("|"):
                    break
                cells = re.split(r"(?<!\\)\|", row.strip())[1:-1]
                rows.append([_code(cell.strip().replace("\\|", "|")) for cell in cells])
            assert rows, f"the table headed {header!r} is empty"
            return rows
    raise AssertionError(f"docs/worksheet.md has no table headed {header!r}")


def _code(cell: str) -> str:
    match = re.fullmatch(r"`([^`]*)`", cell)
    return match.group(1) if match else cell


def _ids(items: list[tuple[str, int]]) -> list[str]:
    return [f"line {line}" for _, line in items]


def _matches(value: Value, quoted: str) -> bool:
    """True when ``quoted`` (written like a claim) agrees with ``value`` to its digits."""
    claim = read_claim(quoted)
    return claim.dim == value.dim and agrees(claim, to_complex(value.expr), DIGITS)


def _read_steps(text: str) -> None:
    """Read every quantity, formula and claim of a worksheet's steps on their own."""
    for step in tomllib.loads(text).get("step", []):
        read_claim(step["claim"])
        if "formula" in step:
            parse(step["formula"])
        if "quantity" in step:
            parse_quantity(step["quantity"])


# -- the worked worksheet, shared by the tables -------------------------------------
WORKED = COMPLETE[0][0]


@pytest.fixture(scope="module")
def worked() -> tuple[object, dict[str, Value]]:
    """The worked worksheet's solution and the values its formulas see (true step values)."""
    report = handcheck.check_text(WORKED)
    circuit = build(handcheck.loads(WORKED))
    env = part_environment(circuit)
    for step in report.steps:
        env[step.name] = Value(step.exact, read_claim(step.claimed).value.dim)
    return solve(circuit), env


# -- complete worksheets and their output ----------------------------------------------
def test_the_page_has_examples() -> None:
    assert len(COMPLETE) >= 3 and CIRCUITS and FRAGMENTS and OUTPUTS


SHOWN = {text for text, _, _, _ in OUTPUTS}


@pytest.mark.parametrize(("text", "line"), COMPLETE, ids=_ids(COMPLETE))
def test_complete_worksheet_checks(text: str, line: int) -> None:
    _read_steps(text)
    report = handcheck.check_text(text, f"docs/worksheet.md:{line}")
    assert report.steps
    if text not in SHOWN:  # an example shown without its output is meant to agree throughout
        assert [step.verdict for step in report.steps] == ["agrees"] * len(report.steps), report.steps


def _normalised(output: str) -> list[str]:
    """Output lines with wrapped lines joined and a likely mistake reduced to its code."""
    joined: list[str] = []
    for line in output.rstrip("\n").splitlines():
        if joined and line.startswith("      ") and joined[-1].lstrip().startswith("likely mistake"):
            joined[-1] += " " + line.strip()
        else:
            joined.append(line.rstrip())
    return [re.sub(r"(likely mistake \([\w-]+\)):.*", r"\1", line) for line in joined]


@pytest.mark.parametrize(("text", "name", "shown", "line"), OUTPUTS, ids=[f"line {o[3]}" for o in OUTPUTS])
def test_shown_output_is_current(text: str, name: str, shown: str, line: int) -> None:
    report = handcheck.check_text(text, name)
    assert _normalised(render(report, handcheck.__version__)) == _normalised(shown)


def test_exit_status(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    statuses = []
    for text, name, _, _ in OUTPUTS:
        path = tmp_path / name
        path.write_text(text, encoding="utf-8")
        statuses.append(main(["check", str(path), "--json"]))
        data = json.loads(capsys.readouterr().out)
        assert statuses[-1] == (0 if data["ok"] else 1)
    assert set(statuses) == {0, 1}
    broken = tmp_path / "broken.toml"
    broken.write_text(HEADER + '[parts]\nR1 = { resistor = "-4 ohm", nodes = ["a", "gnd"] }\n', encoding="utf-8")
    assert main(["check", str(broken)]) == 2
    err = capsys.readouterr().err
    assert len(err.strip().splitlines()) == 1 and "broken.toml" in err


def test_json_keys_are_the_documented_ones() -> None:
    data = report_dict(handcheck.check_text(WORKED), handcheck.__version__)
    assert set(data) == {
        "handcheck", "worksheet", "sha256", "ok", "first_divergence", "steps", "audit", "title", "analysis", "cautions", "notes",
    }  # fmt: skip
    assert set(data["steps"][0]) == {
        "name", "verdict", "claimed", "expected", "expected_si", "error", "caused_by", "diagnosis",
        "quantity", "formula", "recomputed", "message", "line", "basis", "notes",
    }  # fmt: skip


# -- circuits and fragments ------------------------------------------------------------
@pytest.mark.parametrize(("text", "line"), CIRCUITS, ids=_ids(CIRCUITS))
def test_parts_example_loads_and_solves(text: str, line: int) -> None:
    worksheet = handcheck.loads(HEADER + text, f"docs/worksheet.md:{line}")
    solve(build(worksheet))
    kinds = {spec.kind for spec in worksheet.parts}
    assert kinds == {row[0] for row in _table("Kind")}


def test_kinds_and_verdicts_tables_are_complete() -> None:
    assert {row[0] for row in _table("Kind")} == set(PART_KINDS) - {"switch"}
    assert "switch" in TEXT
    assert [row[0] for row in _table("Verdict")] == list(VERDICTS)
    assert [row[0] for row in _table("Basis")] == list(BASES)


def _fragment_values(data: object, key: str = "") -> list[tuple[str, object]]:
    if isinstance(data, dict):
        return [pair for k, v in data.items() for pair in _fragment_values(v, k)]
    if isinstance(data, list):
        return [pair for v in data for pair in _fragment_values(v, key)]
    return [(key, data)]


@pytest.mark.parametrize(("text", "line"), FRAGMENTS, ids=_ids(FRAGMENTS))
def test_fragment_values_read(text: str, line: int) -> None:
    readers = {
        "quantity": parse_quantity,
        "formula": parse,
        "claim": read_claim,
        "tolerance": read_tolerance,
        "frequency": lambda v: read_frequency(v, "frequency"),
        "phasors": lambda v: v in ("peak", "rms") or pytest.fail(f"phasors = {v!r}"),
        "format": lambda v: v == 1 or pytest.fail(f"format = {v!r}"),
    }
    seen = 0
    for key, value in _fragment_values(tomllib.loads(text)):
        if key in readers:
            readers[key](value)
            seen += 1
    assert seen


def test_fragments_with_the_parts_example_form_a_worksheet() -> None:
    text = "".join(fragment for fragment, _ in FRAGMENTS) + CIRCUITS[0][0]
    report = handcheck.check_text(text)
    assert report.steps and all(step.verdict == "agrees" for step in report.steps)


# -- tables ----------------------------------------------------------------------------
def test_quantities_table(worked: tuple[object, dict[str, Value]]) -> None:
    solution, _ = worked
    rows = _table("Quantity")
    assert {parse_quantity(row[0]).name for row in rows} == set(QUANTITIES)
    for example, _, value in rows:
        truth = evaluate_quantity(solution, parse_quantity(example))  # type: ignore[arg-type]
        assert _matches(truth, value), f"{example}: docs say {value}, handcheck gives {to_complex(truth.expr)}"


def test_time_domain_table() -> None:
    rows = _table("Time-domain quantity")
    assert {parse_quantity(row[0]).name for row in rows} == set(TIME_DOMAIN)


def test_formulas_table(worked: tuple[object, dict[str, Value]]) -> None:
    _, env = worked
    for example, _, value in _table("Formula"):
        result = evaluate(parse(example, set(env)), env, example)
        assert _matches(result, value), f"{example}: docs say {value}, handcheck gives {to_complex(result.expr)}"


def test_formula_functions_are_all_shown() -> None:
    shown = " ".join(row[0] for row in _table("Formula"))
    assert {name for name in FUNCTIONS if f"{name}(" not in shown} == set()


def test_claims_table() -> None:
    forms = {"real": "real", "rectangular": "rect", "polar": "polar"}
    for example, form in _table("Claim | Form"):
        assert read_claim(example).form == forms[re.match(r"\w+", form).group()], example  # type: ignore[union-attr]


def test_tolerances_table() -> None:
    for example, *within in _table("Claim | First number within"):
        claim = read_claim(example)
        for resolution, written in zip(claim.resolution, within, strict=True):
            expected = float(evaluate_text(written).expr) if written else 0.0
            assert math.isclose(resolution, expected, rel_tol=1e-9), f"{example}: {resolution} != {written}"


@pytest.mark.parametrize("phasors", ["peak", "rms"])
def test_peak_rms_table(phasors: str) -> None:
    column = 1 if phasors == "peak" else 2
    for written, *magnitudes in _table("Source written as"):
        text = (
            f'[worksheet]\nformat = 1\ntitle = "t"\nphasors = "{phasors}"\n[parts]\n'
            f'Vs = {{ voltage = "{written}", frequency = "50 Hz", nodes = ["a", "gnd"] }}\n'
            'R1 = { resistor = "1 kohm", nodes = ["a", "gnd"] }\n'
        )
        phasor = part_environment(build(handcheck.loads(text)))["Vs"]
        magnitude = Value(sympy.Abs(phasor.expr), phasor.dim)
        assert _matches(magnitude, magnitudes[column - 1]), (written, phasors)


def test_frequency_table() -> None:
    for written, f, w in _table("frequency ="):
        omega = read_frequency(written, "frequency")
        assert _matches(Value(omega / (2 * sympy.pi), evaluate_text("1 Hz").dim), f), written
        assert _matches(Value(omega, evaluate_text("1 Hz").dim), w), written


# -- statements in prose -----------------------------------------------------------------
def test_source_off_the_analysis_frequency_contributes_nothing() -> None:
    text = (
        HEADER + 'frequency = "377 rad/s"\n[parts]\n'
        'Vs = { voltage = "10 V", frequency = "60 Hz", nodes = ["a", "gnd"] }\n'
        'R1 = { resistor = "1 kohm", nodes = ["a", "gnd"] }\n'
        '[[step]]\nname = "Va"\nquantity = "voltage(a)"\nclaim = "0 V"\n'
    )
    assert handcheck.check_text(text).steps[0].exact == 0


# Extra-low voltage: at most 50 V ac rms or 120 V ripple-free dc (IEC 61140 and
# IEC 60364-4-41, from memory), as the docs state; one value each side of each limit.
@pytest.mark.parametrize(
    ("source", "caution"),
    [
        ('"49.9 V rms", frequency = "50 Hz"', False),
        ('"50.1 V rms", frequency = "50 Hz"', True),
        ('"120 V"', False),
        ('"121 V"', True),
    ],
)
def test_high_voltage_caution(source: str, caution: bool) -> None:
    text = (
        HEADER + f'[parts]\nVs = {{ voltage = {source}, nodes = ["a", "gnd"] }}\n'
        'R1 = { resistor = "1 kohm", nodes = ["a", "gnd"] }\n'
        '[[step]]\nname = "P"\nquantity = "power(R1)"\nclaim = "1 W"\ntolerance = "99.9%"\n'
    )
    assert bool(handcheck.check_text(text).cautions) is caution
