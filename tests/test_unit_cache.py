"""The cached unit lookup against a fresh pint parse and the SI prefix table.

Source: SI Brochure, 9th edition (BIPM 2019), table 7 (SI prefixes).
"""

from __future__ import annotations

import dataclasses
from fractions import Fraction

import pint
import pytest
import sympy

from handcheck.worksheet.units import lookup_unit

#: SI Brochure, 9th edition, table 7: prefix symbol and its factor as a power of ten.
SI_PREFIXES = {
    "da": 1, "h": 2, "k": 3, "M": 6, "G": 9, "T": 12, "P": 15, "E": 18, "Z": 21, "Y": 24,
    "d": -1, "c": -2, "m": -3, "u": -6, "n": -9, "p": -12, "f": -15, "a": -18, "z": -21, "y": -24,
}  # fmt: skip


@pytest.fixture(scope="module")
def fresh() -> pint.UnitRegistry:
    """A registry built afresh, without handcheck's cache or its extra definitions."""
    return pint.UnitRegistry(non_int_type=Fraction)


@pytest.mark.parametrize(("prefix", "power"), sorted(SI_PREFIXES.items()))
@pytest.mark.parametrize("unit", ["ohm", "F", "H", "V", "A", "S", "s", "Hz"])
def test_cached_lookup_equals_fresh_pint_and_table(
    fresh: pint.UnitRegistry, prefix: str, power: int, unit: str
) -> None:
    name = prefix + unit
    first = lookup_unit(name)
    again = lookup_unit(name)
    base = fresh.Quantity(Fraction(1), name).to_base_units().magnitude
    assert first.factor == sympy.Rational(Fraction(base).numerator, Fraction(base).denominator)
    assert again.factor == first.factor and again.dim == first.dim
    plain = lookup_unit(unit).factor
    assert first.factor == plain * sympy.Rational(10) ** power  # table 7


def test_cached_lookup_is_not_a_shared_mutable_object() -> None:
    value = lookup_unit("kohm")
    with pytest.raises(dataclasses.FrozenInstanceError):
        value.factor = sympy.Integer(1)  # type: ignore[misc]
    with pytest.raises(dataclasses.FrozenInstanceError):
        value.dim.mass = Fraction(5)  # type: ignore[misc]
    assert lookup_unit("kohm").factor == 1000
    assert isinstance(value.factor, sympy.Basic)  # sympy numbers are immutable
