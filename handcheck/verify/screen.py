"""A numeric screen in front of the mistake catalogue's exact re-solves.

When a claim disagrees, the catalogue solves the circuit again, exactly, once for
every way it may have been drawn or scaled wrongly (a reactance with the wrong
sign, two parts in series that are in parallel, the sources at another frequency):
25 to 35 exact solves for a ladder of a few dozen sections. Almost every one of
them gives a number nowhere near the claim. The screen solves each such circuit
first in floating point (numpy's LU on ``G + jw C``) and skips the exact solve only
when the float value is so far outside the claim's acceptance band that no float
error could bring it inside:

    distance > 2 * band + 1e-6 * size + 1000 * float error estimate

The distance is measured between sizes (``abs``) for every claim form, and also
between the complex values for rectangular and polar claims; the band is an upper
bound on how far a value that :func:`handcheck.verify.claims.agrees` accepts can lie
from the claim in that measure. The float error estimate is the usual first-order
bound of a perturbed linear system, ``|dx| <= |A^-1| (|dA| |x| + |db|)`` with
``|dA| = n eps |A|`` and ``|db| = n eps |b|`` in the 1-norm (Golub & Van Loan,
*Matrix Computations*, 4th ed., section 2.6.2, from memory), carried through the
quantity's arithmetic (a first-order error of each sum, product and ratio).

Every candidate the screen lets through is judged by the exact path, unchanged, so
the screen can only save exact work: it never adds a diagnosis and, within its
margin, never removes one. A quantity the screen does not know (time-domain
quantities, network functions, nested frequency changes) is never screened.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import TYPE_CHECKING

import sympy

from handcheck.circuit.mna import MnaSystem, stamp
from handcheck.circuit.model import GROUND, Circuit, Part
from handcheck.errors import HandcheckError
from handcheck.solve.certified import certify
from handcheck.solve.quantities import Quantity
from handcheck.verify.claims import SLACK, Claim, Tolerance, to_complex

if TYPE_CHECKING:  # pragma: no cover - typing only
    import numpy as np

__all__ = ["MARGIN_ERRORS", "Near", "cannot_match", "float_quantity"]

#: The float error estimate is multiplied by this before a candidate is skipped.
MARGIN_ERRORS = 1000.0
#: A relative allowance on top of the band and the float error.
MARGIN_RELATIVE = 1e-6
_EPS = 2.0**-52
_ZERO = sympy.S.Zero


@dataclass(frozen=True)
class Near:
    """A float value with an estimate of its distance to the exact one (``err``)."""

    value: complex
    err: float

    def __add__(self, other: Near) -> Near:
        return Near(self.value + other.value, self.err + other.err)

    def __sub__(self, other: Near) -> Near:
        return Near(self.value - other.value, self.err + other.err)

    def __mul__(self, other: Near) -> Near:
        a, b = abs(self.value), abs(other.value)
        err = a * other.err + b * self.err + self.err * other.err
        return Near(self.value * other.value, err + _EPS * a * b)

    def __truediv__(self, other: Near) -> Near | None:
        a, b = abs(self.value), abs(other.value)
        if b <= other.err or b == 0:
            return None  # the divisor may be zero: no bound
        err = (a * other.err + b * self.err) / (b * (b - other.err))
        return Near(self.value / other.value, err + _EPS * a / b)

    def conjugate(self) -> Near:
        return Near(self.value.conjugate(), self.err)

    def real(self) -> Near:
        return Near(complex(self.value.real, 0), self.err)

    def imag(self) -> Near:
        return Near(complex(self.value.imag, 0), self.err)

    def size(self) -> Near:
        return Near(complex(abs(self.value), 0), self.err)


def _exactly(value: sympy.Expr) -> Near | None:
    """An exact number as a Near (None when it cannot be evaluated)."""
    if value.is_Rational:
        return Near(complex(float(value), 0), _EPS * abs(float(value)))
    certified = certify(value)
    if certified is None:
        return None
    return Near(certified.value, 2 * certified.bound + _EPS * abs(certified.value))


class _FloatCircuit:
    """One circuit's equations at its analysis frequency, solved in floating point."""

    def __init__(self, circuit: Circuit) -> None:
        import numpy as np

        self.circuit = circuit
        self.system: MnaSystem = stamp(circuit)
        n = self.system.size
        self.omega = float(circuit.omega)
        matrix = np.zeros((n, n), dtype=complex)
        for which, factor in ((self.system.G, 1.0), (self.system.C, 1j * self.omega)):
            if factor == 0:
                continue
            for r, row in enumerate(which):
                for c, entry in enumerate(row):
                    if entry is not _ZERO:  # the stamp's zeros are sympy's one zero
                        matrix[r, c] += factor * (float(entry) if entry.is_Rational else to_complex(entry))
        self.inverse = np.linalg.inv(matrix)
        self.norm = float(np.abs(matrix).sum(axis=0).max())
        self.inverse_norm = float(np.abs(self.inverse).sum(axis=0).max())
        if not math.isfinite(self.inverse_norm):
            raise ZeroDivisionError("singular")
        self._x: tuple[np.ndarray, float] | None = None

    def response(self, column: np.ndarray) -> tuple[np.ndarray, float]:
        """The solution for one right-hand side and its error estimate (1-norm)."""
        import numpy as np

        x = self.inverse @ column
        n = max(self.system.size, 1)
        size = float(np.abs(x).sum())
        err = n * _EPS * self.inverse_norm * (self.norm * size + float(np.abs(column).sum())) + n * _EPS * size
        return x, err

    def solution(self) -> tuple[np.ndarray, float] | None:
        """The unknowns driven by the circuit's own sources (None when a phasor cannot be had)."""
        import numpy as np

        if self._x is not None:
            return self._x
        system, circuit = self.system, self.circuit
        column = np.zeros(system.size, dtype=complex)
        source_err = 0.0
        for k, ident in enumerate(system.sources):
            part = circuit.part(ident)
            if not circuit.active(part):
                continue
            assert part.source is not None
            phasor = _exactly(part.source.phasor(circuit.phasors, circuit.omega))
            if phasor is None:
                return None
            for r in range(system.size):
                weight = system.B[r][k]
                if weight != 0:
                    column[r] += float(weight) * phasor.value
                    source_err += abs(float(weight)) * phasor.err
        x, err = self.response(column)
        self._x = (x, err + self.inverse_norm * source_err)
        return self._x

    def node(self, name: str) -> Near | None:
        if name == GROUND:
            return Near(0j, 0.0)
        index = self.system.nodes.get(name)
        solved = self.solution()
        if index is None or solved is None:
            return None
        x, err = solved
        return Near(complex(x[index]), err)

    def unknown(self, index: int) -> Near | None:
        solved = self.solution()
        if solved is None:
            return None
        return Near(complex(solved[0][index]), solved[1])

    def between(self, a: str, b: str) -> Near | None:
        """v(a) - v(b) with 1 A injected at a and taken out at b, the sources set to zero."""
        import numpy as np

        column = np.zeros(self.system.size, dtype=complex)
        for node, sign in ((a, 1), (b, -1)):
            index = self.system.node(node)
            if index is not None:
                column[index] += sign
        x, err = self.response(column)
        ia, ib = self.system.node(a), self.system.node(b)
        va = complex(x[ia]) if ia is not None else 0j
        vb = complex(x[ib]) if ib is not None else 0j
        return Near(va - vb, 2 * err)


class _Quantities:
    """The screened quantities: the phasor ones of one circuit (None for any other)."""

    def __init__(self, model: _FloatCircuit) -> None:
        self.model = model
        self.circuit = model.circuit
        self.s = Near(complex(0, model.omega), _EPS * model.omega)

    def part(self, name: str | Quantity) -> Part | None:
        if isinstance(name, str) and name != GROUND and name not in self.circuit.nodes and self.circuit.has_part(name):
            return self.circuit.part(name)
        return None

    def voltage(self, part: Part) -> Near | None:
        if part.kind == "opamp":
            return self.model.node(part.nodes[0])
        first, second = self.model.node(part.nodes[0]), self.model.node(part.nodes[1])
        return None if first is None or second is None else first - second

    def current(self, part: Part) -> Near | None:
        system = self.model.system
        if part.id in system.branches:
            return self.model.unknown(system.branches[part.id])
        value = _exactly(part.value) if part.kind in ("resistor", "capacitor") else None
        voltage = self.voltage(part) if value is not None else None
        if value is None or voltage is None:
            return None
        if part.kind == "resistor":
            return voltage / value
        return self.s * value * voltage

    def impedance(self, args: tuple[str | Quantity, ...]) -> Near | None:
        part = self.part(args[0]) if len(args) == 1 else None
        if part is not None:
            coupled = any(p.kind == "coupling" and part.id in p.inductors for p in self.circuit.parts)
            value = _exactly(part.value)
            if value is not None and part.kind == "resistor":
                return value
            if value is not None and part.kind == "inductor" and not coupled:
                return self.s * value
            if value is not None and part.kind == "capacitor" and self.model.omega != 0:
                return Near(1 + 0j, 0.0) / (self.s * value)
            voltage, current = self.voltage(part), self.current(part)
            return None if voltage is None or current is None else voltage / current
        nodes = [a for a in args if isinstance(a, str) and (a == GROUND or a in self.circuit.nodes)]
        if len(nodes) != len(args) or not 1 <= len(nodes) <= 2:
            return None
        a, b = nodes[0], nodes[1] if len(nodes) == 2 else GROUND
        return None if a == b else self.model.between(a, b)

    def power(self, name: str, part: Part) -> Near | None:
        voltage, current = self.voltage(part), self.current(part)
        if voltage is None or current is None:
            return None
        scale = 1.0 if self.model.omega == 0 or self.circuit.phasors == "rms" else 0.5
        power = Near(complex(scale, 0), 0.0) * voltage * current.conjugate()
        if name == "power":
            return power.real()
        if name == "reactive_power":
            return power.imag()
        if name == "apparent_power":
            return power.size()
        return power.real().size() / power.size()

    def run(self, q: Quantity) -> Near | None:
        name, args = q.name, q.args
        picks: dict[str, Callable[[Near], Near | None]] = {
            "impedance": lambda z: z,
            "reactance": Near.imag,
            "resistance": Near.real,
            "admittance": lambda z: Near(1 + 0j, 0.0) / z,
            "susceptance": lambda z: _then(Near(1 + 0j, 0.0) / z, Near.imag),
            "conductance": lambda z: _then(Near(1 + 0j, 0.0) / z, Near.real),
        }
        if name == "voltage" and len(args) == 1 and self.part(args[0]) is not None:
            return self.voltage(self.part(args[0]))  # type: ignore[arg-type]
        if name == "voltage" and 1 <= len(args) <= 2 and all(isinstance(a, str) for a in args):
            first = self.model.node(str(args[0]))
            second = self.model.node(str(args[1])) if len(args) == 2 else Near(0j, 0.0)
            return None if first is None or second is None else first - second
        if name == "current" and len(args) == 1 and self.part(args[0]) is not None:
            return self.current(self.part(args[0]))  # type: ignore[arg-type]
        if name in picks and 1 <= len(args) <= 2 and (len(args) == 2 or self.circuit.omega != 0):
            z = self.impedance(args)
            return None if z is None else picks[name](z)
        if name == "transfer" and len(args) == 2 and all(isinstance(a, Quantity) for a in args):
            top, bottom = self.run(args[0]), self.run(args[1])  # type: ignore[arg-type]
            return None if top is None or bottom is None else top / bottom
        if name in ("power", "reactive_power", "apparent_power", "power_factor") and len(args) == 1:
            part = self.part(args[0])
            return None if part is None else self.power(name, part)
        return None


def _then(value: Near | None, pick: Callable[[Near], Near]) -> Near | None:
    return None if value is None else pick(value)


def float_quantity(circuit: Circuit, quantity: Quantity) -> Near | None:
    """The quantity in the circuit from one float solve, with an error estimate
    (None for a quantity the screen does not know or a circuit it cannot solve)."""
    try:
        return _Quantities(_FloatCircuit(circuit)).run(quantity)
    except (HandcheckError, ZeroDivisionError, ArithmeticError, TypeError, ValueError, KeyError):
        return None
    except Exception as exc:  # numpy's LinAlgError for a singular matrix
        if type(exc).__name__ == "LinAlgError":
            return None
        raise


def _bands(claim: Claim, tolerance: Tolerance, near: Near) -> tuple[float, float | None]:
    """Upper bounds on how far an accepted value lies from the claim: in size, and as
    a complex number (None where no such bound holds, as for a real claim of a phasor,
    compared by its size alone)."""
    value = to_complex(claim.value.expr)
    largest = max(abs(value), abs(near.value) + MARGIN_ERRORS * near.err)
    slack = 2 * (SLACK * largest + 1e-300)
    if tolerance.relative is not None:
        band = tolerance.relative * largest + slack
        return band, (band if claim.form != "real" else None)
    res_a, res_b = claim.resolution
    if claim.form == "polar":
        if abs(near.value) - MARGIN_ERRORS * near.err <= 2 * res_a:
            return res_a + slack, None  # a value that rounds to zero agrees at any angle
        return res_a + slack, res_a + slack + abs(value) * (res_b + 1e-12)
    return res_a + res_b + slack, (res_a + res_b + slack if claim.form == "rect" else None)


def cannot_match(circuit: Circuit, quantity: Quantity, claim: Claim, tolerance: Tolerance) -> bool:
    """True when the quantity in this circuit is, by a float solve, so far from the
    claim that its exact value cannot agree with it: the exact solve may be skipped.

    False whenever the screen cannot tell (an unknown quantity or claim form, a
    singular or ill-conditioned system, a value near the band)."""
    if claim.form not in ("real", "rect", "polar") or claim.items:
        return False
    near = float_quantity(circuit, quantity)
    if near is None or not (math.isfinite(near.err) and math.isfinite(abs(near.value))):
        return False
    size_band, complex_band = _bands(claim, tolerance, near)
    value = to_complex(claim.value.expr)
    allowance = MARGIN_RELATIVE * max(abs(value), abs(near.value)) + MARGIN_ERRORS * near.err
    if abs(abs(value) - abs(near.value)) > 2 * size_band + allowance:
        return True
    return complex_band is not None and abs(value - near.value) > 2 * complex_band + allowance
