"""Fault injection: the long commands (render, sweep, sheet, demo) stopped mid-way in a subprocess.

Ctrl-C (SIGINT to the process group, as a terminal sends it), SIGTERM and SIGHUP to the
command: it stops with one line, removes what was in flight (no partial output, no hidden
temporary) and no worker survives. ``kill -9`` of the command: no worker survives it
either, and the next run of the same command removes the stale temporary it left.
Whatever the moment the signal lands, the output is complete or absent, never partial.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf

import emulate
from emulate.voice import synth

REPO = Path(emulate.__file__).resolve().parent.parent
PARTS = ["--r1", "10k", "--r2", "10k", "--r3", "5k", "--c1", "10n", "--c2", "10n", "--c3", "20n"]
STOPS = [("SIGINT", True), ("SIGTERM", False), ("SIGHUP", False)]  # (signal, to the whole group)

pytestmark = pytest.mark.slow


def start(args, cwd: Path) -> subprocess.Popen:
    env = dict(os.environ, PYTHONPATH=str(REPO), EMULATE_PRESETS_DIR=str(cwd / "user-presets"))
    return subprocess.Popen([sys.executable, "-m", "emulate", *map(str, args)], cwd=cwd, env=env,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, start_new_session=True)


def descendants(pid: int) -> set[int]:
    """Every live process below ``pid`` (read from /proc)."""
    parents = {}
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                fields = (entry / "stat").read_text().rsplit(")", 1)[1].split()
            except OSError:
                continue
            parents[int(entry.name)] = int(fields[1])
    found, frontier = set(), {pid}
    while frontier:
        frontier = {child for child, parent in parents.items() if parent in frontier} - found
        found |= frontier
    return found


def reap(pids) -> None:
    """Kill what a failed check left alive, so a failing test does not strand processes."""
    for pid in alive(pids):
        os.kill(pid, signal.SIGKILL)


def alive(pids) -> set[int]:
    living = set()
    for pid in pids:
        try:
            state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
        except OSError:
            continue
        if state != "Z":
            living.add(pid)
    return living


def wait_for(condition, timeout_s: float = 120.0) -> bool:
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        if condition():
            return True
        time.sleep(0.01)
    return False


def temporaries(folder: Path) -> list[Path]:
    return [p for p in folder.rglob(".*") if p.name.endswith((".part", ".old"))]


def staging_with_file(folder: Path, name: str):
    """A condition: a hidden staging folder of ``name`` exists and holds some file (work in flight)."""
    def holds_work():
        return any(p.is_dir() and any(p.rglob("*")) for p in folder.glob(f".{name}.*.part"))
    return holds_work


def stop(process: subprocess.Popen, name: str, group: bool) -> tuple[int, str]:
    number = getattr(signal, name)
    (os.killpg if group else os.kill)(process.pid, number)
    _, err = process.communicate(timeout=60)
    return process.returncode, err


def assert_stopped_cleanly(code: int, err: str, produced: Path, folder: Path):
    """Complete or absent: exit 0 with the output, or one line, nothing partial, nothing hidden."""
    assert "Traceback" not in err, err
    if code == 0:  # it finished before the signal landed: then the output is whole
        assert produced.exists()
    else:
        assert not produced.exists(), err
        lines = [line for line in err.splitlines() if line.startswith("Error:")]
        assert len(lines) == 1 and ("interrupted" in err or "stopped by" in err), err
        assert "nothing was written" in err or "kept (complete)" in err
    assert temporaries(folder) == []


@pytest.fixture(scope="module")
def long_take(tmp_path_factory) -> Path:
    """Five minutes of noise at 48 kHz: long enough to be caught mid-render."""
    path = tmp_path_factory.mktemp("long") / "long.wav"
    x = np.random.default_rng(1).standard_normal(48000 * 300).astype(np.float32) * 0.1
    sf.write(path, x, 48000, subtype="PCM_16")
    return path


@pytest.fixture(scope="module")
def voice_takes(tmp_path_factory) -> list[Path]:
    """Two 40-second invented takes: a sweep of them keeps two workers busy for seconds."""
    folder = tmp_path_factory.mktemp("takes")
    paths = []
    for seed in (1, 2):
        x = synth.voice_like_take(48000, 40.0, pitch_hz=130.0, sibilance_hz=5500.0, seed=seed)
        sf.write(folder / f"host{seed}.wav", x, 48000, subtype="PCM_16")
        paths.append(folder / f"host{seed}.wav")
    return paths


def render_args(take, out):
    return ["render", take, out, *PARTS]


def sweep_args(takes, out):
    return ["sweep", *takes, "--from", "4k", "--to", "7k", "--steps", "4", "--workers", "2", "--out", out]


class TestRenderInterrupted:
    @pytest.mark.parametrize("name,group", STOPS)
    def test_stop_leaves_nothing(self, long_take, tmp_path, name, group):
        process = start(render_args(long_take, tmp_path / "out.wav"), tmp_path)
        assert wait_for(lambda: temporaries(tmp_path) or process.poll() is not None)
        code, err = stop(process, name, group)
        assert_stopped_cleanly(code, err, tmp_path / "out.wav", tmp_path)

    def test_kill_9_then_the_next_run_cleans_up(self, long_take, tmp_path):
        process = start(render_args(long_take, tmp_path / "out.wav"), tmp_path)
        assert wait_for(lambda: temporaries(tmp_path))
        process.kill()
        process.communicate(timeout=60)
        assert not (tmp_path / "out.wav").exists()
        short = tmp_path / "short.wav"
        sf.write(short, np.zeros(4800), 48000, subtype="PCM_16")
        again = start(render_args(short, tmp_path / "out.wav"), tmp_path)
        assert again.wait(timeout=120) == 0
        assert temporaries(tmp_path) == [] and (tmp_path / "out.wav").exists()


class TestSweepInterrupted:
    @pytest.mark.parametrize("name,group", STOPS)
    def test_stop_is_prompt_and_leaves_nothing(self, voice_takes, tmp_path, name, group):
        process = start(sweep_args(voice_takes, tmp_path / "out"), tmp_path)
        assert wait_for(staging_with_file(tmp_path, "out"))
        workers = descendants(process.pid)
        began = time.monotonic()
        code, err = stop(process, name, group)
        assert time.monotonic() - began < 10.0  # promptly: not after the renders in flight
        try:
            assert_stopped_cleanly(code, err, tmp_path / "out", tmp_path)
            assert wait_for(lambda: not alive(workers), 10.0), alive(workers)
        finally:
            reap(workers)

    def test_stop_while_rendering_what_the_pick_removes(self, voice_takes, tmp_path):
        # the last wave of the pool (--removed) and the listening page: stopped there, nothing appears
        process = start([*sweep_args(voice_takes, tmp_path / "out"), "--removed"], tmp_path)

        def removing():
            return any("removed--" in p.name for p in tmp_path.glob(".out.*.part/*")) or process.poll() is not None
        assert wait_for(removing)
        workers = descendants(process.pid)
        code, err = stop(process, "SIGTERM", False)
        try:
            assert_stopped_cleanly(code, err, tmp_path / "out", tmp_path)
            assert wait_for(lambda: not alive(workers), 10.0), alive(workers)
        finally:
            reap(workers)

    def test_kill_9_leaves_no_worker_and_the_next_run_cleans_up(self, voice_takes, tmp_path):
        process = start(sweep_args(voice_takes, tmp_path / "out"), tmp_path)
        assert wait_for(staging_with_file(tmp_path, "out"))
        workers = descendants(process.pid)
        assert workers  # the pool is running
        process.kill()
        process.communicate(timeout=60)
        try:
            assert wait_for(lambda: not alive(workers), 10.0), alive(workers)
        finally:
            reap(workers)
        assert not (tmp_path / "out").exists() and temporaries(tmp_path)  # the stale staging folder
        again = start(["sweep", voice_takes[0], "--at", "5k", "--workers", "1", "--out", tmp_path / "out"], tmp_path)
        assert again.wait(timeout=300) == 0, again.stderr.read()
        assert temporaries(tmp_path) == [] and (tmp_path / "out" / "summary.json").exists()


class TestSheetInterrupted:
    @pytest.mark.parametrize("name,group", STOPS)
    def test_stop_leaves_nothing(self, tmp_path, name, group):
        process = start(["sheet", "--out", tmp_path / "sheet", "--notch", "6.3k"], tmp_path)
        assert wait_for(lambda: temporaries(tmp_path) or process.poll() is not None)
        code, err = stop(process, name, group)
        assert_stopped_cleanly(code, err, tmp_path / "sheet", tmp_path)

    def test_kill_9_then_the_next_run_cleans_up(self, tmp_path):
        process = start(["sheet", "--out", tmp_path / "sheet", "--notch", "6.3k"], tmp_path)
        assert wait_for(lambda: temporaries(tmp_path) or process.poll() is not None)
        process.kill()
        process.communicate(timeout=60)
        again = start(["sheet", "--out", tmp_path / "sheet", "--notch", "6.3k", "--draws", "200", "--force"],
                      tmp_path)
        assert again.wait(timeout=120) == 0
        assert temporaries(tmp_path) == [] and (tmp_path / "sheet" / "sheet.md").exists()


class TestDemoInterrupted:
    @pytest.mark.parametrize("name,group", STOPS)
    def test_stop_leaves_nothing(self, tmp_path, name, group):
        process = start(["demo", "--out", tmp_path / "demo", "--seconds", "30"], tmp_path)
        assert wait_for(staging_with_file(tmp_path, "demo"))
        code, err = stop(process, name, group)
        assert_stopped_cleanly(code, err, tmp_path / "demo", tmp_path)

    def test_kill_9_then_the_next_run_cleans_up(self, tmp_path):
        process = start(["demo", "--out", tmp_path / "demo", "--seconds", "30"], tmp_path)
        assert wait_for(staging_with_file(tmp_path, "demo"))
        process.kill()
        process.communicate(timeout=60)
        assert not (tmp_path / "demo").exists() and temporaries(tmp_path)
        again = start(["demo", "--out", tmp_path / "demo", "--seconds", "1"], tmp_path)
        assert again.wait(timeout=120) == 0
        assert temporaries(tmp_path) == [] and (tmp_path / "demo" / "takes").is_dir()


class TestMeasureStimulusInterrupted:
    ARGS = ["measure", "stimulus", "sweep.wav", "--rate", "192000", "--length", "120", "--subtype", "FLOAT"]

    @pytest.mark.parametrize("name,group", STOPS)
    def test_stop_leaves_nothing(self, tmp_path, name, group):
        process = start(self.ARGS, tmp_path)
        assert wait_for(lambda: temporaries(tmp_path) or process.poll() is not None)
        code, err = stop(process, name, group)
        assert_stopped_cleanly(code, err, tmp_path / "sweep.wav", tmp_path)

    def test_kill_9_then_the_next_run_cleans_up(self, tmp_path):
        process = start(self.ARGS, tmp_path)
        assert wait_for(lambda: temporaries(tmp_path) or process.poll() is not None)
        process.kill()
        process.communicate(timeout=60)
        again = start(["measure", "stimulus", "sweep.wav", "--length", "1", "--force"], tmp_path)
        assert again.wait(timeout=120) == 0
        assert temporaries(tmp_path) == [] and (tmp_path / "sweep.wav").exists()
