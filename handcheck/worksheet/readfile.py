"""Read a worksheet file's bytes with a hard cap, whatever the file says it is.

The size a file reports is 0 for a pipe or a device (/dev/zero), so it is never trusted:
at most :data:`MAX_BYTES` + 1 bytes are read, and a named pipe is opened without
blocking and read only while its writer delivers.
"""

from __future__ import annotations

import os
import stat
import time
from pathlib import Path

from handcheck.errors import WorksheetError

__all__ = ["MAX_BYTES", "READ_WAIT", "read_capped"]

#: Largest worksheet file read, in bytes.
MAX_BYTES = 1_000_000
#: Seconds a pipe or device may take to deliver a whole worksheet (docs/errors.md).
READ_WAIT = 10.0


def read_capped(path: str | Path, name: str) -> bytes:
    """At most ``MAX_BYTES + 1`` bytes of the file, whatever its reported size.

    A named pipe is opened without blocking (opening one that no program writes to
    would otherwise wait for ever) and read only while data comes within
    :data:`READ_WAIT` seconds in all; a device such as /dev/zero is read up to the cap.
    """
    nonblocking = getattr(os, "O_NONBLOCK", 0)
    fd = os.open(path, os.O_RDONLY | nonblocking)
    with os.fdopen(fd, "rb", buffering=0) as stream:
        if not nonblocking or stat.S_ISREG(os.fstat(fd).st_mode):
            return stream.read(MAX_BYTES + 1) or b""
        return _read_stream(fd, name)


def _read_stream(fd: int, name: str) -> bytes:
    """Read a pipe or device opened without blocking, up to the cap and the wait."""
    import select

    chunks: list[bytes] = []
    got = 0
    deadline = time.monotonic() + READ_WAIT
    while got <= MAX_BYTES:
        left = deadline - time.monotonic()
        if left <= 0 or not select.select([fd], [], [], left)[0]:
            raise WorksheetError(
                f"nothing more came from this pipe or device within {READ_WAIT:g} s "
                f"({got:,} bytes read); give a worksheet file, or a pipe its writer fills and closes",
                file=name,
            )
        try:
            chunk = os.read(fd, min(65536, MAX_BYTES + 1 - got))
        except BlockingIOError:
            continue
        if not chunk:
            break
        chunks.append(chunk)
        got += len(chunk)
    return b"".join(chunks)
