"""Shared test helper: write a worksheet (format 1) as TOML text from Python data."""

from __future__ import annotations

import json
from collections.abc import Callable, Mapping, Sequence

import pytest

# the contract cases' generator runs (and is checked) in test_contract_blind.py; collecting
# its doctests would only build every case once more
collect_ignore = ["contract/generate.py"]

Parts = Mapping[str, Mapping[str, object]]
Steps = Sequence[Mapping[str, str]]


def _toml(value: object) -> str:
    if isinstance(value, str):
        return json.dumps(value)  # a TOML basic string for the ASCII text used in tests
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_toml(v) for v in value) + "]"
    raise TypeError(f"no TOML form for {value!r}")


def worksheet_text(parts: Parts, steps: Steps = (), *, frequency: str | None = None, title: str = "test") -> str:
    """``parts`` maps part id to its fields (``{"resistor": "1 ohm", "nodes": ["a", "gnd"]}``)."""
    lines = ["[worksheet]", "format = 1", f"title = {_toml(title)}"]
    if frequency is not None:
        lines.append(f"frequency = {_toml(frequency)}")
    lines.append("[parts]")
    for ident, fields in parts.items():
        body = ", ".join(f"{key} = {_toml(val)}" for key, val in fields.items())
        lines.append(f"{ident} = {{ {body} }}")
    for step in steps:
        lines.append("[[step]]")
        lines.extend(f"{key} = {_toml(val)}" for key, val in step.items())
    return "\n".join(lines) + "\n"


@pytest.fixture(scope="session")
def make_worksheet() -> Callable[..., str]:
    """The :func:`worksheet_text` builder (session scope, so hypothesis tests may use it)."""
    return worksheet_text
