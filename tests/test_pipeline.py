"""The pipeline runs each stage once, and the time budget is an object, not a signal."""

from __future__ import annotations

import threading
from pathlib import Path

import pytest

import handcheck
import handcheck.circuit.build
import handcheck.simulate
import handcheck.solve.phasor
import handcheck.solve.transient
from handcheck.budget import Budget
from handcheck.cli import main
from handcheck.errors import HandcheckError, TimeLimitError
from handcheck.pipeline import run

WORKSHEETS = Path(__file__).resolve().parent.parent / "worksheets"


def _count(monkeypatch: pytest.MonkeyPatch, module: object, name: str, counts: dict[str, int]) -> None:
    original = getattr(module, name)

    def counted(*args: object, **kwargs: object) -> object:
        counts[name] = counts.get(name, 0) + 1
        return original(*args, **kwargs)

    monkeypatch.setattr(module, name, counted)


@pytest.mark.slow
@pytest.mark.parametrize("sheet", ["coil-snubber.toml", "lc-input-filter.toml"])
def test_check_evidence_plot_builds_solves_and_simulates_once(sheet, monkeypatch, tmp_path, capsys):
    counts: dict[str, int] = {}
    _count(monkeypatch, handcheck.circuit.build, "build", counts)
    _count(monkeypatch, handcheck.solve.phasor, "solve", counts)
    _count(monkeypatch, handcheck.solve.transient, "transient_solution", counts)
    _count(monkeypatch, handcheck.simulate, "simulate", counts)
    _count(monkeypatch, handcheck.simulate, "fit_phasors", counts)
    status = main(["check", str(WORKSHEETS / sheet), "--evidence", "--plot", str(tmp_path / "out.svg")])
    capsys.readouterr()
    assert status in (0, 1)
    assert counts["build"] == 1
    assert counts["simulate"] == 1
    assert counts.get("solve", 0) <= 1
    assert counts.get("transient_solution", 0) <= 1
    assert counts.get("fit_phasors", 0) <= 1


@pytest.mark.slow
def test_simulate_command_shares_the_same_stages(monkeypatch, tmp_path, capsys):
    counts: dict[str, int] = {}
    _count(monkeypatch, handcheck.circuit.build, "build", counts)
    _count(monkeypatch, handcheck.simulate, "simulate", counts)
    main(["simulate", str(WORKSHEETS / "coil-snubber.toml"), "--plot", str(tmp_path / "sim.svg")])
    capsys.readouterr()
    assert counts == {"build": 1, "simulate": 1}


def test_time_limit_error_is_not_an_exception_a_library_can_swallow():
    # A library's `except Exception:` must not catch the budget running out.
    assert not issubclass(TimeLimitError, Exception)
    assert issubclass(TimeLimitError, BaseException)
    try:
        try:
            Budget(0).check('step "XL"')
        except Exception:
            pytest.fail("the time limit was swallowed by except Exception")
    except TimeLimitError as exc:
        assert 'while evaluating step "XL"' in str(exc)


def test_budget_works_in_a_thread():
    # SIGALRM only works in the main thread; the budget works anywhere.
    outcome: list[object] = []

    def work() -> None:
        try:
            run(WORKSHEETS / "coil-snubber.toml", budget=Budget(0))
        except TimeLimitError as exc:
            outcome.append(exc)

    thread = threading.Thread(target=work)
    thread.start()
    thread.join(60)
    assert len(outcome) == 1 and "time limit of 0 s" in str(outcome[0])


def test_run_keeps_every_stage():
    result = run(WORKSHEETS / "coil-snubber.toml", evidence=True)
    assert result.report is not None and result.evidence is not None
    assert result.exact.counts["phasors"] == 1
    assert result.ok == (result.report.ok and result.evidence.ok)


def test_check_text_takes_a_name():
    text = (WORKSHEETS / "coil-snubber.toml").read_text(encoding="utf-8")
    report = handcheck.check_text(text, name="snubber.toml")
    assert report.path == "snubber.toml"
    with pytest.raises(HandcheckError, match=r"bad\.toml"):
        handcheck.check_text("[worksheet]\nformat = 1\n", name="bad.toml")


@pytest.mark.slow  # waits for the watchdog to end a run
def test_watchdog_ends_a_run_that_overruns_its_limit():
    # A single long library call (here: a sleep) cannot reach a safe point; the
    # watchdog ends the process with exit status 2 and one line on stderr.
    import subprocess
    import sys

    code = (
        "import time\n"
        "from handcheck.budget import Budget, watchdog\n"
        "watchdog(Budget(0.2), 'slow.toml', margin=0.2)\n"
        "time.sleep(30)\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60, check=False)
    assert done.returncode == 2
    assert done.stderr.startswith("handcheck: slow.toml: the check ran out of its time limit of 0.2 s")
    assert done.stderr.count("\n") == 1
