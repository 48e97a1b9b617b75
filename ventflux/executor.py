"""Where independent tasks run: in this process by default, or on an executor a plugin provides (a Dask cluster).

The core asks for an executor by the string a user gave (``ventflux survey --scheduler WHERE``): ``"serial"``
(or nothing) is a plain loop in this process; any other string goes to the executors plugins register through
the ``ventflux_executors`` hook (``ventflux-series`` provides Dask: ``local``, ``threads``, ``processes`` or a
``dask.distributed`` scheduler address). An executor only decides *where* a task runs, never what it computes:
every task is a deterministic function of its arguments, so the numbers are the same on every executor.

Survey vents (``estimate_vents``) are estimated as one task per vent. Each task draws its inputs through its own
copy of the run's ``SharedDraws``; the named streams make a name's draws the same in every process, and the
names a task drew are merged back into the run's ``SharedDraws`` afterwards (a name given two different values
by two vents is refused there, as in a serial run).
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, replace
from typing import Any, Protocol

from .errors import InputError

#: The name of the in-process executor.
SERIAL = "serial"


class Executor(Protocol):
    """Runs ``fn(*args)`` for each tuple of arguments and returns the results in the order given."""

    name: str

    def map(self, fn: Callable, arguments: Sequence[tuple],
            on_done: Callable[[int, Any], None] | None = None) -> list:
        """Results of ``fn(*a)`` for every ``a`` in ``arguments``, in order; ``on_done(i, result)`` as each ends."""
        ...


class SerialExecutor:
    """A plain loop in this process (the default; no copying of arguments)."""

    name = SERIAL

    def map(self, fn, arguments, on_done=None):
        out = []
        for i, a in enumerate(arguments):
            r = fn(*a)
            if on_done is not None:
                on_done(i, r)
            out.append(r)
        return out


@dataclass(frozen=True)
class ExecutorInfo:
    """An executor a plugin provides (``ventflux_executors`` hook).

    Attributes
    ----------
    name : str
        Short name, for listings.
    summary : str
        One line: what it runs on and which strings select it.
    accepts : callable
        ``accepts(where: str) -> bool``: whether this executor understands the user's string.
    open : callable
        ``open(where: str, workers: int | None)``: a context manager yielding an ``Executor`` (it starts and
        stops whatever it needs, e.g. a local cluster).
    """

    name: str
    summary: str
    accepts: Callable[[str], bool]
    open: Callable[..., Any]
    provider: str = "ventflux"


def available_executors() -> list[ExecutorInfo]:
    """Every executor the installed plugins provide."""
    from .registry import plugin_manager

    return [e for group in plugin_manager().hook.ventflux_executors() for e in group]


@contextmanager
def open_executor(where: str | None = None, workers: int | None = None,
                  field: str = "--scheduler") -> Iterator[Executor]:
    """The executor named by ``where`` (``None`` or ``"serial"``: this process), open for the ``with`` block.

    Raises ``InputError`` naming ``field`` when no installed executor accepts ``where``.
    """
    if where is None or where == SERIAL:
        yield SerialExecutor()
        return
    options = available_executors()
    for info in options:
        if info.accepts(where):
            with info.open(where, workers) as ex:
                yield ex
            return
    allowed = "'serial'" + "".join(f"; {e.summary} ({e.provider})" for e in options)
    if not options:
        allowed += " (other executors come with plugins, e.g. ventflux-series for Dask)"
    raise InputError(field, where, allowed)


def _vent_task(estimators: dict, parsed: dict, vent_name: str, ctx):
    """One vent's methods on a copy of the run context; returns the estimates and the names drawn."""
    from .uncertainty import SharedDraws

    own = SharedDraws(ctx.draws.n_draws, ctx.draws.seed)
    own._known = dict(ctx.draws._known)
    own._shared = dict(ctx.draws._shared)
    local = replace(ctx, draws=own, progress=_quiet)
    est = {key: estimators[key](value, vent_name, local) for key, value in parsed.items()}
    # Only what this vent added travels back (the run's own draws are already on the client).
    return (est, {k: v for k, v in own._known.items() if k not in ctx.draws._known},
            {k: v for k, v in own._shared.items() if k not in ctx.draws._shared})


def _quiet(msg):  # progress lines from other processes would interleave; the client prints one per vent
    pass


def estimate_vents(vents: Sequence, methods: dict, ctx, executor: Executor | None = None) -> list[dict]:
    """Every vent's method estimates (``{method key: MethodEstimate}`` per vent, in order) on ``executor``.

    Serially (the default) each method's ``estimate`` runs here with the run's own context, exactly as a plain
    loop. On another executor one task per vent runs with a copy of the context; the names it drew are merged
    into ``ctx.draws`` (same seed and name, same draws: the numbers are identical).
    """
    n = len(vents)
    if executor is None or isinstance(executor, SerialExecutor):
        out = []
        for i, v in enumerate(vents, 1):
            ctx.progress(f"vent {i}/{n}: {v.name} ({', '.join(v.methods)})")
            out.append({key: methods[key].estimate(parsed, v.name, ctx) for key, parsed in v.methods.items()})
        return out
    args = [({k: methods[k].estimate for k in v.methods}, dict(v.methods), v.name, ctx) for v in vents]

    def done(i, _res):
        v = vents[i]
        ctx.progress(f"vent {v.name} ({', '.join(v.methods)}) done on {executor.name}")

    results = executor.map(_vent_task, args, on_done=done)
    out = []
    for est, known, shared in results:
        for name, value in known.items():
            ctx.draws._register(name, value)  # refuses a name given two different values, as a serial run does
        for name, value in shared.items():
            ctx.draws._shared.setdefault(name, value)
        out.append(est)
    return out


__all__ = ["SERIAL", "Executor", "ExecutorInfo", "SerialExecutor", "available_executors", "estimate_vents",
           "open_executor"]

