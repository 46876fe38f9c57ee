"""Random circuits: handcheck's exact phasors against an independent numpy solve, and network
theorems (KCL, Tellegen, reciprocity, passivity) checked exactly as properties.

The reference solver below is written here, from the textbook nodal method (every
two-terminal R/L/C as an admittance, an extra unknown current for each voltage source,
voltage-controlled voltage source and op-amp output: common practice), in floating point
with numpy.linalg.solve; it shares no code with handcheck. Randomness is seeded
(numpy.random.default_rng(seed), hypothesis with derandomize=True).
"""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass
from decimal import Decimal

import numpy as np
import pytest
import sympy
from hypothesis import given, reject, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

import handcheck
from handcheck.circuit.build import build
from handcheck.circuit.model import Circuit
from handcheck.errors import CircuitError
from handcheck.solve.phasor import Solution, part_current, part_voltage, solve
from handcheck.solve.quantities import evaluate_quantity, parse_quantity

GND = "gnd"
UNITS = {"resistor": "ohm", "inductor": "H", "capacitor": "F", "voltage": "V", "current": "A", "vccs": "S"}
VOLTAGE_DEFINED = ("voltage", "vcvs", "opamp")
PREFIX = {"resistor": "R", "inductor": "L", "capacitor": "C"}  # part ids: R3, L4, C5 (sources are V0, I0, I1)

# When a hypothesis test fails, its pytest plugin imports libcst to write a patch, which warns
# (DeprecationWarning from mypy_extensions) at import; with warnings as errors that hides the
# failure behind an INTERNALERROR. Ignore that one third-party warning in this module.
pytestmark = pytest.mark.filterwarnings("ignore:mypy_extensions.TypedDict is deprecated:DeprecationWarning")


@dataclass(frozen=True)
class Part:
    """A part as the test knows it: the value is the decimal text written in the worksheet."""

    id: str
    kind: str
    nodes: tuple[str, ...]
    value: str = ""
    phase_deg: int = 0
    control: tuple[str, str] | None = None


def worksheet_parts(parts: Iterable[Part], omega: str) -> dict[str, dict[str, object]]:
    out: dict[str, dict[str, object]] = {}
    for p in parts:
        if p.kind == "opamp":
            fields: dict[str, object] = {"opamp": "ideal"}
        elif p.kind == "vcvs":
            fields = {"vcvs": p.value}
        else:
            fields = {p.kind: f"{p.value} {UNITS[p.kind]}"}
        if p.kind in ("voltage", "current"):
            fields["frequency"] = f"{omega} rad/s"
            fields["phase"] = f"{p.phase_deg} deg"
        fields["nodes"] = list(p.nodes)
        if p.control is not None:
            fields["control"] = list(p.control)
        out[p.id] = fields
    return out


def load_circuit(parts: list[Part], omega: str, make_worksheet: Callable[..., str], steps=()) -> Circuit:
    text = make_worksheet(worksheet_parts(parts, omega), steps, frequency=f"{omega} rad/s")
    return build(handcheck.loads(text, "<random>"))


# ---------------------------------------------------------------------------
# The independent reference: nodal analysis in numpy (or exactly, for a determinant)
# ---------------------------------------------------------------------------


def node_order(parts: Iterable[Part]) -> list[str]:
    nodes: list[str] = []
    for p in parts:
        for n in (*p.nodes, *(p.control or ())):
            if n != GND and n not in nodes:
                nodes.append(n)
    return nodes


def reference_system(parts: list[Part], omega: str, *, exact: bool = False) -> tuple[list[str], list[list], list]:
    """Nodal matrix A and right-hand side b with A x = b; x = node voltages, then branch currents.

    Peak phasors: a source A cos(w t + phi) is A exp(j phi). A current source drives its
    current from nodes[0] to nodes[1] through itself (worksheet format 1), so it takes the
    current out of nodes[0] and puts it into nodes[1].
    """
    if exact:
        j, w = sympy.I, sympy.Rational(omega)

        def num(text: str) -> sympy.Expr:
            return sympy.Rational(text)

        def phasor(p: Part) -> sympy.Expr:
            return num(p.value) * sympy.exp(sympy.I * sympy.pi * p.phase_deg / 180)
    else:
        j, w = 1j, float(omega)
        num = float  # type: ignore[assignment]

        def phasor(p: Part) -> complex:  # type: ignore[misc]
            return float(p.value) * np.exp(1j * np.deg2rad(p.phase_deg))

    nodes = node_order(parts)
    index = {n: k for k, n in enumerate(nodes)}
    branches = [p.id for p in parts if p.kind in VOLTAGE_DEFINED]
    size = len(nodes) + len(branches)
    a: list[list] = [[0] * size for _ in range(size)]
    b: list = [0] * size

    def at(node: str) -> int | None:
        return index.get(node)

    def add(row: int | None, col: int | None, value) -> None:
        if row is not None and col is not None:
            a[row][col] += value

    def admittance(n0: str, n1: str, y) -> None:
        p0, p1 = at(n0), at(n1)
        add(p0, p0, y)
        add(p1, p1, y)
        add(p0, p1, -y)
        add(p1, p0, -y)

    for p in parts:
        if p.kind == "resistor":
            admittance(*p.nodes, 1 / num(p.value))
        elif p.kind == "capacitor":
            admittance(*p.nodes, j * w * num(p.value))
        elif p.kind == "inductor":
            admittance(*p.nodes, 1 / (j * w * num(p.value)))
        elif p.kind == "current":
            for node, sign in ((p.nodes[0], -1), (p.nodes[1], 1)):
                if at(node) is not None:
                    b[at(node)] += sign * phasor(p)
        elif p.kind == "vccs":
            assert p.control is not None
            for node, s_out in ((p.nodes[0], 1), (p.nodes[1], -1)):
                for cnode, s_in in ((p.control[0], 1), (p.control[1], -1)):
                    add(at(node), at(cnode), s_out * s_in * num(p.value))
        else:
            k = len(nodes) + branches.index(p.id)
            if p.kind == "opamp":  # nodes = [out, +, -]: v(+) - v(-) = 0, output current unknown
                add(at(p.nodes[0]), k, 1)
                add(k, at(p.nodes[1]), 1)
                add(k, at(p.nodes[2]), -1)
                continue
            add(at(p.nodes[0]), k, 1)  # the branch current leaves nodes[0] into the part
            add(at(p.nodes[1]), k, -1)
            add(k, at(p.nodes[0]), 1)
            add(k, at(p.nodes[1]), -1)
            if p.kind == "voltage":
                b[k] += phasor(p)
            else:  # vcvs: v(out+) - v(out-) - gain (v(c+) - v(c-)) = 0
                assert p.control is not None
                add(k, at(p.control[0]), -num(p.value))
                add(k, at(p.control[1]), num(p.value))
    return nodes, a, b


def reference_voltages(parts: list[Part], omega: str) -> dict[str, complex]:
    nodes, a, b = reference_system(parts, omega)
    x = np.linalg.solve(np.array(a, dtype=complex), np.array(b, dtype=complex))
    return dict(zip(nodes, x[: len(nodes)], strict=True))


def exactly_singular(parts: list[Part], omega: str) -> bool:
    _, a, _ = reference_system(parts, omega, exact=True)
    return sympy.Matrix(a).det() == 0


def as_complex(expr: sympy.Expr) -> complex:
    return complex(sympy.N(expr, 30))


def fixed(x: float) -> str:
    return format(Decimal(repr(float(x))), "f")


def rect_claim(z: complex, unit: str) -> str:
    sign = "-" if z.imag < 0 else "+"
    return f"{fixed(z.real)} {sign} {fixed(abs(z.imag))}j {unit}"


# ---------------------------------------------------------------------------
# 4. Seeded random circuits against the numpy reference
# ---------------------------------------------------------------------------

R_VALUES = ("0.47", "1", "2.2", "4.7", "10", "22")
L_VALUES = ("0.1", "0.33", "1", "2.2")
C_VALUES = ("0.05", "0.22", "1", "4.7")
OMEGAS = ("0.5", "1.5", "3", "7")


def pick(rng: np.random.Generator, options) -> str:
    return str(options[int(rng.integers(len(options)))])


def lonely(nodes: list[str], edges: list[tuple[str, str]]) -> list[str]:
    """Nodes that fewer than two edges touch."""
    return [n for n in nodes if sum(n in edge for edge in edges) < 2]


def random_network(rng: np.random.Generator) -> tuple[list[str], list[Part]]:
    """A connected R/L/C network on 2..6 nodes plus ground: a random tree, up to 3 extra edges,
    and an edge more at any node that only one part would touch (handcheck rejects such a
    node as a likely misspelling)."""
    nodes = [f"n{k}" for k in range(1, int(rng.integers(2, 7)) + 1)]
    everything = [GND, *nodes]
    edges = [(node, pick(rng, everything[: k + 1])) for k, node in enumerate(nodes)]
    for _ in range(int(rng.integers(0, 4))):
        first, second = rng.choice(len(everything), size=2, replace=False)
        edges.append((everything[first], everything[second]))
    for node in lonely(nodes, edges):
        edges.append((node, pick(rng, [n for n in everything if n != node])))
    parts = []
    for k, edge in enumerate(edges, start=1):
        kind = pick(rng, ("resistor", "inductor", "capacitor"))
        values = {"resistor": R_VALUES, "inductor": L_VALUES, "capacitor": C_VALUES}[kind]
        parts.append(Part(f"{PREFIX[kind]}{k}", kind, edge, pick(rng, values)))
    return nodes, parts


def random_sources(rng: np.random.Generator, nodes: list[str], count: int) -> tuple[list[Part], set[str]]:
    """One or two sinusoidal sources: a voltage source from a node to ground, or a current source."""
    everything = [GND, *nodes]
    sources, held = [], set()
    for k in range(1, count + 1):
        phase = int(pick(rng, ("0", "45", "90", "-30")))
        free = [n for n in nodes if n not in held]
        if rng.random() < 0.5 and free:
            node = pick(rng, free)
            held.add(node)
            sources.append(Part(f"V{k}", "voltage", (node, GND), pick(rng, ("1", "2.5", "10")), phase))
        else:
            first, second = rng.choice(len(everything), size=2, replace=False)
            sources.append(
                Part(f"I{k}", "current", (everything[first], everything[second]), pick(rng, ("0.1", "1", "3")), phase)
            )
    return sources, held


def compare_with_reference(parts: list[Part], nodes: list[str], omega: str, make_worksheet) -> None:
    reference = reference_voltages(parts, omega)
    solution = solve(load_circuit(parts, omega, make_worksheet))
    got = np.array([as_complex(solution.node_voltage(n)) for n in nodes])
    want = np.array([reference[n] for n in nodes])
    # Float LU error scales with the drive, not with each (possibly small, even exactly zero)
    # node voltage: the absolute tolerance follows the largest node voltage or source amplitude.
    drive = max([float(p.value) for p in parts if p.kind in ("voltage", "current")] + list(np.abs(want)))
    assert_allclose(got, want, rtol=1e-9, atol=1e-12 * drive)
    # End to end: the numpy value, claimed for the largest node voltage, must agree.
    # (A circuit whose every node voltage is zero to rounding, e.g. a source shorted by a
    # controlled source, gets the claim "0 V".)
    node = nodes[int(np.argmax(np.abs(want)))]
    claim = rect_claim(reference[node], "V") if abs(reference[node]) > 1e-9 * drive else "0 V"
    step = {"name": "V", "quantity": f"voltage({node})", "claim": claim, "tolerance": "0.0001%"}
    text = make_worksheet(worksheet_parts(parts, omega), [step], frequency=f"{omega} rad/s")
    (finding,) = handcheck.check(handcheck.loads(text, "<random>")).steps
    assert finding.verdict == "agrees", finding


def sweep(seeds: range, quick: int = 4) -> list:
    """Seeds for a random sweep; all but the first ``quick`` are marked slow."""
    return [pytest.param(seed, marks=[pytest.mark.slow] if k >= quick else []) for k, seed in enumerate(seeds)]


@pytest.mark.parametrize("seed", sweep(range(40)))
def test_random_rlc_node_voltages_match_numpy(seed, make_worksheet):
    rng = np.random.default_rng(seed)
    nodes, parts = random_network(rng)
    sources, _ = random_sources(rng, nodes, int(rng.integers(1, 3)))
    compare_with_reference(parts + sources, nodes, pick(rng, OMEGAS), make_worksheet)


@pytest.mark.parametrize("seed", sweep(range(1000, 1020)))
def test_random_circuits_with_controlled_sources_match_numpy(seed, make_worksheet):
    rng = np.random.default_rng(seed)
    nodes, parts = random_network(rng)
    sources, held = random_sources(rng, nodes, int(rng.integers(1, 3)))
    everything = [GND, *nodes]

    def pair() -> tuple[str, str]:
        first, second = rng.choice(len(everything), size=2, replace=False)
        return everything[first], everything[second]

    controlled = [Part("drv_gm", "vccs", pair(), pick(rng, ("0.1", "-0.5", "2")), control=pair())]
    free = [n for n in nodes if n not in held]
    if free:  # a vcvs from a node no other voltage-defined part holds, to ground
        controlled.append(
            Part("buf", "vcvs", (pick(rng, free), GND), pick(rng, ("2", "-3", "0.5", "10")), control=pair())
        )
    compare_with_reference(parts + sources + controlled, nodes, pick(rng, OMEGAS), make_worksheet)


OPAMP_RESISTORS = [("1", "4.7"), ("2.2", "10"), ("10", "10"), ("4.7", "1")]


def amplifier(r1: str, r2: str, *, inverting: bool, c2: str | None = None) -> list[Part]:
    """An ideal op-amp amplifier: R1 from the input (or ground) to the - input, R2 (|| C2) feedback."""
    parts = [
        Part("V1", "voltage", ("in", GND), "1"),
        Part("R1", "resistor", ("in" if inverting else GND, "m"), r1 + "e3"),
        Part("R2", "resistor", ("m", "out"), r2 + "e3"),
        Part("U1", "opamp", ("out", GND if inverting else "in", "m")),
        Part("RL", "resistor", ("out", GND), "1e3"),
    ]
    if c2 is not None:
        parts.append(Part("C2", "capacitor", ("m", "out"), c2))
    return parts


def gain_step(claim: str) -> dict[str, str]:
    return {"name": "A", "quantity": "transfer(voltage(out), voltage(in))", "claim": claim}


@pytest.mark.parametrize(("r1", "r2"), OPAMP_RESISTORS)
def test_inverting_amplifier_gain(r1, r2, make_worksheet):
    # Ideal inverting amplifier: V_out / V_in = -R2 / R1 (any op-amp text, e.g. Sedra & Smith,
    # Microelectronic Circuits, ch. 2, from memory).
    parts = amplifier(r1, r2, inverting=True)
    gain = -sympy.Rational(r2) / sympy.Rational(r1)
    text = make_worksheet(worksheet_parts(parts, "100"), [gain_step(fixed(float(gain)))], frequency="100 rad/s")
    (step,) = handcheck.check(handcheck.loads(text, "<opamp>")).steps
    assert step.verdict == "agrees", step
    assert sympy.simplify(step.exact - gain) == 0
    assert_allclose(reference_voltages(parts, "100")["out"], float(gain), rtol=1e-12)


@pytest.mark.parametrize(("r1", "r2"), OPAMP_RESISTORS)
def test_noninverting_amplifier_gain(r1, r2, make_worksheet):
    # Ideal non-inverting amplifier: V_out / V_in = 1 + R2 / R1 (same texts, from memory).
    parts = amplifier(r1, r2, inverting=False)
    solution = solve(load_circuit(parts, "100", make_worksheet))
    gain = 1 + sympy.Rational(r2) / sympy.Rational(r1)
    assert sympy.simplify(solution.node_voltage("out") - gain) == 0
    assert_allclose(reference_voltages(parts, "100")["out"], float(gain), rtol=1e-12)


@pytest.mark.parametrize("omega", ["10", "1000", "100000"])
def test_inverting_amplifier_with_feedback_capacitor(omega, make_worksheet):
    # Active first-order low-pass: V_out / V_in = -(R2 || 1/(jw C2)) / R1 = -(R2/R1) / (1 + jw R2 C2)
    # (inverting amplifier with impedances, same texts, from memory).
    parts = amplifier("1", "10", inverting=True, c2="1e-7")
    solution = solve(load_circuit(parts, omega, make_worksheet))
    w = sympy.Rational(omega)
    closed = -(sympy.Rational(10)) / (1 + sympy.I * w * 10**4 * sympy.Rational(1, 10**7))
    assert sympy.simplify(solution.node_voltage("out") - closed) == 0
    assert_allclose(reference_voltages(parts, omega)["out"], as_complex(closed), rtol=1e-12)


# ---------------------------------------------------------------------------
# 5. Properties of passive R/L/C networks, checked exactly
# ---------------------------------------------------------------------------

P_VALUES = {
    "resistor": ("0.5", "1", "2.2", "4.7", "10"),
    "inductor": ("0.1", "0.5", "1", "3.3"),
    "capacitor": ("0.1", "0.47", "1", "2"),
}
PROPERTY_SETTINGS = settings(max_examples=60, derandomize=True, database=None, deadline=None)


def distinct_pairs(everything: list[str]) -> st.SearchStrategy[tuple[str, str]]:
    return st.lists(st.sampled_from(everything), min_size=2, max_size=2, unique=True).map(tuple)


@st.composite
def passive_networks(draw) -> tuple[list[str], list[Part], str]:
    """A connected R/L/C network on 2..4 nodes plus ground (random tree, up to 3 extra edges, and
    an edge more at any node only one part touches)."""
    nodes = [f"n{k}" for k in range(1, draw(st.integers(2, 4)) + 1)]
    everything = [GND, *nodes]
    edges = [(node, draw(st.sampled_from(everything[: k + 1]))) for k, node in enumerate(nodes)]
    edges += draw(st.lists(distinct_pairs(everything), max_size=3))
    for node in lonely(nodes, edges):
        edges.append((node, draw(st.sampled_from([n for n in everything if n != node]))))
    parts = []
    for k, edge in enumerate(edges, start=1):
        kind = draw(st.sampled_from(("resistor", "inductor", "capacitor")))
        parts.append(Part(f"{PREFIX[kind]}{k}", kind, edge, draw(st.sampled_from(P_VALUES[kind]))))
    return nodes, parts, draw(st.sampled_from(("0.5", "1", "2", "3", "7")))


@st.composite
def driven_networks(draw) -> tuple[list[str], list[Part], str]:
    """A passive network with one sinusoidal source (voltage from a node to ground, or current)."""
    nodes, parts, omega = draw(passive_networks())
    phase = draw(st.sampled_from((0, 90, 45)))
    if draw(st.booleans()):
        source = Part("V0", "voltage", (draw(st.sampled_from(nodes)), GND), "2", phase)
    else:
        source = Part("I0", "current", draw(distinct_pairs([GND, *nodes])), "3", phase)
    return nodes, [*parts, source], omega


def solved_or_reject(parts: list[Part], omega: str, make_worksheet) -> Solution:
    """Solve with handcheck; a circuit it calls singular must be singular by the reference (then skip it)."""
    circuit = load_circuit(parts, omega, make_worksheet)
    try:
        return solve(circuit)
    except CircuitError:
        assert exactly_singular(parts, omega), "handcheck called a solvable circuit singular"
        reject()
        raise  # pragma: no cover - reject() does not return


def quantity(solution: Solution, text: str) -> sympy.Expr:
    return evaluate_quantity(solution, parse_quantity(text)).expr


def is_zero(expr: sympy.Expr) -> bool:
    """Exactly zero. ``expand`` is an exact rewrite and settles the usual sums of products of
    Gaussian rationals and surds at once; ``simplify`` (slow) only sees what it leaves."""
    return sympy.expand(expr) == 0 or sympy.simplify(expr) == 0


@pytest.mark.slow
@PROPERTY_SETTINGS
@given(network=driven_networks())
def test_kcl_holds_exactly_at_every_node(network, make_worksheet):
    # Kirchhoff's current law: the part currents leaving each node sum to zero.
    nodes, parts, omega = network
    solution = solved_or_reject(parts, omega, make_worksheet)
    circuit = solution.circuit
    for node in [GND, *nodes]:
        leaving = sympy.Integer(0)
        for part in circuit.parts:
            if part.nodes[0] == node:
                leaving += part_current(solution, part)  # current enters the part at nodes[0]
            if part.nodes[1] == node:
                leaving -= part_current(solution, part)
        assert is_zero(leaving), (node, leaving)
    # The check is not vacuous: the source drives a nonzero current somewhere.
    assert any(not is_zero(part_current(solution, p)) for p in circuit.parts if p.kind != "current")


@pytest.mark.slow
@PROPERTY_SETTINGS
@given(network=driven_networks())
def test_complex_power_is_conserved(network, make_worksheet):
    # Tellegen's theorem (Desoer & Kuh, Basic Circuit Theory, 1969, from memory): with the same
    # reference directions for every part, sum V_P conj(I_P) = 0 exactly, so the complex power
    # absorbed by all parts, sources included, sums to zero.
    _, parts, omega = network
    solution = solved_or_reject(parts, omega, make_worksheet)
    circuit = solution.circuit
    tellegen = sum(
        (part_voltage(solution, p) * sympy.conjugate(part_current(solution, p)) for p in circuit.parts),
        sympy.Integer(0),
    )
    assert is_zero(tellegen), tellegen
    # The same through the worksheet quantities power() and reactive_power().
    real = {p.id: quantity(solution, f"power({p.id})") for p in circuit.parts}
    reactive = {p.id: quantity(solution, f"reactive_power({p.id})") for p in circuit.parts}
    assert is_zero(sum(real.values())), real
    assert is_zero(sum(reactive.values())), reactive
    # Ideal inductors and capacitors absorb no average power; an inductor's reactive power is
    # not negative and a capacitor's not positive; a resistor's power is not negative (passive sign
    # convention; e.g. Alexander & Sadiku, Fundamentals of Electric Circuits, ch. 11, from memory).
    for p in circuit.parts:
        if p.kind in ("inductor", "capacitor"):
            assert is_zero(real[p.id]), (p.id, real[p.id])
        if p.kind == "inductor":
            assert reactive[p.id].is_nonnegative, (p.id, reactive[p.id])
        if p.kind == "capacitor":
            assert reactive[p.id].is_nonpositive, (p.id, reactive[p.id])
        if p.kind == "resistor":
            assert real[p.id].is_nonnegative, (p.id, real[p.id])
            assert is_zero(reactive[p.id]), (p.id, reactive[p.id])


@st.composite
def networks_with_ports(draw, count: int) -> tuple[list[str], list[Part], str, list[tuple[str, str]]]:
    """A passive network and ``count`` ports (node pairs, ground allowed)."""
    nodes, parts, omega = draw(passive_networks())
    return nodes, parts, omega, [draw(distinct_pairs([GND, *nodes])) for _ in range(count)]


@pytest.mark.slow
@PROPERTY_SETTINGS
@given(network=networks_with_ports(2))
def test_transfer_impedance_is_reciprocal(network, make_worksheet):
    # Reciprocity (Desoer & Kuh, Basic Circuit Theory, 1969, from memory): in a network of R, L
    # and C, a current I into port 1 gives the open-circuit voltage V2 = Z21 I at port 2, and
    # Z21 = Z12 exactly.
    _, parts, omega, ((a, b), (c, d)) = network
    # The source drives its current from nodes[0] to nodes[1] through itself: into a, out of b.
    drive_1 = solved_or_reject([*parts, Part("I1", "current", (b, a), "1")], omega, make_worksheet)
    drive_2 = solved_or_reject([*parts, Part("I1", "current", (d, c), "1")], omega, make_worksheet)
    z21 = quantity(drive_1, f"transfer(voltage({c}, {d}), current(I1))")
    z12 = quantity(drive_2, f"transfer(voltage({a}, {b}), current(I1))")
    assert is_zero(z21 - z12), (z21, z12)
    # The driving-point impedance from the driven solve equals impedance(a, b) (test-source method).
    z11 = quantity(drive_1, f"transfer(voltage({a}, {b}), current(I1))")
    assert is_zero(z11 - quantity(drive_1, f"impedance({a}, {b})")), z11


@pytest.mark.slow
@PROPERTY_SETTINGS
@given(network=networks_with_ports(1))
def test_driving_point_impedance_is_passive(network, make_worksheet):
    # A passive network absorbs power, so Re Z >= 0 at every driving point (Desoer & Kuh 1969,
    # positive-real functions, from memory). Checked exactly, and the value against numpy.
    _, parts, omega, ((a, b),) = network
    solution = solved_or_reject(parts, omega, make_worksheet)
    z = quantity(solution, f"impedance({a}, {b})")
    resistance = quantity(solution, f"resistance({a}, {b})")
    assert is_zero(sympy.re(z) - resistance)
    assert resistance.is_nonnegative, (a, b, z)
    # numpy: inject 1 A into a and out of b, read v(a) - v(b).
    volts = reference_voltages([*parts, Part("Itest", "current", (b, a), "1")], omega)
    want = volts.get(a, 0) - volts.get(b, 0)
    assert_allclose(as_complex(z), want, rtol=1e-9, atol=1e-12)
