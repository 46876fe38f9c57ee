"""The catalogue of common mistakes (filled in by the derivation-checking work)."""

from __future__ import annotations

from typing import Any


def diagnose(checker: Any, step: Any, claim: Any, tolerance: Any) -> list[tuple[str, str]]:
    return []
