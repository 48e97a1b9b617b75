"""Arrays built once per machine (``ventflux.cachedir.cached_arrays``): read back exactly, never trusted damaged."""

import os

import numpy as np
import pytest

from ventflux.cachedir import cached_arrays


@pytest.fixture
def cache(tmp_path, monkeypatch):
    monkeypatch.setenv("VENTFLUX_CACHE", str(tmp_path / "cache"))
    return tmp_path / "cache"


def _builder(calls):
    def build():
        calls.append(1)
        return {"a": np.arange(5.0), "b": np.eye(2)}
    return build


def test_built_once_then_read_back_exactly(cache):
    calls = []
    first = cached_arrays("t-1.npz", _builder(calls))
    again = cached_arrays("t-1.npz", _builder(calls))
    assert len(calls) == 1
    for k in first:
        np.testing.assert_array_equal(first[k], again[k])
    assert sorted(p.name for p in cache.iterdir()) == ["t-1.npz"]  # no temporary file left


def test_a_damaged_file_is_rebuilt_not_trusted(cache):
    calls = []
    cached_arrays("t-2.npz", _builder(calls))
    (cache / "t-2.npz").write_bytes(b"not an npz file")
    out = cached_arrays("t-2.npz", _builder(calls))
    assert len(calls) == 2 and out["a"][4] == 4.0


@pytest.mark.skipif(os.geteuid() == 0, reason="root writes into read-only folders")
def test_an_unwritable_cache_costs_a_rebuild_not_the_result(cache):
    cache.mkdir()
    cache.chmod(0o500)
    said = []
    try:
        out = cached_arrays("t-3.npz", _builder([]), said.append)
    finally:
        cache.chmod(0o700)
    assert out["b"].shape == (2, 2) and said and "t-3.npz" in said[0]


def test_an_unwritable_cache_location_costs_a_rebuild_not_the_result(tmp_path, monkeypatch):
    blocker = tmp_path / "a-file"
    blocker.write_text("x")
    monkeypatch.setenv("VENTFLUX_CACHE", str(blocker / "cache"))  # a path through a file: mkdir fails
    said = []
    out = cached_arrays("t-4.npz", _builder([]), said.append)
    assert out["a"].size == 5 and said
