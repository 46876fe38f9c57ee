"""Benchmark: a chain of steps, each naming the one before, checked from the command line.

Run from the repository root::

    python benchmarks/bench_chain.py [--baseline b79d1c7] [--limit 60] [--steps 6 12 20 30]
                                     [--factors "" "sqrt(2)" "cos(0.3)" "exp(-0.5 ms/(2.2 ms))"]

The worksheet is the chain of tests/test_step_chains.py: ``Zk = R1 + (Z(k-1) || (j*Xc))``
at 1 kHz (pi exact), every claim right (invented part values); with a factor, each
step's series term is ``R1*factor`` (a value outside the fractions of polynomials in
pi, held by name and evaluated by ball arithmetic). Each case runs
``handcheck check`` in a fresh Python process and prints its CPU time (user + system
of the child, from ``resource.getrusage``) beside the same check by the code of the
baseline revision (``git archive`` of its ``handcheck`` package, run in the same
way, in the same run), and beside ``python -c "import sympy"``. The baseline is given
``--time-limit LIMIT``; a run that ends with exit 2 is shown as past the limit.
"""

from __future__ import annotations

import argparse
import importlib.util
import resource
import subprocess
import sys
import tarfile
import tempfile
from io import BytesIO
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def _chain_worksheet(steps: int, factor: str) -> str:
    spec = importlib.util.spec_from_file_location("step_chains", ROOT / "tests" / "test_step_chains.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return str(module.chain_worksheet(steps, factor=factor))


def cpu_of(args: list[str], cwd: Path, timeout: float) -> tuple[float, int]:
    """CPU seconds (user + system) of one child process, and its exit status (-1: killed)."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    try:
        status = subprocess.run(args, capture_output=True, text=True, check=False, cwd=cwd, timeout=timeout).returncode
    except subprocess.TimeoutExpired:
        status = -1
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime), status


def _baseline_tree(revision: str, into: Path) -> None:
    archive = subprocess.run(
        ["git", "-C", str(ROOT), "archive", revision, "handcheck"], capture_output=True, check=True
    ).stdout
    with tarfile.open(fileobj=BytesIO(archive)) as tar:
        tar.extractall(into, filter="data")


def _shown(cpu: float, status: int, limit: float) -> str:
    if status in (-1, 2):
        return f"past the limit ({cpu:.1f} s CPU, stopped at {limit:g} s)"
    return f"{cpu:.2f} s" + ("" if status == 0 else f" (exit {status})")


def main() -> None:
    """Print the table."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--baseline", default="b79d1c7", help="revision whose code is the baseline")
    parser.add_argument("--limit", type=float, default=60.0, help="time limit given to the baseline, seconds")
    parser.add_argument("--steps", type=int, nargs="+", default=[6, 12, 20, 30])
    parser.add_argument(
        "--factors", nargs="+", default=["", "sqrt(2)", "cos(0.3)", "exp(-0.5 ms/(2.2 ms))"], help="series factors"
    )
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as tmp:
        base = Path(tmp) / "baseline"
        base.mkdir()
        _baseline_tree(args.baseline, base)
        sympy_cpu, _ = cpu_of([sys.executable, "-c", "import sympy"], ROOT, 60)
        print(f"python -c 'import sympy': {sympy_cpu:.2f} s CPU")
        for index, factor in enumerate(args.factors):
            print(f"\nseries term R1{'*' + factor if factor else ''}")
            print(f"{'steps':>5}  {'this tree':>10}  baseline {args.baseline} (--time-limit {args.limit:g})")
            for steps in args.steps:
                sheet = Path(tmp) / f"chain{index}_{steps}.toml"
                sheet.write_text(_chain_worksheet(steps, factor), encoding="utf-8")
                command = [sys.executable, "-m", "handcheck.cli", "check", str(sheet)]
                now, status = cpu_of([*command, "--time-limit", str(args.limit)], ROOT, args.limit + 30)
                old, old_status = cpu_of([*command, "--time-limit", str(args.limit)], base, args.limit + 30)
                print(f"{steps:>5}  {_shown(now, status, args.limit):>10}  {_shown(old, old_status, args.limit)}")


if __name__ == "__main__":
    main()
