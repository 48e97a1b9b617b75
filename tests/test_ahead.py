"""Work begun ahead is a cache: the same result, or nothing (``ventflux.ahead``)."""

import os
import subprocess
import sys
import tempfile
from pathlib import Path

import pytest

from ventflux import ahead


def _in_a_fresh_process(check: str):
    """Run ``check`` of this module in a new interpreter (the test session may hold threads: then nothing forks)."""
    if (os.cpu_count() or 1) < 2 or not sys.platform.startswith("linux"):
        pytest.skip("one core, or not Linux: nothing is begun ahead")
    code = f"import sys; sys.path.insert(0, sys.argv[1]); import test_ahead as t; t.{check}()"
    done = subprocess.run([sys.executable, "-c", code, str(Path(__file__).parent)], capture_output=True, text=True,
                          timeout=300)
    assert done.returncode == 0, done.stderr[-3000:]


def test_nothing_is_begun_unless_allowed():
    assert ahead.start("k", pow, 2, 10) is False
    assert ahead.take("k") is None


def _square_with_pid(x):
    return x * x, os.getpid()


def _fails(_x):
    raise ValueError("the caller computes it and raises this itself")


def _sleeps():
    import time

    time.sleep(60)
    return 1


def _folders():
    return {p for p in os.listdir(tempfile.gettempdir()) if p.startswith("ventflux-ahead-")}


def _cache_only():
    before = _folders()
    with ahead.allowed():
        assert ahead.start(("sq", 12), _square_with_pid, 12) is True
        assert ahead.start(("sq", 12), _square_with_pid, 12) is False  # one computation for one key
        assert ahead.start("fails", _fails, 1) is True
        assert ahead.start("slow", _sleeps) is True
    assert ahead.start("late", _square_with_pid, 3) is False  # outside the block nothing begins
    value, pid = ahead.take(("sq", 12))
    assert value == 144 and pid != os.getpid()  # computed elsewhere, by the same function
    assert ahead.take(("sq", 12))[0] == 144  # taken again: the same result
    assert ahead.take("fails") is None  # failed: the caller computes it itself
    assert ahead.take(("sq", 13)) is None  # another key: nothing
    # a process forked afterwards (a survey's worker) takes it too
    r, w = os.pipe()
    child = os.fork()
    if child == 0:
        got = ahead.take(("sq", 12))
        os.write(w, b"1" if got is not None and got[0] == 144 else b"0")
        ahead.discard()  # a worker's copy: it leaves the starter's jobs alone
        os._exit(0)
    os.waitpid(child, 0)
    assert os.read(r, 1) == b"1"
    assert len(_folders() - before) == 3
    slow = ahead._STARTED["slow"].pid
    ahead.discard()  # the end of the command: what still runs is stopped, every result removed
    assert _folders() == before and not ahead._STARTED
    with pytest.raises(ChildProcessError):
        os.waitpid(slow, os.WNOHANG)  # stopped and reaped: no process left behind


def test_a_result_begun_ahead_is_the_result_or_nothing():
    _in_a_fresh_process("_cache_only")


def test_checking_a_survey_begins_nothing(monkeypatch, capsys):
    pytest.importorskip("ventflux_video")
    import ventflux_video.survey

    from ventflux.cli import main

    seen = []  # whether beginning was allowed when the video parser asked
    monkeypatch.setattr(ventflux_video.survey, "start_ahead", lambda *a: seen.append(ahead._ALLOWED) or False)
    demo = Path(__file__).resolve().parents[1] / "examples" / "oskeran-ridge" / "survey.toml"
    assert main(["survey", str(demo), "--check", "--quiet"]) == 0
    assert seen == [False]
    assert not ahead._ALLOWED and not ahead._STARTED
