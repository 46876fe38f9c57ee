"""docs/audit.md runs: each worked audit gives the output printed under it, and the
fragment of ``[audit]`` and ``[[formula]]`` reads.

The worked audits' numbers are handcheck's own (invented suppliers' formulas); what this
file checks is that the page and the program still agree. Text is compared word for
word and numbers to the digits printed.
"""

from __future__ import annotations

import itertools
import re
from pathlib import Path

import pytest

from handcheck.audit import audit
from handcheck.circuit.build import build
from handcheck.cli import main
from handcheck.worksheet.load import loads

DOC = Path(__file__).resolve().parents[1] / "docs" / "audit.md"
NUMBER = re.compile(r"[-+]?\d[\d,]*(?:\.\d+)?(?:e[-+]?\d+)?")


def _blocks() -> list[tuple[str, str]]:
    return re.findall(r"```(\w*)\n(.*?)```", DOC.read_text(encoding="utf-8"), flags=re.S)


def _worked() -> list[tuple[str, str, str]]:
    blocks = _blocks()
    found = []
    for (lang, body), (next_lang, output) in itertools.pairwise(blocks):
        if (
            lang == "toml"
            and body.startswith("[worksheet]")
            and next_lang == "text"
            and output.startswith("$ handcheck check ")
        ):
            command, _, printed = output.partition("\n")
            found.append((command.split()[-1], body, printed))
    return found


def test_the_page_has_two_worked_audits() -> None:
    assert len(_worked()) == 2


@pytest.mark.slow  # each a full audit with its Monte Carlo run
@pytest.mark.parametrize(("name", "worksheet", "printed"), _worked(), ids=[w[0] for w in _worked()])
def test_worked_audit_output(
    name: str,
    worksheet: str,
    printed: str,
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
    capsys: pytest.CaptureFixture[str],
) -> None:
    monkeypatch.chdir(tmp_path)
    Path(name).write_text(worksheet, encoding="utf-8")
    status = main(["check", name])
    out = capsys.readouterr().out
    assert status == 1  # both supplier formulas differ
    got, want = out.rstrip("\n").splitlines(), printed.rstrip("\n").splitlines()
    assert len(got) == len(want)
    for line, expected in zip(got, want, strict=True):
        assert NUMBER.sub("#", line) == NUMBER.sub("#", expected)
        assert NUMBER.findall(line) == NUMBER.findall(expected)


def test_fragment_reads() -> None:
    (fragment,) = [body for lang, body in _blocks() if lang == "toml" and body.startswith("[audit]")]
    text = (
        '[worksheet]\nformat = 1\ntitle = "fragment"\n[parts]\n'
        'Vin = { voltage = "1 V", nodes = ["in", "gnd"] }\n'
        'R1 = { resistor = "10 kohm", nodes = ["in", "a"] }\nR2 = { resistor = "10 kohm", nodes = ["a", "b"] }\n'
        'C1 = { capacitor = "22 nF", nodes = ["a", "out"] }\nC2 = { capacitor = "10 nF", nodes = ["b", "gnd"] }\n'
        'buf = { opamp = "ideal", nodes = ["out", "b", "out"] }\n' + fragment
    )
    worksheet = loads(text)
    (finding,) = audit(worksheet, build(worksheet))
    assert finding.verdict == "equivalent"
