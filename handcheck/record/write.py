"""Write a calculation record and re-verify one (``handcheck record`` and ``handcheck reverify``).

The format follows the output file's suffix: ``.html``, ``.md`` or ``.json``
(docs/record.md). Every file is written atomically; a Markdown record's plots are
SVG files beside it, named after it.
"""

from __future__ import annotations

import math
import re
import tempfile
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from handcheck.errors import HandcheckError
from handcheck.record.document import RecordError, embedded_data, seal, verify_digest, write_atomic
from handcheck.record.inputs import Inputs

__all__ = [
    "FORMATS",
    "Reverified",
    "check_suffix",
    "compare",
    "make_record",
    "read_record",
    "recorded_worksheet",
    "write_record",
]

FORMATS = (".html", ".md", ".json")
#: Relative difference below which two recomputed numbers count as the same result.
SAME_RESULT = 1e-9


def _svg_of(draw: Any) -> str:
    """The SVG text ``draw(path)`` writes (deterministic: fixed ids, no date, no metadata)."""
    import matplotlib

    with tempfile.TemporaryDirectory(prefix="handcheck-record-") as folder:
        target = Path(folder) / "plot.svg"
        with matplotlib.rc_context({"svg.hashsalt": "handcheck-record", "svg.fonttype": "path"}):
            draw(target)
        svg = target.read_text(encoding="utf-8")
    svg = re.sub(r"<\?xml[^>]*\?>\s*", "", svg)
    svg = re.sub(r"<!DOCTYPE[^>]*>\s*", "", svg)
    svg = re.sub(r"<metadata>.*?</metadata>\s*", "", svg, flags=re.DOTALL)
    return svg.strip()


def record_plots(inputs: Inputs) -> list[dict[str, str]]:
    """The record's plots (the evidence plots, then one Bode plot a network function) as SVG text.

    Drawing is the slow part of a record (matplotlib, text as paths); pass the result to
    :func:`make_record` to write several formats of one record without drawing again.

    Parameters
    ----------
    inputs : Inputs
        From :func:`handcheck.pipeline.record_inputs`.

    Returns
    -------
    list of dict
        One ``{"title", "svg"}`` a plot, in the order the record shows them.
    """
    plots = []
    if inputs.evidence is not None:
        from handcheck.record.plots import plot_evidence

        title = "Waveforms, transient and phasors from the numerical solution (claimed values dashed)"
        svg = _svg_of(lambda target: plot_evidence(inputs.report, inputs.evidence, target))
        plots.append({"title": title, "svg": svg})
    if inputs.curves:
        from handcheck.record.bode import plot_bode

        # one figure a network function, so that each fits the width of a printed page
        for curve in inputs.curves:
            title = f"Frequency response of the exact network function {curve.text} (Bode plot; claimed values marked)"
            svg = _svg_of(lambda target, one=curve: plot_bode(inputs.report, (one,), target))
            plots.append({"title": title, "svg": svg})
    return plots


def make_record(
    inputs: Inputs, suffix: str, stem: str = "record", plots: list[dict[str, str]] | None = None
) -> tuple[bytes, dict[str, bytes]]:
    """The sealed record in the format of ``suffix``, and the files that go beside it.

    Parameters
    ----------
    inputs : Inputs
        From :func:`handcheck.pipeline.record_inputs`.
    suffix : str
        ``.html``, ``.md`` or ``.json``.
    stem : str
        The record file's name without suffix (names the plot files of a Markdown record).
    plots : list of dict, optional
        From :func:`record_plots` of the same ``inputs``; drawn here when not given.

    Returns
    -------
    tuple
        The record's bytes and a mapping of side file names to their bytes.
    """
    import hashlib

    from handcheck.record.model import build_record
    from handcheck.record.render import render_html, render_json, render_markdown

    drawn = record_plots(inputs) if plots is None else plots
    plots = [dict(plot) for plot in drawn]  # the Markdown format adds its file names to them
    side: dict[str, bytes] = {}
    if suffix == ".md":
        for index, plot in enumerate(plots, start=1):
            name = f"{stem}-plot{index}.svg"
            data = (plot["svg"] + "\n").encode("utf-8")
            side[name] = data
            plot["file"] = name
            plot["sha256"] = hashlib.sha256(data).hexdigest()
    record = build_record(inputs, plots)
    for entry, plot in zip(record["plots"], plots, strict=True):
        if "sha256" in plot:
            entry["sha256"] = plot["sha256"]
    if suffix == ".html":
        text = render_html(record, plots)
    elif suffix == ".md":
        text = render_markdown(record)
    else:
        text = render_json(record)
    return seal(text), side


def write_record(inputs: Inputs, out: str | Path) -> Path:
    """Write the calculation record of ``inputs`` to ``out`` (and a Markdown record's plots beside it).

    Raises
    ------
    HandcheckError
        For an ``out`` of another suffix than ``.html``, ``.md`` or ``.json``.
    OSError
        When the record cannot be written.
    """
    target = Path(out)
    check_suffix(target)
    data, side = make_record(inputs, target.suffix.lower(), target.stem)
    for name, content in side.items():
        write_atomic(target.parent / name, content)
    return write_atomic(target, data)


def check_suffix(target: str | Path) -> None:
    """Refuse a record file name whose suffix names no record format.

    Raises
    ------
    HandcheckError
        For a suffix other than ``.html``, ``.md`` or ``.json``.
    """
    target = Path(target)
    if target.suffix.lower() not in FORMATS:
        raise HandcheckError(
            f'a record is written as .html, .md or .json, not "{target.name}"; name the file by its format'
        )


@dataclass(frozen=True)
class Reverified:
    """The outcome of re-running a record's worksheet: the results that changed.

    ``error`` is the message when the file is no record, was altered after it was
    written, or could not be re-run; ``status`` the exit status of ``reverify`` (0
    every result the same, 1 one changed, 2 refused).
    """

    path: str
    changes: tuple[str, ...]
    error: str | None = None

    @property
    def same(self) -> bool:
        return not self.changes and self.error is None

    @property
    def status(self) -> int:
        return 2 if self.error is not None else 1 if self.changes else 0

    def lines(self) -> list[str]:
        """What ``reverify`` prints on stdout for this record (nothing for a refused one)."""
        if self.error is not None:
            return []
        if not self.changes:
            return [f"{self.path}: every result is the same"]
        return [f"{self.path}: changed: {change}" for change in self.changes]


def _same(a: Any, b: Any) -> bool:
    if isinstance(a, float) and isinstance(b, float):
        return math.isclose(a, b, rel_tol=SAME_RESULT, abs_tol=0.0) or a == b
    if isinstance(a, list) and isinstance(b, list):
        return len(a) == len(b) and all(_same(x, y) for x, y in zip(a, b, strict=True))
    if isinstance(a, dict) and isinstance(b, dict):
        return a.keys() == b.keys() and all(_same(a[k], b[k]) for k in a)
    return bool(a == b)


def _changes(before: dict[str, Any], after: dict[str, Any]) -> list[str]:
    changes = []
    for name in sorted(before.keys() | after.keys()):
        if name not in after:
            changes.append(f"{name}: no longer computed")
        elif name not in before:
            changes.append(f"{name}: new result")
        elif not _same(before[name], after[name]):
            old, new = before[name], after[name]
            if isinstance(old, dict) and isinstance(new, dict):
                fields = [
                    f"{key} {old.get(key)!r} -> {new.get(key)!r}"
                    for key in sorted(old.keys() | new.keys())
                    if not _same(old.get(key), new.get(key))
                ]
                changes.append(f"{name}: " + "; ".join(fields))
            else:
                changes.append(f"{name}: {old!r} -> {new!r}")
    return changes


def read_record(path: str) -> dict[str, Any]:
    """A record's embedded worksheet and results, after its digest is checked.

    Raises
    ------
    RecordError
        When the file is no record, or was altered after it was written.
    """
    try:
        data = Path(path).read_bytes()
    except FileNotFoundError:
        raise RecordError("no such file", file=path) from None
    except OSError as exc:
        raise RecordError(f"cannot read the file: {exc.strerror}", file=path) from None
    verify_digest(data, path)
    return embedded_data(data, path)


def recorded_worksheet(stored: dict[str, Any], path: str) -> Any:
    """The worksheet embedded in a record, loaded again (it must match its SHA-256).

    Raises
    ------
    RecordError
        When the embedded text does not match the recorded SHA-256.
    """
    from handcheck.worksheet.load import loads

    sheet = stored["worksheet"]
    worksheet = loads(sheet["text"], str(sheet.get("path") or path))
    if sheet.get("sha256") and worksheet.sha256 != sheet["sha256"]:
        raise RecordError("the embedded worksheet does not match its SHA-256", file=path)
    return worksheet


def compare(path: str, stored: dict[str, Any], inputs: Inputs) -> Reverified:
    """Every recorded result against the same result computed again from ``inputs``."""
    from handcheck.record.model import build_record, results_of

    now = results_of(build_record(inputs))
    return Reverified(path, tuple(_changes(stored["results"], now)))
