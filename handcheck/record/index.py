"""The index page of a folder of records (``handcheck record PATH ... -o FOLDER``).

:func:`handcheck.batch.record_all` writes one record per worksheet and gives an
:class:`Entry` for each (a worksheet that cannot be read or recorded gets its message
instead); this module names the record files and renders the index page, which links
every record with its title, verdict counts and whether it is ok.

>>> record_name("sheets/sub/lc-filter.toml", ".html", set())
'lc-filter.html'
>>> record_name("other/lc-filter.toml", ".html", {"lc-filter.html"})
'lc-filter-2.html'
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal
from urllib.parse import quote

__all__ = ["Entry", "RecordFormat", "index_name", "record_name", "render_index", "status_of"]

EXIT_OK, EXIT_DISAGREES, EXIT_BAD_INPUT = 0, 1, 2

RecordFormat = Literal["html", "md", "json"]


@dataclass(frozen=True)
class Entry:
    """One row of the index: a worksheet and its record, or the message why it has none.

    ``file`` is the record's name inside the output folder (``None`` when refused);
    ``status`` the worksheet's exit status (0, 1 or 2).
    """

    worksheet: str
    status: int
    file: str | None = None
    title: str | None = None
    steps: int = 0
    verdict_counts: dict[str, int] = field(default_factory=dict, compare=False)
    audit_counts: dict[str, int] = field(default_factory=dict, compare=False)
    error: str | None = None
    seconds: float = field(default=0.0, compare=False)

    @property
    def ok(self) -> bool:
        return self.status == EXIT_OK


def record_name(worksheet: str, suffix: str, taken: set[str]) -> str:
    """The record's file name: the worksheet's stem and ``suffix``, numbered if taken."""
    stem = Path(worksheet).stem or "worksheet"
    name, number = f"{stem}{suffix}", 1
    while name.lower() in {t.lower() for t in taken} or name.lower() in ("index.html", "index.md"):
        number += 1
        name = f"{stem}-{number}{suffix}"
    return name


def index_name(fmt: RecordFormat) -> str:
    """``index.md`` beside Markdown records, ``index.html`` beside HTML and JSON ones."""
    return "index.md" if fmt == "md" else "index.html"


def _row(entry: Entry) -> dict[str, Any]:
    return {
        "worksheet": entry.worksheet,
        "file": entry.file,
        "href": quote(entry.file) if entry.file else None,
        "title": entry.title,
        "steps": entry.steps,
        "verdicts": ", ".join(f"{n} {verdict}" for verdict, n in entry.verdict_counts.items()),
        "audit": ", ".join(f"{n} {verdict}" for verdict, n in entry.audit_counts.items()),
        "status": ("ok", "not ok", "refused")[min(entry.status, EXIT_BAD_INPUT)],
        "error": entry.error,
    }


def render_index(entries: Sequence[Entry], kind: Literal["html", "md"] = "html") -> str:
    """The index page: one row per worksheet (title linked to its record, verdict
    counts, ok or not ok, or the message of a worksheet that has no record).

    The HTML goes through the record's autoescaping jinja2 environment; the Markdown
    escapes worksheet text for Markdown. No date: the same entries give the same bytes.
    """
    from handcheck.record.render import environment

    counts = {"ok": 0, "not ok": 0, "refused": 0}
    rows = [_row(entry) for entry in entries]
    for row in rows:
        counts[row["status"]] += 1
    template = "index.html.j2" if kind == "html" else "index.md.j2"
    return environment(kind == "html").get_template(template).render(rows=rows, counts=counts)


def status_of(entries: Sequence[Entry]) -> int:
    """The exit status: the highest of the worksheets' (0 for none)."""
    return max((entry.status for entry in entries), default=EXIT_OK)
