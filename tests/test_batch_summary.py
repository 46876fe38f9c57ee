"""The summary table at the end of a terminal batch (issue 16, item 2).

Its rows must say what each worksheet's own check output format 1 object says (the
verdicts of its steps); drawn with rich on a terminal, plain text otherwise, and the
one-line summary stays the last line.
"""

from __future__ import annotations

import io
import shutil
from collections import Counter
from pathlib import Path

from handcheck.batch import check_all, print_summary_table, summary_line, summary_rows, summary_table

DEMOS = Path(__file__).resolve().parents[1] / "worksheets"


def outcomes(tmp_path: Path):
    for name in ("coil-snubber.toml", "adc-antialias.toml"):
        shutil.copy(DEMOS / name, tmp_path / name)
    (tmp_path / "broken.toml").write_text("[worksheet\n", encoding="utf-8")
    return check_all([str(tmp_path / n) for n in ("adc-antialias.toml", "broken.toml", "coil-snubber.toml")])


class _Terminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_rows_plain_and_terminal(tmp_path: Path, monkeypatch, capsys) -> None:
    done = outcomes(tmp_path)
    rows = summary_rows(done)
    for outcome, row in zip(done, rows, strict=True):
        assert row[0] == outcome.path and row[3] == f"{outcome.seconds:.1f}"
        if outcome.error:
            assert row[1:3] == ("-", "refused")
            continue
        counts = Counter(step["verdict"] for step in outcome.data["steps"])
        assert row[1] == str(len(outcome.data["steps"]))
        assert row[2] == ", ".join(f"{n} {v}" for v, n in sorted(counts.items()))
    plain = summary_table(done).splitlines()
    assert plain[0].split() == ["worksheet", "steps", "verdicts", "seconds"] and len(plain) == 4
    assert all("refused" in line for line in plain if "broken" in line)
    print_summary_table(done)  # capsys: no terminal, plain text
    assert capsys.readouterr().out == summary_table(done) + "\n"
    screen = _Terminal()
    monkeypatch.setattr("sys.stdout", screen)
    print_summary_table(done)
    drawn = screen.getvalue()
    assert "─" in drawn or "━" in drawn  # rich draws the table's rules
    assert "arithmetic" in drawn and "refused" in drawn
    assert summary_line(done).startswith("3 worksheets: 1 ok, 1 differ, 1 refused (")
