"""What each step was checked against, and every remark on it.

Check output format 1, second edition (DESIGN.md, "second-edition keys"): each step
carries a ``basis`` and ``notes``.

- ``"circuit"``: the step has a ``quantity``; its truth is that quantity in the solved
  circuit.
- ``"formula"``: no ``quantity``, but a formula; the step is checked only against its
  own formula evaluated on true inputs, which cannot tell a wrong formula. Such a step
  always carries a note saying so and naming the quantity that would check it against
  the circuit: the one whose exact value the formula gives, where the steady-state
  solution shows one, or else the kind of quantity its unit calls for.
- ``"none"``: neither; nothing to check the claim against.

The notes gather the remarks the checker already makes (the finding's ``message``:
rounding, a formula that does not give a right claim, why a step was not checked, a
unit that does not match); this module adds no check of its own.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Iterable, Mapping

import sympy

from handcheck.circuit.model import Circuit
from handcheck.errors import HandcheckError
from handcheck.verify.claims import Claim, to_complex
from handcheck.verify.findings import Basis, StepFinding
from handcheck.worksheet.evaluate import Value
from handcheck.worksheet.model import StepSpec
from handcheck.worksheet.units import dim_name, dim_of

__all__ = ["basis_of", "formula_only_inputs_note", "formula_only_note", "matching_quantities", "settle", "unit_kind"]

#: The start of the note every formula-basis step carries.
FORMULA_ONLY = "checked only against its own formula, not against the circuit"

#: Quantities to write for a claim in this unit when the formula's own value tells no
#: single one (the placeholders name what the author fills in).
_KINDS: dict[str, str] = {
    "V": '"voltage(NODE)" or "voltage(PART)"',
    "A": '"current(PART)"',
    "ohm": '"impedance(PART)" or "impedance(NODE, NODE)"',
    "S": '"admittance(PART)" or "admittance(NODE, NODE)"',
    "W": '"power(PART)"',
    "var": '"reactive_power(PART)"',
    "VA": '"apparent_power(PART)"',
    "J": '"energy(PART)"',
    "s": '"time_constant"',
    "Hz": '"cutoff_frequency(...)" or "resonant_frequency(...)"',
    "rad/s": '"natural_frequency"',
    "angle": '"phase(voltage(NODE))" or "phase(current(PART))"',
    "": '"transfer(voltage(NODE), voltage(NODE))", "quality_factor" or "power_factor(PART)"',
}

#: Impedances between nodes are tried only in circuits with at most this many nodes.
_MOST_NODES = 5

#: At most this many quantities are named when several give the formula's value.
_MOST = 3


def unit_kind(claim: Claim) -> str:
    """The kind of unit a claim is in: ``"V"``, ``"ohm"``, ``"var"``, ``"angle"``, ``""``..."""
    text = claim.unit_text
    if text in ("deg", "rad"):
        return "angle"
    if claim.dim == dim_of("W"):
        return "var" if text.endswith("var") else "VA" if text.endswith("VA") else "W"
    if claim.dim == dim_of("Hz") and "rad" in text:
        return "rad/s"
    return dim_name(claim.dim)


def basis_of(step: StepSpec, finding: StepFinding) -> Basis:
    """``"circuit"`` with a quantity, ``"formula"`` with only a formula that was
    evaluated, ``"none"`` when nothing was checked."""
    if step.quantity:
        return "circuit"
    if step.formula and finding.verdict != "unchecked":
        return "formula"
    return "none"


def formula_only_note(unit: str, matches: tuple[str, ...] = ()) -> str:
    """The note on a formula-basis step, naming the quantity that would check it.

    ``matches`` are quantities of the circuit whose exact value the formula gives;
    without them, the kind of quantity the claim's ``unit`` calls for is named.
    """
    if matches:
        return (
            f'{FORMULA_ONLY}: add quantity = "{matches[0]}" to check it against the circuit '
            f"(its formula gives the value of {' and of '.join(matches)} here)"
        )
    kinds = _KINDS.get(unit)
    if kinds:
        return f"{FORMULA_ONLY}: to check it, add the quantity it computes, such as quantity = {kinds}"
    return f"{FORMULA_ONLY}: to check it, add the quantity it computes (docs/worksheet.md lists them)"


def formula_only_inputs_note(
    finding: StepFinding, used: Iterable[str], earlier: Mapping[str, tuple[StepSpec, StepFinding]]
) -> str | None:
    """The note on a step whose formula fails on the true inputs (verdict ``formula``)
    when it uses earlier steps checked against their own formulas only: their claims
    stand only for their formulas' values, so a wrong formula there lands here; the
    note names them as the likely source (the verdict and the first divergence stay)."""
    if finding.verdict != "formula":
        return None
    names = [
        n
        for n in dict.fromkeys(used)
        if n in earlier and basis_of(*earlier[n]) == "formula" and earlier[n][1].verdict == "agrees"
    ]
    if not names:
        return None
    which = ", ".join(names)
    its = "its own formula" if len(names) == 1 else "their own formulas"
    return (
        f"it uses {which}, checked against {its} only, not against the circuit: if this step's formula is "
        f"right, the slip is likely in {which}; give {names[0]} a quantity to check it against the circuit"
    )


def _candidates(circuit: Circuit, unit: str) -> Iterable[str]:
    """Quantity texts of the claim's kind for every node and part of the circuit."""
    parts = [p.id for p in circuit.parts if p.kind not in ("coupling",)]
    if unit == "V":
        yield from (f"voltage({n})" for n in circuit.nodes)
        yield from (f"voltage({p})" for p in parts)
    elif unit == "A":
        yield from (f"current({p})" for p in parts)
    elif unit in ("ohm", "S"):
        name = "impedance" if unit == "ohm" else "admittance"
        yield from (f"{name}({p.id})" for p in circuit.parts if p.kind in ("resistor", "inductor", "capacitor"))
        if len(circuit.nodes) <= _MOST_NODES:  # each one is a solution of the circuit with its sources zeroed
            yield from (f"{name}({n})" for n in circuit.nodes)
            yield from (f"{name}({a}, {b})" for k, a in enumerate(circuit.nodes) for b in circuit.nodes[k + 1 :])
    elif unit in ("W", "var", "VA"):
        name = {"W": "power", "var": "reactive_power", "VA": "apparent_power"}[unit]
        yield from (f"{name}({p})" for p in parts)


def matching_quantities(
    circuit: Circuit, unit: str, value: sympy.Expr, evaluate: Callable[[str], Value]
) -> tuple[str, ...]:
    """The quantities of the claim's kind (node and part voltages, part currents, part
    impedances, powers) whose steady-state value is exactly ``value``.

    A quick comparison in floating point picks the candidates; each one named is then
    proved equal exactly (``simplify(a - b) == 0``), so a near miss is never named.
    """
    try:
        target = to_complex(value)
    except HandcheckError:
        return ()
    if target == 0:
        return ()  # a zero is the value of too many things to name one
    found: list[str] = []
    for text in _candidates(circuit, unit):
        try:
            truth = evaluate(text)
            near = to_complex(truth.expr)
        except HandcheckError:
            continue
        if abs(near - target) > 1e-9 * abs(target):
            continue
        if sympy.simplify(sympy.expand_complex(truth.expr - value)) == 0:
            found.append(text)
            if len(found) == _MOST:
                break
    return tuple(found)


def settle(
    step: StepSpec, finding: StepFinding, unit: str, matches: Callable[[], tuple[str, ...]] = tuple
) -> StepFinding:
    """The finding with its ``basis`` and ``notes``: the notes it already has, its
    message, and, for a formula-basis step, the formula-only note (``matches`` is
    called only then)."""
    basis = basis_of(step, finding)
    notes = list(finding.notes)
    if finding.message and finding.message not in notes:
        notes.append(finding.message)
    if basis == "formula" and not any(n.startswith(FORMULA_ONLY) for n in notes):
        notes.append(formula_only_note(unit, matches()))
    return dataclasses.replace(finding, basis=basis, notes=tuple(notes))
