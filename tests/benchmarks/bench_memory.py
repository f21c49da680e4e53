"""Memory benchmark: peak resident memory of each command of issue 8 against the size of its work.

Every figure is one fresh ``python -m emulate ...`` process, started by a small meter
process; its peak resident set (``ru_maxrss`` of the meter's children, which includes any
worker the command waited for) is read when it ends. Each command runs at a small and a large size of its work, and the
report gives both peaks, the growth per unit of work and the goal from issue 8:

* ``render``      a --minutes-long take (default 1 and 6 minutes), 48 kHz stereo
                  24-bit: flat with length, under 200 MB
* ``sibilance``   the same takes: flat with length, under 300 MB
* ``sweep``       one worker, 2 and 8 settings over two --sweep-seconds takes
                  (default 20 s): memory flat in the number of jobs
* ``tolerance``   10,000 and 100,000 Monte Carlo builds (--million adds
                  1,000,000): under 300 MB for any count

Takes are invented (a voice-like take from :mod:`emulate.voice.synth`, written in
blocks, so writing them needs no more memory than a block). Writes JSON (--json,
default bench-out/memory.json).

Run: python3 tests/benchmarks/bench_memory.py [--minutes 1 6] [--million]
"""

from __future__ import annotations

import argparse
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import soundfile as sf

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from emulate.voice.synth import voice_like_take  # noqa: E402

FS_HZ = 48000
PARTS = ["--r1", "10k", "--r2", "10k", "--r3", "5k", "--c1", "2n2", "--c2", "2n2", "--c3", "4n4"]
GOALS_MB = {"render": 200.0, "sibilance": 300.0, "sweep": None, "tolerance": 300.0}


def write_take(path: Path, seconds: float, sibilance_hz: float = 6000.0) -> Path:
    """An invented stereo 24-bit take of ``seconds``, written one minute at a time."""
    minute = voice_like_take(FS_HZ, 60.0, pitch_hz=120.0, sibilance_hz=sibilance_hz, seed=3, channels=2)
    with sf.SoundFile(path, "w", FS_HZ, minute.shape[1], "PCM_24") as out:
        left = int(round(seconds * FS_HZ))
        while left > 0:
            block = minute[:left]
            out.write(block)
            left -= len(block)
    return path


# A small meter process runs the command and reports its children's peak resident set: a
# child forked straight from this (large) process would start from this process's peak.
METER = """
import resource, subprocess, sys
run = subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True)
print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)
sys.stderr.write(run.stderr[-500:])
sys.exit(run.returncode)
"""


def peak_mb(args: list[str], cwd: Path) -> tuple[float, float]:
    """Peak resident memory (MB) and wall time (s) of one fresh ``python -m emulate`` process.

    The peak is ``ru_maxrss`` over the command and every worker it waited for.
    """
    env = dict(os.environ, PYTHONPATH=str(ROOT), EMULATE_PRESETS_DIR=str(cwd / "presets"))
    t0 = time.perf_counter()
    run = subprocess.run([sys.executable, "-c", METER, sys.executable, "-m", "emulate", *args], cwd=cwd,
                         env=env, capture_output=True, text=True)
    wall = time.perf_counter() - t0
    if run.returncode != 0:
        raise SystemExit(f"{' '.join(args)} failed: {run.stderr}")
    return int(run.stdout.split()[-1]) / 1024.0, wall


def measure(name: str, runs: dict, unit: str, cwd: Path) -> dict:
    """Peaks at each size, and the growth per ``unit`` between the smallest and the largest."""
    sizes = {}
    for size, args in runs.items():
        mb, wall = peak_mb(args, cwd)
        sizes[size] = {"peak_mb": mb, "wall_s": wall}
        print(f"  {name:10s} {size:>10g} {unit:8s} peak {mb:7.1f} MB  ({wall:.1f} s)", flush=True)
    small, large = min(sizes), max(sizes)
    growth = (sizes[large]["peak_mb"] - sizes[small]["peak_mb"]) / (large - small)
    return {"unit": unit, "sizes": {f"{k:g}": v for k, v in sizes.items()},
            "growth_mb_per_unit": growth, "goal_mb": GOALS_MB[name],
            "largest_peak_mb": max(v["peak_mb"] for v in sizes.values())}


def run(args) -> dict:
    results = {"loadavg_1min_before": os.getloadavg()[0], "commands": {}}
    with tempfile.TemporaryDirectory(prefix="emulate-memory-") as folder:
        work = Path(folder)
        takes = {m: write_take(work / f"take-{m:g}min.wav", 60.0 * m) for m in args.minutes}
        results["commands"]["render"] = measure("render", {
            m: ["render", str(t), str(work / f"out-{m:g}.wav"), *PARTS, "--force"] for m, t in takes.items()},
            "minutes", work)
        results["commands"]["sibilance"] = measure("sibilance", {
            m: ["sibilance", str(t)] for m, t in takes.items()}, "minutes", work)
        short = [str(write_take(work / f"short-{i}.wav", args.sweep_seconds, hz))
                 for i, hz in enumerate((4800.0, 7200.0))]
        results["commands"]["sweep"] = measure("sweep", {
            2 * steps: ["sweep", *short, "--from", "4k", "--to", "8k", "--steps", str(steps), "--workers", "1",
                        "--out", str(work / f"sweep-{steps}"), "--force"] for steps in (1, 4)},
            "jobs", work)
        draws = (10_000, 100_000, 1_000_000) if args.million else (10_000, 100_000)
        results["commands"]["tolerance"] = measure("tolerance", {
            n: ["tolerance", *PARTS, "--draws", str(n)] for n in draws}, "draws", work)
    results["loadavg_1min_after"] = os.getloadavg()[0]
    return results


def report(results: dict) -> None:
    print(f"load average {results['loadavg_1min_before']:.1f} before, {results['loadavg_1min_after']:.1f} after")
    for name, r in results["commands"].items():
        goal = f"goal < {r['goal_mb']:g} MB" if r["goal_mb"] else "goal: flat in the job count"
        per = r["growth_mb_per_unit"]
        per_text = f"{per * 1000:+.3f} MB per 1000 {r['unit']}" if r["unit"] == "draws" else \
            f"{per:+.2f} MB per {r['unit'][:-1]}"
        print(f"{name:10s} largest peak {r['largest_peak_mb']:6.1f} MB; growth {per_text} ({goal})")


def parse(argv) -> argparse.Namespace:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--minutes", type=float, nargs="+", default=[1.0, 6.0],
                    help="take lengths for render and sibilance, minutes (at least two)")
    ap.add_argument("--sweep-seconds", type=float, default=20.0, help="length of each sweep take, s")
    ap.add_argument("--million", action="store_true", help="also 1,000,000 tolerance draws (slow)")
    ap.add_argument("--json", type=Path, default=Path("bench-out/memory.json"), help="where to write figures")
    args = ap.parse_args(argv)
    if len(set(args.minutes)) < 2 or min(args.minutes) <= 0:
        ap.error(f"--minutes needs at least two different lengths > 0; got {args.minutes}")
    return args


def main(argv=None) -> int:
    args = parse(argv)
    results = run(args)
    report(results)
    args.json.parent.mkdir(parents=True, exist_ok=True)
    args.json.write_text(json.dumps(results, indent=2) + "\n")
    print(f"wrote {args.json}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
