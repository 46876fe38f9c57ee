"""Dimensions and units, exact.

A :class:`Dim` is a vector of exponents over the SI base dimensions that circuits
need (mass, length, time, current). Unit names are resolved with pint, whose
registry is created with ``fractions.Fraction`` as its number type so that every
prefix is an exact rational ("0.22 uF" is exactly 22/10**8 F). pint's own on-disk
cache of its parsed definitions is used, so a check does not re-parse the file. Angles are handled
here, not by pint: the radian is dimensionless (SI Brochure, 9th edition, table 4)
and the degree is exactly pi/180, kept as sympy's exact pi.
"""

from __future__ import annotations

import functools
import os
from dataclasses import dataclass
from fractions import Fraction
from pathlib import Path
from typing import TYPE_CHECKING

import sympy

from handcheck.errors import UnitError

if TYPE_CHECKING:
    import pint

__all__ = ["DIMENSIONLESS", "Dim", "UnitValue", "dim_name", "lookup_unit"]

_BASES = ("[mass]", "[length]", "[time]", "[current]")
_SYMBOLS = ("kg", "m", "s", "A")


@dataclass(frozen=True)
class Dim:
    """Exponents of mass, length, time and current."""

    mass: Fraction = Fraction(0)
    length: Fraction = Fraction(0)
    time: Fraction = Fraction(0)
    current: Fraction = Fraction(0)

    def _vec(self) -> tuple[Fraction, ...]:
        return (self.mass, self.length, self.time, self.current)

    @classmethod
    def _of(cls, vec: tuple[Fraction, ...] | list[Fraction]) -> Dim:
        return cls(*(Fraction(v) for v in vec))

    def __mul__(self, other: Dim) -> Dim:
        return Dim._of([a + b for a, b in zip(self._vec(), other._vec(), strict=True)])

    def __truediv__(self, other: Dim) -> Dim:
        return Dim._of([a - b for a, b in zip(self._vec(), other._vec(), strict=True)])

    def __pow__(self, exponent: Fraction | int) -> Dim:
        return Dim._of([a * Fraction(exponent) for a in self._vec()])

    @property
    def dimensionless(self) -> bool:
        return not any(self._vec())

    def __bool__(self) -> bool:
        """False for a dimensionless quantity, so ``dim or "no unit"`` reads well in messages."""
        return not self.dimensionless

    def __str__(self) -> str:
        return dim_name(self)


DIMENSIONLESS = Dim()

#: Named dimensions, in the order a name is preferred for display.
_NAMED: dict[str, Dim] = {
    "V": Dim(Fraction(1), Fraction(2), Fraction(-3), Fraction(-1)),
    "A": Dim(current=Fraction(1)),
    "ohm": Dim(Fraction(1), Fraction(2), Fraction(-3), Fraction(-2)),
    "S": Dim(Fraction(-1), Fraction(-2), Fraction(3), Fraction(2)),
    "W": Dim(Fraction(1), Fraction(2), Fraction(-3)),
    "F": Dim(Fraction(-1), Fraction(-2), Fraction(4), Fraction(2)),
    "H": Dim(Fraction(1), Fraction(2), Fraction(-2), Fraction(-2)),
    "s": Dim(time=Fraction(1)),
    "Hz": Dim(time=Fraction(-1)),
    "C": Dim(time=Fraction(1), current=Fraction(1)),
    "J": Dim(Fraction(1), Fraction(2), Fraction(-2)),
}


def dim_name(dim: Dim) -> str:
    """A readable unit for a dimension: ``ohm``, ``V``, or ``kg*m^2/s^3`` as a last resort."""
    if dim.dimensionless:
        return ""
    for name, named in _NAMED.items():
        if named == dim:
            return name
    # a power, product or ratio of two named units reads better than base units
    for name, named in _NAMED.items():
        for power in (2, 3, -1, -2, Fraction(1, 2)):
            if named**power == dim:
                return f"{name}^{power}" if power != Fraction(1, 2) else f"sqrt({name})"
    for first, a in _NAMED.items():
        for second, b in _NAMED.items():
            if a * b == dim:
                return f"{first}*{second}"
            if a / b == dim:
                return f"{first}/{second}"
    parts = []
    for symbol, exp in zip(_SYMBOLS, dim._vec(), strict=True):
        if exp == 1:
            parts.append(symbol)
        elif exp:
            parts.append(f"{symbol}^{exp}")
    return "*".join(parts)


def dim_of(name: str) -> Dim:
    """The dimension of a named unit such as ``"ohm"`` or ``"V"``."""
    return _NAMED[name]


@dataclass(frozen=True)
class UnitValue:
    """A unit resolved to an exact factor in coherent SI units and its dimension."""

    name: str
    factor: sympy.Expr
    dim: Dim


_ANGLES = {
    "deg": sympy.pi / 180,
    "degree": sympy.pi / 180,
    "degrees": sympy.pi / 180,
    "°": sympy.pi / 180,
    "rad": sympy.Integer(1),
    "radian": sympy.Integer(1),
    "radians": sympy.Integer(1),
}

#: Units pint does not define under the name engineers write.
_EXTRA = ("volt_ampere_reactive = volt * ampere = var",)


def _cache_folder() -> Path | None:
    """Where pint keeps its parsed definitions between runs, or None if nowhere is writable.

    Parsing pint's definitions file is most of the registry's cost (0.44 s of a 0.5 s
    build measured cold, 0.06 s from the cache); the cache holds pint's own parse of its
    own file, keyed by the file's content and the number type, so it cannot drift.
    """
    try:
        import platformdirs

        folder = platformdirs.user_cache_path(appname="handcheck", appauthor=False) / "pint"
        folder.mkdir(parents=True, exist_ok=True)
    except (ImportError, OSError):
        return None
    return folder if os.access(folder, os.W_OK) else None


@functools.lru_cache(maxsize=1)
def _registry() -> pint.UnitRegistry:
    import pint

    folder = _cache_folder()
    try:
        registry: pint.UnitRegistry = pint.UnitRegistry(non_int_type=Fraction, cache_folder=folder)
    except Exception:  # a damaged or half-written cache: parse afresh
        registry = pint.UnitRegistry(non_int_type=Fraction)
    for definition in _EXTRA:
        registry.define(definition)
    return registry


@functools.lru_cache(maxsize=512)
def lookup_unit(name: str) -> UnitValue:
    """Resolve one unit word (``"kohm"``, ``"uF"``, ``"deg"``) exactly.

    Raises
    ------
    UnitError
        If the word is not a unit, or is a dimensionless unit other than an angle.
    """
    name = name.replace("\u2126", "\u03a9")  # OHM SIGN, canonically equivalent to GREEK CAPITAL OMEGA
    if name in _ANGLES:
        return UnitValue(name, _ANGLES[name], DIMENSIONLESS)
    if not name or not all(ch.isalnum() or ch in "_Ωµμ" for ch in name):
        raise UnitError(f'"{name}" is not a unit')
    import pint

    registry = _registry()
    try:
        quantity = registry.Quantity(Fraction(1), name).to_base_units()
    except (pint.errors.PintError, AttributeError, ValueError, TypeError) as exc:
        raise UnitError(f'"{name}" is not a unit handcheck knows') from exc
    dimensionality = quantity.dimensionality
    if set(dimensionality) - set(_BASES):
        raise UnitError(f'"{name}" is not an electrical unit')
    # pint types an exponent as any magnitude; from this registry it is an int or a Fraction
    dim = Dim._of([Fraction(dimensionality.get(base, 0)) for base in _BASES])  # type: ignore[arg-type]
    if dim.dimensionless:
        raise UnitError(f'"{name}" is not a unit handcheck knows')
    raw = quantity.magnitude
    if not isinstance(raw, (int, float, Fraction)):  # pint's magnitude type also admits complex numbers and arrays
        raise UnitError(f'"{name}" is not a unit handcheck knows')
    magnitude = Fraction(raw)
    factor = sympy.Rational(magnitude.numerator, magnitude.denominator)
    return UnitValue(name, factor, dim)


def is_unit(name: str) -> bool:
    """True when ``name`` resolves to a unit."""
    try:
        lookup_unit(name)
    except UnitError:
        return False
    return True


_SUGGESTED_PREFIXES = ("", "p", "n", "u", "m", "k", "M", "G")
_SUGGESTED_UNITS = ("ohm", "F", "H", "V", "A", "Hz", "W", "VA", "var", "s", "S")


def suggest_unit(word: str) -> str | None:
    """A unit the mistyped ``word`` most likely means: the same letters in the case the
    SI writes them (``"uf"`` -> ``"uF"``, ``"Kohm"`` -> ``"kohm"``, ``"ohms"`` ->
    ``"ohm"``); None when no unit spells the same.

    Parameters
    ----------
    word
        A word after a number that is no unit.

    Returns
    -------
    str or None

    Examples
    --------
    >>> suggest_unit("uf"), suggest_unit("Kohm"), suggest_unit("MHZ"), suggest_unit("xyz")
    ('uF', 'kohm', 'MHz', None)
    """
    folded = word.lower().removesuffix("s") if word.lower().endswith("ohms") else word.lower()
    found = [p + u for p in _SUGGESTED_PREFIXES for u in _SUGGESTED_UNITS if (p + u).lower() == folded]
    found = [f for f in found if f != word]
    if not found:
        return None
    same_prefix = [f for f in found if f[:1] == word[:1]]
    return (same_prefix or found)[0]


def suggest_for(word: str, wanted: Dim) -> str | None:
    """The unit a ``word`` read as another dimension most likely means where ``wanted``
    belongs: an hour in lower case, prefixed or not, where henry belongs (pint reads
    ``"mh"`` as the millihour) gives ``"mH"``; None otherwise.

    Parameters
    ----------
    word
        A unit as written, which is a unit, but of another dimension than ``wanted``.
    wanted
        The dimension the value or claim must have.

    Returns
    -------
    str or None

    Examples
    --------
    >>> suggest_for("mh", dim_of("H")), suggest_for("h", dim_of("H")), suggest_for("ms", dim_of("H"))
    ('mH', 'H', None)
    """
    if wanted != _NAMED["H"] or not word.endswith("h"):
        return None
    candidate = word[:-1] + "H"
    try:
        return candidate if lookup_unit(candidate).dim == wanted else None
    except UnitError:
        return None
