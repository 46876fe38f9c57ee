"""A phase claimed as a plain number in the other angle unit (the mistake catalogue's
``degrees-as-radians`` and ``radians-as-degrees`` for a ``phase(...)`` claim).

A phase claim without a unit, or in rad, is read in radians; an author who worked in
degrees writes the degree figure there (``-17.44`` for -17.44 deg), or the radian
figure labelled deg. A calculator or habit in the other angle mode is among the most
common slips of AC work (common practice).
"""

from __future__ import annotations

import dataclasses

import sympy

from handcheck.verify.claims import agrees, to_complex
from handcheck.verify.rebuild import Context
from handcheck.worksheet.evaluate import Value

__all__ = ["plain_angle"]

_RADIANS = ("", "rad", "radian", "radians")


def plain_angle(ctx: Context, degrees_as_radians: bool) -> str | None:
    """The detail when the claimed number, read in the other angle unit, is the phase.

    Parameters
    ----------
    ctx
        The step that does not agree.
    degrees_as_radians
        True to try a degree figure written where radians are read (no unit, or rad);
        False to try a radian figure labelled deg.

    Returns
    -------
    str or None
        What the author wrote, how it is read, and the text to write instead.
    """
    claim = ctx.claim
    if ctx.quantity is None or ctx.quantity.name != "phase" or claim.form != "real" or ctx.truth is None:
        return None
    if degrees_as_radians and claim.unit_text in _RADIANS:
        scale, right, wrong = sympy.pi / 180, "deg", claim.unit_text
    elif not degrees_as_radians and claim.unit_text not in _RADIANS:
        scale, right, wrong = 180 / sympy.pi, "rad", claim.unit_text
    else:
        return None
    relabelled = dataclasses.replace(
        claim, value=Value(claim.value.expr * scale, claim.dim), resolution=(claim.resolution[0] * float(scale), 0.0)
    )
    if not agrees(relabelled, to_complex(ctx.truth.expr), ctx.tolerance):
        return None
    number = claim.text.removesuffix(claim.unit_text).strip()
    how = f'"{claim.text}"' if wrong else "a phase without a unit"
    written, read = ("degrees", "radians") if right == "deg" else ("radians", "degrees")
    return f'the number is the angle in {written}, but {how} is read in {read}: write "{number} {right}"'
