"""Where independent tasks run: in this process by default, or on an executor a plugin provides (a Dask cluster).

The core asks for an executor by the string a user gave (``ventflux survey --scheduler WHERE``): ``"serial"``
(or nothing) is a plain loop in this process; any other string goes to the executors plugins register through
the ``ventflux_executors`` hook (``ventflux-series`` provides Dask: ``local``, ``threads``, ``processes`` or a
``dask.distributed`` scheduler address). An executor only decides *where* a task runs, never what it computes:
every task is a deterministic function of its arguments, so the numbers are the same on every executor.

A survey's estimates (``estimate_survey``) are one task per method of each vent and one per section. Each task
draws its inputs through its own copy of the run's ``SharedDraws``; the named streams make a name's draws the same
in every process, and the names a task drew are merged back into the run's ``SharedDraws`` afterwards (a name
given two different values by two tasks is refused there, as in a serial run).

``"auto"`` (the survey command's default) is ``ForkExecutor`` where it is safe and worth it, else the plain
loop: worker processes forked from this one, so they start at once with everything already imported and read
their tasks from memory (nothing is pickled on the way in; results are pickled on the way back). A fork is made
only from a single-threaded process (a fork copies the locks other threads hold, not the threads that would
release them), only on Linux, with more than one core and more than one task. A task that fails
in a worker is run again here, so that an error is raised exactly as a serial run raises it.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, replace
from typing import Any, Protocol

from .errors import InputError

#: The name of the in-process executor.
SERIAL = "serial"
#: Forked workers where safe and worth it, else the plain loop (``ForkExecutor.usable``).
AUTO = "auto"
#: Worker processes of the forked executor at most (choice made here: these machines have two cores).
FORK_WORKERS = 2


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


_FORK_TASKS: list = []  # (fn, args) of the forked executor's current map, inherited by its workers
_SIBLINGS = 1  # worker processes of the current forked map, sharing the cores (its workers inherit it)


def _run_forked(i: int):
    fn, args = _FORK_TASKS[i]
    return fn(*args)


def usable_cores() -> int:
    """Cores this process may run on (its CPU affinity where the system tells it, else the machine's count)."""
    import os

    return len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1)


def share_cores(processes: int) -> None:
    """This process shares the cores with ``processes - 1`` others (``task_cores`` divides by ``processes``)."""
    global _SIBLINGS
    _SIBLINGS = max(1, int(processes))


def task_cores() -> int:
    """Cores one task may use: this process's usable cores, shared out among the forked workers when in one.

    A method that can use threads (the video correlation) asks here: in a survey's forked worker its
    sibling workers already keep the other cores busy, and threads would only contend with them.
    """
    return max(1, usable_cores() // _SIBLINGS)


class ForkExecutor:
    """Worker processes forked from this one (see the module notes); ``usable()`` says whether to use it."""

    name = "forked processes"

    def __init__(self, workers: int | None = None):
        self.workers = workers or min(FORK_WORKERS, usable_cores())

    @staticmethod
    def usable(tasks: int) -> bool:
        import sys
        import threading

        # Linux only: macOS system libraries are not safe across a fork (Python itself stopped forking there by
        # default), and Windows does not fork
        return (tasks > 1 and usable_cores() > 1 and threading.active_count() == 1
                and sys.platform.startswith("linux"))

    def map(self, fn, arguments, on_done=None, meanwhile: Callable[[], None] | None = None,
            spare: Callable[[dict[int, Any]], bool] | None = None):
        """As ``Executor.map``, with two uses of the time this process would spend waiting.

        The caller is otherwise idle while its workers compute, and one task often outlasts the others (a
        video correlation), leaving a core free. ``meanwhile()`` runs here once the workers are forked, before
        waiting for them: work the caller needs next (the survey imports its writers there). ``spare(done)``
        runs here while fewer tasks are left than there are workers (a core is free), called again and again
        with the results finished so far (``{index: result}``) until it returns False or the last tasks end:
        one short piece of work per call (the survey renders one figure of a finished task), since the
        results are collected only between calls. ``on_done`` is called as tasks finish, in that order.
        Neither runs when the tasks run in this process.
        """
        import multiprocessing
        from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait

        if not self.usable(len(arguments)):
            return SerialExecutor().map(fn, arguments, on_done)
        global _SIBLINGS
        _FORK_TASKS[:] = [(fn, a) for a in arguments]
        _SIBLINGS = min(self.workers, len(arguments))  # set before the fork: the workers inherit it
        out: list = [None] * len(arguments)
        failed = []
        try:
            # with the fork method every worker is forked at the first submit, before the pool starts its thread
            with ProcessPoolExecutor(_SIBLINGS,
                                     mp_context=multiprocessing.get_context("fork")) as pool:
                futures = {pool.submit(_run_forked, i): i for i in range(len(arguments))}
                if meanwhile is not None:
                    meanwhile()
                finished: dict[int, Any] = {}
                running = set(futures)
                while running:
                    if spare is not None and len(running) < _SIBLINGS:  # a worker is idle: so is a core
                        while not any(f.done() for f in running):
                            if not spare(finished):
                                spare = None  # nothing left to do
                                break
                    done, running = wait(running, return_when=FIRST_COMPLETED)
                    for f in sorted(done, key=futures.__getitem__):
                        i = futures[f]
                        try:
                            out[i] = f.result()
                        except Exception:  # noqa: BLE001 - rerun here: raised as a serial run raises it
                            failed.append(i)
                            continue
                        finished[i] = out[i]
                        if on_done is not None:
                            on_done(i, out[i])
        finally:
            _FORK_TASKS.clear()
            _SIBLINGS = 1  # this process reruns failed tasks with all of its cores
        for i in failed:
            out[i] = fn(*arguments[i])
            if on_done is not None:
                on_done(i, out[i])
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
    if where == AUTO:
        yield ForkExecutor(workers)
        return
    options = available_executors()
    for info in options:
        if info.accepts(where):
            with info.open(where, workers) as ex:
                yield ex
            return
    allowed = "'auto', 'serial'" + "".join(f"; {e.summary} ({e.provider})" for e in options)
    if not options:
        allowed += " (other executors come with plugins, e.g. ventflux-series for Dask)"
    raise InputError(field, where, allowed)


def _task(estimate: Callable, parsed, vent_name: str | None, ctx):
    """One method of a vent (``vent_name``) or one section (``None``) on a copy of the run context.

    Returns the estimate and the names it drew that the run had not drawn yet.
    """
    from .uncertainty import SharedDraws

    own = SharedDraws(ctx.draws.n_draws, ctx.draws.seed)
    own._known = dict(ctx.draws._known)
    own._shared = dict(ctx.draws._shared)
    local = replace(ctx, draws=own, progress=_quiet)
    est = estimate(parsed, vent_name, local) if vent_name is not None else estimate(parsed, local)
    # Only what this task added travels back (the run's own draws are already on the client).
    return (est, *own.drawn_since(ctx.draws._known, ctx.draws._shared))


def _quiet(msg):  # progress lines from other processes would interleave; the client prints one per task
    pass


def estimate_survey(vents: Sequence, methods: dict, sections_parsed: dict, sections: dict, ctx,
                    executor: Executor | None = None,
                    meanwhile: Callable[[], None] | None = None,
                    spare: Callable[[list], bool] | None = None) -> tuple[list[dict], dict]:
    """Every vent's method estimates and every section's estimate: ``([{method key: estimate}, …], {key: …})``.

    Serially (the default) each ``estimate`` runs here with the run's own context, vents first, in the file's
    order: a plain loop. On another executor each method of each vent and each section is one task with a copy
    of the context; the names a task drew are merged into ``ctx.draws`` in the same order (same seed and name,
    same draws: the numbers are identical). ``meanwhile`` and ``spare``: see ``ForkExecutor.map`` (other executors
    ignore them); ``spare`` is given the estimates of the tasks finished so far.
    """
    n = len(vents)
    if executor is None or isinstance(executor, SerialExecutor):
        out = []
        for i, v in enumerate(vents, 1):
            ctx.progress(f"vent {i}/{n}: {v.name} ({', '.join(v.methods)})")
            out.append({key: methods[key].estimate(parsed, v.name, ctx) for key, parsed in v.methods.items()})
        sec = {}
        for key, parsed in sections_parsed.items():
            ctx.progress(f"section: {key}")
            sec[key] = sections[key].estimate(parsed, ctx)
        return out, sec
    where: list[tuple[int | None, str]] = [(i, key) for i, v in enumerate(vents) for key in v.methods]
    where += [(None, key) for key in sections_parsed]
    args = [(methods[key].estimate, vents[vi].methods[key], vents[vi].name, ctx) if vi is not None else
            (sections[key].estimate, sections_parsed[key], None, ctx) for vi, key in where]

    def done(j, _res):
        vj, key = where[j]
        what = f"vent {vents[vj].name}: {key}" if vj is not None else f"section: {key}"
        ctx.progress(f"{what} done ({executor.name})")

    ctx.progress(f"estimating {len(vents)} vents and {len(sections_parsed)} sections ({executor.name})")
    if isinstance(executor, ForkExecutor):
        results = executor.map(_task, args, on_done=done, meanwhile=meanwhile,
                               spare=None if spare is None else lambda got: spare([r[0] for r in got.values()]))
    else:
        results = executor.map(_task, args, on_done=done)
    got: list[dict] = [{} for _ in vents]
    by_section: dict = {}
    for (vi, key), (est, known, shared) in zip(where, results, strict=True):
        ctx.draws.adopt(known, shared)  # refuses a name given two different values, as a serial run does
        if vi is None:
            by_section[key] = est
        else:
            got[vi][key] = est
    # each vent's methods and the sections in the file's order, as the serial loop makes them
    return ([{key: got[i][key] for key in v.methods} for i, v in enumerate(vents)],
            {key: by_section[key] for key in sections_parsed})


__all__ = ["AUTO", "SERIAL", "Executor", "ExecutorInfo", "ForkExecutor", "SerialExecutor", "available_executors",
           "estimate_survey", "open_executor", "task_cores", "usable_cores"]

