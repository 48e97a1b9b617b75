"""What a run may ask of the machine: the memory its draws need.

A draw count that the machine cannot hold must be refused before the run
starts, with one line, not found out by the kernel killing the process. The
estimate is deliberately rough and generous: every Monte Carlo series is an
array of ``n`` float64 values, and an estimator holds a few dozen
temporaries of that size at once (``ARRAYS_PER_SERIES``, a generous
choice made here, not a measurement).
"""

from __future__ import annotations

import os

from .errors import InputError

#: Arrays of ``n`` float64 values alive at once per Monte Carlo series (a choice made here, see above).
ARRAYS_PER_SERIES = 24
#: Fraction of the available memory a run may plan to use (a choice made here: room for the interpreter).
USABLE_FRACTION = 0.7


def available_memory() -> int | None:
    """Bytes of memory available to a new allocation now (Linux ``MemAvailable``), or ``None`` if unknown."""
    try:
        with open("/proc/meminfo") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    try:
        return int(os.sysconf("SC_AVPHYS_PAGES") * os.sysconf("SC_PAGE_SIZE"))
    except (ValueError, OSError, AttributeError):
        return None


def memory_needed(draws: int, series: int = 1) -> int:
    """Rough peak bytes of a run with ``draws`` draws of ``series`` Monte Carlo series (see the module notes)."""
    return int(draws) * 8 * ARRAYS_PER_SERIES * max(int(series), 1)


def check_memory(draws: int, series: int = 1, field: str = "--draws", where: str | None = None) -> None:
    """Refuse a draw count whose arrays would not fit in the available memory (one line, exit 2).

    Raises
    ------
    InputError
        ``draws`` is below 1, or its estimated memory exceeds ``USABLE_FRACTION`` of what is available.
    """
    if int(draws) < 1:
        raise InputError(field, draws, "a number of draws ≥ 1", where=where)
    have = available_memory()
    if have is None:
        return
    need = memory_needed(draws, series)
    if need > USABLE_FRACTION * have:
        most = max(int(USABLE_FRACTION * have / (8 * ARRAYS_PER_SERIES * max(int(series), 1))), 1)
        raise InputError(field, draws, f"at most about {most:,} draws on this machine (this run would need about "
                                       f"{need / 2**30:.1f} GiB; {have / 2**30:.1f} GiB is available)", where=where)
