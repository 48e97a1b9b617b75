"""Running the items: serially, on Dask's threaded scheduler, or on a ``dask.distributed`` cluster; resumable.

Every item is one task (``estimate.estimate_item``). Its result is cached on disk under a key made of the
item file's SHA-256 and every setting that affects it (method, the vent's inputs and their draws, the site,
the averaging window, the unphysical-draw limit, the versions of ventflux and this plugin), so a run killed
part-way and started again recomputes only the items that had not finished; ``fresh=True`` ignores the cache.
A cached result is written atomically (temporary name, then rename), so a killed task never leaves a
half-written entry that a later run would trust; the temporary files a killed run leaves behind (named
``.<key>.<host>.<pid>.<random>.part.npz``) are removed by the next run once their writer is gone
(``remove_stale_parts``), and nothing else in the cache folder is touched.

Schedulers:

* ``"serial"``: a plain loop in this process (also the baseline of the scaling benchmark);
* ``"threads"``: Dask's threaded scheduler, for small manifests (no process start-up);
* ``"processes"`` (default for more than ``SMALL_MANIFEST`` items): a local ``dask.distributed`` cluster with
  one single-threaded worker process per core;
* an address (``tcp://host:8786``): an existing ``dask.distributed`` scheduler.

Dask runs through ``dask_executor.DaskExecutor`` (the same executor ``ventflux survey --scheduler`` uses for its
vents); the shared draws and the site go to the workers once (scattered), not with every task.
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import socket
import sys
import tempfile
from collections.abc import Callable
from pathlib import Path

import numpy as np

from .estimate import ItemResult, estimate_item

#: Up to this many items the threaded scheduler is used by default (starting worker processes costs seconds).
SMALL_MANIFEST = 8


def _digest(obj) -> str:
    return hashlib.sha256(json.dumps(obj, sort_keys=True, default=str).encode()).hexdigest()


def item_key(item, vent, site, draws, settings: dict) -> str:
    """Content key of an item's result: its file's bytes and every setting that affects it."""
    from ventflux.plugin_api import CORE_VERSION as core_version
    from ventflux.plugin_api import sha256_of

    from . import __version__

    draws_hash = hashlib.sha256()
    for k in sorted(draws):
        draws_hash.update(k.encode())
        draws_hash.update(np.ascontiguousarray(np.asarray(draws[k], float)).tobytes())
    return _digest({"file": sha256_of(item.path), "method": item.method, "start": item.start,
                    "vent_inputs": {k: str(v) for k, v in sorted(vent.inputs.items())}, "orifice": vent.orifice_xy,
                    "draws": draws_hash.hexdigest(), "site": site, "settings": settings,
                    "versions": [core_version, __version__]})


def _cache_path(cache: Path, key: str) -> Path:
    return cache / key[:2] / f"{key}.npz"


def load_cached(cache: Path, key: str, item) -> ItemResult | None:
    path = _cache_path(cache, key)
    try:
        with np.load(path, allow_pickle=False) as z:
            meta = json.loads(str(z["meta"]))
            return ItemResult(item.index, item.vent, item.method, z["times"], z["power"], z["unphysical"],
                              meta["flags"], meta["error"])
    except (OSError, KeyError, ValueError):
        return None  # absent or damaged: recomputed, never trusted


#: A cached entry's temporary name while it is written: ``.<key>.<host>.<pid>.<random>.part.npz`` (host and pid
#: of the writer, so a later run can tell a dead writer's leftover from a file another process is writing now).
_PART = re.compile(r"^\.(?P<key>[0-9a-f]{64})\.(?P<host>[A-Za-z0-9-]+)\.(?P<pid>\d+)\.[A-Za-z0-9_]+\.part\.npz$")
#: A temporary file left by a writer on another machine is removed once it is this old [s] (choice: no cached
#: item takes an hour to write).
STALE_PART_S = 3600.0


def _host() -> str:
    return re.sub(r"[^A-Za-z0-9-]", "-", socket.gethostname()) or "host"


def store_cached(cache: Path, key: str, res: ItemResult) -> None:
    path = _cache_path(cache, key)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{key}.{_host()}.{os.getpid()}.", suffix=".part.npz", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as fh:
            np.savez(fh, times=res.times, power=res.power_draws, unphysical=res.unphysical,
                     meta=np.array(json.dumps({"flags": res.flags, "error": res.error})))
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


def remove_stale_parts(cache: Path) -> list[Path]:
    """Remove the temporary files of cache writers that died (a killed run); return what was removed.

    Only files named as ``store_cached`` names them are considered (``_PART``), in the cache's two-character
    subfolders; one whose writer runs on this machine is removed when that process no longer exists, one from
    another machine when older than ``STALE_PART_S``. Nothing else in the folder is touched.
    """
    import time

    removed = []
    host, now = _host(), time.time()
    for path in cache.glob("[0-9a-f][0-9a-f]/.*.part.npz"):
        m = _PART.match(path.name)
        if m is None or m["key"][:2] != path.parent.name:
            continue
        try:
            if m["host"] == host:
                stale = int(m["pid"]) != os.getpid() and not _alive(int(m["pid"]))
            else:
                stale = now - path.stat().st_mtime > STALE_PART_S
            if stale:
                path.unlink()
                removed.append(path)
        except FileNotFoundError:
            continue  # its writer finished (renamed it) meanwhile
    return removed


def _task(item, vent, site, draws, settings: dict, cache: str | None, fresh: bool) -> tuple[ItemResult, bool]:
    """One task: the item's cached result if there is one, else estimate it and cache it; ``(result, cached)``.

    The content key (which reads the whole item file to hash it) is computed here, on the worker, not on the
    client: on an archive of clips, hashing every file in one process before any work starts would be a serial
    read of the whole archive. The cache write happens here too, so a killed client loses nothing a worker
    finished.
    """
    key = item_key(item, vent, site, draws, settings) if cache is not None else ""
    if cache is not None and not fresh:
        hit = load_cached(Path(cache), key, item)
        if hit is not None:
            return hit, True
    res = estimate_item(item, vent, site, draws, settings["draws"], settings["interval_s"],
                        settings["max_unphysical"], settings["seed"])
    if cache is not None:
        store_cached(Path(cache), key, res)
    return res, False


def _progress(done: int, total: int, quiet: bool) -> None:
    if quiet:
        return
    width = 30
    filled = int(width * done / max(total, 1))
    sys.stderr.write(f"\rventflux series: [{'#' * filled}{'.' * (width - filled)}] {done}/{total} items")
    if done == total:
        sys.stderr.write("\n")
    sys.stderr.flush()


def run_items(manifest, draws_by_vent: dict, site: dict, *, scheduler: str | None = None,
              workers: int | None = None, cache: Path | None = None, fresh: bool = False, quiet: bool = True,
              on_done: Callable[[ItemResult], None] | None = None) -> tuple[list[ItemResult], dict]:
    """Estimate every item; return the results in item order and run statistics (cached/computed counts).

    Parameters
    ----------
    manifest : manifest.Manifest
    draws_by_vent : dict
        ``inputs.series_input_draws`` (made once, on the client).
    site : dict
        ``inputs.site_state``.
    scheduler : {"serial", "threads", "processes"} or str, optional
        Or a ``dask.distributed`` scheduler address. Default: threads for at most ``SMALL_MANIFEST`` items,
        else a local cluster of one worker process per core.
    workers : int, optional
        Worker processes of a local cluster (default: the machine's cores).
    cache : pathlib.Path, optional
        Folder of cached item results (none: no caching).
    fresh : bool
        Ignore cached results (they are overwritten).
    """
    settings = {"draws": manifest.draws, "seed": manifest.seed, "interval_s": manifest.interval_s,
                "max_unphysical": manifest.max_unphysical}
    results: dict[int, ItemResult] = {}
    removed = remove_stale_parts(cache) if cache is not None and cache.is_dir() else []
    total = len(manifest.items)
    stats: dict[str, int | str] = {"items": total, "cached": 0, "computed": 0,
                                   "temporary_files_removed": len(removed)}
    if scheduler is None:
        scheduler = "threads" if total <= SMALL_MANIFEST else "processes"
    stats["scheduler"] = scheduler

    def done(_i, out):
        res, cached = out
        results[res.index] = res
        stats["cached" if cached else "computed"] = int(stats["cached" if cached else "computed"]) + 1
        if on_done is not None:
            on_done(res)
        _progress(len(results), total, quiet)

    with _executor(scheduler if total else "serial", workers) as ex:
        _progress(0, total, quiet)  # once the executor is up: a refused --scheduler is one clean line
        # Inputs every task needs go to the workers once, not once per task.
        share = getattr(ex, "share", lambda obj: obj)
        shared_draws = {v: share(draws_by_vent[v]) for v in {item.vent for item in manifest.items}}
        shared_site, shared_settings = share(site), share(settings)
        args = [(item, manifest.vents[item.vent], shared_site, shared_draws[item.vent], shared_settings,
                 None if cache is None else str(cache), fresh) for item in manifest.items]
        ex.map(_task, args, on_done=done)
    return [results[i] for i in range(total)], stats


def _executor(scheduler: str, workers: int | None):
    """The executor of ``scheduler``: this process for ``serial``, else Dask (``dask_executor``)."""
    from contextlib import nullcontext

    from ventflux.plugin_api import SerialExecutor

    if scheduler == "serial":
        return nullcontext(SerialExecutor())
    from .dask_executor import accepts, open_dask

    if not accepts(scheduler):
        from ventflux.plugin_api import InputError

        raise InputError("--scheduler", scheduler, "'serial', 'threads', 'processes' (or 'local') or the address "
                         "of a dask.distributed scheduler (tcp://host:8786)")
    return open_dask(scheduler, workers)
