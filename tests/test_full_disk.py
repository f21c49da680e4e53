"""A really full disk: render, sweep, demo and sheet on a 1 MiB tmpfs (needs root to mount; skipped otherwise).

The in-process fault matrix injects the same failure into every write; this checks the real
thing: libsndfile's "System error" and matplotlib's ENOSPC become one line, and nothing
(no partial file, no hidden temporary, no partial folder) is left on the full disk.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf

import emulate

REPO = Path(emulate.__file__).resolve().parent.parent
PARTS = ["--r1", "10k", "--r2", "10k", "--r3", "5k", "--c1", "10n", "--c2", "10n", "--c3", "20n"]

pytestmark = pytest.mark.slow


@pytest.fixture
def tiny_disk(tmp_path):
    mount = tmp_path / "tiny"
    mount.mkdir()
    if os.geteuid() != 0:
        pytest.skip("mounting a tmpfs needs root")
    done = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=1m", "tmpfs", str(mount)], capture_output=True)
    if done.returncode != 0:
        pytest.skip(f"cannot mount a tmpfs here: {done.stderr.decode().strip()}")
    try:
        yield mount
    finally:
        subprocess.run(["umount", str(mount)], check=False)


@pytest.fixture
def big_take(tmp_path) -> Path:
    """Ten seconds of 48 kHz stereo 16-bit noise: 1.9 MB, more than the disk holds."""
    path = tmp_path / "take.wav"
    sf.write(path, np.random.default_rng(2).uniform(-0.3, 0.3, (480000, 2)), 48000, subtype="PCM_16")
    return path


def run(*args):
    env = dict(os.environ, PYTHONPATH=str(REPO))
    return subprocess.run([sys.executable, "-m", "emulate", *map(str, args)], env=env, capture_output=True,
                          text=True, timeout=300)


@pytest.mark.parametrize("command", ["render", "sweep", "demo", "sheet"])
def test_regression_full_disk_is_one_line_and_leaves_nothing(tiny_disk, big_take, command):
    args = {"render": ["render", big_take, tiny_disk / "out.wav", *PARTS],
            "sweep": ["sweep", big_take, "--at", "5k,6k", "--workers", "2", "--out", tiny_disk / "sweep"],
            "demo": ["demo", "--out", tiny_disk / "demo", "--seconds", "20"],
            "sheet": ["sheet", "--out", tiny_disk / "sheet", "--notch", "6.3k", "--draws", "200"]}[command]
    # the sheet fits in 1 MiB: fill the disk first so that it does not
    if command == "sheet":
        filler = tiny_disk / "filler"
        with open(filler, "wb") as out:
            try:
                out.write(b"\0" * (1 << 20))
            except OSError:
                pass
    before = sorted(p.name for p in tiny_disk.iterdir())
    done = run(*args)
    assert done.returncode == 1 and "Traceback" not in done.stderr, done.stderr
    assert len(done.stderr.strip().splitlines()) == 1, done.stderr
    assert ".part" not in done.stderr
    assert sorted(p.name for p in tiny_disk.iterdir()) == before
