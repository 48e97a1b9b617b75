"""Outputs never destroy what ventflux did not create, heal after a killed run, and are serialised.

The promises are the ones stated in ``ventflux/io.py``; these tests are the contract (no outside source:
they check behaviour, not numbers).
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ventflux.errors import InputError
from ventflux.io import (PARTIAL_MARKER, RESULTS_MARKER, OutputRefused, atomic_write_bytes, is_results_folder,
                         results_directory)


@pytest.fixture(autouse=True)
def _own_cache(tmp_path, monkeypatch):
    monkeypatch.setenv("VENTFLUX_CACHE", str(tmp_path / "cache"))


def _write_results(path, payload="new"):
    with results_directory(path) as tmp:
        (tmp / "table.csv").write_text(payload)
    return path


def _tree(path: Path) -> dict:
    return {str(p.relative_to(path)): p.read_bytes() for p in sorted(path.rglob("*")) if p.is_file()}


def _siblings(path: Path) -> list[str]:
    return sorted(p.name for p in path.parent.iterdir() if p.name != path.name and p.name != "cache")


# ---- folders ---------------------------------------------------------------------------
def test_new_folder_is_complete_and_marked(tmp_path):
    out = _write_results(tmp_path / "res")
    assert is_results_folder(out)
    assert (out / "table.csv").read_text() == "new"
    assert not (out / PARTIAL_MARKER).exists()
    assert _siblings(out) == []  # no temporary folder, no lock, no old copy left beside it


def test_previous_results_are_replaced(tmp_path):
    out = _write_results(tmp_path / "res", "first")
    _write_results(out, "second")
    assert (out / "table.csv").read_text() == "second"
    assert _siblings(out) == []


def test_empty_folder_is_accepted(tmp_path):
    (tmp_path / "res").mkdir()
    out = _write_results(tmp_path / "res")
    assert is_results_folder(out)


def test_a_users_folder_is_refused_and_untouched(tmp_path):
    own = tmp_path / "notes"
    own.mkdir()
    (own / "dive-log.txt").write_text("mine")
    with pytest.raises(InputError) as err:
        _write_results(own)
    assert "--out" in err.value.line() and "did not write" in err.value.line()
    assert _tree(own) == {"dive-log.txt": b"mine"}


def test_a_file_is_refused_and_untouched(tmp_path):
    f = tmp_path / "res"
    f.write_text("mine")
    with pytest.raises(InputError, match="it is a file"):
        _write_results(f)
    assert f.read_text() == "mine"


def test_failure_inside_leaves_previous_results_and_no_leftovers(tmp_path):
    out = _write_results(tmp_path / "res", "first")
    with pytest.raises(RuntimeError):
        with results_directory(out) as tmp:
            (tmp / "table.csv").write_text("half")
            raise RuntimeError("boom")
    assert (out / "table.csv").read_text() == "first"
    assert _siblings(out) == []


def test_leftovers_of_a_killed_run_are_healed(tmp_path):
    out = tmp_path / "res"
    # What a run killed between its two renames leaves: the previous results under the hidden old name,
    # plus the new folder still under its temporary name, and an empty temporary folder of another kill.
    old = tmp_path / ".res.old"
    old.mkdir()
    (old / RESULTS_MARKER).write_text("{}")
    (old / "table.csv").write_text("previous")
    part = tmp_path / ".res.abc123.part"
    part.mkdir()
    (part / PARTIAL_MARKER).write_text("1")
    (tmp_path / ".res.empty1.part").mkdir()
    # A folder of the user's with a similar name but none of our markers is never touched.
    theirs = tmp_path / ".res.mine.part"
    theirs.mkdir()
    (theirs / "keep.txt").write_text("keep")
    with results_directory(out) as tmp:
        # Before anything is written the previous results are back in place.
        assert (out / "table.csv").read_text() == "previous"
        (tmp / "table.csv").write_text("new")
    assert (out / "table.csv").read_text() == "new"
    assert _siblings(out) == [".res.mine.part"]
    assert (theirs / "keep.txt").read_text() == "keep"


def test_concurrent_run_on_one_location_is_refused(tmp_path):
    out = tmp_path / "res"
    holder = subprocess.Popen([sys.executable, "-c", textwrap.dedent(f"""
        import sys, time
        from ventflux.io import results_directory
        with results_directory({str(out)!r}) as tmp:
            print("holding", flush=True)
            time.sleep(30)
    """)], stdout=subprocess.PIPE, text=True)
    try:
        assert holder.stdout.readline().strip() == "holding"
        with pytest.raises(InputError, match="another run holds it"):
            _write_results(out)
    finally:
        holder.kill()
        holder.wait()
    # The lock dies with its holder: the next run proceeds and cleans up after the killed one.
    _write_results(out, "after")
    assert (out / "table.csv").read_text() == "after"
    assert _siblings(out) == []


# ---- kill tests: a run killed at several moments, then a rerun -----------------------------------
_KILLER = textwrap.dedent("""
    import os, signal, sys, time
    from ventflux import io
    out, moment = sys.argv[1], sys.argv[2]
    real_replace = os.replace
    calls = []
    def replace(a, b):
        calls.append((a, b))
        if moment == f"before-rename-{len(calls)}":
            os.kill(os.getpid(), signal.SIGKILL)
        real_replace(a, b)
    os.replace = replace
    with io.results_directory(out) as tmp:
        (tmp / "table.csv").write_text("partial")
        if moment == "while-writing":
            os.kill(os.getpid(), signal.SIGKILL)
        (tmp / "table.csv").write_text("new")
        (tmp / "figure.png").write_bytes(b"png")
""")


@pytest.mark.parametrize("moment", ["while-writing", "before-rename-1", "before-rename-2", "never"])
def test_kill_then_rerun(tmp_path, moment):
    out = _write_results(tmp_path / "res", "previous")
    before = _tree(out)
    script = tmp_path / "killer.py"
    script.write_text(_KILLER)
    rc = subprocess.run([sys.executable, str(script), str(out), moment], env=os.environ).returncode
    assert rc == (0 if moment == "never" else -signal.SIGKILL)
    # Right after the kill: either the previous results are intact, or (killed between the renames) they are
    # absent from the name and kept under the hidden old name; a folder at the name is always complete.
    if out.exists():
        assert is_results_folder(out)
        assert _tree(out) == before or moment == "never"
    else:
        assert moment == "before-rename-2"
        assert _tree(tmp_path / ".res.old") == before
    # The rerun heals: previous results (or the killed run's) never lost, no leftovers.
    _write_results(out, "rerun")
    assert (out / "table.csv").read_text() == "rerun"
    assert _siblings(out) == ["killer.py"]


# ---- files ---------------------------------------------------------------------------------
def test_file_written_by_ventflux_may_be_replaced(tmp_path):
    f = tmp_path / "fig.png"
    atomic_write_bytes(f, b"one")
    atomic_write_bytes(f, b"two")
    assert f.read_bytes() == b"two"


def test_users_file_is_not_overwritten(tmp_path):
    f = tmp_path / "table.csv"
    f.write_text("mine")
    with pytest.raises(OutputRefused, match="not written by ventflux"):
        atomic_write_bytes(f, b"ours")
    assert f.read_text() == "mine"


def test_our_file_changed_by_the_user_is_not_overwritten(tmp_path):
    f = tmp_path / "table.csv"
    atomic_write_bytes(f, b"ours")
    f.write_text("edited by hand")
    with pytest.raises(OutputRefused):
        atomic_write_bytes(f, b"ours again")
    assert f.read_text() == "edited by hand"


def test_stale_part_file_of_a_dead_writer_is_removed(tmp_path):
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True,
                          text=True).stdout.strip()
    stale = tmp_path / f".t.csv.{dead}.xyz.part"
    stale.write_text("half")
    atomic_write_bytes(tmp_path / "t.csv", b"ok")
    assert not stale.exists()
    assert sorted(p.name for p in tmp_path.iterdir() if p.name != "cache") == ["t.csv"]


@settings(max_examples=30, deadline=None)
@given(st.lists(st.sampled_from(["ours", "user-file", "user-folder", "empty"]), min_size=1, max_size=4))
def test_never_destroys_what_it_did_not_create(tmp_path_factory, sequence):
    """Invariant: whatever was at the location, the user's own bytes survive every attempt."""
    base = tmp_path_factory.mktemp("loc")
    out = base / "res"
    for step in sequence:
        if out.exists() and not is_results_folder(out):
            break
        if step == "ours":
            _write_results(out, "x")
        elif step == "user-file" and not out.exists():
            out.write_text("user")
        elif step == "user-folder" and not out.exists():
            out.mkdir()
            (out / "u.txt").write_text("user")
        elif step == "empty" and not out.exists():
            out.mkdir()
    user = _tree(out) if out.is_dir() else (out.read_bytes() if out.exists() else None)
    protected = out.exists() and not is_results_folder(out) and (out.is_file() or any(out.iterdir()))
    try:
        _write_results(out, "final")
        assert not protected
    except InputError:
        assert protected
        assert (_tree(out) if out.is_dir() else out.read_bytes()) == user


def test_a_path_through_a_file_is_refused_before_any_work(tmp_path):
    """The survey checks its --out before computing (ventflux.io.check_output_location calls this)."""
    from ventflux.io import check_results_destination

    (tmp_path / "afile").write_text("mine")
    with pytest.raises(InputError, match="is a file"):
        check_results_destination(tmp_path / "afile" / "sub" / "res")
    assert (tmp_path / "afile").read_text() == "mine"


def test_the_survey_refuses_an_out_folder_that_holds_its_inputs(tmp_path):
    # The survey copied into an earlier results folder and run with --out at that folder: replacing it would
    # delete the inputs. Refused before anything is computed, naming --out; the folder is left as it was.
    import shutil

    demo = Path(__file__).resolve().parents[1] / "examples" / "oskeran-ridge"
    res = tmp_path / "res"
    shutil.copytree(demo, res)
    (res / RESULTS_MARKER).write_text('{"created_by": "ventflux"}\n')
    before = _tree(res)
    done = subprocess.run([sys.executable, "-m", "ventflux", "survey", str(res / "survey.toml"), "--out", str(res)],
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == 2, done.stderr
    assert done.stderr.startswith("ventflux survey: error: --out:") and "contains no input file" in done.stderr
    assert "Traceback" not in done.stderr and len(done.stderr.strip().splitlines()) == 1
    assert _tree(res) == before
