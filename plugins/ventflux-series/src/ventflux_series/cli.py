"""``ventflux series``: parse the options, run, print. No physics or statistics here."""

from __future__ import annotations

import sys
from pathlib import Path


def configure(p):
    p.add_argument("manifest", help="the series manifest (TOML) beside its items CSV")
    p.add_argument("--out", metavar="DIR", default=None,
                   help="results folder (default: ventflux-results/<series name>); replaced only when complete, "
                        "and only if ventflux wrote it")
    p.add_argument("--scheduler", default=None, metavar="WHERE",
                   help="'serial', 'threads', 'processes' or 'local' (a local Dask cluster, one worker per core) "
                        "or the address of a dask.distributed scheduler (default: threads for up to 8 items, "
                        "else processes)")
    p.add_argument("--workers", type=int, default=None, metavar="N", help="worker processes of a local cluster")
    p.add_argument("--fresh", action="store_true", help="recompute every item, ignoring cached results")
    p.add_argument("--cache", metavar="DIR", default=None,
                   help="folder of finished items, shared by reruns (default: the ventflux cache folder's series/; "
                        "on a cluster, a folder every worker can write)")
    p.add_argument("--check", action="store_true", help="validate the manifest and its items, compute nothing")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.add_argument("--json", action="store_true", help="print one JSON object to standard output")


def run(args) -> int:
    from ventflux.plugin_api import print_json
    from ventflux.plugin_api import InputError

    from .manifest import read_manifest
    from .run import run_series

    if args.workers is not None and not 1 <= args.workers <= 1024:
        raise InputError("--workers", args.workers, "a whole number of worker processes from 1 to 1024")
    m = read_manifest(args.manifest)
    if args.check:
        msg = {"valid": True, "vents": list(m.vents), "items": len(m.items)}
        print_json(msg) if args.json else print(f"{Path(args.manifest).name}: valid ({len(m.vents)} vents, "
                                                f"{len(m.items)} items)")
        return 0
    slug = "".join(c if c.isalnum() else "-" for c in m.name.lower()).strip("-") or "series"
    out = Path(args.out) if args.out else Path.cwd() / "ventflux-results" / slug
    from ventflux.plugin_api import check_results_destination

    check_results_destination(out, "--out")
    from .dask_executor import tune_allocator

    tune_allocator()  # items estimated in this process (serial, threads) allocate as a cluster's workers do
    res = run_series(m, scheduler=args.scheduler, workers=args.workers, fresh=args.fresh, quiet=args.quiet,
                     cache=Path(args.cache) if args.cache else None)
    report = res.write(out)
    failed = [r for r in res.results if not r.ok]
    if args.json:
        import json

        print_json({"report": str(report), "results": str(out), **res.stats,
                    "failed_items": len(failed), "vents": json.loads((out / "summary.json").read_text())["vents"]})
        return 0
    for r in failed:
        print(f"ventflux series: item {r.file} ({r.vent}) failed: {r.error}", file=sys.stderr)
    print(f"{m.name}: {len(res.results) - len(failed)} of {len(res.results)} items estimated "
          f"({res.stats['cached']} from the cache)")
    print(f"report: {report}")
    return 0
