"""Benchmark: a chain of polar claims written from unrounded values, with a slip, checked from the command line.

Run from the repository root::

    python benchmarks/bench_carried.py [--baseline b79d1c7] [--limit 90] [--steps 8 25 40] [--wrong-at 5]

The worksheet is the chain of tests/test_carried_rounding.py: ``Zk = R + (Z(k-1) || (j*Xc))``
at 1 kHz, polar claims of the author's unrounded values, step K 3 % high, so that every
later step is carried from it (invented part values). Each case runs ``handcheck check``
in a fresh Python process and prints its CPU time beside the same check by the code of
the baseline revision, in the same run (the helpers of benchmarks/bench_chain.py).
"""

from __future__ import annotations

import argparse
import importlib.util
import sys
import tempfile
from pathlib import Path
from types import ModuleType

ROOT = Path(__file__).resolve().parent.parent


def _module(path: Path) -> ModuleType:
    spec = importlib.util.spec_from_file_location(path.stem, path)
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def main() -> None:
    """Print the table."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--baseline", default="b79d1c7", help="revision whose code is the baseline")
    parser.add_argument("--limit", type=float, default=90.0, help="time limit given to both, seconds")
    parser.add_argument("--steps", type=int, nargs="+", default=[8, 25, 40])
    parser.add_argument("--wrong-at", type=int, default=5, help="the step claimed 3 %% high")
    args = parser.parse_args()
    bench = _module(ROOT / "benchmarks" / "bench_chain.py")
    chains = _module(ROOT / "tests" / "test_carried_rounding.py")
    with tempfile.TemporaryDirectory() as tmp:
        base = Path(tmp) / "baseline"
        base.mkdir()
        bench._baseline_tree(args.baseline, base)
        print(f"slip at step {args.wrong_at}")
        print(f"{'steps':>5}  {'this tree':>10}  baseline {args.baseline} (--time-limit {args.limit:g})")
        for steps in args.steps:
            sheet = Path(tmp) / f"carried{steps}.toml"
            sheet.write_text(chains.chain("polar", {args.wrong_at: "1.03"}, steps)[0], encoding="utf-8")
            command = [sys.executable, "-m", "handcheck.cli", "check", str(sheet), "--time-limit", str(args.limit)]
            now, status = bench.cpu_of(command, ROOT, args.limit + 30)
            old, old_status = bench.cpu_of(command, base, args.limit + 30)
            print(
                f"{steps:>5}  {bench._shown(now, status, args.limit):>10}  {bench._shown(old, old_status, args.limit)}"
            )


if __name__ == "__main__":
    main()
