"""Histogram of each audited formula's Monte Carlo error (``--plot``)."""

from __future__ import annotations

import itertools
from pathlib import Path

from handcheck.audit.findings import AuditFinding
from handcheck.record.audit import error_subject
from handcheck.record.document import write_figure

__all__ = ["audit_plot_path", "plot_audit"]


def _axis_label(finding: AuditFinding) -> str:
    """What the histogram counts, in the terminal's words (the magnitude at a frequency for a function of s)."""
    spread = finding.verdict == "spread"
    if finding.error_frequency is None:
        what = "spread of the quantity" if spread else "relative error (formula - true)/true"
    else:
        subject, _, ratio = error_subject(finding).partition(": ")
        what = f"{'spread' if spread else 'relative error'} of {subject}" + (f", {ratio}" if ratio else "")
    return f"{what}, %"


def audit_plot_path(out: str) -> Path:
    """Where the audit's histogram goes beside the evidence plot OUT: ``name-audit.png``."""
    path = Path(out)
    return path.with_name(f"{path.stem}-audit{path.suffix}")


def plot_audit(findings: tuple[AuditFinding, ...], out: str) -> Path | None:
    """Draw one histogram per formula with a Monte Carlo run; write it atomically.

    Parameters
    ----------
    findings
        The audit's findings.
    out
        The evidence plot's path (.svg or .png); the histogram goes beside it.

    Returns
    -------
    pathlib.Path or None
        The file written, or None when no formula has a Monte Carlo run.
    """
    sampled = [f for f in findings if f.monte_carlo is not None and f.monte_carlo.std > 0]
    if not sampled:
        return None
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    figure, axes = plt.subplots(len(sampled), 1, figsize=(8, 2.8 * len(sampled)), squeeze=False)
    for axis, finding in zip(axes[:, 0], sampled, strict=True):
        mc = finding.monte_carlo
        assert mc is not None
        edges = [e * 100 for e in mc.edges]
        widths = [b - a for a, b in itertools.pairwise(edges)]
        axis.bar(edges[:-1], mc.counts, width=widths, align="edge", color="#4a78a8", edgecolor="white", linewidth=0.3)
        for value, style, label in (
            (mc.p01, ":", "1st / 99th percentile"),
            (mc.p99, ":", None),
            (mc.mean, "-", "mean"),
        ):
            axis.axvline(value * 100, color="#b03a2e", linestyle=style, linewidth=1.2, label=label)
        if finding.nominal_error is not None and finding.verdict != "spread":
            axis.axvline(finding.nominal_error * 100, color="#2e7d32", linestyle="-.", linewidth=1.2, label="nominal")
        if finding.worst_case is not None:
            for value, label in ((finding.worst_case.low, "worst case"), (finding.worst_case.high, None)):
                axis.axvline(value * 100, color="black", linestyle="--", linewidth=1.0, label=label)
        axis.set_title(f"{finding.name}: {finding.quantity} ({finding.verdict})", fontsize=10)
        axis.set_xlabel(_axis_label(finding))
        axis.set_ylabel(f"samples of {mc.samples:,}")
        axis.legend(fontsize=8, loc="best", framealpha=0.9)
    figure.tight_layout()
    target = audit_plot_path(out)
    write_figure(figure, target)
    return target
