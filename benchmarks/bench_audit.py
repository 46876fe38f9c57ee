"""Benchmark of the formula audit (issue 14, item 9), ours beside the baselines in one run.

1. The network function V_N/V_in of an RLC ladder of N sections (series R, series L,
   shunt C per section) with every part a symbol, N = 4, 5, 6: handcheck's
   fraction-free elimination on python-flint polynomials against sympy's ``linsolve``
   on the same modified nodal equations. Both answers are compared exactly at a
   rational point. Target: N = 6 under 3 s.
2. Monte Carlo of 10^6 samples of a second-order network function's error (a
   Sallen-Key low-pass, its formula at 1 kHz): handcheck's sampling and evaluation
   against a floor written by hand in numpy (the same draws, the closed form typed in,
   the same mean, standard deviation and percentiles).
   Target: under 0.5 s.

Times are wall-clock medians of three runs (one run for the slow baseline); imports
and worksheet reading are excluded. The ladder values are invented.
"""

from __future__ import annotations

import statistics
import time
from collections.abc import Callable
from typing import Any

import numpy as np
import sympy

from handcheck.audit.errors import ErrorModel, Ranges, monte_carlo
from handcheck.audit.network import S, symbolic_circuit, transfer_function
from handcheck.audit.run import _at_frequency, _ranges, _symbols
from handcheck.circuit.build import build
from handcheck.worksheet.load import loads

HEAD = '[worksheet]\nformat = 1\ntitle = "benchmark"\n'


def ladder_text(n: int) -> str:
    """A worksheet of an RLC ladder with ``n`` sections, every part with a tolerance."""
    lines = [HEAD, "[parts]", 'Vin = { voltage = "1 V", nodes = ["e0", "gnd"] }']
    for k in range(1, n + 1):
        lines.append(f'R{k} = {{ resistor = "{10 + k} ohm", tolerance = "5%", nodes = ["e{k - 1}", "a{k}"] }}')
        lines.append(f'L{k} = {{ inductor = "{k} mH", tolerance = "5%", nodes = ["a{k}", "e{k}"] }}')
        lines.append(f'C{k} = {{ capacitor = "{k + 1} uF", tolerance = "5%", nodes = ["e{k}", "gnd"] }}')
    lines += ["", "[[formula]]", 'name = "H"', f'quantity = "network_function(voltage(e{n}), voltage(e0))"']
    return "\n".join(lines) + "\n"


def _median(run: Callable[[], Any], repeats: int = 3) -> tuple[float, Any]:
    times, result = [], None
    for _ in range(repeats):
        start = time.perf_counter()
        result = run()
        times.append(time.perf_counter() - start)
    return statistics.median(times), result


def ladder(n: int) -> tuple[float, float, int, bool]:
    """(ours s, linsolve s, denominator terms, same answer)."""
    worksheet = loads(ladder_text(n))
    circuit = build(worksheet)
    symbols = _symbols(worksheet.audit, worksheet, circuit)  # type: ignore[arg-type]
    formula = worksheet.audit.formulas[0]  # type: ignore[union-attr]

    def ours() -> Any:
        return transfer_function(symbolic_circuit(circuit, symbols), formula.quantity)

    ours_time, h = _median(ours)
    sc = symbolic_circuit(circuit, symbols)
    system = sc.system
    size = system.size
    matrix = sympy.Matrix(size, size, lambda i, j: system.G[i][j] + S * system.C[i][j])
    rhs = sympy.Matrix([row[0] for row in system.B])
    unknowns = sympy.symbols(f"x0:{size}")
    start = time.perf_counter()
    (solution,) = sympy.linsolve((matrix, rhs), *unknowns)
    linsolve_time = time.perf_counter() - start
    theirs = solution[system.nodes[f"e{n}"]]
    point = {sympy.Symbol(name, positive=True): sympy.Rational(k + 2, k + 3) for k, name in enumerate(symbols)}
    point[S] = sympy.Rational(7, 5)
    same = sympy.simplify(h.to_sympy().subs(point) - theirs.subs(point)) == 0
    return ours_time, linsolve_time, len(h.den), same


SALLEN_KEY = (
    HEAD
    + """
[parts]
Vin = { voltage = "1 V", frequency = "1 kHz", nodes = ["in", "gnd"] }
R1 = { resistor = "10 kohm", tolerance = "1%", nodes = ["in", "a"] }
R2 = { resistor = "15 kohm", tolerance = "1%", nodes = ["a", "b"] }
C1 = { capacitor = "22 nF", tolerance = "5%", nodes = ["a", "out"] }
C2 = { capacitor = "10 nF", tolerance = "5%", nodes = ["b", "gnd"] }
buf = { opamp = "ideal", nodes = ["out", "b", "out"] }
[[formula]]
name = "H"
quantity = "network_function(voltage(out), voltage(in))"
"""
)


def monte_carlo_case(samples: int) -> tuple[float, float, float]:
    """(ours s, numpy floor s, largest difference of the means)."""
    worksheet = loads(SALLEN_KEY)
    circuit = build(worksheet)
    sheet = worksheet.audit
    assert sheet is not None
    symbols = _symbols(sheet, worksheet, circuit)
    ranges: Ranges = _ranges(sheet, circuit, symbols)[0]
    sc = symbolic_circuit(circuit, symbols)
    truth = transfer_function(sc, sheet.formulas[0].quantity)
    # the formula 1/(1 + s C2 (R1 + R2)) (the first-order term only): a differing formula
    ring = sc.ring
    r1, r2, c2 = (sympy.Symbol(n, positive=True) for n in ("R1", "R2", "C2"))
    formula = ring.fraction(1 / (1 + S * c2 * (r1 + r2)))
    point, kind = _at_frequency(sc, formula / truth)
    model = ErrorModel(kind, ring, ratio=point, in_s=formula / truth, s_value=2j * np.pi * 1000)  # type: ignore[arg-type]
    ours_time, mc = _median(lambda: monte_carlo(model, ranges, samples, 0, "uniform"))

    def floor() -> float:
        rng = np.random.default_rng(0)
        x = [rng.uniform(float(lo), float(hi), samples) for lo, hi in ranges.box]
        R1, R2, C1, C2 = x
        s = 2j * np.pi * 1000
        true = 1 / (s * s * R1 * R2 * C1 * C2 + s * C2 * (R1 + R2) + 1)
        guess = 1 / (1 + s * C2 * (R1 + R2))
        errors = np.abs(guess) / np.abs(true) - 1
        np.percentile(errors, [1, 99])  # the same summary as ours
        errors.std(ddof=1)
        return float(errors.mean())

    floor_time, floor_mean = _median(floor)
    return ours_time, floor_time, abs(mc.mean - floor_mean)


def main() -> None:
    """Print both benchmarks, each figure beside its baseline from this run, and a line per target."""
    print("1. RLC ladder, every part a symbol: exact V_N(s)/V_in(s)")
    print(f"{'N':>3} {'unknowns':>9} {'den terms':>10} {'ours s':>9} {'linsolve s':>11} {'ratio':>8}  same")
    times = {}
    for n in (4, 5, 6):
        ours, theirs, terms, same = ladder(n)
        times[n] = (ours, theirs)
        print(f"{n:>3} {3 * n + 2:>9} {terms:>10} {ours:>9.4f} {theirs:>11.3f} {theirs / ours:>8.0f}x  {same!s:5}")
    ours, theirs = times[6]
    verdict = "met" if ours < 3 else "NOT met"
    print(f"   target: 6 sections under 3 s: {verdict} (ours {ours:.3f} s, sympy linsolve {theirs:.1f} s in this run)")
    samples = 10**6
    ours, floor, diff = monte_carlo_case(samples)
    print(f"\n2. Monte Carlo, {samples:,} samples of a second-order network function's error (sampling included)")
    print(f"   ours {ours:.3f} s, numpy floor {floor:.3f} s (typed in this benchmark), ratio {ours / floor:.2f}")
    print(f"   means differ by {diff:.1e}")
    verdict = "met" if ours < 0.5 else "NOT met"
    print(f"   target: under 0.5 s: {verdict} (ours {ours:.3f} s, numpy floor {floor:.3f} s in this run)")


if __name__ == "__main__":
    main()
