"""The time budget of one check: an object made at the top and handed to each stage.

A budget is checked at safe points between library calls (between steps, before an
expensive solve, between candidates of the mistake catalogue); it never interrupts
a library in the middle of a call, so it works the same in the main thread, in a
thread and in a worker process. Solvers that take their own ``time_limit`` are given
what is left of the budget. A :class:`~handcheck.errors.TimeLimitError` derives from
``BaseException`` (as ``KeyboardInterrupt`` does), so no library's ``except
Exception`` can swallow it.

A last resort, for one C call that runs on past the limit, is :func:`watchdog`: a
daemon thread that ends the process with exit status 2 and a message once the limit
plus a margin has passed. Only the command line and batch workers start one.

>>> budget = Budget(60)
>>> budget.check("step XL")
>>> 0 < budget.remaining() <= 60
True
>>> Budget(None).remaining() is None
True
"""

from __future__ import annotations

import os
import sys
import threading
import time
from dataclasses import dataclass, field

from handcheck.errors import TimeLimitError

__all__ = ["DEFAULT_TIME_LIMIT", "Budget", "watchdog"]

#: Seconds a check may take when no ``--time-limit`` is given (docs/errors.md).
DEFAULT_TIME_LIMIT = 120.0

#: How long past the limit the watchdog waits for a safe point before it ends the run.
WATCHDOG_MARGIN = 5.0


@dataclass(frozen=True)
class Budget:
    """A wall-clock allowance measured on the monotonic clock.

    Parameters
    ----------
    seconds
        The allowance; ``None`` for no limit.
    started
        ``time.monotonic()`` when the allowance began (default: now).
    """

    seconds: float | None
    started: float = field(default_factory=time.monotonic)

    @property
    def deadline(self) -> float | None:
        """The monotonic time at which the budget runs out, or ``None``."""
        return None if self.seconds is None else self.started + self.seconds

    def remaining(self, cap: float | None = None) -> float | None:
        """Seconds left (never negative), at most ``cap`` when one is given.

        Parameters
        ----------
        cap
            An upper bound of the solver's own, returned when the budget is larger
            or unlimited.

        Returns
        -------
        float or None
            ``None`` only when there is neither a budget nor a cap.
        """
        left = None if self.deadline is None else max(0.0, self.deadline - time.monotonic())
        if cap is None:
            return left
        return cap if left is None else min(cap, left)

    @property
    def expired(self) -> bool:
        """Whether the allowance has run out."""
        deadline = self.deadline
        return deadline is not None and time.monotonic() >= deadline

    def error(self, doing: str = "") -> TimeLimitError:
        """The error that says the budget ran out, naming what was being done.

        Parameters
        ----------
        doing
            What the check was doing, such as ``'step "XL"'``.
        """
        where = f" while evaluating {doing}" if doing else ""
        return TimeLimitError(
            f"the check ran out of its time limit of {self.seconds:g} s{where}; "
            "simplify the worksheet or raise --time-limit"
        )

    def check(self, doing: str = "") -> None:
        """Raise :class:`TimeLimitError` if the budget has run out (a safe point).

        Parameters
        ----------
        doing
            What the check is doing, for the message.

        Raises
        ------
        TimeLimitError
            When the allowance has run out.
        """
        if self.expired:
            raise self.error(doing)


def watchdog(budget: Budget, label: str, margin: float = WATCHDOG_MARGIN) -> threading.Timer | None:
    """Start a daemon timer that ends the process at the limit plus ``margin``.

    It is the last resort for a single library call that cannot be stopped at a safe
    point (a characteristic polynomial deep in C, for one): it writes one line on
    stderr and exits with status 2 without running cleanup. The caller cancels the
    returned timer when the work is done.

    Parameters
    ----------
    budget
        The budget whose limit is watched; no timer for an unlimited one.
    label
        The file name to put in front of the message.
    margin
        Seconds past the limit before the process is ended.

    Returns
    -------
    threading.Timer or None
        The started timer, or ``None`` for an unlimited budget.
    """
    left = budget.remaining()
    if left is None:
        return None

    def expire() -> None:
        sys.stderr.write(
            f"handcheck: {label}: the check ran out of its time limit of {budget.seconds:g} s "
            f"and did not stop within {margin:g} s more; simplify the worksheet or raise --time-limit\n"
        )
        sys.stderr.flush()
        sys.stdout.flush()
        os._exit(2)

    timer = threading.Timer(left + margin, expire)
    timer.daemon = True
    timer.start()
    return timer
