"""How deeply a TOML text nests its arrays and inline tables, found before it is parsed.

tomllib recurses on nesting, so a hostile file of brackets would exhaust the stack;
this scan refuses it first, with the line.
"""

from __future__ import annotations

import re

from handcheck.errors import LimitError

__all__ = ["MAX_NESTING", "check_nesting"]

#: Deepest nesting of TOML arrays and inline tables read (a worksheet needs 3: a part's
#: inline table holding a nodes array). TOML 1.0 sets no limit; the parser recurses.
MAX_NESTING = 20
_TOKENS = re.compile(r"""\\.|'''|\"\"\"|["'#\[\]{}\n]""")


def check_nesting(text: str, path: str) -> None:
    """Refuse arrays and inline tables nested deeper than :data:`MAX_NESTING`, with the line.

    A scan of the TOML 1.0 lexical structure (toml.io/en/v1.0.0): brackets inside basic,
    literal and multi-line strings and in comments do not count; table headers [a] and
    [[a]] open and close on their own line.
    """
    depth, line, quote, comment = 0, 1, "", False
    for match in _TOKENS.finditer(text):
        token = match.group()
        if token == "\n":
            line += 1
            comment = False
            if len(quote) == 1:
                quote = ""  # a one-line string cannot go on; tomllib reports that error
            continue
        if comment:
            continue
        if quote:
            if token == quote or (quote == "'" and token == "\\'"):
                quote = ""  # in a literal string a backslash is only a backslash
            continue
        if token in ('"', "'", '"""', "'''"):
            quote = token
        elif token == "#":
            comment = True
        elif token in ("[", "{"):
            depth += 1
            if depth > MAX_NESTING:
                raise LimitError(
                    f"arrays and tables are nested more than {MAX_NESTING} levels deep; a worksheet needs three at most",
                    file=path,
                    line=line,
                )
        elif token in ("]", "}"):
            depth = max(depth - 1, 0)
