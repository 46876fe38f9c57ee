"""Reading a worksheet from a named pipe never waits for ever (issue 12).

POSIX (IEEE Std 1003.1, open(): O_NONBLOCK on a FIFO) lets a reader open a named pipe
without waiting for a writer; a read then returns end-of-file while no writer has it
open. handcheck reads such a pipe only while its writer delivers, within READ_WAIT.
"""

from __future__ import annotations

import os
import threading
import time
from pathlib import Path

import pytest

from handcheck.errors import WorksheetError
from handcheck.worksheet import readfile
from handcheck.worksheet.load import load

pytestmark = pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs named pipes")

SHEET = b"""[worksheet]
format = 1
title = "pipe"

[parts]
V1 = { voltage = "10 V", nodes = ["a", "gnd"] }
R1 = { resistor = "1 kohm", nodes = ["a", "gnd"] }

[[step]]
name = "I"
quantity = "current(R1)"
claim = "10 mA"
"""


def _writer(pipe: Path, chunks: list[bytes], pause: float, hold: float = 0.0) -> threading.Thread:
    def write() -> None:
        with open(pipe, "wb", buffering=0) as stream:  # waits until the reader opens it
            for chunk in chunks:
                stream.write(chunk)
                time.sleep(pause)
            time.sleep(hold)

    thread = threading.Thread(target=write, daemon=True)
    thread.start()
    return thread


def test_a_pipe_its_writer_fills_and_closes_is_read_whole(tmp_path: Path) -> None:
    pipe = tmp_path / "sheet.toml"
    os.mkfifo(pipe)
    thread = _writer(pipe, [SHEET[:40], SHEET[40:]], pause=0.05)
    time.sleep(0.1)  # the writer is waiting in open() when the reader comes
    sheet = load(pipe)
    thread.join(5)
    assert sheet.title == "pipe" and [step.name for step in sheet.steps] == ["I"]


def test_a_pipe_nobody_writes_is_given_up_after_the_wait(tmp_path: Path, monkeypatch) -> None:
    monkeypatch.setattr(readfile, "READ_WAIT", 0.3)
    pipe = tmp_path / "sheet.toml"
    os.mkfifo(pipe)
    started = time.monotonic()
    with pytest.raises(WorksheetError) as info:
        load(pipe)
    assert "within 0.3 s (0 bytes read)" in str(info.value)
    assert time.monotonic() - started < 2.0


def test_a_writer_that_stalls_is_given_up_after_the_wait(tmp_path: Path, monkeypatch) -> None:
    monkeypatch.setattr(readfile, "READ_WAIT", 0.5)
    pipe = tmp_path / "sheet.toml"
    os.mkfifo(pipe)
    _writer(pipe, [SHEET[:40]], pause=0.0, hold=3.0)
    time.sleep(0.1)  # the writer is waiting in open() when the reader comes
    started = time.monotonic()
    with pytest.raises(WorksheetError) as info:
        load(pipe)
    waited = time.monotonic() - started
    assert "nothing more came from this pipe or device within 0.5 s (40 bytes read)" in str(info.value)
    assert 0.4 < waited < 2.5
