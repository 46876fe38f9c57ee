"""Read a worksheet file (TOML, format 1) into a :class:`Worksheet`.

Only the shape of the file is checked here: required keys, known keys, types, names.
Values are read in :mod:`handcheck.circuit.build` and :mod:`handcheck.verify`.
Errors name the file, the part or step, and the line.
"""

from __future__ import annotations

import difflib
import hashlib
import re
import tomllib
from pathlib import Path
from typing import Any

from handcheck.circuit.kinds import KINDS
from handcheck.errors import HandcheckError, LimitError, WorksheetError
from handcheck.worksheet.audit import GBW_KEYS, read_audit
from handcheck.worksheet.expr import RESERVED, printable
from handcheck.worksheet.model import PartSpec, StepSpec, Worksheet
from handcheck.worksheet.nesting import MAX_NESTING, check_nesting
from handcheck.worksheet.oldkeys import OLD_KEYS, rewrite
from handcheck.worksheet.partvalues import read_part_values
from handcheck.worksheet.readfile import MAX_BYTES, READ_WAIT, read_capped

__all__ = ["MAX_BYTES", "MAX_NESTING", "READ_WAIT", "load", "loads"]

#: Most parts and steps in one worksheet (far beyond a hand calculation).
MAX_PARTS = 2000
MAX_STEPS = 2000

_IDENT = re.compile(r"[A-Za-z_][A-Za-z0-9_]*\Z")
_NODE = re.compile(r"[A-Za-z0-9_]+\Z")

#: Keys whose text is kept exactly as written; every other string is read as one line.
_FREE_TEXT = ("title", "reference")
_LINE_BREAKS = re.compile(r"[\r\n\t\v\f\x1c-\x1e\x85\u2028\u2029]+")

_WORKSHEET_KEYS = ("format", "title", "reference", "phasors", "frequency", "tolerance", "author", "checker")
_STEP_KEYS = ("name", "quantity", "formula", "claim", "tolerance")
_TRANSIENT_KEYS = ("start", "span")
#: Keys any part may carry for the formula audit (read in handcheck.worksheet.audit).
_VARIATION_KEYS = ("tolerance", "range")


def _is_time(text: str) -> bool:
    """Whether ``text`` reads as a positive time, such as ``"20 ms"``."""
    from handcheck.worksheet.evaluate import evaluate_text
    from handcheck.worksheet.units import dim_of

    try:
        value = evaluate_text(text)
    except HandcheckError:
        return False
    return value.dim == dim_of("s") and bool(value.expr.is_positive)


def _suggest(word: str, choices: list[str] | tuple[str, ...]) -> str:
    close = difflib.get_close_matches(word, list(choices), n=1)
    return f' (did you mean "{close[0]}"?)' if close else ""


class _Locator:
    """Line numbers of tables and keys, found by reading the text line by line."""

    _HEADER = re.compile(r"\s*(\[\[?)\s*([^\]]+?)\s*\]\]?")
    _KEY = re.compile(r"\s*([A-Za-z0-9_\"'.-]+)\s*=")

    def __init__(self, text: str) -> None:
        self.tables: dict[str, int] = {}
        self.keys: dict[tuple[str, str], int] = {}
        counts = {"step": 0, "formula": 0}
        table = ""
        for number, line in enumerate(text.splitlines(), start=1):
            header = self._HEADER.match(line)
            if header and not self._KEY.match(line):
                name = header.group(2).strip().strip('"')
                if header.group(1) == "[[" and name in counts:
                    table = f"{name}.{counts[name]}"
                    counts[name] += 1
                else:
                    table = name
                self.tables.setdefault(table, number)
                continue
            key = self._KEY.match(line)
            if key:
                name = key.group(1).strip("\"'")
                self.keys.setdefault((table, name), number)

    def key(self, table: str, key: str) -> int | None:
        return self.keys.get((table, key)) or self.tables.get(table)

    def part(self, ident: str) -> int | None:
        return self.keys.get(("parts", ident)) or self.tables.get(f"parts.{ident}")


def load(path: str | Path) -> Worksheet:
    """Read the worksheet at ``path``.

    Raises
    ------
    WorksheetError
        If the file cannot be read or is not a worksheet of format 1.
    """
    name = str(path)
    try:
        size = Path(path).stat().st_size
        if size > MAX_BYTES:
            raise LimitError(f"the file is {size:,} bytes; a worksheet may be at most {MAX_BYTES:,} bytes", file=name)
        # The reported size is 0 for a pipe or a device (/dev/zero): read one byte past the
        # limit whatever it claims, never more.
        data = read_capped(path, name)
        if len(data) > MAX_BYTES:
            raise LimitError(
                f"the file holds more than {MAX_BYTES:,} bytes (its size was reported as {size:,}); "
                f"a worksheet may be at most {MAX_BYTES:,} bytes",
                file=name,
            )
    except FileNotFoundError:
        raise WorksheetError("no such file", file=name) from None
    except IsADirectoryError:
        raise WorksheetError("this is a folder, not a worksheet file", file=name) from None
    except OSError as exc:
        raise WorksheetError(f"cannot read the file: {exc.strerror}", file=name) from None
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data[: exc.start].count(b"\n") + 1
        # RFC 3629 section 4 gives the well-formed byte sequences; Python's codec follows it
        # (no surrogates U+D800-DFFF, no overlong forms, nothing above U+10FFFF).
        raise WorksheetError(
            f"the file is not UTF-8 text (byte 0x{data[exc.start]:02x} at byte offset {exc.start:,}); save it as UTF-8",
            file=name,
            line=line,
        ) from None
    return loads(text, name, sha256=hashlib.sha256(data).hexdigest())


def loads(text: str, path: str = "<worksheet>", *, sha256: str | None = None) -> Worksheet:
    """Read a worksheet from its text; ``path`` is used in messages."""
    try:
        encoded = text.encode("utf-8")
    except UnicodeEncodeError as exc:  # a lone surrogate, possible in a Python str only
        raise WorksheetError(
            f"the text holds U+{ord(text[exc.start]):04X}, half of a UTF-16 character pair, which is not "
            "valid Unicode on its own; remove it",
            file=path,
            line=text.count("\n", 0, exc.start) + 1,
        ) from None
    if len(encoded) > MAX_BYTES:
        raise LimitError(f"the worksheet is larger than {MAX_BYTES:,} bytes", file=path)
    if sha256 is None:
        sha256 = hashlib.sha256(encoded).hexdigest()
    if text.startswith("\ufeff"):
        # A byte-order mark some editors write at the start of a UTF-8 file (the Unicode
        # standard, section 23.8 "Specials": U+FEFF as a signature); not part of the text.
        text = text[1:]
    check_nesting(text, path)
    if not text.strip():
        raise WorksheetError("the file is empty; a worksheet starts with a [worksheet] table", file=path)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        match = re.search(r"\(at line (\d+), column (\d+)\)", str(exc))
        reason = re.sub(r"\s*\(at line \d+, column \d+\)", "", str(exc)).rstrip(".")
        line = int(match.group(1)) if match else None
        raise WorksheetError(f"not valid TOML: {reason}", file=path, line=line) from None
    reader = _Reader(path, text, sha256, data)
    reader.check_sizes(data, ())
    return reader.worksheet()


#: Most items in one array of values (arrays of [[step]] and [[formula]] tables have
#: their own limits), and the longest string, in characters, before any stripping.
MAX_ITEMS = 1000
MAX_TEXT = 10_000


class _Reader:
    def __init__(self, path: str, text: str, sha256: str, data: dict[str, Any]) -> None:
        self.path = path
        self.text = text
        self.sha256 = sha256
        self.data = data
        self.where = _Locator(text)

    def check_sizes(self, value: Any, where: tuple[str, ...]) -> None:
        """Refuse overlong strings and arrays anywhere in the file, before any stripping."""
        if isinstance(value, str) and len(value) > MAX_TEXT:
            raise LimitError(
                f'the text of "{".".join(where)}" is {len(value):,} characters long; '
                f"a worksheet text may be at most {MAX_TEXT:,} characters",
                file=self.path,
                line=self._line(where),
            )
        if isinstance(value, dict):
            for key, item in value.items():
                self.check_sizes(item, (*where, str(key)))
        elif isinstance(value, list):
            if len(value) > MAX_ITEMS and not (len(where) == 1 and all(isinstance(v, dict) for v in value)):
                raise LimitError(
                    f'the array "{".".join(where)}" holds {len(value):,} items; '
                    f"a worksheet array may hold at most {MAX_ITEMS:,}",
                    file=self.path,
                    line=self._line(where),
                )
            for index, item in enumerate(value):
                self.check_sizes(item, (*where, str(index)))

    def _line(self, where: tuple[str, ...]) -> int | None:
        if len(where) >= 2 and where[0] == "parts":
            return self.where.part(where[1])
        if len(where) >= 3 and where[0] in ("step", "formula") and where[1].isdigit():
            return self.where.key(f"{where[0]}.{where[1]}", where[2])
        if len(where) >= 2:
            return self.where.key(where[0], where[1])
        return None

    def fail(self, message: str, line: int | None = None) -> WorksheetError:
        return WorksheetError(printable(message), file=self.path, line=line)

    # -- [worksheet] -----------------------------------------------------------
    def worksheet(self) -> Worksheet:
        head = self.worksheet_table()
        title = self.string(head, "title", "worksheet", required=True)
        phasors = self.string(head, "phasors", "worksheet") or "peak"
        if phasors not in ("peak", "rms"):
            raise self.fail(f'phasors = "{phasors}" must be "peak" or "rms"', self.where.key("worksheet", "phasors"))
        lines = tuple((key, line) for (table, key), line in self.where.keys.items() if table == "worksheet")
        transient = self.transient_table()
        parts = self.parts()
        audit = read_audit(
            self.data,
            self.path,
            lambda table, key: self.where.part(key) if table == "parts" else self.where.key(table, key),
            {part.id: part.kind for part in parts},
        )
        return Worksheet(
            path=self.path,
            text=self.text,
            sha256=self.sha256,
            title=title or "",
            reference=self.string(head, "reference", "worksheet"),
            author=self.string(head, "author", "worksheet"),
            checker=self.string(head, "checker", "worksheet"),
            phasors=phasors,  # type: ignore[arg-type]
            frequency=self.string(head, "frequency", "worksheet"),
            omega=self.analysis_omega(head),
            tolerance=self.string(head, "tolerance", "worksheet") or "digits",
            parts=parts,
            steps=self.steps(),
            audit=audit,
            transient=tuple((str(k), str(v)) for k, v in transient.items()),
            lines=lines,
        )

    def worksheet_table(self) -> dict:
        """The [worksheet] table, once the file's tables and the table's keys and format are known."""
        tables = ["worksheet", "parts", "step", "transient", "audit", "formula"]
        for key in self.data:
            if key not in tables:
                raise self.fail(
                    f"unknown table [{key}]{_suggest(key, tables)}; "
                    "a worksheet has [worksheet], [parts], [[step]], [transient], [audit] and [[formula]]",
                    self.where.tables.get(key) or self.where.key("", key),
                )
        head = self.data.get("worksheet")
        if not isinstance(head, dict):
            raise self.fail("the [worksheet] table is missing; start the file with [worksheet] and format = 1")
        for key in head:
            if key not in _WORKSHEET_KEYS:
                raise self.fail(
                    f'unknown key "{key}" in [worksheet]{_suggest(key, _WORKSHEET_KEYS)}',
                    self.where.key("worksheet", key),
                )
        if "format" not in head:
            raise self.fail("[worksheet] needs format = 1", self.where.tables.get("worksheet"))
        if isinstance(head["format"], str) and head["format"].strip() == "1":
            raise self.fail(
                'format = "1" is text; write format = 1, a number without quotes',
                self.where.key("worksheet", "format"),
            )
        if head["format"] != 1 or isinstance(head["format"], bool):
            raise self.fail(
                f"format = {head['format']!r} is not a format this version reads; write format = 1",
                self.where.key("worksheet", "format"),
            )
        return head

    def transient_table(self) -> dict:
        """The [transient] table (empty if none), its keys known and its values text."""
        transient = self.data.get("transient", {})
        if not isinstance(transient, dict):
            raise self.fail("[transient] must be a table", self.where.tables.get("transient"))
        for key, value in transient.items():
            if key not in _TRANSIENT_KEYS:
                raise self.fail(
                    f'unknown key "{key}" in [transient]{_suggest(key, _TRANSIENT_KEYS)}; it takes: {", ".join(_TRANSIENT_KEYS)}',
                    self.where.key("transient", key),
                )
            if not isinstance(value, str):
                raise self.fail(f"{key} in [transient] must be text in quotes", self.where.key("transient", key))
        if transient.get("start", "rest") not in ("rest", "steady"):
            raise self.fail(
                f'start = "{transient["start"]}" in [transient] must be "rest" or "steady"',
                self.where.key("transient", "start"),
            )
        if "span" in transient and not _is_time(transient["span"]):
            raise self.fail(
                f'span = "{transient["span"]}" in [transient] must be a positive time, like "20 ms"',
                self.where.key("transient", "span"),
            )
        return transient

    def analysis_omega(self, head: dict[str, Any]) -> Any:
        """The ``[worksheet] frequency`` in rad/s, exactly, or None."""
        from handcheck.worksheet.values import read_frequency

        written = self.string(head, "frequency", "worksheet")
        if written is None:
            return None
        return read_frequency(
            written, "the analysis frequency", file=self.path, line=self.where.key("worksheet", "frequency")
        )

    def string(
        self, table: dict[str, Any], key: str, where: str, *, required: bool = False, line: int | None = None
    ) -> str | None:
        if key not in table:
            if required:
                raise self.fail(f'{self.describe(where)} needs a "{key}"', line or self.where.tables.get(where))
            return None
        value = table[key]
        if isinstance(value, bool) or not isinstance(value, (str, int, float)):
            raise self.fail(
                f'{key} in {self.describe(where)} must be text in quotes, like {key} = "..."',
                line or self.where.key(where, key),
            )
        if isinstance(value, float):
            value = repr(value)
        if key in _FREE_TEXT:
            return str(value).strip()
        # A value, formula or claim is one line: a TOML multi-line string reads as one.
        return _LINE_BREAKS.sub(" ", str(value)).strip()

    @staticmethod
    def describe(where: str) -> str:
        if where.startswith("step."):
            return f"step {int(where[5:]) + 1}"
        if where.startswith("parts."):
            return f'part "{where[6:]}"'
        return f"[{where}]"

    # -- [parts] ---------------------------------------------------------------
    def parts(self) -> tuple[PartSpec, ...]:
        table = self.data.get("parts")
        if not isinstance(table, dict) or not table:
            raise self.fail(
                'the [parts] table is missing or empty; list the circuit\'s parts, like R1 = { resistor = "1 kohm", nodes = ["a", "gnd"] }',
                self.where.tables.get("parts"),
            )
        if len(table) > MAX_PARTS:
            raise LimitError(
                f"the worksheet has {len(table):,} parts; handcheck checks at most {MAX_PARTS:,} in one worksheet",
                file=self.path,
                line=self.where.tables.get("parts"),
            )
        specs = []
        seen: dict[str, str] = {}
        for ident, body in table.items():
            line = self.where.part(ident)
            if not _IDENT.match(ident):
                raise self.fail(
                    f'the part name "{ident}" must start with a letter and hold only letters, digits and _', line
                )
            if ident in RESERVED or re.fullmatch(r"j\d+", ident):
                raise self.fail(
                    f'"{ident}" would read as a reserved word or an imaginary number in formulas '
                    "(f, w, j, t, pi, j4); name the part differently",
                    line,
                )
            folded = ident.lower()
            if folded in seen:
                raise self.fail(
                    f'parts "{seen[folded]}" and "{ident}" differ only in case; give them distinct names', line
                )
            seen[folded] = ident
            specs.append(self.part(ident, body, line))
        return tuple(specs)

    def part(self, ident: str, body: Any, line: int | None) -> PartSpec:
        if not isinstance(body, dict):
            raise self.fail(
                f'part "{ident}" must be a table, like {ident} = {{ resistor = "1 kohm", nodes = ["a", "b"] }}', line
            )
        kinds = [key for key in body if key in KINDS]
        if not kinds:
            common = ("nodes", "frequency", "phase", "initial", "control", "inductors", *OLD_KEYS)
            others = [key for key in body if key not in common]
            hint = _suggest(others[0], tuple(KINDS)) if others else ""
            raise self.fail(f'part "{ident}" has no kind{hint}; give one of: {", ".join(KINDS)}', line)
        if len(kinds) > 1:
            raise self.fail(f'part "{ident}" has two kinds, {kinds[0]} and {kinds[1]}; give it one', line)
        kind = kinds[0]
        allowed = KINDS[kind].keys
        old = [key for key in body if key in OLD_KEYS]
        if old and kind in ("voltage", "current"):
            raise self.old_keys(ident, kind, body, old, line)
        for key in body:
            if (
                key != kind and key not in allowed and key not in (*_VARIATION_KEYS, "gbw", *GBW_KEYS)
            ):  # gbw: read_part_values
                raise self.fail(
                    f'part "{ident}" ({kind}) has an unknown key "{key}"{_suggest(key, allowed)}; '
                    f"a {kind} takes: {', '.join((kind, *allowed))}",
                    line,
                )
        where = f"parts.{ident}"
        raw: Any
        if kind in ("voltage", "current") and isinstance(body.get(kind), list):
            raw = self.points(body[kind], ident, kind, line)
            value = str(body[kind])
        else:
            value = self.string(body, kind, where, required=True, line=line) or ""
            raw = value
        nodes: tuple[str, ...] = ()
        inductors: tuple[str, ...] = ()
        if kind == "coupling":
            inductors = self.names(body, "inductors", ident, 2, line)
        else:
            nodes = self.names(body, "nodes", ident, KINDS[kind].terminals, line)
            if kind not in ("opamp", "transformer") and nodes[0] == nodes[1]:
                raise self.fail(
                    f'part "{ident}" has both ends on node "{nodes[0]}"; connect it between two different nodes', line
                )
        control: tuple[str, ...] | str | None = None
        if kind in ("vcvs", "vccs"):
            control = self.names(body, "control", ident, 2, line)
        elif kind in ("cccs", "ccvs"):
            control = self.string(body, "control", where, line=line)
            if not control:
                raise self.fail(
                    f'part "{ident}" ({kind}) needs control = "<part id>", the part whose current controls it', line
                )
        keys = {key: self.string(body, key, where, line=line) for key in ("frequency", "phase", "initial", "gbw")}
        values = read_part_values(ident, kind, raw, keys, file=self.path, line=line)
        return PartSpec(
            id=ident,
            kind=kind,
            value=value,
            nodes=nodes,
            control=control,
            inductors=inductors,
            line=line,
            number=values.number,
            source=values.source,
            rms=values.rms,
            initial=values.initial,
            gbw=values.gbw,
        )

    def old_keys(self, ident: str, kind: str, body: dict[str, Any], old: list[str], line: int | None) -> WorksheetError:
        """The first version's source keys: refused, with the same source in the new form."""
        names = ", ".join(f'"{key}"' for key in old)
        gone = "that key is" if len(old) == 1 else "those keys are"
        fix = rewrite(ident, kind, body.get(kind, ""), body)
        if fix:
            return self.fail(
                f'part "{ident}" uses {names}: {gone} gone, a source is now written as a function of t '
                f"(see docs/transients.md); write it as {ident} = {{ {fix}, nodes = [...] }}",
                line,
            )
        unit = "V" if kind == "voltage" else "A"
        return self.fail(
            f'part "{ident}" uses {names}: {gone} gone, a source is now written as a function of t '
            f'(see docs/transients.md); write the {kind} as a function of t, like {kind} = "12*step(t - 1 ms) {unit}"',
            line,
        )

    def points(self, value: Any, ident: str, kind: str, line: int | None) -> tuple[tuple[str, str], ...]:
        unit = "V" if kind == "voltage" else "A"
        example = f'{kind} = [["0 ms", "0 {unit}"], ["1 ms", "5 {unit}"]]'
        if not isinstance(value, list) or not value:
            raise self.fail(f'the {kind} of part "{ident}" must be a list of [time, value] pairs, like {example}', line)
        pairs = []
        for item in value:
            if not isinstance(item, list) or len(item) != 2 or not all(isinstance(v, str) for v in item):
                raise self.fail(
                    f'each entry of the {kind} of part "{ident}" must be a [time, value] pair in quotes, like {example}',
                    line,
                )
            pairs.append((item[0].strip(), item[1].strip()))
        return tuple(pairs)

    def names(self, body: dict[str, Any], key: str, ident: str, count: int, line: int | None) -> tuple[str, ...]:
        what = "inductor ids" if key == "inductors" else "node names"
        if key not in body:
            raise self.fail(f'part "{ident}" needs {key} = [...], a list of {count} {what}', line)
        value = body[key]
        if not isinstance(value, list) or not all(isinstance(v, (str, int)) and not isinstance(v, bool) for v in value):
            raise self.fail(f'{key} of part "{ident}" must be a list of {what} in quotes', line)
        items = tuple(str(v).strip() for v in value)
        if len(items) != count:
            raise self.fail(f'part "{ident}" needs {count} entries in {key}, not {len(items)}', line)
        for item in items:
            if not _NODE.match(item):
                raise self.fail(f'"{item}" in {key} of part "{ident}" must hold only letters, digits and _', line)
        return items

    # -- [[step]] --------------------------------------------------------------
    def steps(self) -> tuple[StepSpec, ...]:
        raw = self.data.get("step", [])
        if not isinstance(raw, list):
            raise self.fail("steps are written as [[step]] tables (double brackets)", self.where.tables.get("step"))
        if len(raw) > MAX_STEPS:
            raise LimitError(
                f"the worksheet has {len(raw):,} steps; handcheck checks at most {MAX_STEPS:,}", file=self.path
            )
        specs: list[StepSpec] = []
        seen: dict[str, int] = {}
        parts = {p.lower() for p in self.data.get("parts", {})}
        for index, body in enumerate(raw):
            where = f"step.{index}"
            line = self.where.tables.get(where)
            if not isinstance(body, dict):
                raise self.fail(f"step {index + 1} must be a table", line)
            for key in body:
                if key not in _STEP_KEYS:
                    raise self.fail(
                        f'step {index + 1} has an unknown key "{key}"{_suggest(key, _STEP_KEYS)}; '
                        f"a step takes: {', '.join(_STEP_KEYS)}",
                        self.where.key(where, key),
                    )
            name = self.string(body, "name", where, required=True, line=line) or ""
            if not _IDENT.match(name):
                raise self.fail(
                    f'step name "{name}" must start with a letter and hold only letters, digits and _',
                    self.where.key(where, "name"),
                )
            if name in RESERVED or re.fullmatch(r"j\d+", name):
                raise self.fail(
                    f'step name "{name}" would read as a reserved word or an imaginary number in formulas '
                    "(f, w, j, t, pi, j4); name the step differently",
                    self.where.key(where, "name"),
                )
            if name.lower() in parts:
                raise self.fail(
                    f'step name "{name}" is also a part name; give the step another name', self.where.key(where, "name")
                )
            if name.lower() in seen:
                raise self.fail(
                    f'step name "{name}" is used twice (steps {seen[name.lower()] + 1} and {index + 1}); names must be unique',
                    self.where.key(where, "name"),
                )
            seen[name.lower()] = index
            if "claim" not in body:
                raise self.fail(f'step "{name}" needs a claim, the number the author wrote', line)
            specs.append(
                StepSpec(
                    name=name,
                    claim=self.string(body, "claim", where) or "",
                    quantity=self.string(body, "quantity", where),
                    formula=self.string(body, "formula", where),
                    tolerance=self.string(body, "tolerance", where),
                    line=line,
                    index=index,
                    key_lines=tuple(
                        (key, number) for key in _STEP_KEYS if (number := self.where.keys.get((where, key)))
                    ),
                )
            )
        return tuple(specs)
