"""The catalogue of malformed worksheets in tests/malformed/.

Each file there is one mistake an engineer can make, with its first line saying what
is wrong and its second line ``# expect: MESSAGE``: ``handcheck check FILE`` must print
exactly ``handcheck: MESSAGE`` on stderr, nothing on stdout, and exit with status 2
(check output format 1, DESIGN.md). A file that cannot hold a comment (the empty
file) has its message in :data:`NO_ROOM_FOR_A_COMMENT`; a file too large to commit is
written at test time.

Below the catalogue: the circuit errors name the parts involved (``CircuitError.parts``),
claims without a unit or in the wrong unit are a verdict and not an error, and
circuits that look odd but are sound are accepted.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

import handcheck
from handcheck.cli import main
from handcheck.worksheet.load import MAX_BYTES

CATALOGUE = Path(__file__).parent / "malformed"
FILES = sorted(CATALOGUE.glob("*.toml"))
NO_ROOM_FOR_A_COMMENT = {
    "empty.toml": "empty.toml: the file is empty; a worksheet starts with a [worksheet] table",
}
_EXPECT = re.compile(rb"^# expect: (.*)$", re.MULTILINE)


def expected(path: Path) -> str:
    """The message a catalogue file expects (after ``handcheck: ``)."""
    if path.name in NO_ROOM_FOR_A_COMMENT:
        return NO_ROOM_FOR_A_COMMENT[path.name]
    match = _EXPECT.search(path.read_bytes())
    assert match, f"{path.name} has no '# expect:' line"
    return match.group(1).decode("utf-8")


def run(path: str, capsys: pytest.CaptureFixture[str], *options: str) -> tuple[int, str, str]:
    status = main(["check", path, *options])
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def test_the_catalogue_covers_at_least_forty_mistakes():
    assert len(FILES) >= 40
    assert set(NO_ROOM_FOR_A_COMMENT) <= {path.name for path in FILES}


@pytest.mark.parametrize("path", FILES, ids=[path.stem for path in FILES])
def test_malformed_worksheet_gives_its_message_and_status_2(path, monkeypatch, capsys):
    monkeypatch.chdir(CATALOGUE)
    status, out, err = run(path.name, capsys)
    assert (status, out) == (2, "")
    assert err == f"handcheck: {expected(path)}\n"


@pytest.mark.parametrize("path", FILES, ids=[path.stem for path in FILES])
def test_json_output_is_empty_for_a_malformed_worksheet(path, monkeypatch, capsys):
    # Check output format 1: with --json a bad worksheet still prints nothing on stdout.
    monkeypatch.chdir(CATALOGUE)
    status, out, err = run(path.name, capsys, "--json")
    assert (status, out) == (2, "")
    assert err == f"handcheck: {expected(path)}\n"


def test_a_file_over_the_size_limit_is_refused_unread(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    head = b'[worksheet]\nformat = 1\ntitle = "big"\n'
    (tmp_path / "big.toml").write_bytes(head + b"#" * (MAX_BYTES + 1 - len(head)))
    status, out, err = run("big.toml", capsys)
    assert (status, out) == (2, "")
    assert err == "handcheck: big.toml: the file is 1,000,001 bytes; a worksheet may be at most 1,000,000 bytes\n"


def test_text_over_the_size_limit_is_refused_by_loads():
    with pytest.raises(handcheck.LimitError) as info:
        handcheck.loads("#" * (MAX_BYTES + 1), "big.toml")
    assert str(info.value) == "big.toml: the worksheet is larger than 1,000,000 bytes"


def test_a_file_at_the_size_limit_is_read(tmp_path, monkeypatch, capsys):
    # Control for the two tests above: exactly MAX_BYTES is accepted.
    monkeypatch.chdir(tmp_path)
    body = (
        b'[worksheet]\nformat = 1\ntitle = "big"\n[parts]\n'
        b'V1 = { voltage = "10 V", nodes = ["in", "gnd"] }\nR1 = { resistor = "1 kohm", nodes = ["in", "gnd"] }\n'
        b'[[step]]\nname = "I"\nquantity = "current(R1)"\nclaim = "10 mA"\n'
    )
    (tmp_path / "big.toml").write_bytes(body + b"#" * (MAX_BYTES - len(body)))
    assert (tmp_path / "big.toml").stat().st_size == MAX_BYTES
    status, _, err = run("big.toml", capsys)
    assert (status, err) == (0, "")


def test_a_missing_file_and_a_folder(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    assert run("nothing.toml", capsys)[1:] == ("", "handcheck: nothing.toml: no such file\n")
    (tmp_path / "folder.toml").mkdir()
    assert run("folder.toml", capsys)[1:] == (
        "",
        "handcheck: folder.toml: this folder holds no worksheet (no *.toml file below it)\n",
    )


# -- circuits that cannot be solved name their parts ---------------------------

CIRCUIT_PARTS = {
    "voltage_source_loop": {"V1", "V2"},
    "opamp_output_loop": {"U1", "V2"},
    "current_source_cut": {"I1", "I2"},
    "island": {"R3", "R4"},
    "vcvs_controls_itself": {"buf"},
    "vcvs_pair_singular": {"buf_a", "buf_b", "V1"},
    "resonance_at_analysis_frequency": {"C1", "L1", "V1"},
    "dangling_resistor": {"R1", "R2"},
    "dangling_resistor_end": {"R3"},
    "dangling_capacitor": {"C1"},
    "dangling_inductor": {"L1"},
    "dangling_current_source": {"I1"},
    "dangling_opamp_input": {"U1"},
    "control_part_missing": {"mirror"},
    "control_node_missing": {"buf"},
    "coupling_not_inductors": {"mutual_ps"},
    "coupling_missing_inductor": {"mutual_ps"},
    "no_ground": set(),
}


@pytest.mark.parametrize(("stem", "parts"), sorted(CIRCUIT_PARTS.items()))
def test_circuit_errors_name_the_parts(stem, parts):
    with pytest.raises(handcheck.CircuitError) as info:
        handcheck.check_file(str(CATALOGUE / f"{stem}.toml"))
    assert set(info.value.parts) == parts
    for ident in parts:
        assert ident in info.value.message


# -- a claim without a unit, or in the wrong unit, is a verdict (exit 1) --------

HEAD = '[worksheet]\nformat = 1\ntitle = "Divider check"\n'
DIVIDER = (
    '[parts]\nV1 = { voltage = "10 V", nodes = ["in", "gnd"] }\n'
    'R1 = { resistor = "3 kohm", nodes = ["in", "out"] }\n'
    'R2 = { resistor = "2 kohm", nodes = ["out", "gnd"] }\n'
)


@pytest.mark.parametrize(
    ("claim", "message"),
    [
        ("4", "the claim is in no unit, but the quantity is in V"),
        ("4 mA", "the claim is in A, but the quantity is in V"),
        ("4 ohm", "the claim is in ohm, but the quantity is in V"),
    ],
)
def test_a_claim_without_or_in_the_wrong_unit_is_the_verdict_unit(claim, message, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "W.toml").write_text(
        HEAD + DIVIDER + f'[[step]]\nname = "Vout"\nquantity = "voltage(out)"\nclaim = "{claim}"\n', encoding="utf-8"
    )
    status, out, err = run("W.toml", capsys, "--json")
    assert (status, err) == (1, "")
    (step,) = json.loads(out)["steps"]
    assert step["verdict"] == "unit"
    report = handcheck.check_file("W.toml")
    assert report.steps[0].message == message


def test_the_same_claim_in_volts_agrees(tmp_path, monkeypatch, capsys):
    # Control: V_out = 10 V * 2/(3 + 2) = 4 V (Ohm's law for a divider).
    monkeypatch.chdir(tmp_path)
    (tmp_path / "W.toml").write_text(
        HEAD + DIVIDER + '[[step]]\nname = "Vout"\nquantity = "voltage(out)"\nclaim = "4 V"\n', encoding="utf-8"
    )
    assert run("W.toml", capsys)[0] == 0


# -- odd but sound: a node named once where the lone terminal fixes a voltage ----

SOUND = {
    "a voltage source alone on its node": (
        '[parts]\nV1 = { voltage = "5 V", nodes = ["a", "gnd"] }\n',
        "voltage(a)",
        "5 V",
    ),
    "a vcvs output alone on its node": (
        DIVIDER + 'buf = { vcvs = "3", control = ["out", "gnd"], nodes = ["e", "gnd"] }\n',
        "voltage(e)",
        "12 V",
    ),
    "a transformer secondary left open": (
        '[parts]\nV1 = { voltage = "10 V", frequency = "50 Hz", nodes = ["p", "gnd"] }\n'
        'R1 = { resistor = "1 ohm", nodes = ["p", "gnd"] }\n'
        'T1 = { transformer = "10:1", nodes = ["p", "gnd", "s", "gnd"] }\n',
        "voltage(s)",
        "1 V",
    ),
    "a resistor end sensed by a vcvs": (
        DIVIDER + 'R3 = { resistor = "1 kohm", nodes = ["out", "sense"] }\n'
        'buf = { vcvs = "1", control = ["sense", "gnd"], nodes = ["e", "gnd"] }\n',
        "voltage(e)",
        "4 V",
    ),
}


@pytest.mark.parametrize(("parts", "quantity", "claim"), SOUND.values(), ids=list(SOUND))
def test_a_lone_voltage_defining_terminal_is_accepted(parts, quantity, claim, tmp_path, monkeypatch, capsys):
    # Expected values: the source itself; gain 3 times the divider's 4 V; an ideal
    # 10:1 transformer gives 10 V / 10 with no current; no current flows in R3.
    monkeypatch.chdir(tmp_path)
    (tmp_path / "W.toml").write_text(
        HEAD + parts + f'[[step]]\nname = "x"\nquantity = "{quantity}"\nclaim = "{claim}"\n', encoding="utf-8"
    )
    status, out, err = run("W.toml", capsys, "--json")
    assert (status, err) == (0, ""), err
    assert json.loads(out)["steps"][0]["verdict"] == "agrees"


# -- docs/errors.md documents every message, and only messages that exist ---------

DOCS = Path(__file__).parents[1] / "docs" / "errors.md"
SOURCE = Path(__file__).parents[1] / "handcheck"
#: Messages written by argparse, not by handcheck's own code.
FROM_ARGPARSE = {"the following arguments are required: {arguments}"}
_TEMPLATE = re.compile(r"^#### `` (.+) ``$", re.MULTILINE)
_PLACEHOLDER = re.compile(r"\{[a-z][a-z ]*\}")
#: What the command line puts around a message: the file and line, the step, the quoted text.
_LOCATION = r'[^:\s]+\.toml(?::\d+)?: (?:step "[^"]*": )?'
_QUOTED = r'(?: in ".*"(?: at column \d+)?)?'


def documented() -> list[str]:
    return _TEMPLATE.findall(DOCS.read_text(encoding="utf-8"))


def fixed_parts(template: str) -> list[str]:
    return _PLACEHOLDER.split(template)


def test_every_catalogue_message_is_documented():
    templates = documented()
    assert len(templates) > 150
    patterns = [(re.compile(_LOCATION + ".*?".join(map(re.escape, fixed_parts(t))) + _QUOTED), t) for t in templates]
    for path in FILES:
        message = expected(path)
        matches = [t for pattern, t in patterns if pattern.fullmatch(message)]
        assert matches, f"{path.name}: the message is not in docs/errors.md: {message}"
        # The best match must be recognisable, not only a template made of placeholders.
        assert max(len("".join(fixed_parts(t))) for t in matches) >= 10, (path.name, matches)


def test_every_documented_message_is_in_the_code():
    # The longest fixed part of each template must appear in handcheck's source, with
    # string literals split over lines joined again and escapes undone.
    code = "\n".join(path.read_text(encoding="utf-8") for path in sorted(SOURCE.rglob("*.py")))
    code = re.sub(r"""["']\s*\n\s*[fFrR]*["']""", "", code)
    for escaped, plain in (('\\"', '"'), ("\\'", "'"), ("{{", "{"), ("}}", "}")):
        code = code.replace(escaped, plain)
    stale = [
        template
        for template in documented()
        if template not in FROM_ARGPARSE and max(fixed_parts(template), key=len).strip() not in code
    ]
    assert not stale, f"docs/errors.md documents messages the code no longer prints: {stale}"
