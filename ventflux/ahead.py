"""Work begun ahead: a long computation a parser knows the run will need, started while the file is still read.

Reading and checking a survey file is one process's work, so a second core is idle for the first second or two
of a run. A parser that finds a long computation depending only on what it has just read (the video
correlation of a clip: no draws, no other section) may start it here, in a process forked from this one; the
estimate later takes the result instead of computing it. It is a cache, never a second path:

* ``take(key)`` returns what ``fn(*args)`` returned, computed by the same function with the same arguments,
  or ``None``: nothing was started for that key (not allowed here, not Linux, one core, other threads in this
  process), or the computation failed. The caller then computes it itself, so an error is raised exactly where
  and as it always was.
* Only the survey command allows it, and only while it reads a file for a run (``allowed()``): ``--check`` and
  the library start nothing, and a file with problems leaves nothing running (``discard()``).
* The forked process shares the cores with the one checking the file: a method that uses threads sees one
  core fewer (``ventflux.executor.task_cores``).

The result travels through a file in the system's temporary folder, created and removed here; the end of a
pipe that the forked process holds tells a reader it is done (a reader in a worker process forked later
inherits it).
"""

from __future__ import annotations

import os
from collections.abc import Callable, Hashable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Any

_ALLOWED = False


@dataclass
class _Job:
    pid: int  # the forked process
    done: int  # read end of a pipe whose write end only the forked process holds: end of file once it exits
    path: str  # the pickled result in a temporary folder of its own, written as .part and renamed when complete
    owner: int  # the process that started it (only it may wait for and discard it)


_STARTED: dict[Hashable, _Job] = {}


@contextmanager
def allowed() -> Iterator[None]:
    """Within this block ``start`` may fork (the survey command reading a file for a run)."""
    global _ALLOWED
    _ALLOWED = True
    try:
        yield
    finally:
        _ALLOWED = False


def start(key: Hashable, fn: Callable[..., Any], *args) -> bool:
    """Begin ``fn(*args)`` in a forked process, for ``take(key)``; True if it was started.

    ``key`` must identify everything the result depends on (the inputs' values, a file's size and time of last
    change): a later ``take`` with an equal key gets this result.
    """
    if not _ALLOWED or key in _STARTED:
        return False
    import pickle
    import tempfile

    from .executor import ForkExecutor, share_cores

    if not ForkExecutor.usable(2):  # the one rule for forking (Linux, two cores, one thread)
        return False
    path = os.path.join(tempfile.mkdtemp(prefix="ventflux-ahead-"), "result.pickle")  # a folder of its own
    done, hold = os.pipe()
    pid = os.fork()
    if pid == 0:  # the forked process: compute, write, exit without running the parent's clean-up
        try:
            os.close(done)
            share_cores(2)  # the parent goes on checking the file on the other core
            value = fn(*args)
            with open(path + ".part", "wb") as fh:
                pickle.dump(value, fh, protocol=pickle.HIGHEST_PROTOCOL)
            os.replace(path + ".part", path)
        except BaseException:  # noqa: BLE001 - the reader computes it itself and raises the error there
            pass
        finally:
            os._exit(0)  # closes ``hold``: readers see the end of the pipe
    os.close(hold)
    _STARTED[key] = _Job(pid, done, path, os.getpid())
    return True


def take(key: Hashable) -> Any:
    """The result started for ``key`` (waiting for it if need be), or None (see the module notes)."""
    job = _STARTED.get(key)
    if job is None:
        return None
    import pickle

    try:
        while os.read(job.done, 1):  # nothing is ever written: this returns once the forked process has exited
            pass
        with open(job.path, "rb") as fh:
            return pickle.load(fh)
    except (OSError, EOFError, pickle.UnpicklingError):
        return None


def discard() -> None:
    """Stop what is still running and remove every result (the command's end, whether it succeeded or not)."""
    import signal

    for key, job in list(_STARTED.items()):
        if job.owner != os.getpid():  # a forked worker's copy: the starting process cleans up
            continue
        try:
            os.kill(job.pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
        try:
            os.waitpid(job.pid, 0)
        except ChildProcessError:
            pass
        os.close(job.done)
        for p in (job.path, job.path + ".part"):
            try:
                os.unlink(p)
            except FileNotFoundError:
                pass
        try:
            os.rmdir(os.path.dirname(job.path))
        except OSError:
            pass
        del _STARTED[key]


__all__ = ["allowed", "discard", "start", "take"]
