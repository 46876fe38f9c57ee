"""Benchmark: exact output voltage of an RLC ladder as a rational function of s.

Run from the repository root::

    python benchmarks/bench_solve.py [--time-limit 60] [--sizes 2 4 8 16 32 64]

For each ladder size N it times, in one run and each case in its own
subprocess with a hard kill at the time limit:

* ``solve_rational`` (handcheck, python-flint route),
* the same algorithm on the general route (pure-Python sparse matrices, the
  fallback used without python-flint or with algebraic entries),
* baseline 1: ``sympy.Matrix.LUsolve`` then ``sympy.cancel``,
* baseline 2: ``sympy.linsolve`` then ``sympy.cancel(sympy.together(...))``,

prints the times side by side ("no answer in T s" when killed; a baseline
that timed out is skipped at larger N), and checks that all routes that
answered give exactly the same reduced rational function.

The ladder values are invented for the demonstration.
"""

from __future__ import annotations

import argparse
import multiprocessing as mp
import os
import sys
import time
from fractions import Fraction

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
if ROOT not in sys.path:
    sys.path.insert(0, ROOT)

# (route key, column header)
COLUMNS = (
    ("handcheck", "solve_rational"),
    ("general", "general route"),
    ("LUsolve", "LUsolve+cancel"),
    ("linsolve", "linsolve+cancel"),
)


def ladder_system(n: int) -> tuple[list[list[Fraction]], list[list[Fraction]], list[Fraction], int]:
    """Modified nodal system ``(G + sC) x = b`` of an RLC ladder with ``n`` sections.

    A 1 V source drives node 0; section k (1..n) is a series resistor
    ``R_k = 1 + k/10`` from the previous node to an inner node, a series
    inductor ``L_k = 1/(k+1)`` from the inner node to the section's end
    node, and a shunt capacitor ``C_k = 1/(2k+3)`` from the end node to
    ground (invented values).

    Unknown order: node voltages ``v_0, a_1, e_1, ..., a_n, e_n`` (indices
    0..2n), then the source branch current (2n+1), then the inductor
    currents ``i_L1..i_Ln`` (2n+2..3n+1).  Stamps: conductance stamp for
    R, ``C`` on the end node's diagonal, source rows ``v_0 = 1`` with its
    current in node 0's current balance, inductor branch rows
    ``v_a - v_e - s L i = 0`` with the current in the two balances
    (common practice).

    Returns
    -------
    tuple
        ``(G, C, b, output_index)`` with Fraction entries; the output is the
        last node's voltage ``e_n``.
    """
    nodes = 2 * n + 1
    size = nodes + 1 + n
    zero = Fraction(0)
    G = [[zero] * size for _ in range(size)]
    C = [[zero] * size for _ in range(size)]
    b = [zero] * size
    src = nodes
    G[src][0] += 1
    G[0][src] += 1
    b[src] = Fraction(1)
    prev = 0
    for k in range(1, n + 1):
        r = 1 + Fraction(k, 10)
        ind = Fraction(1, k + 1)
        cap = Fraction(1, 2 * k + 3)
        a, e, il = 2 * k - 1, 2 * k, nodes + k
        g = 1 / r
        G[prev][prev] += g
        G[a][a] += g
        G[prev][a] -= g
        G[a][prev] -= g
        G[a][il] += 1
        G[e][il] -= 1
        G[il][a] += 1
        G[il][e] -= 1
        C[il][il] -= ind
        C[e][e] += cap
        prev = e
    return G, C, b, 2 * n


def _normalise(expr, s):
    """Reduced expression -> (num coeffs, den coeffs) as (p, q) pairs, den monic."""
    import sympy

    num, den = sympy.fraction(sympy.cancel(expr))
    pn = sympy.Poly(num, s, domain=sympy.QQ)
    pd = sympy.Poly(den, s, domain=sympy.QQ)
    g = pn.gcd(pd)
    pn, pd = pn.exquo(g), pd.exquo(g)
    lc = pd.LC()
    pn, pd = pn.exquo_ground(lc), pd.monic()
    return (
        tuple((int(c.p), int(c.q)) for c in pn.all_coeffs()),
        tuple((int(c.p), int(c.q)) for c in pd.all_coeffs()),
    )


def _load_network():
    """Import handcheck.solve.network (by file path if the package import fails)."""
    try:
        from handcheck.solve import network
    except ImportError:
        import importlib.util

        path = os.path.join(ROOT, "handcheck", "solve", "network.py")
        spec = importlib.util.spec_from_file_location("handcheck_solve_network", path)
        network = importlib.util.module_from_spec(spec)
        sys.modules[spec.name] = network
        spec.loader.exec_module(network)
    return network


def _solve_route(route: str, n: int):
    """Solve ladder ``n`` by ``route``; return (seconds, reduced sympy expression)."""
    import sympy

    network = _load_network()
    G, C, b, out = ladder_system(n)
    s = sympy.Symbol("s")
    t0 = time.perf_counter()
    if route in ("handcheck", "general"):
        (rf,), _ = network._solve(G, C, b, [out], None, use_flint=(route == "handcheck"))
        expr = rf.as_expr()
    else:
        size = len(G)
        M = sympy.Matrix(
            size,
            size,
            lambda i, j: (
                sympy.Rational(G[i][j].numerator, G[i][j].denominator)
                + s * sympy.Rational(C[i][j].numerator, C[i][j].denominator)
            ),
        )
        rhs = sympy.Matrix([sympy.Rational(x.numerator, x.denominator) for x in b])
        if route == "LUsolve":
            expr = sympy.cancel(M.LUsolve(rhs)[out])
        else:
            xs = sympy.symbols(f"x0:{size}")
            (sol,) = sympy.linsolve((M, rhs), *xs)
            expr = sympy.cancel(sympy.together(sol[out]))
    return time.perf_counter() - t0, expr


def _worker(route: str, n: int, conn) -> None:
    """Child process: warm up on a one-section ladder, signal ready, solve, send."""
    import sympy

    _solve_route(route, 1)  # first-call imports and caches are not timed
    conn.send(("ready",))
    elapsed, expr = _solve_route(route, n)
    conn.send(("ok", elapsed, _normalise(expr, sympy.Symbol("s"))))


def run_case(route: str, n: int, limit: float):
    """Run one case in a subprocess; return (seconds, result) or (None, None) on timeout."""
    ctx = mp.get_context("spawn")
    parent, child = ctx.Pipe(duplex=False)
    proc = ctx.Process(target=_worker, args=(route, n, child), daemon=True)
    proc.start()
    child.close()
    try:
        if not parent.poll(120):  # imports and ladder construction
            raise RuntimeError(f"{route} N={n}: child did not start")
        parent.recv()
        if parent.poll(limit):
            msg = parent.recv()
            return msg[1], msg[2]
        return None, None
    except EOFError:
        raise RuntimeError(f"{route} N={n}: child died (exit code {proc.exitcode})") from None
    finally:
        if proc.is_alive():
            proc.kill()
        proc.join()
        parent.close()


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--time-limit", type=float, default=60.0, help="seconds per case (default 60)")
    ap.add_argument("--sizes", type=int, nargs="+", default=[2, 4, 8, 16, 32, 64])
    args = ap.parse_args(argv)
    T = args.time_limit

    print(
        f"RLC ladder, exact output voltage V_N(s); time limit {T:g} s per case, "
        f"each case in its own process; times exclude imports, a warm-up on N = 1 and ladder construction."
    )
    head = f"{'N':>3} {'unknowns':>8} " + " ".join(f"{h:>22}" for _, h in COLUMNS) + "  check"
    print(head)
    print("-" * len(head))
    timed_out: dict[str, int] = {}
    all_ok = True
    target = None
    for n in args.sizes:
        cells, answers = [], {}
        for route, _ in COLUMNS:
            if route in timed_out:
                cells.append(f"skip (none at N={timed_out[route]})")
                continue
            secs, res = run_case(route, n, T)
            if secs is None:
                timed_out[route] = n
                cells.append(f"no answer in {T:g} s")
            else:
                answers[route] = res
                cells.append(f"{secs:.3f} s")
                if route == "handcheck" and n == 64:
                    target = secs
        results = list(answers.values())
        if len(results) < 2:
            check = "only one route answered" if results else "no route answered"
        elif all(r == results[0] for r in results):
            check = f"{len(results)} routes agree exactly (deg den {len(results[0][1]) - 1})"
        else:
            check = "DISAGREE: " + ", ".join(answers)
            all_ok = False
        print(f"{n:>3} {3 * n + 2:>8} " + " ".join(f"{c:>22}" for c in cells) + "  " + check, flush=True)
    if target is not None:
        verdict = "met" if target < 2.0 else "NOT met"
        print(f"\ntarget: N = 64 in under 2 s -> solve_rational took {target:.3f} s ({verdict})")
    return 0 if all_ok else 1


if __name__ == "__main__":
    sys.exit(main())
