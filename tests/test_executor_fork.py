"""The survey's default executor: forked worker processes give the serial loop's numbers (``ventflux.executor``)."""

import os
import re
import shutil
import subprocess
import sys
import threading
from pathlib import Path

import numpy as np
import pytest

from ventflux.errors import InputError
from ventflux.executor import ForkExecutor, SerialExecutor, open_executor

DEMO = Path(__file__).resolve().parents[1] / "examples" / "oskeran-ridge"


def _light_demo(tmp_path: Path) -> Path:
    """The demo without its video and probe records, with the closed-form plume relation and 2,000 draws."""
    shutil.copytree(DEMO, tmp_path / "demo")
    path = tmp_path / "demo" / "survey.toml"
    text = path.read_text()
    text = re.sub(r"\n  \[vent\.video\].*?(?=\n  \[\[vent\.orifice\]\])", "\n", text, flags=re.DOTALL)
    text = re.sub(r"\n\[sediment_probes\].*?(?=\n\[field_plume\])", "\n", text, flags=re.DOTALL)
    text = text.replace('level = "maximum"', 'level = "maximum"\nmethod = "closed-form"')
    text = re.sub(r"(?m)^draws\s*=\s*\d+", "draws = 2000", text)
    path.write_text(text)
    return path


def _in_a_fresh_process(check: str, *args: str):
    """Run ``check`` of this module in a new interpreter: the test session may hold threads of its own (then
    nothing is forked, rightly), a fresh process has none."""
    if (os.cpu_count() or 1) < 2 or not sys.platform.startswith("linux"):
        pytest.skip("one core, or not Linux: tasks run in the calling process")
    code = (f"import sys; sys.path.insert(0, sys.argv[1]); import test_executor_fork as t; "
            f"t.{check}(*sys.argv[2:])")
    done = subprocess.run([sys.executable, "-c", code, str(Path(__file__).parent), *args], capture_output=True,
                          text=True, timeout=600)
    assert done.returncode == 0, done.stderr[-3000:]


def test_forked_estimates_are_the_serial_estimates(tmp_path):
    _in_a_fresh_process("_compare_survey", str(tmp_path))


def test_a_task_that_fails_in_a_worker_fails_here_as_in_a_serial_run():
    _in_a_fresh_process("_failure_is_raised_here")


def test_tasks_run_in_other_processes_and_come_back_in_order():
    _in_a_fresh_process("_tasks_run_elsewhere")


def _compare_survey(tmp):
    from ventflux.survey.run import run_survey
    from ventflux.survey.spec import load_survey

    assert ForkExecutor.usable(2)
    path = _light_demo(Path(tmp))
    serial = run_survey(load_survey(path), executor=SerialExecutor())
    forked = run_survey(load_survey(path), executor=ForkExecutor(2))
    assert [v.name for v in forked.vents] == [v.name for v in serial.vents]
    for a, b in zip(serial.vents, forked.vents, strict=True):
        assert list(a.methods) == list(b.methods)  # the file's order
        for key in a.methods:
            np.testing.assert_array_equal(a.methods[key].heat_power.m_as("W"), b.methods[key].heat_power.m_as("W"))
    assert list(serial.sections) == list(forked.sections)
    for key, s in serial.sections.items():
        np.testing.assert_array_equal(s.heat_power.m_as("W"), forked.sections[key].heat_power.m_as("W"))
    for q in ("median", "p05", "p95", "std"):
        assert getattr(forked.total, q) == getattr(serial.total, q)
    # every name drawn in a worker is known to the run, with the serial run's description
    assert serial.draws.describe() == forked.draws.describe()


def _fails_on_two(k):
    if k == 2:
        raise InputError("vent.Two.orifice.diameter", "-1 cm", "a diameter > 0")
    return os.getpid()


def _failure_is_raised_here():
    assert ForkExecutor.usable(2)
    with pytest.raises(InputError) as err:
        ForkExecutor(2).map(_fails_on_two, [(1,), (2,), (3,)])
    assert err.value.field == "vent.Two.orifice.diameter"


def _tasks_run_elsewhere():
    assert ForkExecutor.usable(2)
    pids = ForkExecutor(2).map(_fails_on_two, [(1,), (3,), (4,)])
    assert os.getpid() not in pids and len(pids) == 3


def test_meanwhile_runs_once_here_while_the_workers_compute():
    _in_a_fresh_process("_meanwhile_here")


def _pid(_k):
    return os.getpid()


def _meanwhile_here():
    import time

    ran = []
    # the workers sleep, so the caller's work is done while they are busy, not after them
    args = [(0.5,), (0.5,)]
    t0 = time.perf_counter()
    out = ForkExecutor(2).map(time.sleep, args, meanwhile=lambda: ran.append((os.getpid(), time.perf_counter())))
    assert out == [None, None]
    assert len(ran) == 1 and ran[0][0] == os.getpid() and ran[0][1] - t0 < 0.4
    ran.clear()
    SerialExecutor().map(_pid, [(0,)])  # in this process there is no waiting to fill
    assert ForkExecutor(2).map(_pid, [(0,)], meanwhile=lambda: ran.append(1)) == [os.getpid()] and ran == []


def test_spare_work_runs_here_only_while_a_worker_is_idle():
    _in_a_fresh_process("_spare_here")


def _sleep_and_pid(seconds):
    import time

    time.sleep(seconds)
    return os.getpid()


def _spare_here():
    import time

    calls = []  # (pid, time, indices finished so far)

    def spare(done):
        calls.append((os.getpid(), time.perf_counter(), sorted(done)))
        time.sleep(0.05)  # one short piece of work
        return len(calls) < 1000

    # two workers: the short tasks end first; while the long one runs alone, a core is free
    t0 = time.perf_counter()
    out = ForkExecutor(2).map(_sleep_and_pid, [(1.5,), (0.1,), (0.1,)], spare=spare)
    t1 = time.perf_counter()
    assert len(out) == 3 and os.getpid() not in out
    assert calls and all(pid == os.getpid() for pid, _, _ in calls)
    # never while both workers had a task, and always given the tasks finished by then
    assert all(done == [1, 2] for _, _, done in calls)
    assert calls[0][1] - t0 >= 0.2 - 0.05
    # called again and again until the last task ended (one call's work late at most)
    assert len(calls) > 5 and t1 - calls[-1][1] < 0.4

    calls.clear()
    stop = []

    def nothing_left(done):
        stop.append(sorted(done))
        return False

    # a spare that has nothing to do is not asked again
    assert len(ForkExecutor(2).map(_sleep_and_pid, [(0.8,), (0.05,)], spare=nothing_left)) == 2
    assert stop == [[1]]
    # in this process nothing waits: no spare work
    assert ForkExecutor(2).map(_pid, [(0,)], spare=nothing_left) == [os.getpid()] and stop == [[1]]


def test_a_forked_task_is_given_its_share_of_the_cores():
    _in_a_fresh_process("_cores_are_shared")


def _task_cores(_k):
    from ventflux.executor import task_cores

    return task_cores()


def _cores_are_shared():
    from ventflux.executor import task_cores

    here = task_cores()
    assert here == len(os.sched_getaffinity(0))  # the process's own cores (its affinity)
    assert ForkExecutor(2).map(_task_cores, [(1,), (2,), (3,)]) == [max(1, here // 2)] * 3
    assert task_cores() == here  # the caller keeps all of its cores


def test_a_process_with_other_threads_runs_its_tasks_itself():
    stop = threading.Event()
    t = threading.Thread(target=stop.wait)
    t.start()
    try:
        assert not ForkExecutor.usable(4)
        assert ForkExecutor(2).map(_fails_on_two, [(1,), (3,)]) == [os.getpid()] * 2
    finally:
        stop.set()
        t.join()


def test_auto_and_serial_are_known_executors():
    with open_executor("auto") as ex:
        assert isinstance(ex, ForkExecutor)
    with open_executor("serial") as ex:
        assert isinstance(ex, SerialExecutor)
