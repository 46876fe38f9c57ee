"""Benchmark: a folder of 50 worksheets checked with ``--jobs 1`` and ``--jobs 2``.

Run from the repository root::

    python benchmarks/bench_batch.py [--count 50] [--repeat 3]

The worksheets are generated into a temporary folder from the bundled ones
(``worksheets/*.toml``): copy k of a worksheet has every resistor, capacitor and
inductor value scaled by 1 + 0.01 * (k // len(bundled)), so the first copies check
as the bundled worksheet does and later ones differ from their claims (as a part value
change in a repository does; the mistake catalogue then runs). Every value is invented.

Printed, in one run: the wall time of ``handcheck check FOLDER --json`` in a fresh
process with ``--jobs 1`` and with ``--jobs 2`` and their ratio; the wall time per
worksheet of each; and the median wall time of a single cold ``handcheck check FILE
--json`` (one fresh process per worksheet, over ``--repeat`` bundled worksheets), the
cost a loop of single checks pays per worksheet. On a shared machine the numbers move
with the load; no target is asserted.
"""

from __future__ import annotations

import argparse
import json
import re
import statistics
import subprocess
import sys
import tempfile
import time
from fractions import Fraction
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
CHECK = [sys.executable, "-m", "handcheck.cli", "check", "--json", "--time-limit", "900"]
_VALUE = re.compile(r'((?:resistor|capacitor|inductor) = ")([0-9.]+)')


def scaled(text: str, factor: Fraction) -> str:
    """The worksheet with every R, C and L value multiplied by ``factor`` (exactly, then 6 digits)."""

    def scale(match: re.Match[str]) -> str:
        value = Fraction(match.group(2)) * factor
        return f"{match.group(1)}{float(value):.6g}"

    return _VALUE.sub(scale, text)


def generate(folder: Path, count: int) -> list[Path]:
    """``count`` worksheets varied from the bundled ones, written into ``folder``."""
    bundled = sorted((ROOT / "worksheets").glob("*.toml"))
    made = []
    for k in range(count):
        source = bundled[k % len(bundled)]
        factor = 1 + Fraction(k // len(bundled), 100)
        target = folder / f"{k:02d}-{source.name}"
        target.write_text(scaled(source.read_text(encoding="utf-8"), factor), encoding="utf-8")
        made.append(target)
    return made


def wall(args: list[str]) -> tuple[float, subprocess.CompletedProcess[str]]:
    started = time.perf_counter()
    done = subprocess.run(args, capture_output=True, text=True, check=False, cwd=ROOT)
    return time.perf_counter() - started, done


def main() -> None:
    """Generate the folder, time both runs and the cold single checks, print the numbers."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--count", type=int, default=50, help="worksheets to generate (default 50)")
    parser.add_argument("--repeat", type=int, default=3, help="cold single checks (median)")
    args = parser.parse_args()
    with tempfile.TemporaryDirectory(prefix="handcheck-bench-") as tmp:
        folder = Path(tmp)
        sheets = generate(folder, args.count)
        times = {}
        for jobs in (1, 2):
            seconds, done = wall([*CHECK, str(folder), "--jobs", str(jobs)])
            outcomes = json.loads(done.stdout)
            assert len(outcomes) == len(sheets), done.stderr
            kinds = [("refused" if "error" in o else "ok" if o["ok"] else "differ") for o in outcomes]
            times[jobs] = seconds
            print(
                f"--jobs {jobs}: {seconds:7.1f} s wall for {len(sheets)} worksheets "
                f"({seconds / len(sheets):.2f} s each; {kinds.count('ok')} ok, {kinds.count('differ')} differ, "
                f"{kinds.count('refused')} refused; exit {done.returncode})"
            )
        print(f"--jobs 2 / --jobs 1: {times[2] / times[1]:.2f} (speed-up {times[1] / times[2]:.2f}x)")
        cold = []
        for sheet in sheets[: args.repeat]:
            seconds, _ = wall([*CHECK, str(sheet)])
            cold.append(seconds)
        single = statistics.median(cold)
        print(f"cold single check of one worksheet: {single:.2f} s wall (median of {len(cold)})")
        for jobs in (1, 2):
            each = times[jobs] / len(sheets)
            print(
                f"per worksheet in the batch with --jobs {jobs}: {each:.2f} s = {each / single:.2f} x a cold single check"
            )


if __name__ == "__main__":
    main()
