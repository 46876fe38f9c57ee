"""A step after a slip, written from the author's unrounded numbers, is ``carried`` from the slip.

The chain is the input impedance of an RC ladder built one section at a time,
``Zk = R + (Z(k-1) || jXc)`` at 1 kHz (the recurrence of a ladder's input impedance,
section by section: Hayt, Kemmerly and Durbin, *Engineering Circuit Analysis*, 8th ed.,
ch. 10, series and parallel impedances -- from memory). The author keeps every value
unrounded on the calculator and writes each claim rounded (polar: magnitude to five
significant digits, angle to 0.0001 deg; rectangular: four significant digits per
part), and one step in the middle is 3 % high. The claims come from an independent
recurrence in mpmath at 40 digits (mpmath documentation, mpc arithmetic), not from
handcheck.

A later claim then misses the formula evaluated on the author's *rounded* earlier
numbers by more than its own last digit (the guard in each test makes sure the chain
has such steps), yet it is exactly what the author's formula gives from numbers
that round to what the author wrote: reading a written figure as every value within
half a unit of its last digit is the usual reading of a rounded figure (common
practice), and carrying those intervals through the formula is what
handcheck.verify.rounding does with ball arithmetic. So each later step is ``carried``
from the slip, never ``arithmetic``, and the slip is the first divergence (issue 10,
deliver 1 and 2).
"""

from __future__ import annotations

import mpmath
import pytest

from handcheck.pipeline import run_text

#: Part values of the chain (invented).
R, C, FREQUENCY = "2.2", "4.7e-6", 1000
STEPS = 8


def _polar(z: mpmath.mpc) -> tuple[str, mpmath.mpc]:
    """The claim text of ``z`` in polar form, and the value it writes."""
    size_text = mpmath.nstr(abs(z), 5, strip_zeros=False)
    angle_text = f"{float(mpmath.degrees(mpmath.arg(z))):.4f}"
    size, angle = mpmath.mpf(size_text), mpmath.radians(mpmath.mpf(angle_text))
    return f"{size_text} ohm /_ {angle_text} deg", mpmath.mpc(size * mpmath.cos(angle), size * mpmath.sin(angle))


def _rectangular(z: mpmath.mpc) -> tuple[str, mpmath.mpc]:
    re, im = mpmath.nstr(z.real, 4, strip_zeros=False), mpmath.nstr(abs(z.imag), 4, strip_zeros=False)
    sign = "-" if z.imag < 0 else "+"
    return f"{re} {sign} {im}j ohm", mpmath.mpc(mpmath.mpf(re), (-1 if z.imag < 0 else 1) * mpmath.mpf(im))


def _misses(claim: mpmath.mpc, formula: mpmath.mpc, form: str) -> bool:
    """True when the claim misses the formula on the rounded numbers by more than its digits."""
    if form == "polar":
        size_step = mpmath.mpf(10) ** (mpmath.floor(mpmath.log10(abs(claim))) - 4) / 2
        angle = abs(mpmath.degrees(mpmath.arg(claim)) - mpmath.degrees(mpmath.arg(formula)))
        return bool(abs(abs(claim) - abs(formula)) > size_step or angle > mpmath.mpf("0.00005"))

    def part_misses(a: mpmath.mpf, b: mpmath.mpf) -> bool:
        return bool(abs(a - b) > mpmath.mpf(10) ** (mpmath.floor(mpmath.log10(abs(a))) - 3) / 2)

    return part_misses(claim.real, formula.real) or part_misses(claim.imag, formula.imag)


def chain(form: str, slips: dict[int, str], steps: int = STEPS) -> tuple[str, list[int]]:
    """The worksheet of the chain with the steps in ``slips`` multiplied by their factor,
    and the later steps whose claim misses the formula on the rounded numbers."""
    write = _polar if form == "polar" else _rectangular
    with mpmath.workdps(40):
        r = mpmath.mpf(R)
        xc = -1 / (2 * mpmath.pi * FREQUENCY * mpmath.mpf(C))
        xc_text = mpmath.nstr(xc, 5, strip_zeros=False)
        xc_written = mpmath.mpf(xc_text)
        lines = [
            "[worksheet]",
            "format = 1",
            'title = "RC ladder input impedance, unrounded values carried on the calculator (invented)"',
            'tolerance = "digits"',
            "[parts]",
            'V1 = { voltage = "1 V", frequency = "1 kHz", nodes = ["a", "gnd"] }',
            f'R1 = {{ resistor = "{R} ohm", nodes = ["a", "b"] }}',
            'C1 = { capacitor = "4.7 uF", nodes = ["b", "gnd"] }',
            "[[step]]",
            'name = "Xc"',
            'formula = "-1/(2*pi*1 kHz*4.7 uF)"',
            f'claim = "{xc_text} ohm"',
            "[[step]]",
            'name = "Z0"',
            f'formula = "{R} ohm"',
            f'claim = "{R} ohm"',
        ]
        z, written, missing = mpmath.mpc(r), mpmath.mpc(r), []
        first = min(slips, default=steps + 1)
        for k in range(1, steps + 1):
            z = r + z * (1j * xc) / (z + 1j * xc)
            z *= mpmath.mpf(slips.get(k, "1"))
            text, value = write(z)
            on_written = r + written * (1j * xc_written) / (written + 1j * xc_written)
            if k > first and k not in slips and _misses(value, on_written, form):
                missing.append(k)
            written = value
            lines += ["[[step]]", f'name = "Z{k}"', f'formula = "{R} ohm + (Z{k - 1} || (j*Xc))"', f'claim = "{text}"']
    return "\n".join(lines) + "\n", missing


def _verdicts(text: str) -> tuple[dict[str, tuple[str, str | None]], str | None]:
    report = run_text(text, time_limit=60).report
    assert report is not None
    return {s.name: (s.verdict, s.caused_by) for s in report.steps}, report.first_divergence


@pytest.mark.parametrize("form", ["polar", "rectangular"])
def test_every_step_after_a_slip_is_carried_from_it(form):
    text, missing = chain(form, {4: "1.03"})
    assert missing, "the chain must have later claims that miss the formula on the rounded numbers"
    verdicts, first = _verdicts(text)
    assert first == "Z4"
    assert verdicts["Z4"] == ("arithmetic", None)
    assert all(verdicts[f"Z{k}"] == ("agrees", None) for k in range(1, 4))
    assert [verdicts[f"Z{k}"] for k in range(5, STEPS + 1)] == [("carried", "Z4")] * (STEPS - 4)


@pytest.mark.parametrize("form", ["polar", "rectangular"])
def test_without_a_slip_every_step_agrees(form):
    text, _ = chain(form, {})
    verdicts, first = _verdicts(text)
    assert first is None
    assert set(verdicts.values()) == {("agrees", None)}


def test_a_second_slip_after_the_first_is_still_a_slip():
    # 1 % at step 6 is far beyond what the written digits carry (about 1e-4 relative)
    text, missing = chain("polar", {4: "1.03", 6: "1.01"})
    assert missing
    verdicts, first = _verdicts(text)
    assert first == "Z4"
    assert verdicts["Z5"] == ("carried", "Z4")
    assert verdicts["Z6"] == ("arithmetic", None)
    assert [verdicts[f"Z{k}"] for k in range(7, STEPS + 1)] == [("carried", "Z6")] * (STEPS - 6)


def test_a_carried_step_says_what_the_written_digits_allow():
    text, missing = chain("polar", {4: "1.03"})
    report = run_text(text, time_limit=60).report
    assert report is not None
    step = next(s for s in report.steps if s.name == f"Z{missing[0]}")
    assert step.verdict == "carried"
    assert step.message is not None and f"the numbers written for Z{missing[0] - 1}, Xc" in step.message
