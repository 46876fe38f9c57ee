"""A record as a file: its digest line, the data embedded for re-verification, atomic writes.

The digest is the SHA-256 of every byte of the file except its own line (the line and
its newline removed). It detects an edit of the file; it is no signature and does not
detect forgery (anyone can write a new digest): see docs/record.md for signing.
"""

from __future__ import annotations

import base64
import hashlib
import json
import os
import re
import tempfile
from pathlib import Path
from typing import Any

from handcheck.errors import HandcheckError

__all__ = [
    "RecordError",
    "embedded_data",
    "seal",
    "verify_digest",
    "write_atomic",
]

_PLACEHOLDER = "sha256:" + "0" * 64
_DIGEST_LINE = re.compile(
    rb'^(?:<!-- handcheck-record-digest (sha256:[0-9a-f]{64}) -->|  "digest": "(sha256:[0-9a-f]{64})")\r?$',
    re.MULTILINE,
)
_DATA_LINE = re.compile(r"^<!-- handcheck-record-data ([A-Za-z0-9+/=]+) -->$", re.MULTILINE)


class RecordError(HandcheckError):
    """A file that is no calculation record, or one altered after it was written."""


def data_line(data: dict[str, Any]) -> str:
    """The comment line that carries the data ``reverify`` needs (HTML and Markdown records)."""
    text = json.dumps(data, ensure_ascii=True, sort_keys=True, separators=(",", ":"))
    return f"<!-- handcheck-record-data {base64.b64encode(text.encode('ascii')).decode('ascii')} -->"


def digest_line() -> str:
    """The digest line of an HTML or Markdown record, before sealing."""
    return f"<!-- handcheck-record-digest {_PLACEHOLDER} -->"


def _without_line(data: bytes, match: re.Match[bytes]) -> bytes:
    end = match.end()
    if data[end : end + 1] == b"\n":
        end += 1
    return data[: match.start()] + data[end:]


def seal(text: str) -> bytes:
    """Fill in the digest: the SHA-256 of the whole text without the digest's line.

    Raises
    ------
    ValueError
        If the text has no digest line or more than one.
    """
    data = text.encode("utf-8")
    found = list(_DIGEST_LINE.finditer(data))
    if len(found) != 1:
        raise ValueError(f"a record needs exactly one digest line, found {len(found)}")
    digest = "sha256:" + hashlib.sha256(_without_line(data, found[0])).hexdigest()
    start, end = found[0].span(1) if found[0].group(1) else found[0].span(2)
    return data[:start] + digest.encode("ascii") + data[end:]


def verify_digest(data: bytes, path: str) -> None:
    """Check the digest of a record's bytes.

    Raises
    ------
    RecordError
        When the file has no digest line (no record) or the digest does not match
        (the file was altered after it was written).
    """
    found = list(_DIGEST_LINE.finditer(data))
    if not found:
        raise RecordError("this is no calculation record: it has no digest line", file=path)
    if len(found) > 1:
        raise RecordError(f"the record has {len(found)} digest lines; it was altered after it was written", file=path)
    match = found[0]
    written = (match.group(1) or match.group(2)).decode("ascii")
    actual = "sha256:" + hashlib.sha256(_without_line(data, match)).hexdigest()
    if written != actual:
        line = data[: match.start()].count(b"\n") + 1
        raise RecordError(
            f"the record was altered after it was written: its digest (line {line}) does not match its contents",
            file=path,
        )


def embedded_data(data: bytes, path: str) -> dict[str, Any]:
    """The worksheet and results embedded in a record (after :func:`verify_digest`).

    Raises
    ------
    RecordError
        When the record carries no readable data.
    """
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        raise RecordError("this is no calculation record: it is not UTF-8 text", file=path) from None
    try:
        if text.lstrip().startswith("{"):
            found = json.loads(text)
        else:
            match = _DATA_LINE.search(text)
            if match is None:
                raise RecordError("this is no calculation record: the embedded worksheet is missing", file=path)
            found = json.loads(base64.b64decode(match.group(1), validate=True).decode("ascii"))
    except (ValueError, UnicodeDecodeError):
        raise RecordError("this is no calculation record: its embedded data cannot be read", file=path) from None
    if not isinstance(found, dict) or found.get("record_format") != 1:
        raise RecordError("this is no calculation record of format 1 (record_format is not 1)", file=path)
    sheet = found.get("worksheet")
    if (
        not isinstance(sheet, dict)
        or not isinstance(sheet.get("text"), str)
        or not isinstance(found.get("results"), dict)
    ):
        raise RecordError("this is no calculation record: the embedded worksheet or results are missing", file=path)
    return found


def write_atomic(path: str | Path, data: bytes) -> Path:
    """Write ``data`` to ``path`` through a temporary file in the same folder and a rename.

    A reader sees the old file or the new one, never half of one; an interrupted write
    leaves the old file as it was.

    Raises
    ------
    OSError
        When the folder cannot be written.
    """
    target = Path(path)
    try:
        handle, temporary = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent or Path("."))
    except OSError as exc:
        raise OSError(exc.errno, exc.strerror or str(exc), str(target)) from exc
    try:
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
            stream.flush()
            os.fsync(stream.fileno())
        os.chmod(temporary, 0o644)
        os.replace(temporary, target)
    except OSError as exc:
        Path(temporary).unlink(missing_ok=True)
        # name the file the user asked for, not the temporary one
        raise OSError(exc.errno, exc.strerror or str(exc), str(target)) from exc
    except BaseException:
        Path(temporary).unlink(missing_ok=True)
        raise
    return target


def write_figure(figure: Any, path: str | Path) -> Path:
    """Write a matplotlib figure to ``path`` atomically, in the format its suffix names,
    and close the figure.

    Raises
    ------
    OSError
        When the file cannot be written (the message names ``path``).
    """
    import io

    import matplotlib.pyplot as plt

    target = Path(path)
    buffer = io.BytesIO()
    try:
        figure.savefig(buffer, format=target.suffix.lstrip(".").lower())
    finally:
        plt.close(figure)
    return write_atomic(target, buffer.getvalue())
