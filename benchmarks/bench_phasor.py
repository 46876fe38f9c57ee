"""Benchmark: exact phasor of a 200-unknown circuit at a rational w.

Run from the repository root::

    python benchmarks/bench_phasor.py [--sections 66] [--repeat 3]

An RLC ladder (series R-L, shunt C; values invented for the benchmark) driven at
1000 rad/s, so every unknown's phasor is a Gaussian rational. Timed in one run
(median CPU-clock seconds, imports and stamping excluded):

* handcheck: python-flint ``fmpq_mat.solve`` on the real form [[G, -wC], [wC, G]]
  (``handcheck.solve.realform``);
* baseline: sympy ``DomainMatrix`` LU over ``QQ_I`` on G + jwC;

and checked to give exactly the same values. Target (issue "Speed"): 200 unknowns
under 0.3 s.
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
if ROOT not in sys.path:
    sys.path.insert(0, ROOT)


def ladder(sections: int) -> str:
    lines = [
        "[worksheet]",
        "format = 1",
        'title = "Benchmark ladder at 1000 rad/s (invented)"',
        "[parts]",
        'drive = { voltage = "10 V", frequency = "1000 rad/s", nodes = ["n0", "gnd"] }',
    ]
    for k in range(sections):
        lines.append(f'R{k} = {{ resistor = "{10 + k % 7} ohm", nodes = ["n{k}", "m{k}"] }}')
        lines.append(f'L{k} = {{ inductor = "{1 + k % 5} mH", nodes = ["m{k}", "n{k + 1}"] }}')
        lines.append(f'C{k} = {{ capacitor = "{2 + k % 3} uF", nodes = ["n{k + 1}", "gnd"] }}')
    return "\n".join(lines) + "\n"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sections", type=int, default=66, help="ladder sections (3N + 2 unknowns; 66 gives 200)")
    parser.add_argument("--repeat", type=int, default=3)
    args = parser.parse_args()

    import sympy
    from sympy.polys.matrices import DomainMatrix

    import handcheck
    from handcheck.circuit.build import build
    from handcheck.circuit.mna import stamp
    from handcheck.solve.realform import solve_real_form

    circuit = build(handcheck.loads(ladder(args.sections)))
    system = stamp(circuit)
    n, w = system.size, circuit.omega
    column = [system.B[r][0] for r in range(n)]

    def fast() -> list:
        return solve_real_form(system.G, system.C, w, [column])[0]  # type: ignore[index]

    def baseline() -> list:
        s = sympy.I * w
        rows = [[system.G[r][c] + s * system.C[r][c] for c in range(n)] + [column[r]] for r in range(n)]
        both = DomainMatrix.from_list_sympy(n, n + 1, rows, extension=True).to_field()
        a = both.extract(list(range(n)), list(range(n)))
        b = both.extract(list(range(n)), [n])
        x = a.lu_solve(b).to_Matrix()
        return [x[r, 0] for r in range(n)]

    def timed(fn):  # type: ignore[no-untyped-def]
        times, result = [], None
        for _ in range(args.repeat):
            start = time.process_time()
            result = fn()
            times.append(time.process_time() - start)
        return statistics.median(times), result

    t_fast, x_fast = timed(fast)
    t_base, x_base = timed(baseline)
    same = all(sympy.expand(a - b) == 0 for a, b in zip(x_fast, x_base, strict=True))
    print(f"exact phasor, RLC ladder of {args.sections} sections at 1000 rad/s: {n} unknowns (median of {args.repeat})")
    print(f"  real form, python-flint fmpq_mat.solve : {t_fast:8.3f} s")
    print(f"  DomainMatrix LU over QQ_I (baseline)   : {t_base:8.3f} s   ({t_base / t_fast:.0f}x slower)")
    print(f"  same exact values: {same}")
    print(f"target: {n} unknowns under 0.3 s -> {'met' if t_fast < 0.3 else 'NOT met'}")


if __name__ == "__main__":
    main()
