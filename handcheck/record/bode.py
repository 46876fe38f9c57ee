"""Bode plots of the network functions the steps name, with the claims marked.

For each :class:`~handcheck.solve.curves.Curve`: abs(H(jw)) in dB (an impedance or
admittance: abs(Z(jw)) in ohm or abs(Y(jw)) in S on a logarithmic axis, since it is no
gain) and its phase in degrees against frequency in Hz on a logarithmic axis, H evaluated with numpy from its
exact coefficients (H(s) = N(s)/D(s), s = j*2*pi*f; the usual Bode diagram, e.g.
Franklin, Powell & Emami-Naeini, *Feedback Control of Dynamic Systems*, 6th ed.,
section 6.1, from memory). The frequency axis spans every pole and zero and every
claimed frequency, a decade beyond each side. Marked on it: a claimed network function
(dashed), a claimed phasor, magnitude or phase (a point at its frequency), claimed
cutoff, peak and band-edge frequencies (vertical lines), claimed poles and zeros (at
their size, abs(p)/(2*pi) Hz) and claimed DC and high-frequency gains (horizontal
lines). Claims that cannot be read are left out; the step's verdict says why.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import sympy

from handcheck.errors import HandcheckError
from handcheck.record.document import write_figure
from handcheck.record.visible import visible
from handcheck.solve.curves import Curve
from handcheck.verify.claims import LAPLACE, read_claim, to_complex
from handcheck.verify.findings import Report, StepFinding

__all__ = ["Mark", "bode_figure", "bode_path", "frequency_grid", "marks", "plot_bode", "response_at"]

#: Points of the frequency grid.
POINTS = 800
#: The figure's width in inches: fits the text width of an A4 or Letter page.
WIDTH_IN = 7.0
_EXACT = "#1b4f72"
_CLAIMED = "#c2410c"
_FREQUENCY = "#6b21a8"


@dataclass(frozen=True)
class Mark:
    """One claim drawn on a Bode plot.

    ``kind`` is ``"function"`` (``num``/``den``: the claimed H's coefficients),
    ``"point"`` (``hz``, ``value``: a claimed phasor H(j*2*pi*hz)), ``"magnitude"``
    or ``"phase"`` (``value`` real: a ratio, or an angle in radians), ``"frequency"``
    (``hz``: a claimed cutoff, peak or band edge; ``"exact-frequency"`` the exact one
    beside it), ``"pole"`` or ``"zero"`` (``hz``:
    abs(p)/(2*pi)), or ``"gain"`` (``value``: a claimed DC or high-frequency gain).
    """

    step: str
    kind: str
    label: str
    hz: float | None = None
    value: complex | None = None
    num: tuple[float, ...] = ()
    den: tuple[float, ...] = ()


def bode_path(out: str | Path) -> Path:
    """Where the Bode plot goes beside the evidence plot OUT: ``name-bode.png``."""
    path = Path(out)
    return path.with_name(f"{path.stem}-bode{path.suffix}")


def _floats(coefficients: tuple[sympy.Expr, ...]) -> tuple[float, ...]:
    return tuple(to_complex(c).real for c in coefficients)


def response_at(num: tuple[float, ...], den: tuple[float, ...], omega: Any) -> Any:
    """H(j*omega) = N(j*omega)/D(j*omega) for coefficients highest power first (numpy).

    Each polynomial is evaluated in the scaled variable s/w0 (w0 the geometric middle
    of ``omega``), so that no power of s overflows or swamps the others.
    """
    import numpy as np

    omega = np.asarray(omega, dtype=float)
    positive = omega[omega > 0]
    w0 = float(np.sqrt(positive.min() * positive.max())) if positive.size else 1.0

    def scaled(coefficients: tuple[float, ...]) -> tuple[Any, float]:
        c = np.asarray(coefficients, dtype=float)
        powers = np.arange(len(c) - 1, -1, -1, dtype=float)
        c = c * w0**powers
        size = float(np.max(np.abs(c))) or 1.0
        return c / size, size

    n, n_size = scaled(num)
    d, d_size = scaled(den)
    x = 1j * omega / w0
    return np.polyval(n, x) / np.polyval(d, x) * (n_size / d_size)


def _sizes(coefficients: tuple[float, ...]) -> list[float]:
    import numpy as np

    trimmed = np.trim_zeros(np.asarray(coefficients, dtype=float), "f")
    if trimmed.size < 2:
        return []
    return [abs(r) for r in np.roots(trimmed) if abs(r) > 0]


def frequency_grid(num: tuple[float, ...], den: tuple[float, ...], also_hz: list[float]) -> Any:
    """Frequencies in Hz from a decade below the smallest pole, zero or claimed frequency to
    a decade above the largest (the roots only place the grid)."""
    import numpy as np

    sizes = [r / (2 * math.pi) for r in _sizes(num) + _sizes(den)] + [f for f in also_hz if f > 0]
    low, high = (min(sizes) / 10, max(sizes) * 10) if sizes else (0.1, 10.0)
    return np.logspace(math.log10(low), math.log10(high), POINTS)


def _claim_of(step: StepFinding) -> Any:
    try:
        return read_claim(step.claimed)
    except HandcheckError:
        return None


def _hz_of(claim: Any, value: sympy.Expr) -> float:
    """A claimed frequency in Hz: a value written in rad/s is divided by 2*pi."""
    number = abs(to_complex(value))
    return number / (2 * math.pi) if "rad" in claim.unit_text else number


def marks(report: Report, curve: Curve) -> list[Mark]:
    """The claims of the steps that read ``curve``, as marks on its Bode plot."""
    by_name = {step.name: step for step in report.steps}
    out: list[Mark] = []
    for reading in curve.readings:
        step = by_name.get(reading.step)
        claim = _claim_of(step) if step is not None else None
        if claim is None:
            continue
        name, kind = reading.step, reading.kind
        hz = float(reading.omega) / (2 * math.pi) if reading.omega is not None else None
        try:
            out.extend(_marks_of(name, kind, claim, hz, step.exact if step is not None else None))
        except (HandcheckError, TypeError, ValueError, sympy.PolynomialError):
            continue
    return out


def _marks_of(name: str, kind: str, claim: Any, hz: float | None, exact: Any = None) -> list[Mark]:
    if kind == "value" and claim.form == "laplace":
        num, den = sympy.fraction(sympy.cancel(sympy.together(claim.value.expr)))
        num_c = _floats(tuple(sympy.Poly(num, LAPLACE).all_coeffs()))
        den_c = _floats(tuple(sympy.Poly(den, LAPLACE).all_coeffs()))
        return [Mark(name, "function", f"{name} claimed", num=num_c, den=den_c)]
    if kind in ("value", "magnitude", "phase") and claim.form in ("real", "rect", "polar"):
        if not hz:
            return []
        value = to_complex(claim.value.expr)
        return [Mark(name, "point" if kind == "value" else kind, f"{name} claimed", hz=hz, value=value)]
    if kind in ("poles", "zeros"):
        items = claim.items or (claim,)
        what = "pole" if kind == "poles" else "zero"
        return [
            Mark(name, what, f"{name}: claimed {kind}", hz=_hz_of(claim, item.value.expr))
            for item in items
            if abs(to_complex(item.value.expr)) > 0
        ]
    if kind in ("cutoff_frequency", "peak_frequency", "band_edges", "resonant_frequency"):
        items = claim.items or (claim,)
        found = [Mark(name, "frequency", f"{name} claimed", hz=_hz_of(claim, item.value.expr)) for item in items]
        if isinstance(exact, sympy.Expr) and exact.is_number:
            found.append(Mark(name, "exact-frequency", f"{name} exact", hz=abs(to_complex(exact))))
        return found
    if kind in ("dc_gain", "hf_gain") and claim.form == "real":
        value = to_complex(claim.value.expr)
        return [Mark(name, "gain", f"{name} claimed", value=value)] if abs(value) > 0 else []
    return []


def _hz_text(hz: float) -> str:
    """A frequency with an SI prefix, four digits: 16.07 kHz."""
    for factor, prefix in ((1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m")):
        if abs(hz) >= factor:
            return f"{hz / factor:.4g} {prefix}Hz"
    return f"{hz:.4g} Hz"


def _db(values: Any) -> Any:
    import numpy as np

    with np.errstate(divide="ignore"):
        return 20 * np.log10(np.maximum(np.abs(values), 1e-300))


def _size(values: Any) -> Any:
    """abs() of an impedance or admittance, in its unit (drawn on a logarithmic axis)."""
    import numpy as np

    return np.maximum(np.abs(values), 1e-300)


#: What the magnitude axis shows, by the curve's unit: a ratio in dB, an impedance or
#: admittance as its size in ohm or S.
_MAGNITUDE = {"": "magnitude [dB]", "ohm": "abs(Z) [ohm]", "S": "abs(Y) [S]"}
#: How the title names a curve of each unit.
_NAMES = {"": "H", "ohm": "Z", "S": "Y"}


def _near_branch(angle_deg: float, reference_deg: float) -> float:
    """``angle_deg`` moved by whole turns to lie nearest the drawn (unwrapped) phase."""
    return angle_deg + 360.0 * round((reference_deg - angle_deg) / 360.0)


def _point(axis: Any, mark: Mark, y: float) -> None:
    """A claimed value as an open circle, named by its step."""
    axis.plot([mark.hz], [y], "o", color=_CLAIMED, ms=6, mfc="none", mew=1.6, label="claimed value (step named)")
    axis.annotate(mark.step, (mark.hz, y), textcoords="offset points", xytext=(6, 4), fontsize=7, color=_CLAIMED)


def _draw(axes: tuple[Any, Any], curve: Curve, found: list[Mark]) -> None:
    import numpy as np

    magnitude, phase = axes
    level = _size if curve.unit else _db
    num, den = _floats(curve.num), _floats(curve.den)
    grid = frequency_grid(num, den, [m.hz for m in found if m.hz])
    h = response_at(num, den, 2 * np.pi * grid)
    drawn_phase = np.degrees(np.unwrap(np.angle(h)))
    magnitude.semilogx(grid, level(h), color=_EXACT, lw=1.8, label="exact")
    phase.semilogx(grid, drawn_phase, color=_EXACT, lw=1.8, label="exact")

    def phase_at(hz: float) -> float:
        return float(np.interp(math.log10(hz), np.log10(grid), drawn_phase))

    for index, mark in enumerate(found):
        if mark.kind == "function":
            claimed = response_at(mark.num, mark.den, 2 * np.pi * grid)
            shift = 360.0 * round((drawn_phase[0] - math.degrees(np.angle(claimed[0]))) / 360.0)
            magnitude.semilogx(grid, level(claimed), "--", color=_CLAIMED, lw=1.3, label=mark.label)
            phase.semilogx(
                grid, np.degrees(np.unwrap(np.angle(claimed))) + shift, "--", color=_CLAIMED, lw=1.3, label=mark.label
            )
        elif mark.kind in ("point", "magnitude", "phase") and mark.hz and mark.value is not None:
            if mark.kind in ("point", "magnitude"):
                _point(magnitude, mark, float(level(np.array([mark.value]))[0]))
            if mark.kind in ("point", "phase"):
                angle = math.degrees(np.angle(mark.value)) if mark.kind == "point" else math.degrees(mark.value.real)
                _point(phase, mark, _near_branch(angle, phase_at(mark.hz)))
        elif mark.kind in ("frequency", "exact-frequency") and mark.hz:
            claimed_line = mark.kind == "frequency"
            label: str | None = f"{mark.label}: {_hz_text(mark.hz)}"
            for axis in (magnitude, phase):
                axis.axvline(
                    mark.hz,
                    color=_FREQUENCY if claimed_line else _EXACT,
                    ls="-." if claimed_line else ":",
                    lw=1.1,
                    label=label,
                )
                label = None
        elif mark.kind in ("pole", "zero") and mark.hz:
            at = response_at(num, den, np.array([2 * np.pi * mark.hz]))
            first = not any(m.kind == mark.kind and m.step == mark.step for m in found[:index])
            magnitude.plot(
                [mark.hz],
                level(at),
                "x" if mark.kind == "pole" else "s",
                color=_FREQUENCY,
                ms=8,
                mfc="none",
                mew=1.6,
                label=mark.label if first else None,
            )
        elif mark.kind == "gain" and mark.value is not None:
            magnitude.axhline(float(level(np.array([mark.value]))[0]), color=_CLAIMED, ls=":", lw=1.2, label=mark.label)


def _log_size_axis(axis: Any) -> None:
    """A logarithmic axis for a size in ohm or S, its ticks as plain numbers (30, 0.002)."""
    from matplotlib.ticker import LogFormatter

    axis.set_yscale("log")
    axis.yaxis.set_major_formatter(LogFormatter())
    axis.yaxis.set_minor_formatter(LogFormatter(labelOnlyBase=False, minor_thresholds=(1.5, 0.6)))


def bode_figure(report: Report, curves: tuple[Curve, ...]) -> Any:
    """The Bode figure of ``curves``, one below the other (each: magnitude above, phase
    below), :data:`WIDTH_IN` wide whatever their number."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    figure, axes = plt.subplots(
        2 * len(curves), 1, figsize=(WIDTH_IN, 0.4 + 5.2 * len(curves)), squeeze=False, layout="constrained"
    )
    for index, curve in enumerate(curves):
        magnitude, phase = axes[2 * index, 0], axes[2 * index + 1, 0]
        phase.sharex(magnitude)
        magnitude.tick_params(labelbottom=False)
        _draw((magnitude, phase), curve, marks(report, curve))
        name = _NAMES.get(curve.unit, "H")
        title = curve.text if curve.text.startswith(("impedance(", "admittance(")) else f"{name} = {curve.text}"
        magnitude.set_title(visible(f"{title} [{curve.unit}]" if curve.unit else title), fontsize=9)
        magnitude.set_ylabel(_MAGNITUDE.get(curve.unit, f"abs [{curve.unit}]"))
        if curve.unit:
            _log_size_axis(magnitude)
        phase.set_ylabel("phase [deg]")
        phase.set_xlabel("frequency [Hz]")
        for axis in (magnitude, phase):
            # room above and below the curve for the labels of claims that sit on its edge
            axis.margins(y=0.12)
            axis.grid(True, which="both", alpha=0.25)
            handles, labels = axis.get_legend_handles_labels()
            unique = dict(zip(labels, handles, strict=True))
            axis.legend(unique.values(), unique.keys(), fontsize=7, loc="best")
    figure.suptitle(visible(" ".join(report.title.split())), fontsize=10)
    return figure


def plot_bode(report: Report, curves: tuple[Curve, ...], path: str | Path) -> Path | None:
    """Write the Bode plot of ``curves`` to ``path`` (.svg or .png); None when there is none."""
    if not curves:
        return None
    return write_figure(bode_figure(report, curves), path)
