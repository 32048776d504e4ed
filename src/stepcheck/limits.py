"""The per-step time limit.

A step's deciding runs under a real-time interval timer; when it fires, a
:class:`StepTimeout` is raised inside the computation.  It derives from
``BaseException`` so that no ``except Exception`` inside sympy or the evaluator
swallows it.  Where no timer is available (not the main thread, or no
``SIGALRM``), the limit is not enforced and the cost caps of the evaluator are
the only bound.
"""

from __future__ import annotations

import contextlib
import signal
import threading
from typing import Iterator


class StepTimeout(BaseException):
    """The step ran past its time limit."""


def _fire(signum: int, frame: object) -> None:
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
    previous = signal.signal(signal.SIGALRM, _fire)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
