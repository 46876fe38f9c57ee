"""Hostile text in every string field of a worksheet runs nothing.

handcheck never passes user text to eval, exec, sympify or parse_expr (worksheet
format 1, DESIGN.md): its parser builds sympy objects itself. Here Python, shell and
template payloads go into every string field of a worksheet that is otherwise sound.
Each must be refused with exit status 2 and one line on stderr, except the free-text
fields (title, reference), which are kept verbatim; and the file the payloads would
create must never appear.
"""

from __future__ import annotations

import copy
import json
from pathlib import Path

import pytest

import handcheck
from handcheck.cli import main

#: A worksheet that uses every kind of string field; it checks out (exit 0).
BASE: dict[str, object] = {
    "worksheet": {
        "format": 1,
        "title": "Payload carrier",
        "reference": "design note 1",
        "phasors": "peak",
        "frequency": "1000 rad/s",
        "tolerance": "1%",
    },
    "parts": {
        "V1": {"voltage": "1 V", "frequency": "1000 rad/s", "phase": "0 deg", "nodes": ["in", "gnd"]},
        "I1": {"current": "1 mA", "frequency": "1000 rad/s", "nodes": ["gnd", "out"]},
        "R1": {"resistor": "1 kohm", "nodes": ["in", "out"]},
        "C1": {"capacitor": "2 uF", "initial": "0 V", "nodes": ["out", "gnd"]},
        "L1": {"inductor": "1 H", "initial": "0 A", "nodes": ["out", "gnd"]},
        "L2": {"inductor": "1 H", "nodes": ["s", "gnd"]},
        "R2": {"resistor": "1 kohm", "nodes": ["s", "gnd"]},
        "mutual_ps": {"coupling": "0.5", "inductors": ["L1", "L2"]},
        "buf": {"vcvs": "2", "control": ["out", "gnd"], "nodes": ["e", "gnd"]},
        "R3": {"resistor": "1 kohm", "nodes": ["e", "gnd"]},
        "mirror": {"cccs": "3", "control": "R3", "nodes": ["f", "gnd"]},
        "R4": {"resistor": "1 kohm", "nodes": ["f", "gnd"]},
        "drv_gm": {"vccs": "1 mS", "control": ["out", "gnd"], "nodes": ["g", "gnd"]},
        "R5": {"resistor": "1 kohm", "nodes": ["g", "gnd"]},
        "sense_amp": {"ccvs": "1 kohm", "control": "R1", "nodes": ["h", "gnd"]},
        "R6": {"resistor": "1 kohm", "nodes": ["h", "gnd"]},
        "T1": {"transformer": "10:1", "nodes": ["in", "gnd", "t", "gnd"]},
        "R7": {"resistor": "1 kohm", "nodes": ["t", "gnd"]},
        "U1": {"opamp": "ideal", "nodes": ["o", "gnd", "n"]},
        "R8": {"resistor": "1 kohm", "nodes": ["in", "n"]},
        "R9": {"resistor": "2 kohm", "nodes": ["n", "o"]},
    },
    "transient": {"start": "rest", "span": "20 ms"},
    "step": [
        {"name": "Vin", "quantity": "voltage(in)", "formula": "V1*R1/R1", "claim": "1 V", "tolerance": "1%"},
        {"name": "Vo", "quantity": "voltage(o)", "formula": "-V1*R9/R8", "claim": "-2 V"},
    ],
}
FREE_TEXT = {("worksheet", "title"), ("worksheet", "reference")}


def string_fields(data: object, path: tuple = ()) -> list[tuple]:
    """The path of every string in ``data`` (TOML keys of parts and steps too)."""
    found: list[tuple] = []
    if isinstance(data, str):
        return [path]
    if isinstance(data, dict):
        for key, value in data.items():
            if path == ("parts",):
                found.append((*path, key, "<id>"))
            found += string_fields(value, (*path, key))
    if isinstance(data, list):
        for index, value in enumerate(data):
            found += string_fields(value, (*path, index))
    return found


FIELDS = string_fields(BASE)


def with_payload(path: tuple, payload: str) -> dict[str, object]:
    data = copy.deepcopy(BASE)
    *parents, last = path
    holder: object = data
    for key in parents:
        holder = holder[key]  # type: ignore[index]
    if last == "<id>":
        parts = data["parts"]
        ident = parents[-1]
        data["parts"] = {(payload if k == ident else k): v for k, v in parts.items()}  # type: ignore[union-attr]
    else:
        holder[last] = payload  # type: ignore[index]
    return data


def toml(data: dict[str, object]) -> str:
    """TOML text for test data; ``json`` spells strings as TOML basic strings."""

    def value(v: object) -> str:
        if isinstance(v, list):
            return "[" + ", ".join(value(x) for x in v) + "]"
        if isinstance(v, dict):
            return "{ " + ", ".join(f"{json.dumps(k)} = {value(x)}" for k, x in v.items()) + " }"
        return json.dumps(v, ensure_ascii=False)

    lines = ["[worksheet]", *(f"{k} = {value(v)}" for k, v in data["worksheet"].items())]  # type: ignore[union-attr]
    lines.append("[parts]")
    lines += [f"{json.dumps(k)} = {value(v)}" for k, v in data["parts"].items()]  # type: ignore[union-attr]
    lines.append("[transient]")
    lines += [f"{k} = {value(v)}" for k, v in data["transient"].items()]  # type: ignore[union-attr]
    for step in data["step"]:  # type: ignore[union-attr]
        lines.append("[[step]]")
        lines += [f"{k} = {value(v)}" for k, v in step.items()]
    return "\n".join(lines) + "\n"


def payloads(sentinel: Path) -> list[str]:
    """Code that would create ``sentinel`` (or do worse) if anything ran it."""
    target = str(sentinel)
    return [
        f"__import__('os').system('touch {target}')",
        f'__import__("os").system("touch {target}")',
        "().__class__.__bases__[0].__subclasses__()",
        "R1.__class__.__mro__",
        f"lambda: open('{target}', 'w')",
        f"exec(\"open('{target}', 'w')\")",
        f"`touch {target}`",
        f"$(touch {target})",
        f"1 V; touch {target}",
        f"; rm -rf {sentinel.parent / 'no-such-folder'}",
        f"| touch {target}",
        "{{7*7}}",
        "${7*7}",
        "%(x)s",
        "{0.__class__}",
        "\\x00\\n",
        "1 kohm\x00; touch " + target,
    ]


def run(tmp_path: Path, text: str, capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    (tmp_path / "W.toml").write_text(text, encoding="utf-8")
    status = main(["check", "W.toml", "--json"])
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def test_the_carrier_worksheet_checks_out(tmp_path, monkeypatch, capsys):
    # Control: without payloads the worksheet is sound, so every refusal below is the payload's.
    # voltage(o) = -V1 * R9/R8 = -2 V (ideal inverting amplifier, common practice).
    monkeypatch.chdir(tmp_path)
    status, out, err = run(tmp_path, toml(BASE), capsys)
    assert (status, err) == (0, "")
    assert [(s["name"], s["verdict"]) for s in json.loads(out)["steps"]] == [("Vin", "agrees"), ("Vo", "agrees")]


def test_every_string_field_is_covered():
    covered = {path[:1] + path[2:] if path[0] == "parts" else path for path in FIELDS}
    for where in [("worksheet", k) for k in ("title", "reference", "phasors", "frequency", "tolerance")]:
        assert where in covered
    for key in (
        "voltage",
        "current",
        "resistor",
        "capacitor",
        "inductor",
        "coupling",
        "vcvs",
        "cccs",
        "vccs",
        "ccvs",
        "transformer",
        "opamp",
        "frequency",
        "phase",
        "initial",
        "control",
        "<id>",
    ):
        assert ("parts", key) in covered, key
    assert (
        ("parts", "nodes", 0) in covered and ("parts", "inductors", 1) in covered and ("parts", "control", 0) in covered
    )
    for key in ("name", "quantity", "formula", "claim", "tolerance"):
        assert ("step", 0, key) in covered
    assert ("transient", "start") in covered and ("transient", "span") in covered


@pytest.mark.slow
@pytest.mark.parametrize("field", FIELDS, ids=["/".join(map(str, f)) for f in FIELDS])
def test_payloads_in_a_field_are_refused_and_run_nothing(field, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    sentinel = tmp_path / "SENTINEL"
    for payload in payloads(sentinel):
        status, out, err = run(tmp_path, toml(with_payload(field, payload)), capsys)
        assert not sentinel.exists(), (field, payload)
        if field in FREE_TEXT:
            # Free text is kept verbatim (trimmed) and never read as code.
            assert err == "", (field, payload, err)
            report = handcheck.check_file("W.toml")
            assert getattr(report, field[1]) == payload.strip()
            continue
        assert (status, out) == (2, ""), (field, payload, status, err)
        assert err.startswith("handcheck: W.toml:"), (field, payload, err)
        assert err.count("\n") == 1 and "Traceback" not in err, (field, payload, err)
    assert not sentinel.exists()


def test_a_payload_as_the_file_name_runs_nothing(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    sentinel = tmp_path / "SENTINEL"
    for name in (f"$(touch {sentinel}).toml", f"`touch {sentinel}`", f"x; touch {sentinel}"):
        assert main(["check", name]) == 2
        assert capsys.readouterr().err == f"handcheck: {name}: no such file\n"
    assert not sentinel.exists()


def test_the_parser_is_not_eval(monkeypatch):
    # Belt and braces: with eval, exec and sympify unusable, a whole worksheet still checks.
    import builtins

    import sympy

    def refuse(*args, **kwargs):
        raise AssertionError("user text reached eval, exec or sympify")

    handcheck.check_text(toml(BASE), "W.toml")  # import every module first (imports may exec)

    monkeypatch.setattr(builtins, "eval", refuse)
    monkeypatch.setattr(builtins, "exec", refuse)
    monkeypatch.setattr(sympy, "sympify", refuse)
    monkeypatch.setattr(sympy, "parse_expr", refuse, raising=False)
    report = handcheck.check_text(toml(BASE), "W.toml")
    assert report.ok
