"""The numerical evidence as terminal text, wrapped to the width of the step notes.

The run's rules (:attr:`handcheck.verify.evidence.Evidence.rules`, one sentence a
line), its settling, the fitted phasors against the exact ones, Kirchhoff's current
law, the closed form against the samples, and every note and problem: each a
paragraph, wrapped like the notes under a step (continuation lines indented two more).
"""

from __future__ import annotations

import math
import textwrap
from typing import Any

__all__ = ["evidence_lines"]


def _angle(z: complex) -> str:
    """The angle of ``z`` in degrees to four decimals ("0.0000", never "-0.0000")."""
    text = f"{math.degrees(math.atan2(z.imag, z.real)):.4f}"
    return "0.0000" if float(text) == 0 else text


def _paragraphs(evidence: Any) -> list[tuple[int, str]]:
    """The evidence's paragraphs, each with its indent."""
    found = [(2, line) for line in evidence.rules.splitlines() if line.strip()]
    found.append((2, evidence.settling))
    if evidence.phasor_agreement is not None:
        found.append(
            (2, f"fitted phasors against exact ones: largest difference {evidence.phasor_agreement:.2g} of the drive")
        )
        # in the worksheet's own convention, as its claims are written
        shown = 1 / math.sqrt(2) if evidence.convention == "rms" else 1.0
        for name, fitted, want in evidence.phasors:
            found.append(
                (
                    4,
                    f"{name:<14} fitted {abs(fitted) * shown:.6g} ∠ {_angle(fitted)} deg   "
                    f"exact {abs(want) * shown:.6g} ∠ {_angle(want)} deg ({evidence.convention})",
                )
            )
    found.append((2, f"Kirchhoff's current law: largest residual {evidence.kcl_relative:.2g} of the largest current"))
    if evidence.comparison_rule:
        found.append((2, evidence.comparison_rule))
    for name, difference in evidence.waveforms:
        found.append((2, f"closed form against numerical, {name}: largest difference {difference:.2g} of its peak"))
    found.extend((2, f"note: {n}") for n in evidence.notes)
    found.extend((2, f"PROBLEM: {p}") for p in evidence.problems)
    return found


def evidence_lines(evidence: Any, width: int = 100) -> list[str]:
    """The evidence as lines of text for a terminal, each paragraph wrapped to ``width``.

    Parameters
    ----------
    evidence
        A :class:`handcheck.verify.evidence.Evidence`.
    width
        The terminal's width in columns (:func:`handcheck.record.text.terminal_width`).

    Returns
    -------
    list of str
    """
    lines = ["numerical evidence (independent time-domain solution):"]
    for indent, text in _paragraphs(evidence):
        # "t = 0" stays on one line: the spaces around "=" are held while wrapping
        held = text.replace(" = ", "\0=\0")
        wrapped = textwrap.wrap(
            held, width=width, initial_indent=" " * indent, subsequent_indent=" " * (indent + 2), break_on_hyphens=False
        )
        lines.extend(line.replace("\0", " ") for line in wrapped)
    return lines
