"""The catalogue of common mistakes.

Each mistake is a transformation of the correct computation that a person
plausibly makes: on the step's own formula (evaluated on the author's numbers, as
the author did), on the circuit behind the step's quantity (solved again with the
mistake built in), or on the true value itself. A mistake is reported only when the
transformed computation reproduces the claimed number within the step's tolerance;
the catalogue is tried only for steps that do not agree.

The codes are part of check output format 1: ``hertz-as-angular``,
``angular-as-hertz``, ``degrees-as-radians``, ``radians-as-degrees``,
``peak-as-rms``, ``rms-as-peak``, ``power-half``, ``reactance-sign``,
``sine-reference``, ``phase-sign``, ``series-as-parallel``, ``parallel-as-series``,
``impedance-as-admittance``, ``prefix``, and those of the second edition:
``magnitude-as-phasor``, ``other-frequency``, ``sign-convention``,
``reversed-nodes``. They are listed most specific first,
the order in which matches are reported; a match may rule out a less specific code
that reproduces the same number only by coincidence (``_RULES_OUT``).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable

import sympy

from handcheck.circuit.model import Circuit, Part
from handcheck.verify.angles import plain_angle
from handcheck.verify.claims import agrees, to_complex
from handcheck.verify.mistakes_frequency import other_frequency, worksheet_frequencies
from handcheck.verify.mistakes_sign import reversed_nodes, sign_convention
from handcheck.verify.mistakes_size import magnitude_as_phasor
from handcheck.verify.present import format_number
from handcheck.verify.rebuild import (
    Context,
    at_omega,
    by_author,
    flipped,
    formula_value,
    matches,
    matches_truth,
    names_in_quantity,
    requantify,
    scaled,
    shown,
    swapped,
    with_phases,
)
from handcheck.worksheet.evaluate import Value
from handcheck.worksheet.expr import Call, Node, walk
from handcheck.worksheet.units import dim_of

__all__ = ["CODES", "Context", "diagnose", "worksheet_frequencies"]

CODES: tuple[str, ...] = (
    "series-as-parallel",
    "parallel-as-series",
    "magnitude-as-phasor",
    "hertz-as-angular",
    "angular-as-hertz",
    "other-frequency",
    "degrees-as-radians",
    "radians-as-degrees",
    "sign-convention",
    "reactance-sign",
    "impedance-as-admittance",
    "power-half",
    "peak-as-rms",
    "rms-as-peak",
    "sine-reference",
    "phase-sign",
    "prefix",
    "reversed-nodes",
)

_POWER = dim_of("W")
_WAVE = (dim_of("V"), dim_of("A"))


# -- the mistakes ----------------------------------------------------------------------


def _series_parallel(ctx: Context, series_for_parallel: bool) -> str | None:
    """Series where parallel belongs (``+`` for ``||``), or the reverse: in the
    step's formula, or, for a step with none, in the circuit behind its quantity."""
    if ctx.tree is None or ctx.formula is None:
        return _rewired(ctx, series_for_parallel)
    wrong, right = ("+", "||") if series_for_parallel else ("||", "+")
    how, should = ("in series", "in parallel") if series_for_parallel else ("in parallel", "in series")

    def text(node: Node) -> str:
        return ctx.formula[node.start : node.end].strip() if ctx.formula else ""

    # The formula is right, but was worked out with the wrong combination...
    for node, tree in swapped(ctx.tree, right, wrong):
        if by_author(ctx, tree):
            return (
                f'the number is what "{text(node.left)} {wrong} {text(node.right)}" gives: '
                f"{text(node.left)} and {text(node.right)} were combined {how}, but the formula has them {should}"
            )
    # ...or the formula itself combines two parts the wrong way.
    if ctx.truth is None or not by_author(ctx):
        return None
    for node, tree in swapped(ctx.tree, wrong, right):
        if matches_truth(ctx, formula_value(ctx, ctx.true_env, tree)):
            return (
                f'"{text(node)}" combines {text(node.left)} and {text(node.right)} {how}, '
                f'but in the circuit they are {should} ("{text(node.left)} {right} {text(node.right)}")'
            )
    return None


_PASSIVE = ("resistor", "inductor", "capacitor")


def _with_nodes(circuit: Circuit, parts: list[Part]) -> Circuit:
    nodes: dict[str, None] = {}
    for part in parts:
        for node in part.nodes:
            if node != "gnd":
                nodes.setdefault(node, None)
    return dataclasses.replace(circuit, parts=tuple(parts), nodes=tuple(nodes))


def _rewired(ctx: Context, series_for_parallel: bool) -> str | None:
    """Two parts in parallel put in series (or two in series put in parallel), one
    pair at a time, and the quantity solved again."""
    circuit = ctx.circuit
    if ctx.quantity is None:
        return None
    passive = [p for p in circuit.parts if p.kind in _PASSIVE and p.initial is None]
    coupled = {i for p in circuit.parts if p.kind == "coupling" for i in p.inductors}
    passive = [p for p in passive if p.id not in coupled][:16]
    for first_index, first in enumerate(passive):
        for second in passive[first_index + 1 :]:
            parts = list(circuit.parts)
            i, k = parts.index(first), parts.index(second)
            if series_for_parallel and set(first.nodes) == set(second.nodes):
                a, b = first.nodes
                joint = f"_{first.id}_{second.id}"
                parts[i] = dataclasses.replace(first, nodes=(a, joint))
                parts[k] = dataclasses.replace(second, nodes=(joint, b))
            elif not series_for_parallel:
                shared = set(first.nodes) & set(second.nodes)
                if len(shared) != 1:
                    continue
                (middle,) = shared
                touching = [
                    p
                    for p in circuit.parts
                    if middle in p.nodes or (isinstance(p.control, tuple) and middle in p.control)
                ]
                if middle == "gnd" or len(touching) != 2 or middle in names_in_quantity(ctx.quantity):
                    continue
                ends = [n for n in (*first.nodes, *second.nodes) if n != middle]
                parts[i] = dataclasses.replace(first, nodes=(ends[0], ends[1]))
                parts[k] = dataclasses.replace(second, nodes=(ends[0], ends[1]))
            else:
                continue
            if matches(ctx, requantify(ctx, _with_nodes(circuit, parts))):
                if series_for_parallel:
                    return f"the number is what you get with {first.id} and {second.id} in series, but they are in parallel"
                return f"the number is what you get with {first.id} and {second.id} in parallel, but they are in series"
    return None


def _frequency_swap(ctx: Context, hertz_for_angular: bool) -> str | None:
    circuit = ctx.circuit
    if circuit.omega == 0:
        return None
    f_text = format_number(float(sympy.N(circuit.frequency)), 6)
    w_text = format_number(float(sympy.N(circuit.omega)), 6)
    if hertz_for_angular:
        detail = f"the number is what you get with f = {f_text} Hz used where w = 2*pi*f = {w_text} rad/s belongs"
        env_change = {"w": Value(circuit.frequency, dim_of("Hz"))}
        omega = circuit.frequency
    else:
        detail = f"the number is what you get with w = {w_text} rad/s used where f = {f_text} Hz belongs (2*pi applied twice)"
        env_change = {"f": Value(circuit.omega, dim_of("Hz"))}
        omega = circuit.omega * 2 * sympy.pi
    if ctx.tree is not None and by_author(ctx, changes=env_change):
        return detail
    if matches(ctx, requantify(ctx, at_omega(circuit, omega))):
        return detail
    return None


def _frequency_unit(ctx: Context, hertz_for_angular: bool) -> str | None:
    """A frequency reported in the wrong measure: f where w belongs, or w where f belongs."""
    if ctx.truth is None or ctx.truth.dim != dim_of("Hz"):
        return None
    if hertz_for_angular and scaled(ctx, 1 / (2 * sympy.pi)):
        return "the number is the frequency in hertz, f = w/(2*pi), where the angular frequency w in rad/s belongs"
    if not hertz_for_angular and scaled(ctx, 2 * sympy.pi):
        return "the number is the angular frequency w = 2*pi*f in rad/s, where the frequency in hertz belongs"
    return None


def _angle_mode(ctx: Context, degrees_as_radians: bool) -> str | None:
    scale = 180 / sympy.pi if degrees_as_radians else sympy.pi / 180
    what = (
        "an angle in degrees was taken as radians (a calculator left in radian mode)"
        if degrees_as_radians
        else "an angle in radians was taken as degrees (a calculator left in degree mode)"
    )
    if ctx.tree is not None and by_author(ctx, angle_scale=scale):
        return what
    if degrees_as_radians:
        in_formula = _degrees_in_formula(ctx)
        if in_formula:
            return in_formula
    shifted = with_phases(ctx.circuit, scale)
    if shifted is not None and matches(ctx, requantify(ctx, shifted)):
        return what + ", in a source's phase"
    if ctx.claim.form == "polar" and ctx.truth is not None:
        written_in = "deg" if degrees_as_radians else "rad"
        if ctx.claim.angle_unit != written_in:
            # the claim's angle number is the true angle in the other unit, labelled wrongly
            magnitude = sympy.Abs(ctx.claim.value.expr)
            # the angle as written: "-84.0 rad" taken modulo a turn would lose the degree figure
            angle = sympy.arg(ctx.claim.value.expr) if ctx.claim.angle is None else sympy.Float(ctx.claim.angle, 30)
            relabelled = magnitude * sympy.exp(sympy.I * angle / scale)
            magnitude_res, angle_res = ctx.claim.resolution
            if _matches_claim_value(ctx, relabelled, (magnitude_res, float(angle_res / scale))):
                unit = "degrees" if ctx.claim.angle_unit == "deg" else "radians"
                other = "radians" if unit == "degrees" else "degrees"
                return f"the claimed angle is the right angle in {other}, labelled as {unit}"
    return plain_angle(ctx, degrees_as_radians)


_TRIG = ("sin", "cos", "tan")


def _degrees_in_formula(ctx: Context) -> str | None:
    """A degree figure given to sin, cos or tan in the formula, which take radians: the
    claim is the formula's own value (``cos(57.86)`` = 0.2566, the cosine of 57.86 rad)
    and the formula with its angles read in degrees gives the quantity (0.5320). The
    radian-mode calculator is among the most common slips of AC work (common practice)."""
    if ctx.tree is None or ctx.formula is None or ctx.truth is None or not by_author(ctx):
        return None
    calls = [n for n in walk(ctx.tree) if isinstance(n, Call) and n.function in _TRIG and n.args]
    if not calls:
        return None
    for env in (ctx.true_env, ctx.full_env, ctx.claimed_env):
        corrected = formula_value(ctx, env, angle_scale=sympy.pi / 180)
        if corrected is None or not agrees(
            ctx.claim, to_complex(ctx.truth.expr), ctx.tolerance, value=to_complex(corrected)
        ):
            continue
        call, angle = calls[0], calls[0].args[-1]
        text = ctx.formula[call.start : call.end].strip()
        figure = ctx.formula[angle.start : angle.end].strip()
        figure = figure if figure.replace(".", "").replace("_", "").isalnum() else f"({figure})"
        return (
            f'the number is "{text}" with {figure} read in radians, but {figure} is an angle in degrees (a calculator '
            f"left in radian mode): with it in degrees ({figure}*pi/180) the formula gives {shown(ctx, corrected)}"
        )
    return None


def _matches_claim_value(ctx: Context, value: sympy.Expr, resolution: tuple[float, float]) -> bool:
    """True when ``value``, read as the claim with that resolution, agrees with the truth."""
    if ctx.truth is None:
        return False
    # the angle as written belongs to the claim, not to the reading tried here
    alternative = dataclasses.replace(ctx.claim, value=Value(value, ctx.claim.dim), resolution=resolution, angle=None)
    return agrees(alternative, to_complex(ctx.truth.expr), ctx.tolerance)


def _reactance_sign(ctx: Context) -> str | None:
    for kind, rule in (("capacitor", "-1/(w*C)"), ("inductor", "+w*L")):
        for name, circuit in flipped(ctx.circuit, kind):
            if matches(ctx, requantify(ctx, circuit)):
                return f"the number is what you get with the reactance of {name} taken with the wrong sign (a {kind}'s reactance is {rule})"
    return None


def _impedance_admittance(ctx: Context) -> str | None:
    if ctx.truth is None or ctx.truth.expr == 0:
        return None
    if matches(ctx, 1 / ctx.truth.expr):
        return "the number is the reciprocal of the quantity: an impedance given where an admittance belongs, or the other way round"
    return None


def _power_half(ctx: Context) -> str | None:
    if ctx.truth is None or ctx.truth.dim != _POWER or ctx.circuit.omega == 0:
        return None
    if ctx.circuit.phasors == "peak" and scaled(ctx, sympy.Integer(2)):
        return "with peak phasors the average power is Re(V I*)/2; the number is twice that, so the 1/2 is missing"
    if ctx.circuit.phasors == "rms" and scaled(ctx, sympy.Rational(1, 2)):
        return (
            "with rms phasors the average power is Re(V I*); the number is half that, a 1/2 that only peak phasors need"
        )
    return None


def _peak_rms(ctx: Context, peak_as_rms: bool) -> str | None:
    if ctx.truth is None or ctx.circuit.omega == 0:
        return None
    factors = [sympy.sqrt(2)] if ctx.truth.dim in _WAVE else []
    if ctx.truth.dim == _POWER:
        factors = [sympy.sqrt(2), sympy.Integer(2)]
        if (ctx.circuit.phasors == "peak") == peak_as_rms:
            factors = [sympy.sqrt(2)]  # a factor of 2 here is the power-half mistake
    for factor in factors:
        if scaled(ctx, factor if peak_as_rms else 1 / factor):
            if peak_as_rms:
                return f"the number is {sympy.sstr(factor)} times the value: a peak amplitude used where an rms value belongs"
            return (
                f"the number is 1/{sympy.sstr(factor)} of the value: an rms value used where a peak amplitude belongs"
            )
    return None


def _sine_reference(ctx: Context) -> str | None:
    if ctx.truth is None or ctx.claim.form == "real" or ctx.truth.dim not in _WAVE:
        return None
    for sign in (1, -1):
        if scaled(ctx, sympy.exp(sign * sympy.I * sympy.pi / 2)):
            return "the number is the right phasor turned by 90 deg: a cosine-referenced result read against a sine reference (or the other way round)"
    return None


def _phase_sign(ctx: Context) -> str | None:
    if ctx.truth is None or ctx.claim.form == "real":
        return None
    value = to_complex(ctx.truth.expr)
    if abs(value.imag) <= 1e-12 * abs(value):
        return None
    if matches(ctx, sympy.conjugate(ctx.truth.expr)):
        return "the number is the complex conjugate of the value: lead and lag (the sign of the angle) are swapped"
    return None


def _prefix(ctx: Context) -> str | None:
    for power in (3, -3, 6, -6):
        if scaled(ctx, sympy.Integer(10) ** power):
            times = f"{10 ** abs(power):,} times" if power > 0 else f"1/{10 ** abs(power):,} of"
            return f"the number is {times} the value: a unit prefix slipped (for example m read as u, or k dropped)"
    return None


_RULES: dict[str, Callable[[Context], str | None]] = {
    "series-as-parallel": lambda c: _series_parallel(c, series_for_parallel=True),
    "parallel-as-series": lambda c: _series_parallel(c, series_for_parallel=False),
    "magnitude-as-phasor": magnitude_as_phasor,
    "hertz-as-angular": lambda c: _frequency_swap(c, hertz_for_angular=True) or _frequency_unit(c, True),
    "angular-as-hertz": lambda c: _frequency_swap(c, hertz_for_angular=False) or _frequency_unit(c, False),
    "degrees-as-radians": lambda c: _angle_mode(c, degrees_as_radians=True),
    "radians-as-degrees": lambda c: _angle_mode(c, degrees_as_radians=False),
    "sign-convention": sign_convention,
    "reactance-sign": _reactance_sign,
    "impedance-as-admittance": _impedance_admittance,
    "power-half": _power_half,
    "peak-as-rms": lambda c: _peak_rms(c, peak_as_rms=True),
    "rms-as-peak": lambda c: _peak_rms(c, peak_as_rms=False),
    "sine-reference": _sine_reference,
    "phase-sign": _phase_sign,
    "prefix": _prefix,
    "other-frequency": other_frequency,
    "reversed-nodes": reversed_nodes,
}


#: A code found rules these out: they reproduce the same number only because the
#: first one does (a capacitor's var with the sign of its rating is also what a
#: flipped reactance gives, in a series circuit).
_RULES_OUT: dict[str, frozenset[str]] = {
    "sign-convention": frozenset({"reactance-sign", "reversed-nodes"}),
}


#: Tried only when no other code explains the number (each costs exact solves).
_LAST_RESORT = frozenset({"reversed-nodes"})


def _angle_left_out(ctx: Context) -> bool:
    """A polar claim whose angle is written as exactly 0 and whose magnitude is right:
    the angle was most likely not worked out, and any mistake that only turns the
    phasor a little would "reproduce" it. No diagnosis is offered then."""
    if ctx.claim.form != "polar" or ctx.truth is None:
        return False
    truth = to_complex(ctx.truth.expr)
    if truth.real < 0 and matches(ctx, -ctx.truth.expr):
        return False  # 180 deg from the claim within its digits: a sign, not an angle left out
    if sympy.arg(ctx.claim.value.expr) != 0:
        return False
    magnitude = abs(to_complex(ctx.truth.expr))
    return abs(magnitude - abs(to_complex(ctx.claim.value.expr))) <= ctx.claim.resolution[0] * (1 + 1e-9)


def diagnose(ctx: Context, only: tuple[str, ...] | None = None) -> list[tuple[str, str]]:
    """Every catalogued mistake that reproduces the claim, most specific first
    (only the codes in ``only``, when given). A claim of exactly 0 names nothing: its
    written digits allow every small number, so any mistake that shrinks the value
    would "reproduce" it."""
    if _angle_left_out(ctx) or ctx.claim.value.expr == 0:
        return []
    found: list[tuple[str, str]] = []
    ruled_out: set[str] = set()
    for code in CODES:
        if (only is not None and code not in only) or code in ruled_out:
            continue
        if code in _LAST_RESORT and found:
            continue
        detail = _RULES[code](ctx)
        if detail:
            found.append((code, detail))
            ruled_out |= _RULES_OUT.get(code, frozenset())
    return found
