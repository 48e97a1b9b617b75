"""A line for a user who waits: said only when a step takes longer than a second.

Most steps of a check take a fraction of a second, and a line for each would be noise; a step that can take
long on unusual input (the plume rise inverted on every draw of a cast full of spikes: 12 s measured) says
what it is doing once it has taken a second, so that a wait is never silent (a choice: one second).
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from contextlib import contextmanager

#: Seconds a step may take before it says what it is doing (a choice).
NOTICE_AFTER = 1.0


@contextmanager
def notice_if_slow(say: Callable[[str], None] | None, message: str, after: float | None = None) -> Iterator[None]:
    """Run the ``with`` block; call ``say(message)`` once if it is still running after ``after`` seconds
    (``NOTICE_AFTER`` by default).

    ``say=None`` says nothing. The timer's thread is joined before the block's caller goes on, so a process
    that forks afterwards (the survey's workers, which fork only from a single-threaded process) has no
    thread left over.
    """
    if say is None:
        yield
        return
    import threading

    timer = threading.Timer(NOTICE_AFTER if after is None else after, say, (message,))
    timer.daemon = True
    timer.start()
    try:
        yield
    finally:
        timer.cancel()
        timer.join()


__all__ = ["NOTICE_AFTER", "notice_if_slow"]
