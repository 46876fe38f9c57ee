"""A source's value as a function of time: the exact form every later stage reads.

A worksheet writes a source as a formula in ``t`` with one unit at the end
(``"12*step(t - 1 ms) V"``), as the first edition's amplitude with ``frequency`` and
``phase``, or as a list of [time, value] pairs. This module turns each into a
:class:`SourceFunction`: a finite sum of exact :class:`SourceTerm` s,

    Re[ X * tau**n * exp((-a + j w) tau) ]   for tau = t - start >= 0, 0 before,

plus :class:`Repeat` s (a window of such terms repeated every period for t >= 0).
That is the class of functions whose Laplace transform is a sum of delayed rational
functions (the time-shift theorem; e.g. Kreyszig, *Advanced Engineering
Mathematics*, 10th ed., sec. 6.3, from memory), so both the closed-form and the
numerical path take every function the language allows.

Reading: the formula is evaluated by the project's own evaluator with ``t`` a
sympy symbol and ``step``, ``edge`` and ``repeat`` as extra functions; sines and
cosines are written as complex exponentials (Euler's formula), the product is
expanded, and each product of a power of t, exponentials and unit steps is shifted
to its own start by the binomial theorem. Conjugate exponentials are paired back
into one real term.
"""

from __future__ import annotations

from dataclasses import dataclass
from itertools import pairwise
from typing import Any

import sympy

from handcheck.errors import HandcheckError, ParseError, UnitError
from handcheck.worksheet.evaluate import Function, Value, evaluate, unit_of, without_time
from handcheck.worksheet.expr import Number, one_line, parse
from handcheck.worksheet.units import DIMENSIONLESS, dim_of
from handcheck.worksheet.unittext import split_unit

__all__ = [
    "TIME",
    "Repeat",
    "SourceFunction",
    "SourceTerm",
    "constant",
    "from_points",
    "read_function",
    "sinusoid",
    "split_unit",
]

#: The time symbol of source functions (seconds).
TIME = sympy.Symbol("t", real=True)

#: Most terms one source function may expand to (far beyond a hand calculation).
MAX_TERMS = 400


class _RepeatCall(sympy.Function):
    """``repeat(p, g)`` held unevaluated until it is read into a :class:`Repeat`."""

    nargs = 2


def _edge(x: sympy.Expr, d: sympy.Expr) -> sympy.Expr:
    """``edge(x, d)``: 0 for x < 0, a straight line to 1 at x = d, then 1."""
    if not (d.is_real and d.is_positive):
        raise ParseError(f"the rise of edge(x, d) must be a positive time, not {d}", "", None)
    return x / d * sympy.Heaviside(x, 1) - (x - d) / d * sympy.Heaviside(x - d, 1)


#: Functions a source function may call besides the formula language's own.
SOURCE_FUNCTIONS: dict[str, Function] = {
    "step": Function(1, lambda x: sympy.Heaviside(x, 1), "ratio"),
    "edge": Function(2, _edge, "same2"),
    "repeat": Function(2, _RepeatCall, "repeat"),
}


def _same(a: sympy.Expr, b: sympy.Expr) -> bool:
    """Exact equality; sympy's own zero test first, simplify only when it cannot decide.

    ``simplify`` costs over a second on its first call (it imports sympy's physics
    units), and most comparisons, such as 0 against 100*pi, are decided without it.
    """
    if a == b:
        return True
    zero = (a - b).is_zero
    if zero is not None:
        return bool(zero)
    return bool(sympy.simplify(a - b) == 0)


@dataclass(frozen=True)
class SourceTerm:
    """``Re[phasor * tau**power * exp((-decay + j*omega)*tau)]``, tau = t - start >= 0; 0 before.

    ``before_zero`` marks a constant or undamped sinusoid written outside every
    ``step``, ``edge`` and ``repeat``: it also ran before t = 0 (which matters when
    the circuit starts in its own steady state). Every number is exact.
    """

    phasor: sympy.Expr
    power: int = 0
    decay: sympy.Expr = sympy.Integer(0)
    omega: sympy.Expr = sympy.Integer(0)
    start: sympy.Expr = sympy.Integer(0)
    before_zero: bool = False

    @property
    def steady(self) -> bool:
        """True for a constant or undamped sinusoid that runs for all t >= 0."""
        return self.power == 0 and self.decay == 0 and self.start == 0

    def at(self, later: sympy.Expr) -> tuple[SourceTerm, ...]:
        """The same function for t >= ``later`` (>= start), as terms starting there."""
        delta = later - self.start
        if delta == 0:
            return (self,)
        scale = sympy.exp((-self.decay + sympy.I * self.omega) * delta)
        out = []
        for k in range(self.power + 1):
            weight = sympy.binomial(self.power, k) * delta ** (self.power - k) * scale
            out.append(SourceTerm(_tidy(self.phasor * weight), k, self.decay, self.omega, later))
        return tuple(out)

    def scaled(self, factor: sympy.Expr) -> SourceTerm:
        return SourceTerm(_tidy(self.phasor * factor), self.power, self.decay, self.omega, self.start, self.before_zero)

    def value(self, t: float) -> float:
        """The term's value at ``t`` seconds, as a float (for plots and bounds)."""
        import cmath

        tau = t - float(self.start)
        if tau < 0:
            return 0.0
        lam = complex(-float(self.decay), float(self.omega))
        return (complex(self.phasor) * tau**self.power * cmath.exp(lam * tau)).real


@dataclass(frozen=True)
class Repeat:
    """``terms`` (a window on 0 <= t < period, ended by their own negatives at the period),
    repeated every ``period`` for t >= 0."""

    period: sympy.Expr
    terms: tuple[SourceTerm, ...]

    def value(self, t: float) -> float:
        import math

        if t < 0:
            return 0.0
        p = float(self.period)
        local = t - p * math.floor(t / p)
        return sum(term.value(local) for term in self.terms if float(term.start) <= local)


@dataclass(frozen=True)
class SourceFunction:
    """A source's value for t >= 0: the sum of ``terms`` and ``repeats`` (in V or A)."""

    terms: tuple[SourceTerm, ...]
    repeats: tuple[Repeat, ...] = ()

    def steady(self, omega: sympy.Expr) -> sympy.Expr:
        """The exact peak phasor of the terms that run for all t >= 0 at ``omega`` (0: DC)."""
        total = sympy.Integer(0)
        for term in self.terms:
            if term.steady and _same(term.omega, omega):
                total += term.phasor
        return _tidy(total)

    @property
    def frequencies(self) -> tuple[sympy.Expr, ...]:
        """The distinct angular frequencies (> 0) of the terms that run for all t >= 0."""
        out: list[sympy.Expr] = []
        for term in self.terms:
            if (
                term.steady
                and term.omega != 0
                and not any(_same(term.omega, w) for w in out)
                and self.steady(term.omega) != 0
            ):
                out.append(term.omega)
        return tuple(out)

    @property
    def omega(self) -> sympy.Expr | None:
        """The single steady frequency, or None (none, or several)."""
        found = self.frequencies
        return found[0] if len(found) == 1 else None

    @property
    def constant(self) -> bool:
        """True for a plain constant (a DC source written without ``t``)."""
        return not self.repeats and all(t.steady and t.omega == 0 and t.before_zero for t in self.terms)

    @property
    def steady_only(self) -> bool:
        """True when every term runs for all time: constants and undamped sinusoids only."""
        return not self.repeats and all(t.steady and t.before_zero for t in self.terms)

    @property
    def last_start(self) -> sympy.Expr:
        """The latest time at which a term starts (0 if none)."""
        return max((t.start for t in self.terms), default=sympy.Integer(0))

    @property
    def decays(self) -> tuple[sympy.Expr, ...]:
        """The distinct positive decay rates (1/s) of the terms, repeats included."""
        out: list[sympy.Expr] = []
        for term in self.terms + tuple(t for r in self.repeats for t in r.terms):
            if term.decay > 0 and term.decay not in out:
                out.append(term.decay)
        return tuple(out)

    def before_zero(self) -> SourceFunction:
        """The function that ran for t < 0 (constants and sinusoids outside step, edge, repeat)."""
        return SourceFunction(tuple(t for t in self.terms if t.before_zero))

    def tail(self) -> tuple[SourceTerm, ...]:
        """The terms (not the repeats) rewritten from the last start on, like terms combined."""
        last = self.last_start
        sums: dict[tuple[int, Any, Any], sympy.Expr] = {}
        for term in self.terms:
            for moved in term.at(last):
                key = (moved.power, moved.decay, moved.omega)
                sums[key] = sums.get(key, sympy.Integer(0)) + moved.phasor
        out = []
        for (power, decay, omega), total in sums.items():
            phasor = _tidy(total)
            if phasor != 0 and abs(complex(sympy.N(phasor, 30))) > 1e-25 * (1 + abs(complex(sympy.N(phasor, 5)))):
                out.append(SourceTerm(phasor, power, decay, omega, last))
        return tuple(out)

    def value(self, t: float) -> float:
        """The value at ``t`` seconds as a float (for plots, bounds and cautions)."""
        return sum(term.value(t) for term in self.terms) + sum(r.value(t) for r in self.repeats)

    def scaled(self, factor: sympy.Expr) -> SourceFunction:
        return SourceFunction(
            tuple(t.scaled(factor) for t in self.terms),
            tuple(Repeat(r.period, tuple(t.scaled(factor) for t in r.terms)) for r in self.repeats),
        )

    def moved(self, old: sympy.Expr, new: sympy.Expr) -> SourceFunction:
        """The steady sinusoids at ``old`` rad/s moved to ``new`` (the rest unchanged)."""
        terms = tuple(
            SourceTerm(t.phasor, t.power, t.decay, new, t.start, t.before_zero)
            if t.steady and t.omega != 0 and _same(t.omega, old)
            else t
            for t in self.terms
        )
        return SourceFunction(terms, self.repeats)

    def phases_scaled(self, scale: sympy.Expr) -> SourceFunction | None:
        """Each steady sinusoid's phase multiplied by ``scale``; None when no phase is not 0."""
        terms, changed = [], False
        for t in self.terms:
            angle = sympy.arg(t.phasor) if t.steady and t.omega != 0 else 0
            if angle != 0:
                changed = True
                phasor = sympy.Abs(t.phasor) * sympy.exp(sympy.I * angle * scale)
                terms.append(SourceTerm(phasor, 0, t.decay, t.omega, t.start, t.before_zero))
            else:
                terms.append(t)
        return SourceFunction(tuple(terms), self.repeats) if changed else None

    def expanded(self, horizon: sympy.Expr) -> tuple[tuple[SourceTerm, ...], sympy.Expr | None]:
        """Every term, each repeat written out for the periods starting up to ``horizon``.

        Returns the terms and the first period start left out (None without repeats):
        the terms are the whole function before that time.
        """
        terms = list(self.terms)
        valid = None
        for rep in self.repeats:
            count = int(sympy.floor(horizon / rep.period)) + 1 if horizon >= 0 else 0
            if count > 2000:
                from handcheck.errors import LimitError

                raise LimitError(
                    f"a repeat of period {sympy.N(rep.period, 6)} s would need {count} periods up to "
                    f"t = {sympy.N(horizon, 6)} s (at most 2000); shorten [transient] span"
                )
            for k in range(count):
                shift = k * rep.period
                terms += [SourceTerm(t.phasor, t.power, t.decay, t.omega, t.start + shift) for t in rep.terms]
            end = count * rep.period
            valid = end if valid is None else min(valid, end)
        return tuple(terms), valid


def _tidy(x: sympy.Expr) -> sympy.Expr:
    if not isinstance(x, sympy.Basic):
        x = sympy.Integer(x) if isinstance(x, int) else sympy.Rational(str(x))
    if x.is_Rational:
        return x
    if x.has(sympy.pi, sympy.E) or x.atoms(sympy.Function):
        return sympy.cancel(x)
    return sympy.expand(x)


# --------------------------------------------------------------------------
# building source functions
# --------------------------------------------------------------------------


def constant(value: sympy.Expr) -> SourceFunction:
    """A constant that runs for all time."""
    return SourceFunction((SourceTerm(value, before_zero=True),) if value != 0 else ())


def sinusoid(peak: sympy.Expr, omega: sympy.Expr, phase: sympy.Expr) -> SourceFunction:
    """The first edition's ``peak*cos(omega*t + phase)``, running for all time."""
    return SourceFunction((SourceTerm(peak * sympy.exp(sympy.I * phase), omega=omega, before_zero=True),))


def from_points(points: tuple[tuple[sympy.Expr, sympy.Expr], ...]) -> SourceFunction:
    """Straight lines through (time, value) points, holding the first value before the first
    point and the last value after the last. Times are exact, increasing, at least 0."""
    first_value = points[0][1]
    terms = [SourceTerm(first_value)] if first_value != 0 else []
    previous = sympy.Integer(0)
    for (t0, v0), (t1, v1) in pairwise(points):
        slope = (v1 - v0) / (t1 - t0)
        if slope != previous:
            terms.append(SourceTerm(slope - previous, 1, start=t0))
        previous = slope
    if previous != 0:
        terms.append(SourceTerm(-previous, 1, start=points[-1][0]))
    return SourceFunction(tuple(terms))


def read_function(text: str, unit: str, what: str) -> SourceFunction:
    """Read a source function such as ``"10*exp(-t/5 ms)*cos(2*pi*1 kHz*t) V"``.

    Parameters
    ----------
    text : str
        The value as written: a formula in ``t`` (seconds) with one unit at the end
        (or a unit on the formula's own numbers).
    unit : str
        ``"V"`` or ``"A"``: the unit the value must be in.
    what : str
        How messages name the value (``"the voltage of Vin"``).

    Returns
    -------
    SourceFunction

    Raises
    ------
    ParseError, UnitError
        For a formula that cannot be read, is in another unit, or is not a sum of
        products of powers of t, exponentials, sinusoids, step, edge and repeat.
    """
    try:
        return _read_function(text, unit, what)
    except HandcheckError as exc:
        raise one_line(exc) from None


def _read_function(text: str, unit: str, what: str) -> SourceFunction:
    body, written_unit = split_unit(text.strip())
    tree = parse(body, {"t"})
    value = evaluate(tree, {"t": _time_value()}, body, functions=SOURCE_FUNCTIONS, seconds=True)
    want = without_time(dim_of(unit))
    factor = sympy.Integer(1)
    if written_unit:
        unit_tree = parse("1 " + written_unit)
        assert isinstance(unit_tree, Number)
        factor, dim = unit_of(unit_tree.unit)
        dim = value.dim * without_time(dim)
    else:
        dim = value.dim
    if dim != want:
        if dim == DIMENSIONLESS:
            raise UnitError(f'{what} "{text}" has no unit; write it once at the end, like "12*step(t - 1 ms) {unit}"')
        raise UnitError(f'{what} "{text}" is not in {unit}; write the function with its unit once at the end')
    terms, repeats = _canonical(value.expr * factor, text, allow_repeat=True)
    return SourceFunction(tuple(terms), tuple(repeats))


def _time_value() -> Any:
    return Value(TIME)


_LANGUAGE = (
    "; a source function is a sum of products of numbers, powers of t, exp(...), sin(...), cos(...) of "
    "straight lines in t, step(...), edge(...) and repeat(...)"
)


def _fail(text: str, why: str) -> ParseError:
    return ParseError(f"{why}{_LANGUAGE}", text, None)


def _canonical(expr: sympy.Expr, text: str, *, allow_repeat: bool) -> tuple[list[SourceTerm], list[Repeat]]:
    """Exact terms and repeats of a sympy expression in :data:`TIME`."""
    t = TIME
    expr = expr.replace(sympy.cos, lambda x: (sympy.exp(sympy.I * x) + sympy.exp(-sympy.I * x)) / 2)
    expr = expr.replace(sympy.sin, lambda x: (sympy.exp(sympy.I * x) - sympy.exp(-sympy.I * x)) / (2 * sympy.I))
    expr = sympy.expand(expr, power_base=False, log=False)
    complex_terms: dict[tuple[int, Any, Any, bool], sympy.Expr] = {}
    repeats: list[Repeat] = []
    pieces = sympy.Add.make_args(expr)
    if len(pieces) > MAX_TERMS:
        raise _fail(text, f"the function expands to more than {MAX_TERMS} terms")
    for piece in pieces:
        coefficient, power, exponent, steps, repeat = _factors(piece, text, allow_repeat)
        if repeat is not None:
            repeats.append(_repeat(repeat, coefficient, text))
            continue
        if exponent.has(t):
            rate = sympy.expand(sympy.diff(exponent, t))
            if rate.has(t):
                raise _fail(text, f'"exp({exponent})" is not the exponential of a straight line in t')
            coefficient = coefficient * sympy.exp(sympy.expand(exponent - rate * t))
        else:
            rate = sympy.Integer(0)
            coefficient = coefficient * sympy.exp(exponent)
        for sign, start in _step_products(steps, text):
            before = start is None
            origin = sympy.Integer(0) if start is None or start <= 0 else start
            # t**n exp(rate t) = (tau + origin)**n exp(rate origin) exp(rate tau)
            shift = sympy.exp(rate * origin)
            for k in range(power + 1):
                weight = sign * coefficient * sympy.binomial(power, k) * origin ** (power - k) * shift
                key = (k, rate, origin, before and k == 0 and sympy.re(rate) == 0)
                complex_terms[key] = complex_terms.get(key, sympy.Integer(0)) + weight
    return _paired(complex_terms, text), repeats


def _factors(piece: sympy.Expr, text: str, allow_repeat: bool) -> tuple[Any, int, Any, list[Any], Any]:
    t = TIME
    coefficient: sympy.Expr = sympy.Integer(1)
    power = 0
    exponent: sympy.Expr = sympy.Integer(0)
    steps: list[sympy.Expr] = []
    repeat = None
    for factor in sympy.Mul.make_args(piece):
        base, times = factor.as_base_exp() if isinstance(factor, sympy.Pow) else (factor, sympy.Integer(1))
        if not factor.has(t) and not isinstance(factor, _RepeatCall):
            coefficient *= factor
        elif base == t and times.is_Integer and times >= 0:
            power += int(times)
        elif isinstance(base, sympy.exp) and not times.has(t):
            exponent += base.args[0] * times
        elif isinstance(factor, sympy.exp):
            exponent += factor.args[0]
        elif isinstance(base, sympy.Heaviside) and times.is_Integer and times > 0:
            steps.append(base.args[0])
        elif isinstance(factor, _RepeatCall):
            if not allow_repeat:
                raise _fail(text, "repeat(...) cannot be nested inside another repeat(...)")
            if repeat is not None:
                raise _fail(text, "two repeat(...) cannot be multiplied")
            repeat = factor
        else:
            raise _fail(text, f'"{factor}" is not in the language of source functions')
    if repeat is not None and (power or exponent.has(t) or steps):
        raise _fail(text, "repeat(...) may only be multiplied by a number and added to other terms")
    if power > 12:
        raise _fail(text, "a power of t above 12 is not accepted")
    return coefficient, power, exponent, steps, repeat


def _step_products(steps: list[sympy.Expr], text: str) -> list[tuple[int, sympy.Expr | None]]:
    """``prod step(arg)`` as a signed sum of single steps ``(sign, start)``; None: no step."""
    t = TIME
    out: list[tuple[int, sympy.Expr | None]] = [(1, None)]
    for arg in steps:
        slope = sympy.expand(sympy.diff(arg, t))
        if slope.has(t) or not slope.is_real or slope == 0:
            raise _fail(text, f'the argument "{arg}" of a step or edge is not a straight line in t')
        start = -arg.subs(t, 0) / slope
        if not start.is_real:
            raise _fail(text, f'the step "{arg}" does not happen at a real time')
        start = sympy.simplify(start) if not start.is_Rational else start
        nxt: list[tuple[int, sympy.Expr | None]] = []
        for sign, current in out:
            later = start if current is None else sympy.Max(current, start)
            if slope > 0:
                nxt.append((sign, later))
            else:  # on until the start: 1 - step(t - start)
                nxt += [(sign, current), (-sign, later)]
        out = nxt
    return out


def _paired(complex_terms: dict[tuple[int, Any, Any, bool], sympy.Expr], text: str) -> list[SourceTerm]:
    """Pair each exponential with its conjugate into one real term; check the sum is real."""
    import mpmath

    out: list[SourceTerm] = []
    for (power, rate, start, before), coefficient in complex_terms.items():
        c = _tidy(coefficient)
        if c == 0:
            continue
        imag = sympy.im(rate)
        decay = -sympy.re(rate)
        if imag.is_negative:
            partner = complex_terms.get((power, sympy.conjugate(rate), start, before), sympy.Integer(0))
            with mpmath.workdps(30):
                gap = abs(complex(sympy.N(c - sympy.conjugate(partner), 30)))
                size = abs(complex(sympy.N(c, 30)))
            if gap > 1e-20 * size:
                raise _fail(text, "the function is not real (a complex coefficient without its conjugate)")
            continue
        if imag == 0:
            value = complex(sympy.N(c, 30))
            if abs(value.imag) > 1e-20 * abs(value):
                raise _fail(text, "the function is not real (a complex coefficient, j in it?)")
            phasor = _tidy(sympy.re(c) if not c.is_real else c)
        else:
            phasor = _tidy(2 * c)
        out.append(SourceTerm(phasor, power, _tidy(decay), _tidy(imag), start, before))
    out.sort(key=lambda term: (float(term.start), term.power, float(term.decay), float(term.omega)))
    return out


def _repeat(call: Any, factor: sympy.Expr, text: str) -> Repeat:
    period, body = call.args
    if period.has(TIME) or not period.is_positive:
        raise _fail(text, "the period of repeat(p, g) must be a positive time, like 1 ms")
    if not factor.is_real:
        raise _fail(text, "repeat(...) may only be multiplied by a real number")
    terms, _ = _canonical(body * factor, text, allow_repeat=False)
    window: list[SourceTerm] = []
    for each in terms:
        if each.start >= period:
            continue
        term = SourceTerm(each.phasor, each.power, each.decay, each.omega, each.start)
        window.append(term)
        window += [moved.scaled(-1) for moved in term.at(period)]
    return Repeat(period, combined(window))


def combined(terms: list[SourceTerm]) -> tuple[SourceTerm, ...]:
    """Like terms (same power, decay, frequency, start) added; zero sums dropped."""
    sums: dict[tuple[Any, ...], sympy.Expr] = {}
    for term in terms:
        key = (term.power, term.decay, term.omega, term.start, term.before_zero)
        sums[key] = sums.get(key, sympy.Integer(0)) + term.phasor
    out = []
    for (power, decay, omega, start, before), total in sums.items():
        phasor = _tidy(total)
        if phasor != 0:
            out.append(SourceTerm(phasor, power, decay, omega, start, before))
    out.sort(key=lambda term: (float(term.start), term.power, float(term.decay), float(term.omega)))
    return tuple(out)


# --------------------------------------------------------------------------
# the first version's keys, written in the new form
# --------------------------------------------------------------------------

#: Keys of the first version's sources, replaced by source functions.
OLD_KEYS = ("shape", "offset", "delay", "damping", "low", "width", "period", "rise", "fall", "points")


def decimal(value: sympy.Expr) -> str:
    """An exact number as a short decimal (exact where it ends, else 12 digits)."""
    if value.is_Rational:
        q = int(value.q)
        while q % 2 == 0:
            q //= 2
        while q % 5 == 0:
            q //= 5
        if q == 1:
            from decimal import Decimal

            text = format(Decimal(int(value.p)) / Decimal(int(value.q)), "f")
            return text.rstrip("0").rstrip(".") if "." in text else text
    return f"{float(value):.12g}"
