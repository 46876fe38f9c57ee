"""Many worksheets in one command (issue 16): folders, the JSON array, exit status, JUnit.

Each worksheet of a batch must come out exactly as its own ``handcheck check FILE
--json`` does (the single-file path is the reference here); the JUnit file is read
back with junitparser, a JUnit-reading library from the package index, and its counts
are compared with the verdicts of the JSON. The JUnit layout (testsuites / testsuite /
testcase with failure, error, skipped) is common practice of JUnit XML as CI systems
read it; there is no one published schema.
"""

from __future__ import annotations

import json
import os
import shutil
import signal
import threading
import time
from pathlib import Path

import junitparser
import pytest

from handcheck.batch import Options, check_all, expand, status_of, summary_line
from handcheck.record.junit import junit_bytes
from handcheck.testing import run_command

REPO = Path(__file__).resolve().parents[1]
DEMOS = REPO / "worksheets"
BROKEN = "[worksheet\nformat = 1\n"  # not TOML: the table header is not closed

# The loaded RC divider: H = 1/(1 + sRC) unloaded (Alexander & Sadiku, Fundamentals of
# Electric Circuits, 5th ed., ch. 14, from memory); with Rload across C it is
# 1/(1 + R/Rload + sRC), so the unloaded formula differs and the loaded one is exact.
# At DC the divider gives Rload/(R + Rload) = 100/101 of the input (Ohm's law).
AUDITED = """[worksheet]
format = 1
title = "loaded divider"

[parts]
Vin = { voltage = "1 V", nodes = ["in", "gnd"] }
R = { resistor = "1 kohm", tolerance = "5%", nodes = ["in", "out"] }
C = { capacitor = "100 nF", tolerance = "10%", nodes = ["out", "gnd"] }
Rload = { resistor = "100 kohm", range = ["20 kohm", "200 kohm"], nodes = ["out", "gnd"] }

[audit]
samples = 2000
seed = 0

[[step]]
name = "Vout"
quantity = "voltage(out)"
claim = "0.9901 V"

[[formula]]
name = "unloaded"
quantity = "network_function(voltage(out), voltage(in))"
expression = "1/(1 + s*R*C)"

[[formula]]
name = "loaded"
quantity = "network_function(voltage(out), voltage(in))"
expression = "1/(1 + R/Rload + s*R*C)"
"""


run = run_command  # exit status, stdout and stderr of the command line


@pytest.fixture
def folder(tmp_path: Path) -> Path:
    """The bundled worksheets, a broken one and an audited one, with a nested folder."""
    sheets = tmp_path / "sheets"
    (sheets / "sub").mkdir(parents=True)
    for demo in sorted(DEMOS.glob("*.toml")):
        shutil.copy(demo, sheets / demo.name)
    (sheets / "broken.toml").write_text(BROKEN, encoding="utf-8")
    (sheets / "sub" / "audited.toml").write_text(AUDITED, encoding="utf-8")
    (sheets / ".hidden").mkdir()
    (sheets / ".hidden" / "skipped.toml").write_text(BROKEN, encoding="utf-8")
    (sheets / "notes.txt").write_text("not a worksheet", encoding="utf-8")
    return sheets


def single(capsys, path: Path) -> tuple[int, dict]:
    code, out, _ = run(capsys, "check", str(path), "--json")
    return code, json.loads(out)


def test_a_folder_is_every_toml_below_it_sorted(folder: Path) -> None:
    names = [Path(p).relative_to(folder).as_posix() for p in expand([str(folder)])]
    assert names == sorted(names)
    assert set(names) == {p.name for p in DEMOS.glob("*.toml")} | {"broken.toml", "sub/audited.toml"}
    # a file named twice (once alone, once in its folder) is checked once, where it first came
    again = expand([str(folder / "sub" / "audited.toml"), str(folder)])
    assert again[0] == str(folder / "sub" / "audited.toml") and len(again) == len(names)


def test_json_array_in_order_each_as_its_single_check(folder: Path, capsys) -> None:
    paths = [folder / "motor-pf-correction.toml", folder / "adc-antialias.toml", folder / "broken.toml"]
    code, out, err = run(capsys, "check", *map(str, paths), "--json")
    array = json.loads(out)
    assert isinstance(array, list)
    assert [entry["worksheet"] for entry in array] == [str(p) for p in paths]
    singles = [single(capsys, p) for p in paths[:2]]
    assert array[:2] == [data for _, data in singles]
    assert array[2]["ok"] is False and array[2]["worksheet"] == str(paths[2])
    assert array[2]["error"].startswith(f"{paths[2]}:1: ")
    # the highest of the worksheets' exit statuses: 0 (motor), 1 (adc), 2 (broken)
    assert [s for s, _ in singles] == [0, 1]
    assert code == 2
    assert err == f"handcheck: {array[2]['error']}\n"  # stdout stays one JSON value


@pytest.mark.parametrize(
    ("names", "status"),
    [
        (["coil-snubber.toml", "motor-pf-correction.toml"], 0),
        (["coil-snubber.toml", "adc-antialias.toml"], 1),
        (["broken.toml", "coil-snubber.toml"], 2),
    ],
)
def test_exit_status_is_the_highest(folder: Path, capsys, names, status) -> None:
    code, _, _ = run(capsys, "check", *(str(folder / n) for n in names))
    assert code == status


def test_terminal_blocks_and_summary(folder: Path, capsys) -> None:
    code, out, err = run(capsys, "check", str(folder))
    assert code == 2
    paths = expand([str(folder)])
    headers = [line[3:-3] for line in out.splitlines() if line.startswith("== ") and line.endswith(" ==")]
    assert headers == list(paths)
    outcomes = {p: single(capsys, Path(p))[0] if not p.endswith("broken.toml") else 2 for p in paths}
    counts = [list(outcomes.values()).count(k) for k in (0, 1, 2)]
    assert out.splitlines()[-1].startswith(
        f"{len(paths)} worksheets: {counts[0]} ok, {counts[1]} differ, {counts[2]} refused ("
    )
    assert f"refused: {folder / 'broken.toml'}:1: " in out
    assert "Traceback" not in out + err
    # stderr is no terminal here: no progress display, only the refused worksheet's line
    assert (
        err
        == f"handcheck: {folder / 'broken.toml'}:1: not valid TOML: Expected ']' at the end of a table declaration\n"
    )


def test_one_file_keeps_its_output(folder: Path, capsys) -> None:
    alone = run(capsys, "check", str(folder / "adc-antialias.toml"))
    assert alone[0] == 1 and not alone[1].startswith("== ") and "worksheets:" not in alone[1]
    _, out, _ = run(capsys, "check", str(folder / "adc-antialias.toml"), "--json")
    assert isinstance(json.loads(out), dict)


def test_junit_read_back(folder: Path, capsys, tmp_path: Path) -> None:
    report = tmp_path / "out" / "junit.xml"
    report.parent.mkdir()
    code, out, err = run(capsys, "check", str(folder), "--json", "--junit", str(report))
    array = json.loads(out)
    assert code == 2 and f"JUnit report written to {report}" in err
    xml = junitparser.JUnitXml.fromfile(str(report))
    suites = list(xml)
    assert [suite.name for suite in suites] == [entry["worksheet"] for entry in array]
    for suite, entry in zip(suites, array, strict=True):
        cases = list(suite)
        if "error" in entry:
            assert (suite.tests, suite.errors, suite.failures) == (1, 1, 0)
            assert isinstance(cases[0].result[0], junitparser.Error)
            assert cases[0].result[0].message == entry["error"]
            continue
        expected = [step["name"] for step in entry["steps"]] + [f"audit {a['name']}" for a in entry["audit"]]
        assert [case.name for case in cases] == expected
        wrong = [s["name"] for s in entry["steps"] if s["verdict"] not in ("agrees", "unchecked")]
        wrong += [f"audit {a['name']}" for a in entry["audit"] if a["verdict"] not in ("equivalent", "spread")]
        failed = [case.name for case in cases if any(isinstance(r, junitparser.Failure) for r in case.result)]
        assert failed == wrong
        assert (suite.tests, suite.failures, suite.errors) == (len(expected), len(wrong), 0)
        for case in cases:
            for result in case.result:
                if isinstance(result, junitparser.Failure):
                    step = (
                        next(s for s in entry["steps"] if s["name"] == case.name)
                        if not case.name.startswith("audit ")
                        else None
                    )
                    if step is not None:
                        assert result.type == step["verdict"] and step["claimed"] in result.text
                        assert all(d["mistake"] in result.text for d in step["diagnosis"])
    # the deliberate mistake of the anti-alias demo: all three steps fail (XC wrong, two carried)
    adc = next(s for s in suites if s.name.endswith("adc-antialias.toml"))
    assert (adc.tests, adc.failures) == (3, 3)
    audited = next(s for s in suites if s.name.endswith("audited.toml"))
    assert [(c.name, bool(c.result)) for c in audited] == [
        ("Vout", False),
        ("audit unloaded", True),
        ("audit loaded", False),
    ]
    assert not list(report.parent.glob(".*.tmp"))  # written through a temporary file and a rename


def test_junit_escapes_what_a_worksheet_may_hold(tmp_path: Path) -> None:
    nasty = 'a <b> & "c" \x01\x1b ]]> \u2220'
    data = {
        "worksheet": nasty,
        "ok": False,
        "sha256": "0" * 64,
        "steps": [{"name": nasty, "verdict": "differs", "claimed": nasty, "expected": "1 V", "diagnosis": []}],
        "audit": [],
    }
    path = tmp_path / "j.xml"
    path.write_bytes(junit_bytes([(data, 0.5), ({"worksheet": nasty, "ok": False, "error": nasty}, 0.0)]))
    suites = list(junitparser.JUnitXml.fromfile(str(path)))
    clean = nasty.replace("\x01", "\ufffd").replace("\x1b", "\ufffd")
    assert [s.name for s in suites] == [clean, clean]
    case = next(iter(suites[0]))
    assert case.name == clean and clean in case.result[0].text


def test_an_empty_folder_and_plot_are_refused(tmp_path: Path, folder: Path, capsys) -> None:
    empty = tmp_path / "empty"
    empty.mkdir()
    assert run(capsys, "check", str(empty))[1:] == (
        "",
        f"handcheck: {empty}: this folder holds no worksheet (no *.toml file below it)\n",
    )
    code, out, err = run(capsys, "check", str(folder), "--plot", str(tmp_path / "p.svg"))
    assert (code, out) == (2, "") and "--plot draws the evidence of one worksheet" in err


def test_a_single_refused_file_still_writes_junit(folder: Path, tmp_path: Path, capsys) -> None:
    report = tmp_path / "one.xml"
    code, out, _ = run(capsys, "check", str(folder / "broken.toml"), "--junit", str(report))
    assert code == 2 and out == ""
    suites = list(junitparser.JUnitXml.fromfile(str(report)))
    assert len(suites) == 1 and suites[0].errors == 1


def test_in_process_outcomes_and_summary(folder: Path) -> None:
    paths = expand([str(folder / "coil-snubber.toml"), str(folder / "broken.toml")])
    seen: list[str] = []
    outcomes = check_all(paths, Options(), done=lambda o: seen.append(o.path))
    assert seen == list(paths)
    assert [o.kind for o in outcomes] == ["ok", "refused"]
    assert status_of(outcomes) == 2 and status_of(()) == 0
    assert summary_line(outcomes).startswith("2 worksheets: 1 ok, 0 differ, 1 refused (")


def test_a_time_limit_refuses_each_worksheet_and_checks_the_rest(folder: Path, capsys) -> None:
    paths = [str(folder / "coil-snubber.toml"), str(folder / "motor-pf-correction.toml")]
    code, out, err = run(capsys, "check", *paths, "--json", "--time-limit", "1e-9")
    array = json.loads(out)
    assert code == 2 and [entry["worksheet"] for entry in array] == paths
    assert all("ran out of its time limit" in entry["error"] for entry in array)
    assert len(err.splitlines()) == 2


@pytest.mark.slow  # about 7 s: two worker processes start and import the library
def test_jobs_2_gives_the_same_json_as_jobs_1(folder: Path, capsys) -> None:
    started = time.monotonic()
    one = run(capsys, "check", str(folder), "--json", "--jobs", "1")
    two = run(capsys, "check", str(folder), "--json", "--jobs", "2")
    assert one[0] == two[0] == 2
    assert json.loads(two[1]) == json.loads(one[1])
    assert two[2] == one[2]
    assert time.monotonic() - started < 120


def _end_the_readers_of(pipe: Path, times: int) -> None:
    """Open ``pipe`` for writing and end (SIGKILL) the process that opened it to read,
    ``times`` times over, a new process each time (one just ended may still hold it)."""
    ended: set[int] = set()
    for _ in range(times):
        with open(pipe, "wb", buffering=0):  # waits until a worker opens the pipe
            deadline = time.monotonic() + 30
            while time.monotonic() < deadline and not _kill_reader(pipe, ended):
                time.sleep(0.05)


def _kill_reader(pipe: Path, ended: set[int]) -> bool:
    for fd in Path("/proc").glob("[0-9]*/fd/*"):
        try:
            target = os.readlink(fd)
        except OSError:
            continue
        pid = int(fd.parts[2])
        if target == str(pipe) and pid != os.getpid() and pid not in ended:
            os.kill(pid, signal.SIGKILL)
            ended.add(pid)
            return True
    return False


@pytest.mark.slow  # about 14 s: three pools start, two of them end
@pytest.mark.skipif(not Path("/proc/self/fd").is_dir(), reason="finds the worker through /proc")
def test_a_worker_that_ends_refuses_only_its_worksheet(folder: Path, capsys) -> None:
    # A worker can end without a word (the system out of memory, or the watchdog ending
    # one C call that ran past the limit: docs/errors.md), which breaks the whole pool.
    # Here the test ends the worker that reads a named pipe the test holds open, and
    # again the one that tries the pipe once more on its own.
    pipe = folder / "pipe.toml"
    os.mkfifo(pipe)
    killer = threading.Thread(target=_end_the_readers_of, args=(pipe, 2), daemon=True)
    killer.start()
    paths = [str(pipe), str(folder / "coil-snubber.toml"), str(folder / "motor-pf-correction.toml")]
    code, out, err = run(capsys, "check", *paths, "--json", "--jobs", "2")
    killer.join(5)
    array = json.loads(out)
    assert code == 2 and [entry["worksheet"] for entry in array] == paths
    assert array[0]["error"] == f"{pipe}: the worker process ended before this worksheet was checked"
    assert [entry["ok"] for entry in array[1:]] == [True, True]
    assert array[1:] == [single(capsys, Path(p))[1] for p in paths[1:]]
    assert err.endswith(f"handcheck: {array[0]['error']}\n")


@pytest.mark.parametrize("jobs", ["0", "-1", "x", "65"])
def test_bad_jobs_exits_2(capsys, jobs) -> None:
    code, out, err = run(capsys, "check", str(DEMOS), "--jobs", jobs)
    assert (code, out) == (2, "") and "--jobs takes a whole number" in err
