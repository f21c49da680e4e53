"""Tests for emulate.lifetime: signals stop the work, workers die with their parent."""

from __future__ import annotations

import concurrent.futures
import os
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest

import emulate
from emulate import lifetime

REPO = Path(emulate.__file__).resolve().parent.parent


class TestStopOnSignals:
    @pytest.mark.parametrize("name", ["SIGTERM", "SIGHUP"])
    def test_a_stop_signal_raises_stopped(self, name):
        with pytest.raises(lifetime.Stopped, match=name):
            with lifetime.stop_on_signals():
                os.kill(os.getpid(), getattr(signal, name))
                time.sleep(1)  # the handler runs here

    def test_stopped_is_a_keyboard_interrupt(self):
        # so every atomic_path block cleans up exactly as for Ctrl-C
        assert issubclass(lifetime.Stopped, KeyboardInterrupt)

    def test_handlers_are_restored(self):
        before = signal.getsignal(signal.SIGTERM)
        with lifetime.stop_on_signals():
            pass
        assert signal.getsignal(signal.SIGTERM) is before


HALF_BUILT = textwrap.dedent("""
    import click
    from emulate.cli.options import run_quietly

    class HalfBuilt:  # as numba's compiler objects are when a stop lands in their constructor
        def __init__(self):
            raise KeyboardInterrupt
        def __del__(self):
            self.handle

    @click.command()
    @run_quietly
    def stopped():
        HalfBuilt()

    stopped()
""")


class TestQuietLateFaults:
    """A stop that lands inside a library's constructor: the half-built object's finaliser
    fails later, when it is freed; the command still ends with its one line, no traceback
    (seen once in CI: Ctrl-C during numba's compile printed llvmlite's ``ObjectRef.__del__``)."""

    def run(self, debug: str):
        env = dict(os.environ, PYTHONPATH=str(REPO), EMULATE_DEBUG=debug)  # empty: off
        return subprocess.run([sys.executable, "-c", HALF_BUILT], env=env, capture_output=True, text=True,
                              timeout=120)

    def test_one_line_and_no_traceback(self):
        done = self.run("")
        assert done.returncode == 1
        assert done.stderr.strip() == "Error: interrupted; nothing was written (work in progress removed)"

    def test_debug_still_shows_it(self):
        done = self.run("1")
        assert "Exception ignored in" in done.stderr


PARENT = textwrap.dedent("""
    import os, signal, sys, time
    from concurrent.futures import ProcessPoolExecutor
    from emulate import lifetime

    pool = ProcessPoolExecutor(2, initializer=lifetime.watch_parent)
    pids = {pool.submit(os.getpid).result() for _ in range(8)}
    print(" ".join(map(str, sorted(pids))), flush=True)
    {ending}
""")


def worker_pids_after(ending: str) -> list[list[int]]:
    """The worker ids the parent printed, one list per line, after it ended as ``ending`` says."""
    code = PARENT.replace("{ending}", ending)
    env = dict(os.environ, PYTHONPATH=str(REPO))
    done = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, timeout=120)
    return [[int(pid) for pid in line.split()] for line in done.stdout.splitlines()]


def alive(pid: int) -> bool:
    try:
        state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state != "Z"


def gone_within(pids, seconds: float) -> bool:
    deadline = time.monotonic() + seconds
    while time.monotonic() < deadline:
        if not any(alive(pid) for pid in pids):
            return True
        time.sleep(0.05)
    for pid in pids:  # do not leave them behind when the check fails
        if alive(pid):
            os.kill(pid, signal.SIGKILL)
    return False


@pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="reads /proc")
class TestWatchParent:
    def test_regression_workers_die_with_a_killed_parent(self):
        (pids,) = worker_pids_after("os.kill(os.getpid(), signal.SIGKILL)")
        assert pids and gone_within(pids, 5.0)

    def test_regression_a_worker_orphaned_before_it_started_ends_at_once(self):
        # a worker forked just before its parent's kill -9 finds another parent (the reaper)
        # than the one that started it: it must end instead of taking a job
        code = "from emulate import lifetime; lifetime.watch_parent(1); print('survived')"
        env = dict(os.environ, PYTHONPATH=str(REPO))
        done = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, timeout=60)
        assert done.returncode == 1 and "survived" not in done.stdout

    def test_workers_ignore_ctrl_c(self):
        # the pool starts its workers on demand, so a second worker may first appear after the
        # Ctrl-C: what must hold is that every worker that got it is still alive and the pool works
        lines = worker_pids_after("[os.kill(pid, signal.SIGINT) for pid in pids]; time.sleep(0.3); "
                                  "[pool.submit(os.getpid).result() for _ in range(8)]; "
                                  "print(sum(open(f'/proc/{p}/stat').read().rsplit(')', 1)[1].split()[0] != 'Z' "
                                  "for p in pids) - len(pids)); "
                                  "os.kill(os.getpid(), signal.SIGKILL)")
        assert len(lines) == 2 and lines[1] == [0]  # every worker outlived its Ctrl-C
        assert gone_within(lines[0], 5.0)


def first_worker(pool, seconds: float = 60.0) -> int:
    """The id of the pool's first worker once it has started (polled, generous deadline)."""
    deadline = time.monotonic() + seconds
    while not pool.worker_ids():
        assert time.monotonic() < deadline, "no worker started"
        time.sleep(0.05)
    return next(iter(pool.worker_ids()))


class TestWorkerPool:
    def test_knows_the_workers_that_ran_jobs(self):
        with lifetime.WorkerPool(2) as pool:
            ran = {future.result() for future in [pool.submit(os.getpid) for _ in range(6)]}
            assert ran <= pool.worker_ids() and os.getpid() not in ran

    @pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="reads /proc")
    def test_regression_workers_die_with_a_killed_parent(self):
        code = ("import os, signal; from emulate import lifetime; pool = lifetime.WorkerPool(2); "
                "print(' '.join(str(pool.submit(os.getpid).result()) for _ in range(4)), flush=True); "
                "os.kill(os.getpid(), signal.SIGKILL)")
        env = dict(os.environ, PYTHONPATH=str(REPO))
        done = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True, timeout=120)
        pids = [int(pid) for pid in done.stdout.split()]
        assert pids and gone_within(pids, 30.0)


@pytest.mark.skipif(not Path("/proc/self/stat").exists(), reason="reads /proc")
class TestEndWorkers:
    def test_kills_the_workers_at_once(self):
        # regression (flaky under load): poll with generous deadlines; "at once" means
        # long before the 600 s job would end, not within a tight time
        pool = lifetime.WorkerPool(1)
        future = pool.submit(time.sleep, 600)
        pid = first_worker(pool)
        began = time.monotonic()
        lifetime.end_workers(pool)
        assert time.monotonic() - began < 60 and gone_within([pid], 60.0)
        concurrent.futures.wait([future], timeout=60)  # the pool marks it broken soon after
        assert future.cancelled() or future.done()

    def test_an_unused_pool_ends(self):
        lifetime.end_workers(lifetime.WorkerPool(2))  # no worker started: nothing to kill, no hang
