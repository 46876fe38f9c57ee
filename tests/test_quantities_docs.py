"""Every worksheet in docs/quantities.md checks out, step by step."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

import handcheck

DOC = Path(__file__).resolve().parents[1] / "docs" / "quantities.md"
BLOCKS = re.findall(r"```toml\n(.*?)```", DOC.read_text(encoding="utf-8"), re.S)


def test_the_cookbook_has_examples() -> None:
    assert len(BLOCKS) >= 7


@pytest.mark.parametrize("text", BLOCKS, ids=[f"example{k}" for k in range(len(BLOCKS))])
def test_cookbook_example_agrees(text: str) -> None:
    report = handcheck.check_text(text, "docs/quantities.md")
    assert report.steps
    assert [s.verdict for s in report.steps] == ["agrees"] * len(report.steps), [
        (s.name, s.verdict, s.expected) for s in report.steps
    ]
