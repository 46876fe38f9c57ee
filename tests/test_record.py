"""The calculation record (issue 15): formats, contents, reproducibility, digest, reverify.

Sources: reactance X_L = 2*pi*f*L and X_C = -1/(2*pi*f*C) (any circuits textbook, e.g.
Hayt, Kemmerly and Durbin, Engineering Circuit Analysis, 8th ed., ch. 10; from memory);
SHA-256 from hashlib (FIPS 180-4); the JSON Schema draft 2020-12 validator of the
jsonschema library; presentation MathML and LaTeX from sympy's own printers.
"""

from __future__ import annotations

import hashlib
import html
import json
import re
import shutil
import struct
import subprocess
from importlib import resources
from pathlib import Path

import pytest
import sympy

from handcheck.cli import main
from handcheck.pipeline import record_inputs
from handcheck.record.document import seal, write_atomic
from handcheck.record.formula import latex_of, mathml_of, typeset_formula
from handcheck.record.write import compare, make_record, read_record, record_plots, recorded_worksheet
from handcheck.worksheet.load import load, loads

WORKSHEETS = sorted((Path(__file__).parent.parent / "worksheets").glob("*.toml"))
#: one worker runs this file, so that the module fixture ``bundled`` is made once (pyproject.toml)
pytestmark = pytest.mark.xdist_group("record")

EPOCH = "1700000000"  # 2023-11-14T22:13:20Z
WITH_EVIDENCE = "coil-snubber.toml"


def gather(worksheet, *, evidence: bool, quiet: bool = True):
    return record_inputs(worksheet, evidence=evidence)


def reverify(path: str, quiet: bool = True):
    stored = read_record(path)
    return compare(path, stored, gather(recorded_worksheet(stored, path), evidence="evidence" in stored["results"]))


def _schema() -> dict:
    text = (resources.files("handcheck.record") / "schema" / "record-1.schema.json").read_text(encoding="utf-8")
    return json.loads(text)


@pytest.fixture(scope="module")
def bundled(tmp_path_factory: pytest.TempPathFactory) -> dict[str, dict[str, Path]]:
    """Every bundled worksheet's record in the three formats (one worksheet with evidence)."""
    mp = pytest.MonkeyPatch()
    mp.setenv("SOURCE_DATE_EPOCH", EPOCH)
    folder = tmp_path_factory.mktemp("records")
    made: dict[str, dict[str, Path]] = {}
    try:
        for sheet in WORKSHEETS:
            inputs = gather(load(sheet), evidence=sheet.name == WITH_EVIDENCE, quiet=True)
            made[sheet.name] = {}
            plots = record_plots(inputs)  # drawn once for the three formats
            for suffix in (".html", ".md", ".json"):
                data, side = make_record(inputs, suffix, sheet.stem, plots)
                for name, content in side.items():
                    write_atomic(folder / name, content)
                made[sheet.name][suffix] = write_atomic(folder / f"{sheet.stem}{suffix}", data)
    finally:
        mp.undo()
    return made


def test_every_bundled_worksheet_is_there() -> None:
    assert len(WORKSHEETS) >= 4


@pytest.mark.parametrize("sheet", [w.name for w in WORKSHEETS])
def test_json_record_validates_against_the_shipped_schema(bundled: dict, sheet: str) -> None:
    import jsonschema

    record = json.loads(bundled[sheet][".json"].read_text(encoding="utf-8"))
    jsonschema.validate(record, _schema(), cls=jsonschema.Draft202012Validator)
    assert record["date"] == "2023-11-14T22:13:20Z"
    text = Path(WORKSHEETS[0].parent / sheet).read_text(encoding="utf-8")
    assert record["worksheet"]["text"] == text
    assert record["worksheet"]["sha256"] == hashlib.sha256(text.encode("utf-8")).hexdigest()


@pytest.mark.parametrize("sheet", [w.name for w in WORKSHEETS])
def test_html_record_holds_every_step_in_order(bundled: dict, sheet: str) -> None:
    html = bundled[sheet][".html"].read_text(encoding="utf-8")
    record = json.loads(bundled[sheet][".json"].read_text(encoding="utf-8"))
    order = [
        html.index(f'id="{anchor}"')
        for anchor in ("title", "summary", "circuit", "steps", "evidence", "plots", "cautions", "worksheet", "versions")
    ]
    assert order == sorted(order)
    for step in record["steps"]:
        assert f'id="step-{step["name"]}" data-verdict="{step["verdict"]}"' in html
    assert "<script" not in html.lower()
    assert not re.search(r"(src|href)=\"(https?:)?//", html)
    assert html.count("<math") >= sum(1 for s in record["steps"] if s["formula"])


def test_reactances_are_exact_in_the_record(bundled: dict) -> None:
    # coil-snubber: 50 Hz, Lc = 120 mH, Cs = 0.47 uF. X_L = 2*pi*f*L = 12*pi ohm,
    # X_C = -1/(2*pi*f*C) = -10^6/(47*pi) ohm (textbook reactances, from memory).
    record = json.loads(bundled["coil-snubber.toml"][".json"].read_text(encoding="utf-8"))
    steps = {s["name"]: s for s in record["steps"]}
    assert sympy.sympify(steps["XL"]["exact"]) - 12 * sympy.pi == 0  # our own output, not user text
    assert sympy.simplify(sympy.sympify(steps["XC"]["exact"]) + sympy.Integer(10) ** 6 / (47 * sympy.pi)) == 0
    assert steps["XL"]["exact_typeset"]["mathml"] == mathml_of(12 * sympy.pi)


def test_a_differing_audit_formula_is_in_the_record_and_its_summary(bundled: dict) -> None:
    # piezo-coupling-audit: the note's cutoff 1/(2*pi*Rtop*Cc) against the first-order
    # high-pass cutoff 1/(2*pi*Req*Cc), Req = Rtop || Rbot || Rin (textbook RC
    # high-pass, from memory). At the nominal values the relative error is
    # Req/Rtop - 1 = (1/1.1e-5)/200000 - 1 = -6/11.
    record = json.loads(bundled["piezo-coupling-audit.toml"][".json"].read_text(encoding="utf-8"))
    assert record["summary"]["ok"] is False
    assert record["summary"]["audit_counts"] == {"differs": 1}
    assert "audited formula differs" in record["summary"]["status"]
    (entry,) = record["audit"]
    assert entry["name"] == "fc_note" and entry["verdict"] == "differs" and entry["ok"] is False
    assert entry["nominal_error"] == pytest.approx(-6 / 11, rel=1e-9)
    labels = [label for label, _ in entry["rows"]]
    assert labels[:4] == ["quantity", "formula", "exact", "how"] and "holds when" in labels
    page = bundled["piezo-coupling-audit.toml"][".html"].read_text(encoding="utf-8")
    assert 'id="audit-fc_note"' in page and "audited formula differs" in page
    assert "Holds when" in page
    markdown = bundled["piezo-coupling-audit.toml"][".md"].read_text(encoding="utf-8")
    assert "### fc\\_note: differs" in markdown  # the underscore escaped for Markdown


def test_a_source_shows_its_phasor_and_a_unit_keeps_its_number(bundled: dict) -> None:
    # A sinusoidal source's value in the parts table is its phasor, not the zero DC
    # value; "1 uF" in a substituted formula keeps its 1 (sympy's printer drops a
    # factor 1); multi-letter names are kept apart by a centre dot.
    record = json.loads(bundled["piezo-coupling-audit.toml"][".json"].read_text(encoding="utf-8"))
    parts = {p["id"]: p for p in record["circuit"]["parts"]}
    assert parts["Vsig"]["exact"] == "1/20" and parts["Vsig"]["engineering"] == "50 mV"
    steps = {s["name"]: s for s in record["steps"]}
    assert "<mn>1</mn>" in steps["fc"]["substituted_typeset"]["mathml"]
    assert "&#xB7;" in steps["fc"]["formula_typeset"]["mathml"]


def test_formulas_are_typeset_by_sympys_printers() -> None:
    shown = typeset_formula("2*pi*f*Lc", frozenset({"Lc"}))
    written = sympy.Mul(2, sympy.pi, sympy.Symbol("f"), sympy.Symbol("Lc"), evaluate=False)  # as written
    # sympy's printer, with a centre dot because "Lc" is a name of two letters
    assert latex_of(shown) == sympy.latex(written, order="none", mul_symbol="dot") == r"2 \cdot \pi \cdot f \cdot Lc"
    assert latex_of(typeset_formula("2*pi*f*L", frozenset({"L"}))) == r"2 \pi f L"  # one-letter names: no dot
    assert shown.doit() - 2 * sympy.pi * sympy.Symbol("f") * sympy.Symbol("Lc") == 0
    assert latex_of(typeset_formula("Zc || Zs", frozenset({"Zc", "Zs"}))) == r"Zc \parallel Zs"
    # a number keeps its written digits (37.70, not 37.7)
    assert "<mn>37.70</mn>" in mathml_of(typeset_formula("37.70 ohm", frozenset()))


def test_markdown_links_its_plots_beside_it(bundled: dict) -> None:
    md_path = bundled[WITH_EVIDENCE][".md"]
    text = md_path.read_text(encoding="utf-8")
    record = json.loads(bundled[WITH_EVIDENCE][".json"].read_text(encoding="utf-8"))
    links = re.findall(r"!\[[^\]]*\]\(([^)]+\.svg)\)", text)
    assert links
    for link in links:
        svg = (md_path.parent / link).read_bytes()
        assert svg.lstrip().startswith(b"<svg")
        assert hashlib.sha256(svg).hexdigest() in text
    assert "$2 \\cdot \\pi \\cdot f \\cdot Lc$" in text
    assert record["evidence"] is not None


@pytest.mark.slow  # draws the plots of one record twice
def test_the_same_inputs_give_the_same_bytes(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    inputs = gather(load(WORKSHEETS[0].parent / WITH_EVIDENCE), evidence=True, quiet=True)
    first = make_record(inputs, ".html")[0]
    plots = record_plots(inputs)
    assert make_record(inputs, ".html", plots=plots)[0] == first  # drawn again, the same bytes
    monkeypatch.setenv("SOURCE_DATE_EPOCH", str(int(EPOCH) + 86400))
    assert make_record(inputs, ".html", plots=plots)[0] != first


def test_the_digest_covers_every_byte_but_its_own_line(bundled: dict) -> None:
    for suffix in (".html", ".md", ".json"):
        data = bundled["adc-antialias.toml"][suffix].read_bytes()
        lines = data.split(b"\n")
        index = next(i for i, line in enumerate(lines) if b"sha256:" in line and b"digest" in line)
        rest = b"\n".join(lines[:index] + lines[index + 1 :])
        assert hashlib.sha256(rest).hexdigest().encode() in lines[index]


def _edit_one_digit(text: str, anchor: str) -> str:
    at = text.index(anchor)
    match = re.compile(r"\d").search(text, at)
    assert match is not None
    digit = match.group()
    return text[: match.start()] + str((int(digit) + 1) % 10) + text[match.end() :]


@pytest.mark.parametrize("suffix", [".html", ".md", ".json"])
def test_reverify_refuses_an_edited_digit(
    bundled: dict, tmp_path: Path, suffix: str, capsys: pytest.CaptureFixture
) -> None:
    text = bundled["lc-input-filter.toml"][suffix].read_text(encoding="utf-8")
    edited = tmp_path / f"edited{suffix}"
    edited.write_text(_edit_one_digit(text, "xact"), encoding="utf-8")
    assert main(["reverify", str(edited)]) == 2
    assert "altered after it was written" in capsys.readouterr().err


def test_reverify_refuses_a_file_that_is_no_record(tmp_path: Path, capsys: pytest.CaptureFixture) -> None:
    assert main(["reverify", str(WORKSHEETS[0])]) == 2
    assert "no calculation record" in capsys.readouterr().err
    missing = tmp_path / "missing.html"
    assert main(["reverify", str(missing)]) == 2


def test_reverify_names_a_changed_result(bundled: dict, tmp_path: Path, capsys: pytest.CaptureFixture) -> None:
    # As if an older version had found another verdict: the stored result differs, the file is sealed.
    record = json.loads(bundled["lc-input-filter.toml"][".json"].read_text(encoding="utf-8"))
    name = record["steps"][0]["name"]
    record["results"][f"step {name}"]["verdict"] = "differs"
    record["digest"] = "sha256:" + "0" * 64
    changed = tmp_path / "changed.json"
    changed.write_bytes(seal(json.dumps(record, ensure_ascii=False, indent=2) + "\n"))
    assert main(["reverify", str(changed)]) == 1
    out = capsys.readouterr().out
    assert f"step {name}" in out and "differs" in out


def test_reverify_of_a_fresh_record_finds_every_result_the_same(bundled: dict) -> None:
    outcome = reverify(str(bundled["lc-input-filter.toml"][".html"]), quiet=True)
    assert outcome.same, outcome.changes


def test_record_command_writes_by_suffix_and_reverifies(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, make_worksheet
) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", EPOCH)
    text = make_worksheet(
        {
            "Vs": {"voltage": "10 V", "nodes": ["a", "gnd"]},
            "Rtop": {"resistor": "1 kohm", "nodes": ["a", "b"]},
            "Rbot": {"resistor": "1 kohm", "nodes": ["b", "gnd"]},
        },
        [{"name": "Vb", "quantity": "voltage(b)", "formula": "Vs*Rbot/(Rtop + Rbot)", "claim": "5 V"}],
    ).replace('title = "test"', 'title = "divider"\nauthor = "A. Author"\nchecker = "C. Checker"')
    sheet = tmp_path / "divider.toml"
    sheet.write_text(text, encoding="utf-8")
    out = tmp_path / "divider.md"
    assert main(["record", str(sheet), "-o", str(out), "--no-evidence"]) == 0
    body = out.read_text(encoding="utf-8")
    assert "A. Author" in body and "C. Checker" in body
    assert main(["reverify", str(out)]) == 0
    assert main(["record", str(sheet), "-o", str(tmp_path / "divider.pdf")]) == 2
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".")] == []


def test_an_interrupted_write_keeps_the_old_file(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    import os

    target = tmp_path / "r.html"
    target.write_bytes(b"old")

    def refuse(src: str, dst: str) -> None:
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "replace", refuse)
    with pytest.raises(OSError):
        write_atomic(target, b"new")
    assert target.read_bytes() == b"old"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["r.html"]


PAYLOAD = '<script>document.body.setAttribute("data-pwned","1")</script><img src=x onerror="document.body.setAttribute(\'data-pwned\',\'2\')"> --> </pre> ]]>'


def payload_worksheet(make_worksheet) -> str:
    text = make_worksheet(
        {"Vs": {"voltage": "10 V", "nodes": ["a", "gnd"]}, "Rload": {"resistor": "1 kohm", "nodes": ["a", "gnd"]}},
        [{"name": "I", "quantity": "current(Rload)", "formula": "Vs/Rload", "claim": "10 mA"}],
        title=PAYLOAD,
    )
    # a line of the worksheet that looks like a digest line must not count as one
    reference = f'"""\n<!-- handcheck-record-digest sha256:{"0" * 64} -->\n{PAYLOAD}"""'
    return f"# {PAYLOAD}\n" + text.replace(
        "format = 1", f"format = 1\nreference = {reference}\nauthor = {json.dumps(PAYLOAD)}"
    )


def test_payloads_are_escaped_in_html_and_markdown(tmp_path: Path, make_worksheet) -> None:
    inputs = gather(loads(payload_worksheet(make_worksheet), "payload.toml"), evidence=False, quiet=True)
    html = make_record(inputs, ".html")[0].decode("utf-8")
    assert "<script" not in html and "<img" not in html
    assert "&lt;script&gt;" in html
    md = make_record(inputs, ".md")[0].decode("utf-8")
    body = md.split("<!-- handcheck-record-data")[0]
    # outside the verbatim code block (fenced by a run of backticks of its own length)
    prose = re.sub(r"^( *`{3,})toml\n.*?^\1$", "", body, flags=re.DOTALL | re.MULTILINE).splitlines()
    assert not any("<script" in line or "<img" in line for line in prose)
    assert "&lt;script&gt;" in "\n".join(prose)
    path = tmp_path / "p.md"
    path.write_text(md, encoding="utf-8")
    assert reverify(str(path), quiet=True).same


def test_a_payload_in_a_formula_is_refused_and_nothing_written(tmp_path: Path, make_worksheet) -> None:
    text = make_worksheet(
        {"Vs": {"voltage": "10 V", "nodes": ["a", "gnd"]}, "Rload": {"resistor": "1 kohm", "nodes": ["a", "gnd"]}},
        [{"name": "I", "quantity": "current(Rload)", "formula": "Vs/<script>alert(1)</script>", "claim": "10 mA"}],
    )
    sheet = tmp_path / "bad.toml"
    sheet.write_text(text, encoding="utf-8")
    assert main(["record", str(sheet), "-o", str(tmp_path / "bad.html")]) == 2
    assert not (tmp_path / "bad.html").exists()


# --- In a real browser: headless Chromium (Debian's chromium package; .ci/run installs it) ---

CHROMIUM = next((p for p in (shutil.which("chromium"), shutil.which("chromium-browser")) if p), None)
needs_chromium = pytest.mark.skipif(
    CHROMIUM is None, reason="headless Chromium is not installed (apt-get install chromium)"
)
MEASURE = (
    "<script>document.body.setAttribute('data-math', JSON.stringify(Array.from(document.querySelectorAll('math'))"
    ".map(function (m) { var r = m.getBoundingClientRect(); return [r.width, r.height]; })));</script>"
)


def _chromium(tmp_path: Path, url: str, *flags: str) -> subprocess.CompletedProcess:
    command = [
        CHROMIUM,
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--no-first-run",
        "--enable-logging=stderr",
        "--v=0",
        f"--user-data-dir={tmp_path / 'profile'}",
        *flags,
        url,
    ]
    return subprocess.run(command, capture_output=True, text=True, timeout=120, check=False)


def _console_messages(stderr: str) -> list[str]:
    return [line for line in stderr.splitlines() if "CONSOLE" in line or "Uncaught" in line]


@needs_chromium
@pytest.mark.slow  # starts headless Chromium (1-4 s a page)
@pytest.mark.parametrize("sheet", [w.name for w in WORKSHEETS])
def test_browser_shows_every_verdict_and_sizes_every_formula(bundled: dict, sheet: str, tmp_path: Path) -> None:
    page = bundled[sheet][".html"]
    record = json.loads(bundled[sheet][".json"].read_text(encoding="utf-8"))
    done = _chromium(tmp_path, page.as_uri(), "--dump-dom")
    assert done.returncode == 0, done.stderr[-2000:]
    assert _console_messages(done.stderr) == []
    dom = done.stdout
    for step in record["steps"]:
        found = re.search(rf'id="step-{re.escape(step["name"])}" data-verdict="([a-z]+)"', dom)
        assert found is not None and found.group(1) == step["verdict"]
    assert dom.count("<math") == page.read_text(encoding="utf-8").count("<math") > 0
    # The record runs no script; a test copy without its security policy measures each math element.
    copy = tmp_path / "measure.html"
    text = re.sub(r'<meta http-equiv="Content-Security-Policy"[^>]*>', "", page.read_text(encoding="utf-8"))
    copy.write_text(text.replace("</body>", MEASURE + "</body>"), encoding="utf-8")
    measured = _chromium(tmp_path, copy.as_uri(), "--dump-dom")
    sizes = json.loads(html.unescape(re.search(r'data-math="([^"]*)"', measured.stdout).group(1)))
    assert len(sizes) == dom.count("<math")
    assert all(width > 0 and height > 0 for width, height in sizes), sizes


@needs_chromium
@pytest.mark.slow  # starts headless Chromium (1-4 s a page)
def test_browser_screenshot_and_printed_pages(bundled: dict, tmp_path: Path) -> None:
    page = bundled[WITH_EVIDENCE][".html"]
    shot = tmp_path / "shot.png"
    done = _chromium(tmp_path, page.as_uri(), f"--screenshot={shot}", "--window-size=1100,1600")
    assert done.returncode == 0, done.stderr[-2000:]
    head = shot.read_bytes()[:24]
    assert head[:8] == b"\x89PNG\r\n\x1a\n"
    assert struct.unpack(">II", head[16:24]) == (1100, 1600)
    assert shot.stat().st_size > 50_000  # a page with tables and a plot, not a blank screen
    pdf = tmp_path / "record.pdf"
    done = _chromium(tmp_path, page.as_uri(), f"--print-to-pdf={pdf}", "--no-pdf-header-footer")
    assert done.returncode == 0 and pdf.read_bytes()[:5] == b"%PDF-"
    pdftoppm = shutil.which("pdftoppm")
    if pdftoppm is None:
        pytest.skip("pdftoppm is not installed (apt-get install poppler-utils)")
    subprocess.run([pdftoppm, "-r", "30", "-png", str(pdf), str(tmp_path / "page")], check=True, timeout=120)
    pages = sorted(tmp_path.glob("page-*.png"))
    assert len(pages) >= 2
    assert all(p.stat().st_size > 1000 for p in pages)


@needs_chromium
@pytest.mark.slow  # starts headless Chromium (1-4 s a page)
def test_browser_runs_nothing_from_a_worksheet(tmp_path: Path, make_worksheet) -> None:
    inputs = gather(loads(payload_worksheet(make_worksheet), "payload.toml"), evidence=False, quiet=True)
    page = tmp_path / "payload.html"
    page.write_bytes(make_record(inputs, ".html")[0])
    done = _chromium(tmp_path, page.as_uri(), "--dump-dom")
    assert done.returncode == 0, done.stderr[-2000:]
    assert "data-pwned" not in re.search(r"<body[^>]*>", done.stdout).group(0)  # the sentinel was never set
    assert "<script" not in done.stdout and "<img" not in done.stdout
    assert '&lt;script&gt;document.body.setAttribute("data-pwned","1")&lt;/script&gt;' in done.stdout
    assert _console_messages(done.stderr) == []


_HEADINGS = (
    "Summary",
    "The circuit",
    "The steps",
    "Formula audit",
    "Numerical evidence",
    "Plots",
    "Cautions and notes",
    "The worksheet, verbatim",
    "Versions",
)


@needs_chromium
@pytest.mark.slow  # starts headless Chromium (1-4 s a page)
@pytest.mark.parametrize("sheet", [w.name for w in WORKSHEETS])
def test_printed_pages_keep_each_heading_with_what_it_introduces(bundled: dict, sheet: str, tmp_path: Path) -> None:
    pdftotext = shutil.which("pdftotext")
    if pdftotext is None:
        pytest.skip("pdftotext is not installed (apt-get install poppler-utils)")
    pdf = tmp_path / "record.pdf"
    done = _chromium(tmp_path, bundled[sheet][".html"].as_uri(), f"--print-to-pdf={pdf}", "--no-pdf-header-footer")
    assert done.returncode == 0 and pdf.read_bytes()[:5] == b"%PDF-"
    text = subprocess.run([pdftotext, "-layout", str(pdf), "-"], capture_output=True, text=True, check=True).stdout
    pages = [[line.strip() for line in page.splitlines() if line.strip()] for page in text.split("\f")]
    for number, lines in enumerate(pages, start=1):
        # a page never ends with a section's heading
        assert not lines or lines[-1] not in _HEADINGS, f"page {number} ends with the heading {lines[-1]!r}"
    circuit = next(lines for lines in pages if "The circuit" in lines)
    assert any(line.startswith("Part") and "Engineering" in line for line in circuit), (
        "parts table not with its heading"
    )
