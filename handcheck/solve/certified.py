"""Certified floating-point values of exact expressions (ball arithmetic).

The evaluator lives in :mod:`handcheck.worksheet.certified`: the formula evaluator
needs it too, for the large values of a chain of steps it holds by name
(:class:`~handcheck.worksheet.certified.Held`).
"""

from __future__ import annotations

from handcheck.worksheet.certified import Certified, certify

__all__ = ["Certified", "certify"]
