"""Benchmark: cold command-line checks against the cost of importing sympy.

Run from the repository root::

    python benchmarks/bench_check.py [--repeat 3] [--quick] [--only evidence]

Each case runs ``handcheck check`` in a fresh Python process, as a user's shell or
CI does, and its CPU time (user + system, read from ``resource.getrusage`` of the
child) is printed beside the CPU time of ``python -c "import sympy"`` measured in
the same run, with their ratio. Medians over ``--repeat`` runs.

Cases (every circuit and value invented for the benchmark):

* the bundled worksheets;
* RLC ladders of 8, 32, 64 and 128 sections driven at 50 Hz, one step claiming the
  output voltage right (the claim is the value handcheck prints, read back);
* 32 and 64 sections with that claim 30 % too large (the mistake catalogue runs);
* ``--evidence`` of a 1:100 current transformer with 5 H magnetising inductance on
  its secondary (rms, 50 Hz), beside the plain check of the same worksheet.

Targets (issue "Speed"): right claims at most 4x the sympy import; one wrong claim
at 64 sections at most 6x; ``--evidence`` at most 2x the plain check.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def ladder(sections: int, claim: str, tolerance: str = "digits") -> str:
    """An RLC ladder worksheet: series R-L, shunt C, a 1 V rms source at 50 Hz."""
    lines = [
        "[worksheet]",
        "format = 1",
        f'title = "Benchmark ladder, {sections} sections (invented)"',
        'phasors = "rms"',
        f'tolerance = "{tolerance}"',
        "[parts]",
        'drive = { voltage = "1 V rms", frequency = "50 Hz", nodes = ["n0", "gnd"] }',
    ]
    for k in range(sections):
        lines.append(f'R{k} = {{ resistor = "{10 + k % 7} ohm", nodes = ["n{k}", "m{k}"] }}')
        lines.append(f'L{k} = {{ inductor = "{1 + k % 5} mH", nodes = ["m{k}", "n{k + 1}"] }}')
        lines.append(f'C{k} = {{ capacitor = "{2 + k % 3} uF", nodes = ["n{k + 1}", "gnd"] }}')
    lines += ["[[step]]", 'name = "Vout"', f'quantity = "voltage(n{sections})"', f'claim = "{claim}"']
    return "\n".join(lines) + "\n"


CURRENT_TRANSFORMER = """
[worksheet]
format = 1
title = "Benchmark: 1:100 current transformer into a 2.5 ohm burden (invented)"
phasors = "rms"
[parts]
line = { current = "100 A rms", frequency = "50 Hz", nodes = ["gnd", "p"] }
ct = { transformer = "1:100", nodes = ["p", "gnd", "s", "gnd"] }
Lm = { inductor = "5 H", nodes = ["s", "gnd"] }
Rb = { resistor = "2.5 ohm", nodes = ["s", "gnd"] }
[[step]]
name = "Ib"
quantity = "current(Rb)"
claim = "1 A"
"""


def cpu_of(args: list[str]) -> tuple[float, subprocess.CompletedProcess[str]]:
    """CPU seconds (user + system) of one child process, and its result."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    done = subprocess.run(args, capture_output=True, text=True, check=False, cwd=ROOT)
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime), done


def median_cpu(args: list[str], repeat: int) -> float:
    """The median CPU time of ``repeat`` runs of ``args``."""
    return statistics.median(cpu_of(args)[0] for _ in range(repeat))


def right_claim(path: Path) -> str:
    """The value handcheck gives for the worksheet's one step, to use as a right claim."""
    _, done = cpu_of([sys.executable, "-m", "handcheck.cli", "check", str(path), "--json", "--time-limit", "900"])
    if not done.stdout.strip():
        raise SystemExit(f"bench_check: {path.name} gave no report: {done.stderr.strip()}")
    return json.loads(done.stdout)["steps"][0]["expected"]


def main() -> None:
    """Run the cases and print the table."""
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=3, help="runs per case (median)")
    parser.add_argument("--quick", action="store_true", help="leave out the 128-section and evidence cases")
    parser.add_argument(
        "--only",
        choices=("evidence",),
        help="run one case only (still beside the sympy import); evidence: the current transformer, plain and --evidence",
    )
    args = parser.parse_args()
    check = [sys.executable, "-m", "handcheck.cli", "check", "--time-limit", "900"]
    baseline = median_cpu([sys.executable, "-c", "import sympy"], args.repeat)
    print(f'python -c "import sympy": {baseline:.2f} s CPU (median of {args.repeat})\n')
    print(f"{'case':<52} {'CPU s':>8} {'ratio':>7}  target")
    rows: list[tuple[str, float, str]] = []
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        for sheet in [] if args.only else sorted((ROOT / "worksheets").glob("*.toml")):
            rows.append((f"bundled {sheet.name}", median_cpu([*check, str(sheet)], args.repeat), "4x"))
        sizes = () if args.only else (8, 32, 64) if args.quick else (8, 32, 64, 128)
        for n in sizes:
            trial = folder / f"trial{n}.toml"
            trial.write_text(ladder(n, "0 V"), encoding="utf-8")  # a claim of exactly 0 names no mistake: no catalogue
            claim = right_claim(trial)  # the exact value, printed to the digits shown
            path = folder / f"ladder{n}.toml"
            path.write_text(ladder(n, claim), encoding="utf-8")
            rows.append((f"ladder {n} sections, right claim", median_cpu([*check, str(path)], args.repeat), "4x"))
            if n in (32, 64):
                value, _, rest = claim.partition(" ")
                wrong = folder / f"wrong{n}.toml"
                wrong.write_text(ladder(n, f"{float(value) * 1.3:.4g} {rest}"), encoding="utf-8")
                target = "6x" if n == 64 else ""
                rows.append(
                    (f"ladder {n} sections, one wrong claim", median_cpu([*check, str(wrong)], args.repeat), target)
                )
        for name, cpu, target in rows:
            print(f"{name:<52} {cpu:>8.2f} {cpu / baseline:>6.1f}x  {target}")
        if not args.quick or args.only == "evidence":
            ct = folder / "ct.toml"
            ct.write_text(CURRENT_TRANSFORMER, encoding="utf-8")
            plain = median_cpu([*check, str(ct)], args.repeat)
            evidence = median_cpu([*check, str(ct), "--evidence"], args.repeat)
            print(f"{'current transformer, plain check':<52} {plain:>8.2f} {plain / baseline:>6.1f}x")
            print(
                f"{'current transformer, --evidence':<52} {evidence:>8.2f} {evidence / baseline:>6.1f}x  "
                f"{evidence / plain:.1f}x the plain check (target 2x)"
            )
    print(f"\nmachine: {os.cpu_count()} cores; CPU seconds, so a busy machine changes the ratios little")


if __name__ == "__main__":
    main()
