"""Records of many worksheets (issue 16, item 4): one record per worksheet and an index page.

The reference for each row of the index is the worksheet's own ``handcheck check FILE
--json`` (the single-file path): its title and verdict counts must be the row's. Links
are read back with the standard library's HTML parser and must name files that exist;
a hostile title must arrive escaped (the HTML escaping rules of the HTML Living
Standard, as markupsafe applies them).
"""

from __future__ import annotations

import json
import re
import shutil
from collections import Counter
from html.parser import HTMLParser
from pathlib import Path
from urllib.parse import unquote

import pytest

from handcheck.record.index import Entry, record_name, render_index
from handcheck.testing import run_command

REPO = Path(__file__).resolve().parents[1]
DEMOS = REPO / "worksheets"
BROKEN = "[worksheet\nformat = 1\n"  # not TOML: the table header is not closed
HOSTILE = 'Snubber <script>alert("x")</script> & <b>bold</b>'


run = run_command  # exit status, stdout and stderr of the command line


@pytest.fixture
def folder(tmp_path: Path) -> Path:
    """Two bundled worksheets (one agrees, one differs) and a broken file."""
    sheets = tmp_path / "sheets"
    sheets.mkdir()
    shutil.copy(DEMOS / "coil-snubber.toml", sheets / "coil-snubber.toml")
    shutil.copy(DEMOS / "adc-antialias.toml", sheets / "adc-antialias.toml")
    (sheets / "broken.toml").write_text(BROKEN, encoding="utf-8")
    return sheets


class _Links(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.hrefs: list[str] = []
        self.scripts = 0

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        if tag == "a":
            self.hrefs.extend(value for name, value in attrs if name == "href" and value)
        if tag in ("script", "b"):
            self.scripts += 1


def links(page: Path) -> _Links:
    parser = _Links()
    parser.feed(page.read_text(encoding="utf-8"))
    return parser


def reference(capsys, path: Path) -> dict:
    _, out, _ = run(capsys, "check", str(path), "--json")
    return json.loads(out)


@pytest.mark.slow  # records a folder, figures drawn
def test_records_and_index_for_a_folder(folder: Path, tmp_path: Path, capsys) -> None:
    out = tmp_path / "records"
    code, _, err = run(capsys, "record", str(folder), "-o", str(out), "--no-evidence")
    assert code == 2  # the highest: the broken file
    assert "broken.toml" in err and "not valid TOML" in err
    assert sorted(p.name for p in out.iterdir()) == ["adc-antialias.html", "coil-snubber.html", "index.html"]
    index = out / "index.html"
    parsed = links(index)
    assert sorted(parsed.hrefs) == ["adc-antialias.html", "coil-snubber.html"]
    for href in parsed.hrefs:
        assert (out / unquote(href)).is_file()
    page = index.read_text(encoding="utf-8")
    assert "not valid TOML" in page and "refused" in page
    assert "3 worksheets: 1 ok, 1 not ok, 1 refused." in page
    # each row says what the worksheet's own check says
    for name in ("coil-snubber", "adc-antialias"):
        data = reference(capsys, folder / f"{name}.toml")
        counts = Counter(step["verdict"] for step in data["steps"])
        shown = ", ".join(f"{n} {verdict}" for verdict, n in sorted(counts.items()))
        row = re.search(rf'<a href="{name}.html">(.*?)</a></td>\s*<td class="num">(\d+)</td>\s*<td>(.*?)</td>', page)
        assert row is not None
        assert row.group(1) == data["title"].replace("&", "&amp;")
        assert int(row.group(2)) == len(data["steps"]) and row.group(3) == shown
        assert (out / f"{name}.html").read_text(encoding="utf-8").startswith("<!DOCTYPE html>")


@pytest.mark.slow  # records a folder twice
def test_exit_status_without_the_broken_file(folder: Path, tmp_path: Path, capsys) -> None:
    (folder / "broken.toml").unlink()
    code, _, _ = run(capsys, "record", str(folder), "-o", str(tmp_path / "r"), "--no-evidence")
    assert code == 1  # adc-antialias differs
    (folder / "adc-antialias.toml").unlink()
    code, _, _ = run(capsys, "record", str(folder), "-o", str(tmp_path / "r2"), "--no-evidence")
    assert code == 0


@pytest.mark.slow  # records a folder, figures drawn
def test_index_escapes_a_hostile_title(folder: Path, tmp_path: Path, capsys) -> None:
    text = (DEMOS / "coil-snubber.toml").read_text(encoding="utf-8")
    old = re.search(r'^title = ".*"$', text, re.MULTILINE)
    assert old is not None
    hostile = text.replace(old.group(0), "title = " + json.dumps(HOSTILE), 1)
    (folder / "coil-snubber.toml").write_text(hostile, encoding="utf-8")
    out = tmp_path / "records"
    run(
        capsys,
        "record",
        str(folder / "coil-snubber.toml"),
        str(folder / "broken.toml"),
        "-o",
        str(out),
        "--no-evidence",
    )
    page = (out / "index.html").read_text(encoding="utf-8")
    assert "<script>" not in page and "<b>" not in page
    assert "&lt;script&gt;alert(&#34;x&#34;)&lt;/script&gt; &amp; &lt;b&gt;bold&lt;/b&gt;" in page
    assert links(out / "index.html").scripts == 0


@pytest.mark.slow  # records a folder, figures drawn
def test_markdown_records_and_index(folder: Path, tmp_path: Path, capsys) -> None:
    out = tmp_path / "md"
    code, _, _ = run(capsys, "record", str(folder), "-o", str(out), "--format", "md", "--no-evidence")
    assert code == 2
    index = (out / "index.md").read_text(encoding="utf-8")
    targets = re.findall(r"\]\(<([^>]*)>\)", index)
    assert sorted(targets) == ["adc-antialias.md", "coil-snubber.md"]
    for target in targets:
        assert (out / unquote(target)).is_file()
    assert "no record:" in index and not (out / "index.html").exists()


@pytest.mark.slow  # records a folder, figures drawn
def test_one_file_keeps_the_single_record(folder: Path, tmp_path: Path, capsys) -> None:
    target = tmp_path / "one.html"
    code, _, _ = run(capsys, "record", str(folder / "coil-snubber.toml"), "-o", str(target), "--no-evidence")
    assert code == 0 and target.is_file()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["one.html", "sheets"]


def test_an_output_that_is_a_file_is_refused(folder: Path, tmp_path: Path, capsys) -> None:
    target = tmp_path / "taken.html"
    target.write_text("keep", encoding="utf-8")
    code, _, err = run(capsys, "record", str(folder), "-o", str(target), "--no-evidence")
    assert code == 2 and "is a file" in err and target.read_text(encoding="utf-8") == "keep"


def test_names_are_unique_and_the_index_is_reproducible() -> None:
    taken: set[str] = set()
    names = []
    for path in ("a/x.toml", "b/x.toml", "c/X.toml", "index.toml"):
        names.append(record_name(path, ".html", taken))
        taken.add(names[-1])
    assert names == ["x.html", "x-2.html", "X-3.html", "index-2.html"]
    entries = [Entry("a/x.toml", 0, file="x.html", title="T", steps=1, verdict_counts={"agrees": 1})]
    assert render_index(entries) == render_index(entries)


EPOCH = "1700000000"  # SOURCE_DATE_EPOCH: the same records byte for byte


@pytest.mark.slow  # about 10 s: two worker processes start and import the library
def test_jobs_2_writes_the_same_bytes_as_jobs_1(folder: Path, tmp_path: Path, capsys, monkeypatch) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    one, two = tmp_path / "one", tmp_path / "two"
    first = run(capsys, "record", str(folder), "-o", str(one), "--no-evidence")
    second = run(capsys, "record", str(folder), "-o", str(two), "--no-evidence", "--jobs", "2")
    assert first[0] == second[0] == 2 and first[2].replace(str(one), "") == second[2].replace(str(two), "")
    names = sorted(p.name for p in one.iterdir())
    assert names == sorted(p.name for p in two.iterdir()) == ["adc-antialias.html", "coil-snubber.html", "index.html"]
    for name in names:
        assert (one / name).read_bytes() == (two / name).read_bytes(), name


def _reseal_with_another_verdict(record: Path) -> None:
    """As if an older version had found another verdict: a stored result differs, the file sealed again."""
    from handcheck.record.document import seal

    data = json.loads(record.read_text(encoding="utf-8"))
    step = data["steps"][0]["name"]
    data["results"][f"step {step}"]["verdict"] = "differs"
    data["digest"] = "sha256:" + "0" * 64
    record.write_bytes(seal(json.dumps(data, ensure_ascii=False, indent=2) + "\n"))


@pytest.mark.slow  # reverifies with --jobs 2: worker processes start
def test_reverify_a_folder_of_records(folder: Path, tmp_path: Path, capsys) -> None:
    (folder / "broken.toml").unlink()
    out = tmp_path / "records"
    run(capsys, "record", str(folder), "-o", str(out), "--no-evidence", "--format", "json")
    code, stdout, err = run(capsys, "reverify", str(out))
    assert code == 0 and err == ""
    records = [out / "adc-antialias.json", out / "coil-snubber.json"]  # sorted; the index page left out
    assert stdout.splitlines() == [f"{r}: every result is the same" for r in records] + [
        "2 records: 2 the same, 0 changed, 0 refused"
    ]
    # one record changed (sealed again), one altered after it was written (a digit edited)
    _reseal_with_another_verdict(records[0])
    text = records[1].read_text(encoding="utf-8")
    digit = re.search(r'"error": (\d)', text)
    assert digit is not None
    other = "1" if digit.group(1) != "1" else "2"
    records[1].write_text(text[: digit.start(1)] + other + text[digit.end(1) :], encoding="utf-8")
    code, stdout, err = run(capsys, "reverify", str(out), "--jobs", "2")
    assert code == 2  # the highest: the altered record
    # each record's lines are what reverify of that record alone prints
    alone = [run(capsys, "reverify", str(r)) for r in records]
    assert [a[0] for a in alone] == [1, 2]
    assert stdout.splitlines() == [*alone[0][1].splitlines(), "2 records: 0 the same, 1 changed, 1 refused"]
    assert "differs" in alone[0][1] and err == alone[1][2] and "altered" in err


def test_reverify_a_folder_without_records_is_refused(tmp_path: Path, capsys) -> None:
    (tmp_path / "notes.txt").write_text("no record here", encoding="utf-8")
    code, out, err = run(capsys, "reverify", str(tmp_path))
    assert (code, out) == (2, "") and "holds no record" in err


@pytest.mark.slow  # starts two pools of worker processes
def test_workers_see_the_environment_of_the_moment(monkeypatch) -> None:
    # A forkserver keeps the environment it started with (Python docs, multiprocessing,
    # "Contexts and start methods"): a variable set after the first pool must still
    # reach the next pool's workers, or SOURCE_DATE_EPOCH would be lost.
    import os

    from handcheck.batch import _map

    monkeypatch.delenv("HANDCHECK_MARKER", raising=False)
    assert _map(os.getenv, ["HANDCHECK_MARKER"] * 2, jobs=2, done=None, ended=lambda *a: "ended") == (None, None)
    monkeypatch.setenv("HANDCHECK_MARKER", "set later")
    got = _map(os.getenv, ["HANDCHECK_MARKER"] * 2, jobs=2, done=None, ended=lambda *a: "ended")
    assert got == ("set later", "set later")
