"""Safe output writing and input hashing.

Three promises, kept here and nowhere else:

* **Atomic.** A file is written under a temporary name beside its destination
  and renamed into place; a results folder is built under a temporary name and
  renamed when complete, with a completion marker written last. A reader never
  sees a half-written file, and no folder looks complete unless it is.
* **Nothing ventflux did not create is deleted.** An existing results folder is
  replaced only if it carries ventflux's marker (or is empty). An existing file
  is replaced only if ventflux wrote it there and nobody changed it since: the
  SHA-256 of every file ventflux writes is recorded in the cache folder
  (``written-files.tsv``) and compared before overwriting.
* **Interrupted runs heal.** A run killed part-way leaves at most a hidden
  temporary folder (``.NAME.<id>.part``) or the previous results under a hidden
  name (``.NAME.old``); the next run on the same location removes the first and
  restores the second before it starts. Two runs on one location are serialised
  by an advisory lock (``.NAME.lock`` beside it): the second is refused with a
  one-line message instead of racing the first.

Inputs are only ever opened for reading.
"""

from __future__ import annotations

import errno
import hashlib
import json
import math
import os
import shutil
import tempfile
import time
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

import numpy as np

from .cachedir import cache_dir
from .errors import InputError

#: Name of the marker file inside a finished results folder; written last.
RESULTS_MARKER = ".ventflux-results"
#: Name of the marker file inside a results folder that is still being built.
PARTIAL_MARKER = ".ventflux-partial"
_REGISTRY = "written-files.tsv"


# ---- files ---------------------------------------------------------------------
class OutputRefused(OSError):
    """An output path that ventflux will not write (it would destroy something it did not create)."""


def _sha256_bytes(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def _record_written(path: Path, digest: str) -> None:
    # Append-only, one short line per write: O_APPEND keeps concurrent writers from interleaving lines.
    try:
        folder = cache_dir()
        folder.mkdir(parents=True, exist_ok=True)
        with open(folder / _REGISTRY, "a", encoding="utf-8") as fh:
            fh.write(f"{digest}\t{path}\n")
    except OSError:
        pass  # without a record the file is simply not replaced next time: safe, never destructive


def _was_written_by_us(path: Path) -> bool:
    try:
        digest = sha256_of(path)
        with open(cache_dir() / _REGISTRY, encoding="utf-8") as fh:
            wanted = f"{digest}\t{path}"
            return any(line.rstrip("\n") == wanted for line in fh)
    except OSError:
        return False


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def _remove_stale_parts(path: Path) -> None:
    """Remove ``.NAME.<pid>.<x>.part`` files left by writers that were killed (their process is gone)."""
    try:
        entries = list(path.parent.glob(f".{path.name}.*.part"))
    except OSError:
        return
    for p in entries:
        fields = p.name[len(path.name) + 2:].split(".")
        if len(fields) >= 3 and fields[0].isdigit() and not _pid_alive(int(fields[0])) and p.is_file():
            p.unlink(missing_ok=True)


def check_file_destination(path) -> Path:
    """Raise ``OutputRefused`` unless ``path`` is new or a file ventflux wrote and nobody has changed since."""
    path = Path(path).absolute()
    if path.is_dir():
        raise OutputRefused(errno.EISDIR, "it is a folder")
    if path.exists() and not _was_written_by_us(path):
        raise OutputRefused(errno.EEXIST, "the file exists and was not written by ventflux; remove it or choose "
                                          "another name")
    return path


def atomic_write_bytes(path, data: bytes) -> None:
    """Write ``data`` to ``path`` atomically, refusing to overwrite a file ventflux did not write."""
    path = check_file_destination(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    _remove_stale_parts(path)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.{os.getpid()}.", suffix=".part", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    _record_written(path, _sha256_bytes(data))


def atomic_write_text(path, text: str) -> None:
    atomic_write_bytes(path, text.encode("utf-8"))


# ---- results folders -------------------------------------------------------------
def is_results_folder(path) -> bool:
    """True if ``path`` is a finished ventflux results folder (it carries the marker)."""
    return (Path(path) / RESULTS_MARKER).is_file()


def _refuse(option: str, path: Path, why: str) -> InputError:
    return InputError(option, str(path), f"a new folder, an empty one or a previous ventflux results folder ({why})")


@contextmanager
def _location_lock(path: Path, option: str) -> Iterator[None]:
    """Hold an exclusive advisory lock for ``path``; refuse at once if another run holds it."""
    try:
        import fcntl
    except ImportError:  # pragma: no cover - no advisory locks on this platform: proceed unserialised
        yield
        return
    lock_path = path.parent / f".{path.name}.lock"
    while True:
        fd = os.open(lock_path, os.O_RDWR | os.O_CREAT, 0o644)
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError:
            os.close(fd)
            raise InputError(option, str(path), "a location no other ventflux run is writing to (another run "
                                                "holds it now; wait for it or choose another folder)") from None
        # The lock file may have been unlinked by the previous holder between our open and our lock:
        # then we hold a lock on a file nobody else will see, so start again on the new one.
        try:
            same = os.path.samestat(os.fstat(fd), os.stat(lock_path))
        except FileNotFoundError:
            same = False
        if same:
            break
        os.close(fd)
    try:
        os.write(fd, f"{os.getpid()}\n".encode())
        yield
    finally:
        lock_path.unlink(missing_ok=True)  # unlink before unlock: a waiter re-checks the inode (above)
        os.close(fd)


def _heal(path: Path) -> None:
    """Undo what a killed run left behind at ``path`` (called with the location's lock held)."""
    old = path.with_name(f".{path.name}.old")
    for part in path.parent.glob(f".{path.name}.*.part"):
        # Only folders that are provably ours: with one of our markers, or empty (killed right after creation).
        if part.is_dir() and ((part / PARTIAL_MARKER).exists() or is_results_folder(part) or not any(part.iterdir())):
            shutil.rmtree(part, ignore_errors=True)
    if old.is_dir() and is_results_folder(old):
        if not path.exists():
            os.replace(old, path)  # killed between the two renames: the previous results come back
        else:
            shutil.rmtree(old, ignore_errors=True)


def check_results_destination(path, option: str = "--out") -> Path:
    """Raise ``InputError`` unless ``path`` may receive a results folder (new, empty or ventflux's own)."""
    path = Path(path)
    if "\0" in str(path):
        raise InputError(option, repr(str(path)), "a path without NUL characters")
    if path.is_symlink():
        raise _refuse(option, path, "it is a symbolic link")
    if path.exists():
        if not path.is_dir():
            raise _refuse(option, path, "it is a file")
        if not is_results_folder(path) and any(path.iterdir()):
            raise _refuse(option, path, "it holds files ventflux did not write")
    # Say now, not after the computation, when the folder could not be written: the nearest existing folder
    # above it must be a folder we may write in (a path through a file, a read-only file system).
    above = path.absolute().parent
    while not above.exists() and above != above.parent:
        above = above.parent
    if not above.is_dir():
        raise InputError(option, str(path), f"a path whose folders can be created ({above} is a file)")
    if not os.access(above, os.W_OK):
        raise InputError(option, str(path), f"a location that can be written ({above} is read-only)")
    return path


def check_output_location(path, input_files, option: str = "--out") -> Path:
    """``check_results_destination``, and refuse a folder that is, or holds, any of ``input_files``."""
    check_results_destination(path, option)
    out = Path(path).resolve()
    for f in input_files:
        p = Path(f).resolve()
        if out == p or out in p.parents:
            raise InputError(option, str(path), f"a folder that contains no input file (it contains {p})")
    return Path(path)


def file_stem(name: str) -> str:
    """A name as a file or folder name: lower case, every character but letters and digits a hyphen."""
    return "".join(ch if ch.isalnum() else "-" for ch in name.lower()).strip("-") or "survey"


@contextmanager
def results_directory(path, option: str = "--out") -> Iterator[Path]:
    """Build a results folder under a temporary name and rename it to ``path`` when complete.

    ``path`` must be new, empty or a previous ventflux results folder (anything else is refused with an
    ``InputError`` naming ``option``). The previous folder is replaced only once the new one is complete;
    the completion marker is written last, so a folder without it is never a finished result.
    """
    path = check_results_destination(path, option)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise InputError(option, str(path), f"a folder that can be created ({err.strerror})") from None
    with _location_lock(path, option):
        _heal(path)
        check_results_destination(path, option)  # what a killed run restored is checked too
        tmp = Path(tempfile.mkdtemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent))
        try:
            (tmp / PARTIAL_MARKER).write_text(f"{os.getpid()}\n", encoding="utf-8")
            yield tmp
            marker = {"created_by": "ventflux", "time": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime())}
            (tmp / RESULTS_MARKER).write_text(json.dumps(marker) + "\n", encoding="utf-8")
            (tmp / PARTIAL_MARKER).unlink()
        except BaseException:
            shutil.rmtree(tmp, ignore_errors=True)
            raise
        old = None
        if path.exists():
            old = path.with_name(f".{path.name}.old")
            os.replace(path, old)
        os.replace(tmp, path)
        if old is not None:
            shutil.rmtree(old, ignore_errors=True)


#: Former name, kept for plugins written against the first release.
atomic_directory = results_directory


def sha256_of(path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def json_ready(value):
    """A JSON-ready copy: NumPy arrays and scalars as lists and numbers, non-finite floats as null."""
    if isinstance(value, dict):
        return {k: json_ready(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [json_ready(v) for v in value]
    if isinstance(value, np.ndarray):
        return json_ready(value.tolist())
    if isinstance(value, (np.floating, float)):
        f = float(value)
        return f if math.isfinite(f) else None
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, np.bool_):
        return bool(value)
    return value
