"""The evidence's closed-form comparison: which samples it uses, and how it evaluates there."""

from __future__ import annotations

import dataclasses
import math
from types import MappingProxyType, SimpleNamespace

import mpmath
import numpy as np
import pytest

import handcheck
import handcheck.verify.evidence as evidence_module
from handcheck.circuit.build import build
from handcheck.record.evidence_text import evidence_lines
from handcheck.simulate import simulate
from handcheck.simulate.run import FIT_PERIODS
from handcheck.verify.evidence import (
    EDGE_PERIODS,
    SPREAD_SAMPLES,
    STRETCH_CAP,
    closed_form_at,
    comparison_samples,
    gather_evidence,
)

# A sine-driven series RL circuit from rest (values invented): 10 V peak at 50 Hz,
# R = 5 ohm, L = 20 mH, so tau = L/R = 4 ms and theta = atan(wL/R).
RL_SINE = """
[worksheet]
format = 1
title = "Series RL switched onto a sine (invented)"
phasors = "peak"
[transient]
start = "rest"
[parts]
drive = { voltage = "10 V", frequency = "50 Hz", nodes = ["a", "gnd"] }
R = { resistor = "5 ohm", nodes = ["a", "b"] }
L = { inductor = "20 mH", nodes = ["b", "gnd"] }
[[step]]
name = "I"
quantity = "current(R)"
claim = "1 A"
"""

# A 1:100 current transformer with a slow magnetising mode (values invented), as in
# benchmarks/bench_check.py but with 0.5 H so that the test runs in a second.
CT = """
[worksheet]
format = 1
title = "Current transformer into a burden (invented)"
phasors = "rms"
[parts]
line = { current = "100 A rms", frequency = "50 Hz", nodes = ["gnd", "p"] }
ct = { transformer = "1:100", nodes = ["p", "gnd", "s", "gnd"] }
Lm = { inductor = "0.5 H", nodes = ["s", "gnd"] }
Rb = { resistor = "2.5 ohm", nodes = ["s", "gnd"] }
[[step]]
name = "Ib"
quantity = "current(Rb)"
claim = "1 A"
"""


def rl_textbook(t: np.ndarray) -> np.ndarray:
    """i(t) = Vm/|Z| (cos(wt - theta) - cos(theta) e^(-t R/L)) of a series RL switched onto Vm cos(wt).

    Hayt, Kemmerly and Durbin, *Engineering Circuit Analysis*, 8th ed., ch. 8 and 10
    (the complete response: forced sinusoid plus the natural e^(-Rt/L) fixed by i(0) = 0),
    from memory.
    """
    vm, r, ind, w = 10.0, 5.0, 20e-3, 2 * math.pi * 50
    z = math.hypot(r, w * ind)
    theta = math.atan2(w * ind, r)
    return vm / z * (np.cos(w * t - theta) - math.cos(theta) * np.exp(-t * r / ind))


@pytest.fixture(scope="module")
def rl():
    sheet = handcheck.loads(RL_SINE)
    circuit = build(sheet)
    return sheet, circuit, simulate(circuit)


@pytest.fixture(scope="module")
def ct():
    sheet = handcheck.loads(CT)
    circuit = build(sheet)
    return sheet, circuit, gather_evidence(circuit, sheet.steps)


def test_closed_form_in_doubles_matches_the_textbook_rl_response(rl):
    _, circuit, sim = rl
    from handcheck.solve.quantities import parse_quantity
    from handcheck.solve.solutions import ExactSolutions
    from handcheck.solve.timequantities import waveform_of

    wave, _ = waveform_of(ExactSolutions(circuit).transient, parse_quantity("current(R)"))
    times = np.linspace(0.0, 0.1, 2001)
    got = closed_form_at(wave, times, 1e-6)
    assert np.max(np.abs(got - rl_textbook(times))) < 1e-12 * 10 / 5
    # and the simulation itself, at the samples the rule picks, against the same book formula
    picked = comparison_samples(sim, [sim.currents["R"]])
    assert np.max(np.abs(np.asarray(sim.currents["R"])[picked] - rl_textbook(sim.times[picked]))) < 1e-9


def test_the_sample_rule_is_honoured(rl):
    _, _, sim = rl
    current = np.asarray(sim.currents["R"])
    picked = comparison_samples(sim, [current])
    n = sim.samples
    period = 2 * math.pi / sim.omega
    # every sample of the first EDGE_PERIODS periods and of the last FIT_PERIODS periods
    first = np.flatnonzero(sim.times <= EDGE_PERIODS * period * (1 + 1e-9))
    last = np.flatnonzero(sim.times >= sim.span - FIT_PERIODS * period * (1 + 1e-9))
    assert set(first) <= set(picked) and set(last) <= set(picked)
    # SPREAD_SAMPLES spread evenly: one in every stretch of n / SPREAD_SAMPLES samples
    gaps = np.diff(picked)
    assert gaps.max() <= math.ceil((n - 1) / (SPREAD_SAMPLES - 1))
    # the extremes of the simulated waveform
    assert int(np.argmax(current)) in picked and int(np.argmin(current)) in picked
    # and nothing else: the count is bounded, not the whole run
    assert picked.size <= len(first) + len(last) + SPREAD_SAMPLES + 2
    assert picked.size < n


def test_breakpoint_neighbours_and_the_settled_stretch_are_compared():
    sheet = handcheck.loads(
        """
[worksheet]
format = 1
title = "Delayed step on an RC (invented)"
[transient]
start = "rest"
[parts]
V1 = { voltage = "step(t - 3 ms) * 5 V", nodes = ["in", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["in", "out"] }
C1 = { capacitor = "1 uF", nodes = ["out", "gnd"] }
[[step]]
name = "v"
quantity = "voltage(out)"
claim = "5 V"
"""
    )
    sim = simulate(build(sheet))
    picked = set(comparison_samples(sim).tolist())
    assert sim.settles_from == pytest.approx(3e-3)
    k = round(sim.settles_from / sim.step)
    assert {k - 1, k, k + 1} <= picked
    # no analysis frequency: the EDGE_SAMPLES samples from the breakpoint on (or to the end)
    assert set(range(k, min(k + evidence_module.EDGE_SAMPLES, sim.samples))) <= picked


def _tampered(sim, index: int, by: float):
    """The run with one sample of current(Rb) moved by ``by`` of its peak."""
    values = np.array(sim.currents["Rb"])
    values[index] += by * float(np.max(np.abs(values)))
    currents = dict(sim.currents)
    currents["Rb"] = values
    return dataclasses.replace(sim, currents=MappingProxyType(currents))


def test_a_fault_at_a_sample_the_rule_picks_is_reported(ct, monkeypatch):
    sheet, circuit, found = ct
    sim = found.simulation
    picked = comparison_samples(sim, [sim.currents["Rb"]])
    # a sample inside the first periods, one inside the last, one of the evenly spread ones
    for index in (int(picked[5]), int(picked[-5]), int(np.linspace(0, sim.samples - 1, SPREAD_SAMPLES)[150].round())):
        assert index in picked
        monkeypatch.setattr("handcheck.simulate.simulate", lambda *a, _i=index, **k: _tampered(sim, _i, 1e-4))
        again = gather_evidence(circuit, sheet.steps)
        assert any("closed-form and numerical responses of current(Rb)" in p for p in again.problems), index


def test_a_sample_between_the_rule_s_picks_is_not_compared(ct, monkeypatch):
    # The rule is a bounded set: a sample it does not name is not looked at (KCL still is).
    sheet, circuit, found = ct
    sim = found.simulation
    picked = set(comparison_samples(sim, [sim.currents["Rb"]]).tolist())
    middle = sim.samples // 2
    index = next(k for k in range(middle, sim.samples) if k not in picked and k - 1 not in picked)
    monkeypatch.setattr("handcheck.simulate.simulate", lambda *a, **k: _tampered(sim, index, 1e-8))
    again = gather_evidence(circuit, sheet.steps)
    assert not any("closed-form" in p for p in again.problems)


def test_the_ct_evidence_states_its_rule_and_shows_decay_and_steady_state(ct):
    _, _, found = ct
    assert found.ok, found.problems
    text = " ".join(" ".join(evidence_lines(found)).split())
    assert f"closed form against numerical at {found.compared} of {found.samples} samples" in text
    assert "double precision with numpy" in text
    assert found.compared <= 2 * STRETCH_CAP + STRETCH_CAP + SPREAD_SAMPLES + 2
    # the slow mode L/R = 0.5 H / 2.5 ohm = 0.2 s decays within the run, and the
    # phasors are fitted only after it (the fit window starts after the settling time)
    assert found.long_enough
    assert found.fit.start >= math.log(1e6) * 0.2 - 1e-9
    assert found.phasor_agreement < 1e-9
    # steady state reached: the burden current is 100 A / 100 at an angle from the
    # magnetising branch, |I_b| = 1 A * wLm / |Rb + j wLm| (current divider, from memory)
    w = 2 * math.pi * 50
    fitted = dict((n, f) for n, f, _ in found.phasors)["current(Rb)"]
    assert abs(fitted) / math.sqrt(2) == pytest.approx(w * 0.5 / abs(complex(2.5, w * 0.5)), rel=1e-9)


def test_cancelling_terms_fall_back_to_thirty_digits():
    # two terms of 1e12 that cancel to 1 + e^-t: a double keeps only ~1e-4 of the sum
    with mpmath.workdps(40):
        big = mpmath.mpf(10) ** 12
        numeric = [
            (mpmath.mpc(big + 1), 0, mpmath.mpc(0), mpmath.mpf(0)),
            (mpmath.mpc(-big), 0, mpmath.mpc(0), mpmath.mpf(0)),
            (mpmath.mpc(1), 0, mpmath.mpc(-1), mpmath.mpf(0)),
        ]
    wave = SimpleNamespace(
        terms=[SimpleNamespace(numeric=t) for t in numeric],
        value=lambda t: 1.0 + math.exp(-t),
    )
    times = np.array([0.0, 0.5, 1.0])
    got = closed_form_at(wave, times, 1e-6)
    assert got == pytest.approx(1.0 + np.exp(-times), abs=1e-15)
