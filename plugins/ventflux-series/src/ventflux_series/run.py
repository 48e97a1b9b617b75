"""The series run as a library call: manifest in, analysed series and a results folder out."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from .analysis import VentSeries, analyze, assemble
from .estimate import ItemResult
from .execute import run_items
from .inputs import describe_inputs, series_input_draws, site_state
from .manifest import Manifest, read_manifest


@dataclass
class SeriesRun:
    manifest: Manifest
    results: list[ItemResult]
    series: list[VentSeries]
    stats: dict
    inputs: dict

    def write(self, out) -> Path:
        from .outputs import write_results

        return write_results(Path(out), self.manifest, self.series, self.results, self.stats, self.inputs)


def default_cache() -> Path:
    from ventflux.plugin_api import cache_dir

    return cache_dir() / "series"


def run_series(manifest, *, scheduler: str | None = None, workers: int | None = None, cache: Path | None = None,
               fresh: bool = False, quiet: bool = True) -> SeriesRun:
    """Estimate every item of a manifest (path or ``Manifest``) and analyse each vent's series.

    ``cache`` defaults to ``<ventflux cache>/series``; pass ``cache=False`` for none.
    """
    m = manifest if isinstance(manifest, Manifest) else read_manifest(manifest)
    draws, _ = series_input_draws(m)
    site = site_state(m)
    cache_path = None if cache is False else Path(cache) if cache is not None else default_cache()
    results, stats = run_items(m, draws, site, scheduler=scheduler, workers=workers, cache=cache_path,
                               fresh=fresh, quiet=quiet)
    for r in results:
        r.file = m.items[r.index].path.name
    series = [analyze(assemble(results, v.name, v.method)) for v in m.vents.values()]
    return SeriesRun(m, results, series, stats, describe_inputs(m))
