"""The per-step time limit.

A step's deciding runs under a real-time interval timer; when it fires, a
:class:`StepTimeout` is raised inside the computation.  It derives from
``BaseException`` so that no ``except Exception`` inside sympy or the evaluator
swallows it.  Where no timer is available (not the main thread, or no
``SIGALRM``), the limit is not enforced and the cost caps of the evaluator are
the only bound.

Python swallows an exception raised inside some callbacks (a garbage-collection
callback, a ``__del__``): it prints "Exception ignored" and goes on.  So after its
first shot the timer keeps firing every :data:`REPEAT` seconds until the block has
been left: a swallowed timeout is raised again instead of being lost.
"""

from __future__ import annotations

import contextlib
import signal
import threading
from typing import Iterator


class StepTimeout(BaseException):
    """The step ran past its time limit."""


#: Seconds between repeated shots of a timer whose first timeout may have been swallowed.
REPEAT = 0.05


class _Shots:
    """Whether the timer's shots still raise (cleared first thing when the block is left)."""

    __slots__ = ("active",)

    def __init__(self) -> None:
        self.active = True

    def __call__(self, signum: int, frame: object) -> None:
        if self.active:
            raise StepTimeout()


@contextlib.contextmanager
def time_limit(seconds: float) -> Iterator[None]:
    """Raise :class:`StepTimeout` inside the block after ``seconds`` (0 or less: no limit)."""
    usable = (
        seconds > 0
        and hasattr(signal, "SIGALRM")
        and threading.current_thread() is threading.main_thread()
    )
    if not usable:
        yield
        return
    shots = _Shots()
    previous = signal.signal(signal.SIGALRM, shots)
    signal.setitimer(signal.ITIMER_REAL, seconds, REPEAT)
    try:
        yield
    finally:
        while True:  # a shot landing while the timer is disarmed is raised here: disarm again
            try:
                shots.active = False
                signal.setitimer(signal.ITIMER_REAL, 0)
                signal.signal(signal.SIGALRM, previous)
                break
            except StepTimeout:
                continue
