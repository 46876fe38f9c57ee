"""The Markdown record keeps the worksheet verbatim, whatever backticks it holds.

The block is read back with markdown-it-py, a CommonMark parser (the CommonMark spec
0.31, section 4.5, fenced code blocks: a fence closes only at a fence of the same
character at least as long; section 4.4: an indented block drops its leading and
trailing blank lines), and compared with the worksheet byte for byte and by the
SHA-256 the record prints.
"""

from __future__ import annotations

import hashlib
import re

from markdown_it import MarkdownIt

from handcheck.pipeline import record_inputs
from handcheck.record.write import make_record
from handcheck.worksheet.load import loads

SHEET = """
# The divider ratio is ``R2/(R1+R2)``; a fence in a comment:
# ```
# and a longer one: `````
[worksheet]
format = 1
title = "Bias divider ```with``` backticks"
[parts]
Vb = { voltage = "12 V", nodes = ["sup", "gnd"] }
R1 = { resistor = "10 kohm", nodes = ["sup", "mid"] }
R2 = { resistor = "4.7 kohm", nodes = ["mid", "gnd"] }
[[step]]
name = "Vmid"
quantity = "voltage(mid)"
claim = "3.837 V"
\t# a tab-indented comment after the steps


"""


def test_the_worksheet_survives_backtick_fences_and_blank_lines() -> None:
    inputs = record_inputs(loads(SHEET, "ticks.toml"), evidence=False)
    md = make_record(inputs, ".md", "ticks")[0].decode("utf-8")
    tokens = MarkdownIt("commonmark").parse(md)
    blocks = [t for t in tokens if t.type in ("fence", "code_block")]
    verbatim = [b for b in blocks if "[worksheet]" in b.content]
    assert len(verbatim) == 1, "the worksheet is one code block, not cut by its own backticks"
    assert verbatim[0].content == SHEET
    printed = re.search(r"SHA-256 `([0-9a-f]{64})`", md)
    assert printed is not None
    assert hashlib.sha256(verbatim[0].content.encode("utf-8")).hexdigest() == printed.group(1)
    # nothing after the block was swallowed into it: the next section is a heading
    after = tokens[tokens.index(verbatim[0]) + 1]
    assert after.type == "heading_open"
