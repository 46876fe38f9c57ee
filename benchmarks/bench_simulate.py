"""Benchmark: handcheck's time-domain solver against scipy's Radau on RLC ladders.

Run from the repository root::

    python benchmarks/bench_simulate.py [--sections 2 8 32 128] [--time-limit 300] [--threads 1]

Each ladder of N sections is driven from rest by a sinusoid and integrated over
20 periods at 200 samples per period (4000 steps). In one run, each case in its
own subprocess with a hard kill at the time limit ("no answer in T s"), it times

* handcheck: ``simulate(circuit, span=20 T, samples_per_period=200)`` on the
  circuit read from a worksheet (median of 3 calls after one warm-up call);
* baseline: ``scipy.integrate.solve_ivp(method="Radau", rtol=1e-10, atol=1e-14)``
  on the ladder's state equations written out by hand below, given the exact
  constant Jacobian, answers at the same sample times (one call);
* reference: the same hand-written equations, augmented with a two-state
  oscillator for the source, stepped by their matrix exponential in 128-bit
  arithmetic (python-flint ``arb_mat.exp``; Johansson, "Arb: efficient
  arbitrary-precision midpoint-radius interval arithmetic", IEEE Trans.
  Computers 66, 2017, from memory). It is run again at 192 bits; the largest
  difference between the two, relative to the largest value, is printed as
  "reference check".

The error of each method is its largest difference from the reference over all
samples, all capacitor voltages and all inductor currents, divided by the largest
reference value of that kind (voltages and currents judged separately; the
worse is shown). Imports are not timed.

Ladder values (invented for the demonstration): section k has a series 1 ohm
and 1 mH and a shunt 2 uF; a 22 ohm load (about sqrt(L/C)) ends the ladder; the
source is 1 V peak at 1 kHz. The ladder's fastest natural ringing (about 7 kHz)
is slower than the sampling rule's 20 samples per ringing period, so every run
uses exactly 4000 steps.

BLAS threads are set to ``--threads`` (default 1) in every subprocess alike:
on a shared two-core machine, multi-threaded LAPACK is often several times
slower than one thread.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import subprocess
import sys
import tempfile
import time

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
if ROOT not in sys.path:
    sys.path.insert(0, ROOT)

FREQUENCY = 1000.0  # Hz
PERIODS = 20
PER_PERIOD = 200
R_SERIES, L_SERIES, C_SHUNT, R_LOAD = "1", "1e-3", "2e-6", "22"
AMPLITUDE = 1.0


def worksheet(n: int) -> str:
    """The ladder as a handcheck worksheet (format 1)."""
    lines = [
        "[worksheet]",
        "format = 1",
        f'title = "RLC ladder, {n} sections"',
        "[parts]",
        'V1 = { voltage = "1 V", frequency = "1 kHz", nodes = ["n0", "gnd"] }',
    ]
    for k in range(1, n + 1):
        lines += [
            f'R{k} = {{ resistor = "1 ohm", nodes = ["n{k - 1}", "m{k}"] }}',
            f'L{k} = {{ inductor = "1 mH", nodes = ["m{k}", "n{k}"] }}',
            f'C{k} = {{ capacitor = "2 uF", nodes = ["n{k}", "gnd"] }}',
        ]
    lines.append(f'RL = {{ resistor = "22 ohm", nodes = ["n{n}", "gnd"] }}')
    return "\n".join(lines) + "\n"


def ladder_matrices(n: int, number=float):
    """State equations ``x' = A x + b u(t)`` written out by hand.

    States: inductor currents i_1..i_n (from m_k to n_k), then capacitor voltages
    v_1..v_n. Kirchhoff's laws per section (common practice):
    ``L i_k' = v_{k-1} - R i_k - v_k`` (``v_0 = u``) and
    ``C v_k' = i_k - i_{k+1}``, with ``i_{n+1} = v_n / R_load``.
    Returns A and b as nested lists of ``number``.
    """
    R, L, C, RL = (number(x) for x in (R_SERIES, L_SERIES, C_SHUNT, R_LOAD))  # decimal strings: exact for arb
    size = 2 * n
    zero = number("0")
    A = [[zero] * size for _ in range(size)]
    b = [zero] * size
    for k in range(n):
        i, v = k, n + k
        A[i][i] = -R / L
        A[i][v] = -number("1") / L
        if k == 0:
            b[i] = number("1") / L
        else:
            A[i][n + k - 1] = number("1") / L
        A[v][i] = number("1") / C
        if k + 1 < n:
            A[v][k + 1] = -number("1") / C
        else:
            A[v][v] = -number("1") / (RL * C)
    return A, b


def times() -> list[float]:
    step = 1 / (FREQUENCY * PER_PERIOD)
    return [k * step for k in range(PERIODS * PER_PERIOD + 1)]


# ----------------------------------------------------------------------------- cases


def case_handcheck(n: int, out: str) -> dict:
    import numpy as np

    import handcheck
    from handcheck.circuit.build import build
    from handcheck.simulate import simulate

    circuit = build(handcheck.loads(worksheet(n)))
    span = PERIODS / FREQUENCY
    simulate(circuit, span=span, samples_per_period=PER_PERIOD)  # warm-up (imports scipy.linalg)
    spent = []
    for _ in range(3):
        start = time.perf_counter()
        sim = simulate(circuit, span=span, samples_per_period=PER_PERIOD)
        spent.append(time.perf_counter() - start)
    data = np.array([sim.currents[f"L{k}"] for k in range(1, n + 1)] + [sim.voltages[f"n{k}"] for k in range(1, n + 1)])
    np.save(out, data)
    return {"seconds": sorted(spent)[1], "samples": sim.samples, "step": sim.step}


def case_radau(n: int, out: str) -> dict:
    import numpy as np
    from scipy.integrate import solve_ivp

    A, b = (np.array(m) for m in ladder_matrices(n))
    w = 2 * math.pi * FREQUENCY
    t = np.array(times())

    def rhs(tt: float, x: np.ndarray) -> np.ndarray:
        return A @ x + b * (AMPLITUDE * math.cos(w * tt))

    start = time.perf_counter()
    sol = solve_ivp(rhs, (0.0, t[-1]), np.zeros(2 * n), method="Radau", rtol=1e-10, atol=1e-14, t_eval=t, jac=A)
    spent = time.perf_counter() - start
    np.save(out, sol.y)
    return {"seconds": spent, "steps": int(sol.t.size), "nfev": int(sol.nfev), "status": int(sol.status)}


def _reference(n: int, bits: int):
    from flint import arb, arb_mat, ctx

    ctx.prec = bits
    A, b = ladder_matrices(n, arb)
    size = 2 * n
    w = 2 * arb.pi() * arb(FREQUENCY)
    h = arb(1) / (arb(FREQUENCY) * PER_PERIOD)
    # augmented with the oscillator c' = -w s, s' = w c; u = AMPLITUDE * c
    aug = [[arb(0)] * (size + 2) for _ in range(size + 2)]
    for r in range(size):
        for c in range(size):
            aug[r][c] = A[r][c] * h
        aug[r][size] = b[r] * AMPLITUDE * h
    aug[size][size + 1] = -w * h
    aug[size + 1][size] = w * h
    step = arb_mat(aug).exp().mid()  # midpoints: ball radii would grow with every step
    state = arb_mat([[arb(0)]] * size + [[arb(1)], [arb(0)]])
    rows = []
    for k in range(PERIODS * PER_PERIOD + 1):
        if k:
            state = (step * state).mid()
        rows.append([state[r, 0] for r in range(size)])
    return rows


def case_reference(n: int, out: str) -> dict:
    import numpy as np

    start = time.perf_counter()
    rows = _reference(n, 128)
    spent = time.perf_counter() - start
    check = _reference(n, 192)
    difference = max(
        float(abs(a - b).mid()) for ra, rb in zip(rows, check, strict=True) for a, b in zip(ra, rb, strict=True)
    )
    data = np.array([[float(x.mid()) for x in row] for row in rows]).T
    np.save(out, data)
    return {"seconds": spent, "radius": difference / float(np.max(np.abs(data)))}


CASES = {"handcheck": case_handcheck, "radau": case_radau, "reference": case_reference}


# ----------------------------------------------------------------------------- driver


def run_case(kind: str, n: int, folder: str, limit: float, threads: int) -> dict | None:
    out = os.path.join(folder, f"{kind}-{n}.npy")
    env = dict(
        os.environ, OPENBLAS_NUM_THREADS=str(threads), OMP_NUM_THREADS=str(threads), MKL_NUM_THREADS=str(threads)
    )
    try:
        done = subprocess.run(
            [sys.executable, os.path.abspath(__file__), "--case", kind, str(n), out],
            capture_output=True,
            text=True,
            timeout=limit,
            env=env,
            cwd=ROOT,
            check=False,
        )
    except subprocess.TimeoutExpired:
        return None
    if done.returncode != 0:
        return {"error": (done.stderr.strip().splitlines() or ["failed"])[-1]}
    result = json.loads(done.stdout.strip().splitlines()[-1])
    result["file"] = out
    return result


def error_against(data_file: str, reference_file: str, n: int) -> float:
    import numpy as np

    got, ref = np.load(data_file), np.load(reference_file)
    worst = 0.0
    for rows in (slice(0, n), slice(n, 2 * n)):  # currents, then voltages
        worst = max(worst, float(np.max(np.abs(got[rows] - ref[rows])) / np.max(np.abs(ref[rows]))))
    return worst


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--sections", type=int, nargs="+", default=[2, 8, 32, 128])
    parser.add_argument("--time-limit", type=float, default=300.0, help="seconds allowed to each case")
    parser.add_argument("--threads", type=int, default=1, help="BLAS threads in every case")
    parser.add_argument("--case", nargs=3, metavar=("KIND", "N", "OUT"), help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.case:
        kind, n, out = args.case
        print(json.dumps(CASES[kind](int(n), out)))
        return

    limit = args.time_limit
    print(
        f"RLC ladders driven from rest at {FREQUENCY:g} Hz: {PERIODS} periods x {PER_PERIOD} samples; "
        f"time limit {limit:g} s per case; BLAS threads {args.threads}"
    )
    print("errors: largest |difference| from the 128-bit reference / largest |reference| (worse of V and I)\n")
    header = (
        f"{'N':>4} {'states':>6} | {'handcheck s':>11} {'error':>9} | {'Radau s':>9} {'error':>9} | "
        f"{'speed-up':>8} | reference check"
    )
    print(header)
    print("-" * len(header))
    with tempfile.TemporaryDirectory() as folder:
        for n in args.sections:
            ours = run_case("handcheck", n, folder, limit, args.threads)
            radau = run_case("radau", n, folder, limit, args.threads)
            ref = run_case("reference", n, folder, limit, args.threads)

            def cell(result: dict | None, width: int, n: int = n, ref: dict | None = ref) -> tuple[str, str]:
                if result is None:
                    return f"{'no answer in ' + format(limit, 'g') + ' s':>{width}}", f"{'':>9}"
                if "error" in result:
                    return f"{'failed':>{width}}", f"{'':>9}"
                err = error_against(result["file"], ref["file"], n) if ref and "file" in ref else float("nan")
                return f"{result['seconds']:>{width}.4f}", f"{err:>9.1e}"

            t_ours, e_ours = cell(ours, 11)
            t_radau, e_radau = cell(radau, 9)
            good = all(r is not None and "seconds" in r for r in (ours, radau))
            speed = f"{radau['seconds'] / ours['seconds']:>7.0f}x" if good else f"{'-':>8}"
            if ref is None:
                radius = f"no answer in {limit:g} s"
            elif "error" in ref:
                radius = f"failed: {ref['error']}"
            else:
                radius = f"{ref['radius']:.0e} ({ref['seconds']:.1f} s)"
            print(f"{n:>4} {2 * n:>6} | {t_ours} {e_ours} | {t_radau} {e_radau} | {speed} | {radius}", flush=True)
            for result, name in ((ours, "handcheck"), (radau, "Radau")):
                if result is not None and "error" in result:
                    print(f"     {name} failed: {result['error']}")


if __name__ == "__main__":
    main()
