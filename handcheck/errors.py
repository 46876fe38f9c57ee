"""The one exception hierarchy of handcheck.

Every error a user can cause derives from :class:`HandcheckError`. Each concrete
error also inherits the matching builtin (a parse error is a ``ValueError``), keeps
structured fields, and builds its message for the engineer: what is wrong, where,
and how to fix it. The command line maps every one of them to exit status 2 and a
single line on stderr.
"""

from __future__ import annotations

from typing import TypedDict

__all__ = [
    "CircuitError",
    "HandcheckError",
    "LimitError",
    "ParseError",
    "TimeLimitError",
    "UnitError",
    "Where",
    "WorksheetError",
]


class Where(TypedDict):
    """Where in a worksheet an error is: the keyword arguments ``file`` and ``line`` of every error here."""

    file: str | None
    line: int | None


def _prefix(file: str | None, line: int | None) -> str:
    """The location prefix, ``file:line: `` or ``file: ``, or empty."""
    if file and line:
        return f"{file}:{line}: "
    if file:
        return f"{file}: "
    return ""


class HandcheckError(Exception):
    """Root of every error handcheck raises for bad input."""

    def __init__(self, message: str, *, file: str | None = None, line: int | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.file = file
        self.line = line

    def where(self) -> str:
        """The location prefix, ``file:line: `` or ``file: ``, or empty."""
        return _prefix(self.file, self.line)

    def located(self, file: str | None = None, line: int | None = None) -> HandcheckError:
        """Fill in the file and line where they are not known yet; return self."""
        if self.file is None:
            self.file = file
        if self.line is None:
            self.line = line
        return self

    def __str__(self) -> str:
        return f"{self.where()}{self.message}"


class WorksheetError(HandcheckError, ValueError):
    """The worksheet file is malformed: bad TOML, a missing or unknown key, a bad value."""


class ParseError(HandcheckError, ValueError):
    """A formula, claim, value or quantity could not be read.

    ``text`` is the text that was being read and ``column`` the 1-based position of
    the trouble in it.
    """

    def __init__(
        self,
        message: str,
        text: str = "",
        column: int | None = None,
        *,
        file: str | None = None,
        line: int | None = None,
    ) -> None:
        super().__init__(message, file=file, line=line)
        self.text = text
        self.column = column

    def __str__(self) -> str:
        text = f"{self.where()}{self.message}"
        if self.text:
            text += f' in "{self.text}"'
            if self.column is not None:
                text += f" at column {self.column}"
        return text


class UnitError(HandcheckError, TypeError):
    """Quantities of different dimensions were combined, or a unit is unknown."""


class CircuitError(HandcheckError, ValueError):
    """The circuit cannot be solved as drawn; ``parts`` names the parts involved."""

    def __init__(
        self,
        message: str,
        parts: tuple[str, ...] = (),
        *,
        file: str | None = None,
        line: int | None = None,
    ) -> None:
        super().__init__(message, file=file, line=line)
        self.parts = tuple(parts)


class LimitError(HandcheckError, ValueError):
    """An input goes beyond a limit that keeps handcheck from hanging."""


class TimeLimitError(BaseException):
    """The wall-clock budget of a check ran out (:mod:`handcheck.budget`).

    It derives from ``BaseException``, as ``KeyboardInterrupt`` does, so that no
    ``except Exception`` in a library or a fallback can swallow it; it carries the
    same ``message``, ``file`` and ``line`` as a :class:`HandcheckError` and the
    command line reports it the same way (exit status 2, one line).
    """

    def __init__(self, message: str, *, file: str | None = None, line: int | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.file = file
        self.line = line

    def where(self) -> str:
        """The location prefix, as :meth:`HandcheckError.where`."""
        return _prefix(self.file, self.line)

    located = HandcheckError.located  # type: ignore[assignment]

    def __str__(self) -> str:
        return f"{self.where()}{self.message}"
