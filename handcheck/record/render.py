"""Render a record (:mod:`handcheck.record.model`) as HTML, Markdown or JSON text.

HTML and Markdown go through jinja2 templates shipped in the package
(``handcheck/record/templates``). The HTML environment escapes every value; only the
MathML made by sympy's printer from the project's own objects and the SVG drawn by
matplotlib are marked safe. The Markdown environment escapes worksheet text for
Markdown instead.
"""

from __future__ import annotations

import json
import re
from typing import Any

from handcheck.record.document import data_line, digest_line
from handcheck.record.visible import visible

__all__ = ["environment", "render_html", "render_json", "render_markdown"]

#: Spaces before the fence and each line of the worksheet's verbatim block (at most 3,
#: or the fence would be an indented code block).
VERBATIM_INDENT = 3
_MD_SPECIAL = re.compile(r"([\\`*_\[\]|#!{}$~])")


def environment(autoescape: bool) -> Any:
    """The jinja2 environment of the record templates (HTML: every value escaped)."""
    import jinja2

    env = jinja2.Environment(
        loader=jinja2.PackageLoader("handcheck.record", "templates"),
        autoescape=autoescape,
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
    )
    env.filters["md"] = _markdown_text
    env.filters["visible"] = lambda value: visible(" ".join(str(value).split()))
    env.filters["verbatim"] = _verbatim
    env.filters["number"] = _number
    return env


def _markdown_text(value: Any) -> str:
    """Worksheet text safe inside Markdown (and its tables): specials escaped, one line."""
    text = visible(" ".join(("" if value is None else str(value)).split()))
    text = text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    return _MD_SPECIAL.sub(r"\\\1", text)


def _fence(text: str) -> str:
    """A backtick fence longer than any run of backticks in ``text``."""
    runs = [len(m) for m in re.findall(r"`+", text)]
    return "`" * max(3, max(runs, default=0) + 1)


def _verbatim(text: str) -> str:
    """``text`` as a fenced code block that gives back every line of it.

    The fence is longer than any run of backticks in the text, so no line of it closes
    the block, and a fenced block keeps leading and trailing blank lines, which an
    indented one drops. Fence and lines stand indented by :data:`VERBATIM_INDENT`
    spaces, which a reader takes off again (CommonMark 0.31, sections 4.4 and 4.5,
    common practice): no worksheet line starts where the record's digest line does.
    """
    pad = " " * VERBATIM_INDENT
    fence = pad + _fence(text)
    lines = "".join(f"{pad}{line}\n" for line in text.split("\n")[: -1 if text.endswith("\n") else None])
    return f"{fence}toml\n{lines}{fence}"


def _number(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, float):
        return f"{value:.4g}"
    return str(value)


def _reverify_data(record: dict[str, Any]) -> dict[str, Any]:
    return {key: record[key] for key in ("record_format", "worksheet", "results")}


def _math(record: dict[str, Any]) -> dict[str, Any]:
    """The record with every MathML string marked safe (sympy's printer made it)."""
    from markupsafe import Markup

    def mark(value: Any) -> Any:
        if isinstance(value, dict):
            return {k: (Markup(v) if k == "mathml" and isinstance(v, str) else mark(v)) for k, v in value.items()}
        if isinstance(value, list):
            return [mark(v) for v in value]
        return value

    return mark(record)


def render_html(record: dict[str, Any], plots: list[dict[str, str]]) -> str:
    """The record as one self-contained HTML page (before sealing).

    Parameters
    ----------
    record : dict
        From :func:`handcheck.record.model.build_record`.
    plots : list of dict
        ``title`` and ``svg`` (an SVG element drawn by matplotlib) for each plot.

    Returns
    -------
    str
        The page, with its data and digest lines last.
    """
    from markupsafe import Markup

    shown = [{"title": p["title"], "svg": Markup(p["svg"])} for p in plots]
    page = environment(True).get_template("record.html.j2").render(record=_math(record), plots=shown)
    return page + data_line(_reverify_data(record)) + "\n" + digest_line() + "\n"


def render_markdown(record: dict[str, Any]) -> str:
    """The record as Markdown: tables, ``$...$`` LaTeX, plots linked as SVG files beside it."""
    page = environment(False).get_template("record.md.j2").render(record=record)
    return page + "\n" + data_line(_reverify_data(record)) + "\n" + digest_line() + "\n"


def render_json(record: dict[str, Any]) -> str:
    """The record as JSON (record format 1), its digest on the last key's own line."""
    data = dict(record)
    data["digest"] = "sha256:" + "0" * 64
    text = json.dumps(data, ensure_ascii=False, indent=2)
    return text + "\n"
