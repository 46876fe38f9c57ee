"""JUnit XML for CI systems, from check output format 1 objects.

The layout is the common practice of JUnit XML as CI systems and JUnit-reading
libraries take it (there is no one published schema): a ``<testsuites>`` root, one
``<testsuite>`` per worksheet, one ``<testcase>`` per step and per audit formula (and
one for the numerical evidence when it was made). A step or formula that does not
agree carries a ``<failure>`` with its verdict, the claimed and exact values and the
diagnosis; an unchecked step is ``<skipped>``; a worksheet that could not be read or
checked is one test case with an ``<error>``.

>>> xml = junit_bytes([({"worksheet": "a.toml", "ok": False, "error": "a.toml: no such file"}, 0.0)])
>>> b'<error message="a.toml: no such file" type="refused"' in xml
True
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET
from collections.abc import Sequence
from pathlib import Path
from typing import Any

__all__ = ["junit_bytes", "write_junit"]

#: Characters XML 1.0 cannot hold at all, even escaped.
_NOT_XML = re.compile("[^\t\n\r\x20-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")


def _clean(value: object) -> str:
    return _NOT_XML.sub("\ufffd", "" if value is None else str(value))


def _element(parent: ET.Element, tag: str, text: str | None = None, **attributes: object) -> ET.Element:
    child = ET.SubElement(parent, tag, {key: _clean(value) for key, value in attributes.items()})
    if text:
        child.text = _clean(text)
    return child


def _step_text(step: dict[str, Any]) -> str:
    lines = [f"verdict: {step.get('verdict')}", f"claimed: {step.get('claimed')}", f"exact: {step.get('expected')}"]
    if step.get("error") is not None:
        lines.append(f"relative error: {step['error']:.3g}")
    if step.get("caused_by"):
        lines.append(f"caused by step: {step['caused_by']}")
    if step.get("recomputed"):
        lines.append(f"from the author's own formula and numbers: {step['recomputed']}")
    if step.get("message"):
        lines.append(str(step["message"]))
    lines.extend(f"likely mistake ({d['mistake']}): {d['detail']}" for d in step.get("diagnosis") or ())
    return "\n".join(lines)


def _audit_text(entry: dict[str, Any]) -> str:
    lines = [f"verdict: {entry.get('verdict')}", f"true expression: {entry.get('true_expression')}"]
    if entry.get("nominal_error") is not None:
        lines.append(f"relative error at the nominal values: {entry['nominal_error']:.3g}")
    if entry.get("holds_when"):
        lines.append("holds when: " + "; ".join(entry["holds_when"]))
    lines.extend(f"likely mistake ({d['mistake']}): {d['detail']}" for d in entry.get("diagnosis") or ())
    return "\n".join(lines)


def _suite(root: ET.Element, data: dict[str, Any], seconds: float) -> tuple[int, int, int]:
    name = str(data.get("worksheet", ""))
    suite = _element(root, "testsuite", name=name, time=f"{seconds:.3f}")
    tests = failures = errors = skipped = 0
    if "error" in data:
        case = _element(suite, "testcase", classname=name, name="worksheet", time=f"{seconds:.3f}")
        _element(case, "error", data["error"], message=data["error"], type="refused")
        tests, errors = 1, 1
    else:
        properties = _element(suite, "properties")
        _element(properties, "property", name="sha256", value=data.get("sha256", ""))
        for step in data.get("steps", ()):
            tests += 1
            case = _element(suite, "testcase", classname=name, name=step["name"], time="0")
            verdict = step["verdict"]
            if verdict == "unchecked":
                skipped += 1
                _element(case, "skipped", message=step.get("message") or "nothing to check the claim against")
            elif verdict != "agrees":
                failures += 1
                message = f"{verdict}: claimed {step.get('claimed')}, exact {step.get('expected')}"
                _element(case, "failure", _step_text(step), message=message, type=verdict)
        for entry in data.get("audit", ()):
            tests += 1
            case = _element(suite, "testcase", classname=name, name=f"audit {entry['name']}", time="0")
            if entry["verdict"] not in ("equivalent", "spread"):
                failures += 1
                message = f"{entry['verdict']}: the formula is not {entry.get('quantity')}"
                _element(case, "failure", _audit_text(entry), message=message, type=entry["verdict"])
        evidence = data.get("evidence")
        if evidence is not None:
            tests += 1
            case = _element(suite, "testcase", classname=name, name="numerical evidence", time="0")
            if evidence.get("problems"):
                failures += 1
                text = "\n".join(evidence["problems"])
                _element(case, "failure", text, message=evidence["problems"][0], type="evidence")
    for key, value in (("tests", tests), ("failures", failures), ("errors", errors), ("skipped", skipped)):
        suite.set(key, str(value))
    return tests, failures, errors


def junit_bytes(entries: Sequence[tuple[dict[str, Any], float]]) -> bytes:
    """The JUnit XML document of a batch, as UTF-8 bytes.

    Parameters
    ----------
    entries
        For each worksheet, in order: its check output format 1 object (or error
        object, with an ``"error"`` key) and the seconds its check took.

    Returns
    -------
    bytes
    """
    root = ET.Element("testsuites", {"name": "handcheck"})
    totals = [0, 0, 0]
    seconds = 0.0
    for data, took in entries:
        for index, count in enumerate(_suite(root, data, took)):
            totals[index] += count
        seconds += took
    for key, value in zip(("tests", "failures", "errors"), totals, strict=True):
        root.set(key, str(value))
    root.set("time", f"{seconds:.3f}")
    ET.indent(root)
    return ET.tostring(root, encoding="utf-8", xml_declaration=True) + b"\n"


def write_junit(entries: Sequence[tuple[dict[str, Any], float]], path: str | Path) -> Path:
    """Write the JUnit XML of a batch to ``path`` atomically (a temporary file and a rename).

    Parameters
    ----------
    entries
        As for :func:`junit_bytes`.
    path
        The file to write.

    Returns
    -------
    Path

    Raises
    ------
    OSError
        When the file cannot be written.
    """
    from handcheck.record.document import write_atomic

    return write_atomic(path, junit_bytes(entries))
