"""Blind contract tests: worksheet format 1 in, check output format 1 out.

The cases are files: tests/contract/generate.py (written from DESIGN.md and the docs
only, as an outside tester would, with every expected value computed there without
handcheck) writes ``tests/contract/cases/NAME.toml`` and, beside it,
``NAME.expect.json``: named checks, each a list of assertions. This file carries them
out on the output of ``handcheck check FILE --json``, run in-process through
``handcheck.cli.main`` (the function the ``handcheck`` command calls), and checks
that the case files are what the generator writes. A few cases also run as a real
subprocess, for the exit status and the streams as a shell sees them.
"""

from __future__ import annotations

import contextlib
import hashlib
import importlib.util
import io
import json
import math
import re
import subprocess
import sys
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from pathlib import Path

import pytest

from handcheck.cli import main

#: one worker runs this file, so that its module fixtures (the subprocess runs above all,
#: 7 s) are made once, not once a worker (pyproject.toml: --dist loadgroup)
pytestmark = pytest.mark.xdist_group("contract")

REPO = Path(__file__).resolve().parent.parent
CONTRACT = REPO / "tests" / "contract"
CASES = CONTRACT / "cases"
MISSING = CASES / "no_such_worksheet.toml"

TOP_KEYS = {"handcheck", "worksheet", "sha256", "ok", "first_divergence", "steps"}
STEP_KEYS = {"name", "verdict", "claimed", "expected", "expected_si", "error", "caused_by", "diagnosis"}
VERDICTS = {"agrees", "arithmetic", "formula", "carried", "differs", "unit", "unchecked"}
CODES = {
    "hertz-as-angular",
    "angular-as-hertz",
    "degrees-as-radians",
    "radians-as-degrees",
    "peak-as-rms",
    "rms-as-peak",
    "power-half",
    "reactance-sign",
    "sine-reference",
    "phase-sign",
    "series-as-parallel",
    "parallel-as-series",
    "impedance-as-admittance",
    "prefix",
    # second edition (DESIGN.md, "Check output format 1: second-edition keys")
    "magnitude-as-phasor",
    "other-frequency",
    "sign-convention",
    "reversed-nodes",
}


def _expectations(prefix: str = "") -> dict[str, dict]:
    found = {}
    for path in sorted(CASES.glob(f"{prefix}*.expect.json")):
        name = path.name.removesuffix(".expect.json")
        if prefix or not name.startswith("bad_"):
            found[name] = json.loads(path.read_text(encoding="utf-8"))
    return found


GOOD = _expectations()
MALFORMED = _expectations("bad_")


# ---------------------------------------------------------------------------------
# running the CLI
# ---------------------------------------------------------------------------------
@dataclass
class Run:
    path: Path
    rc: int
    stdout: str
    stderr: str

    @property
    def data(self) -> dict:
        try:
            return json.loads(self.stdout)
        except json.JSONDecodeError:
            pytest.fail(f"no JSON on stdout (exit {self.rc}):\n{self.stderr}\n--- worksheet ---\n{self.path}")


def _run_in_process(path: Path) -> Run:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        rc = main(["check", str(path), "--json"])
    return Run(path, rc, out.getvalue(), err.getvalue())


def _run_subprocess(path: Path) -> Run:
    proc = subprocess.run(
        [sys.executable, "-m", "handcheck.cli", "check", str(path), "--json"],
        capture_output=True,
        text=True,
        cwd=REPO,
        timeout=120,
        check=False,
    )
    return Run(path, proc.returncode, proc.stdout, proc.stderr)


@pytest.fixture(scope="module")
def runs():
    """Each case checked once, in-process, the first time a test asks for it."""
    done: dict[str, Run] = {}

    def get(name: str) -> Run:
        if name not in done:
            done[name] = _run_in_process(MISSING if name == "bad_missing_file" else CASES / f"{name}.toml")
        return done[name]

    return get


# ---------------------------------------------------------------------------------
# the assertion kinds of NAME.expect.json
# ---------------------------------------------------------------------------------
def get_step(data: dict, name: str) -> dict:
    matches = [s for s in data["steps"] if s["name"] == name]
    assert len(matches) == 1, f"step {name} not in output: {[s['name'] for s in data['steps']]}"
    return matches[0]


def check_top(run: Run, want: dict) -> None:
    assert run.rc == want["rc"], f"exit {run.rc}\nstdout {run.stdout}\nstderr {run.stderr}"
    data = run.data
    assert set(data) >= TOP_KEYS, data.keys()
    assert data["ok"] is want["ok"]
    assert data["first_divergence"] == want["first"]
    assert data["worksheet"] == str(run.path)
    assert data["sha256"] == hashlib.sha256(run.path.read_bytes()).hexdigest()
    assert isinstance(data["handcheck"], str) and data["handcheck"]
    for s in data["steps"]:
        assert s["verdict"] in VERDICTS
    # ok iff every verdict is agrees or unchecked (DESIGN.md)
    assert want["ok"] == all(s["verdict"] in ("agrees", "unchecked") for s in data["steps"])


def check_step(run: Run, want: dict) -> None:
    s = get_step(run.data, want["step"])
    ctx = f"step {want['step']}: {json.dumps(s, ensure_ascii=False)}"
    assert set(s) >= STEP_KEYS, ctx
    assert s["verdict"] == want["verdict"], ctx
    if "caused_by_any" in want:
        assert s["caused_by"] in want["caused_by_any"], ctx
    else:
        assert s["caused_by"] == want["caused_by"], ctx
    if "claimed" in want:
        assert s["claimed"] == want["claimed"], ctx
    if "expected_si" in want:
        exp = complex(*want["expected_si"])
        got = s["expected_si"]
        assert isinstance(got, list) and len(got) == 2, ctx
        scale = max(abs(exp), 1e-300)
        assert math.isclose(got[0], exp.real, rel_tol=1e-9, abs_tol=1e-9 * scale), ctx + f"\nexpected {exp!r}"
        assert math.isclose(got[1], exp.imag, rel_tol=1e-9, abs_tol=1e-9 * scale), ctx + f"\nexpected {exp!r}"
        if "error" in want:
            assert s["error"] is not None, ctx
            assert math.isclose(s["error"], want["error"], rel_tol=1e-6, abs_tol=1e-12), (
                ctx + f"\nerror expected {want['error']!r}"
            )
    codes = [d["mistake"] for d in s["diagnosis"]]
    for d in s["diagnosis"]:
        assert set(d) >= {"mistake", "detail"} and isinstance(d["detail"], str) and d["detail"], ctx
        assert d["mistake"] in CODES, ctx
    if want["diagnosis"]:
        for code in want["diagnosis"]:
            assert code in codes, ctx + f"\nexpected diagnosis {code}"
    else:
        # no catalogued mistake was built into this claim, so none should be reported
        assert codes == [], ctx


def check_verdict(run: Run, want: dict) -> None:
    s = get_step(run.data, want["step"])
    assert s["verdict"] == want["verdict"], s
    if "caused_by" in want:
        assert s["caused_by"] == want["caused_by"], s


def check_expected_real(run: Run, want: dict) -> None:
    s = get_step(run.data, want["step"])
    got = s["expected_si"][0]
    if want["absolute"]:
        got = abs(got)
    assert math.isclose(got, want["value"], rel_tol=want["rel"]), s


def check_cautions(run: Run, want: dict) -> None:
    cautions = run.data.get("cautions", [])
    if want["present"]:
        assert cautions, cautions
    else:
        assert cautions == [], cautions


KINDS = {
    "top": check_top,
    "step": check_step,
    "verdict": check_verdict,
    "expected_real": check_expected_real,
    "cautions": check_cautions,
}


# ---------------------------------------------------------------------------------
# the cases
# ---------------------------------------------------------------------------------
def _params():
    # the transient cases (tr_*) solve in the time domain and take seconds each: slow
    return [
        pytest.param(name, sub, id=f"{name}::{sub}", marks=[pytest.mark.slow] if name.startswith("tr_") else [])
        for name, expect in GOOD.items()
        for sub in expect["checks"]
    ]


@pytest.mark.parametrize(("name", "sub"), _params())
def test_worksheet(runs, name, sub):
    run = runs(name)
    for want in GOOD[name]["checks"][sub]:
        KINDS[want["kind"]](run, want)


def _assert_refused(run: Run) -> None:
    """Exit 2, one line on stderr naming the file, no traceback (docs/errors.md)."""
    assert run.rc == 2, f"exit {run.rc}\nstdout {run.stdout}\nstderr {run.stderr}"
    err = run.stderr.strip()
    assert err, "no message on stderr"
    assert "\n" not in err, f"more than one line on stderr:\n{run.stderr}"
    assert "Traceback" not in run.stderr
    assert run.path.name in err, err


@pytest.mark.parametrize("name", [*MALFORMED, "bad_missing_file"])
def test_malformed(runs, name):
    run = runs(name)
    _assert_refused(run)
    line = MALFORMED.get(name, {}).get("line")
    if line is not None:
        assert re.search(rf"\b{line}\b", run.stderr), run.stderr


def test_worksheet_count():
    assert 25 <= len(GOOD) + len(MALFORMED) <= 45
    assert all(expect == {"exit": 2} or set(expect) == {"exit", "line"} for expect in MALFORMED.values())


@pytest.mark.slow
def test_cases_are_what_the_generator_writes(tmp_path, monkeypatch):
    spec = importlib.util.spec_from_file_location("contract_generate", CONTRACT / "generate.py")
    assert spec is not None and spec.loader is not None
    generator = importlib.util.module_from_spec(spec)
    monkeypatch.setitem(sys.modules, spec.name, generator)  # its dataclasses look their module up
    spec.loader.exec_module(generator)
    generator.write(tmp_path)
    fresh = {p.name: p.read_text(encoding="utf-8") for p in tmp_path.iterdir()}
    kept = {p.name: p.read_text(encoding="utf-8") for p in CASES.iterdir()}
    stale = sorted(n for n in fresh.keys() | kept.keys() if fresh.get(n) != kept.get(n))
    assert not stale, f"run python3 tests/contract/generate.py: out of date {stale}"


# ---------------------------------------------------------------------------------
# the real command: exit status and streams as a shell sees them
# ---------------------------------------------------------------------------------
SUBPROCESS_CASES = ["rc_peak", "rc_mistakes", "bad_toml_syntax", "bad_missing_file"]


@pytest.fixture(scope="module")
def shell_runs() -> dict[str, Run]:
    paths = {name: MISSING if name == "bad_missing_file" else CASES / f"{name}.toml" for name in SUBPROCESS_CASES}
    with ThreadPoolExecutor(max_workers=2) as pool:
        futures = {name: pool.submit(_run_subprocess, path) for name, path in paths.items()}
        return {name: future.result() for name, future in futures.items()}


@pytest.mark.slow
@pytest.mark.parametrize("name", ["rc_peak", "rc_mistakes"])
def test_subprocess_exit_status_and_json(shell_runs, name):
    run = shell_runs[name]
    for want in GOOD[name]["checks"]["top"]:
        check_top(run, want)
    # the JSON goes to stdout alone; a clean check writes nothing on stderr
    assert run.stderr == ""
    assert run.stdout.count("\n") == 1 and run.stdout.endswith("}\n")


@pytest.mark.slow
def test_subprocess_bad_worksheet_one_line_naming_the_line(shell_runs):
    run = shell_runs["bad_toml_syntax"]
    _assert_refused(run)
    assert run.stdout == ""
    assert re.search(rf"\b{MALFORMED['bad_toml_syntax']['line']}\b", run.stderr), run.stderr


@pytest.mark.slow
def test_subprocess_missing_file_exits_2(shell_runs):
    run = shell_runs["bad_missing_file"]
    _assert_refused(run)
    assert run.stdout == ""
