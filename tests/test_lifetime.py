"""Tests for emulate.lifetime: signals stop the work, workers die with their parent."""

from __future__ import annotations

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

    def test_workers_ignore_ctrl_c(self):
        lines = worker_pids_after("[os.kill(pid, signal.SIGINT) for pid in pids]; time.sleep(0.3); "
                                  "print(len({pool.submit(os.getpid).result() for _ in range(8)} - pids)); "
                                  "os.kill(os.getpid(), signal.SIGKILL)")
        assert len(lines) == 2 and lines[1] == [0]  # the same workers answered after Ctrl-C
        assert gone_within(lines[0], 5.0)


class TestEndWorkers:
    def test_kills_the_workers_at_once(self):
        from concurrent.futures import ProcessPoolExecutor

        pool = ProcessPoolExecutor(1, initializer=lifetime.watch_parent)
        future = pool.submit(time.sleep, 60)
        pid = next(iter(pool._processes))
        began = time.monotonic()
        lifetime.end_workers(pool)
        assert time.monotonic() - began < 5 and gone_within([pid], 5.0)
        assert future.cancelled() or future.done()
