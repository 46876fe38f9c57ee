"""pint's on-disk definition cache gives the same exact units as a fresh parse."""

from __future__ import annotations

from fractions import Fraction

import pint
import pytest

from handcheck.worksheet import units

# Prefix factors: SI Brochure, 9th edition (2019), table 7.
WORDS = {
    "kohm": Fraction(10**3),
    "Mohm": Fraction(10**6),
    "uF": Fraction(1, 10**6),
    "nF": Fraction(1, 10**9),
    "pF": Fraction(1, 10**12),
    "mH": Fraction(1, 10**3),
    "uH": Fraction(1, 10**6),
    "kV": Fraction(10**3),
    "mA": Fraction(1, 10**3),
    "ms": Fraction(1, 10**3),
    "kHz": Fraction(10**3),
    "MHz": Fraction(10**6),
    "mS": Fraction(1, 10**3),
    "kW": Fraction(10**3),
    "var": Fraction(1),
}


@pytest.fixture(scope="module")
def fresh() -> pint.UnitRegistry:
    """pint's own registry parsed from its definitions (about a second), once for every word."""
    registry = pint.UnitRegistry(non_int_type=Fraction)
    registry.define("volt_ampere_reactive = volt * ampere = var")
    return registry


@pytest.mark.parametrize("word", sorted(WORDS))
def test_cached_registry_matches_a_fresh_parse_and_the_si_prefix(word: str, fresh: pint.UnitRegistry) -> None:
    units._registry.cache_clear()
    units.lookup_unit.cache_clear()
    folder = units._cache_folder()
    assert folder is not None
    cached = units._registry()
    a = cached.Quantity(Fraction(1), word).to_base_units()
    b = fresh.Quantity(Fraction(1), word).to_base_units()
    assert a.magnitude == b.magnitude == WORDS[word]
    assert isinstance(a.magnitude, Fraction)
    assert dict(a.dimensionality) == dict(b.dimensionality)
    assert units.lookup_unit(word).factor == WORDS[word]


def test_a_damaged_cache_falls_back_to_a_fresh_parse(tmp_path, monkeypatch) -> None:
    import shutil

    folder = units._cache_folder()
    assert folder is not None
    units._registry.cache_clear()
    units._registry()  # the real cache exists
    for entry in folder.iterdir():
        shutil.copy(entry, tmp_path / entry.name)
        (tmp_path / entry.name).write_bytes(b"\x00half-written")
    assert any(tmp_path.iterdir())
    monkeypatch.setattr(units, "_cache_folder", lambda: tmp_path)
    units._registry.cache_clear()
    units.lookup_unit.cache_clear()
    try:
        assert units.lookup_unit("kohm").factor == 1000
    finally:
        units._registry.cache_clear()
        units.lookup_unit.cache_clear()
