"""Sweep benchmark: one core against two on a takes x settings sweep.

Generates 2 invented voice-like takes (:func:`emulate.voice.synth.voice_like_take`, sibilance
at 4.8 and 7.2 kHz), --seconds long (default 60), 48 kHz stereo 24-bit WAV, in a
temporary folder (or --work DIR), then runs :func:`emulate.work.sweep.run_sweep` over
--settings notch settings (default 8, 3 to 12 kHz in equal ratios) with workers=1 and
workers=2, alternating, --repeats times each (default 3, at least 3), and reports the
median wall times and the speed-up (target: at least 1.8 on 2 cores), and beside them
the CPU seconds of each run (this process and its pool's workers: on a shared machine
the wall times vary with the other load, the CPU much less). It also checks that both
runs give the same summary rows and that OPENBLAS_NUM_THREADS is 1 inside the pool's
workers: set here before numpy loads, as the command line sets it (an idle OpenBLAS
thread spins after each small solve; in a sweep run without the setting, about a sixth
of the CPU went to those threads, taken from the other worker). Writes JSON (--json, default bench-out/sweep.json). --profile
prints where the one-core time goes (cProfile, cumulative).

Run: python3 tests/benchmarks/bench_sweep.py [--seconds 60] [--repeats 3] [--work DIR]
"""

from __future__ import annotations

import argparse
import cProfile
import io
import json
import os
import pstats
import resource
import shutil
import statistics
import sys
import tempfile
import time
from pathlib import Path

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # before numpy loads, as the command line does

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from emulate.audio import stream as audio  # noqa: E402
from emulate.voice import synth  # noqa: E402
from emulate.work import sweep  # noqa: E402

import numpy as np  # noqa: E402

RATE = 48000
TARGET_SPEEDUP = 1.8
SPEAKERS = ((108.0, 4800.0, 11), (212.0, 7200.0, 23))  # pitch Hz, sibilance Hz, seed (invented)


def make_takes(folder: Path, seconds: float) -> list[Path]:
    """Two stereo 24-bit takes of ``seconds`` in ``folder``."""
    folder.mkdir(parents=True, exist_ok=True)
    takes = []
    for i, (pitch, sibilance, seed) in enumerate(SPEAKERS):
        x = synth.voice_like_take(RATE, seconds, pitch_hz=pitch, sibilance_hz=sibilance, seed=seed,
                                  channels=2)
        takes.append(folder / f"host{i + 1}.wav")
        audio.write_array(takes[-1], x, RATE, subtype="PCM_24")
    return takes


def _blas_threads(_):
    """OPENBLAS_NUM_THREADS here, and this process's OS threads after a BLAS product."""
    a = np.ones((400, 400))
    a @ a  # starts OpenBLAS's thread pool if it has one
    return os.environ.get("OPENBLAS_NUM_THREADS"), len(os.listdir("/proc/self/task"))


def worker_blas_threads() -> list:
    """(OPENBLAS_NUM_THREADS, OS threads) as the sweep's pool workers see them; (value, 1) = in effect."""
    with sweep._executor(2, 2) as pool:
        return sorted(set(pool.map(_blas_threads, range(4))), key=str)


def _children_cpu_s() -> float:
    used = resource.getrusage(resource.RUSAGE_CHILDREN)
    return used.ru_utime + used.ru_stime


def timed_alternating(run, repeats: int) -> tuple[dict[int, list[float]], dict[int, list[float]]]:
    """Wall and CPU times of ``run(workers)`` for 1 and 2 workers, alternating per repeat.

    CPU: this process (all threads) plus its ended children (the pool's workers, reaped
    when the pool shuts down at the end of the run).
    """
    times, cpu = {1: [], 2: []}, {1: [], 2: []}
    for _ in range(repeats):
        for workers in times:
            t, c, children = time.perf_counter(), time.process_time(), _children_cpu_s()
            run(workers)
            times[workers].append(time.perf_counter() - t)
            cpu[workers].append(time.process_time() - c + _children_cpu_s() - children)
    return times, cpu


def profile_text(run, lines: int = 30) -> str:
    profiler = cProfile.Profile()
    profiler.runcall(run, 1)
    out = io.StringIO()
    pstats.Stats(profiler, stream=out).sort_stats("cumulative").print_stats(lines)
    return out.getvalue()


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seconds", type=float, default=60.0, help="length of each take, s")
    parser.add_argument("--settings", type=int, default=8, help="notch settings swept")
    parser.add_argument("--repeats", type=int, default=3, help="timed runs per worker count (>= 3)")
    parser.add_argument("--work", type=Path, help="folder for takes and renders (default: temporary)")
    parser.add_argument("--json", type=Path, default=ROOT / "bench-out" / "sweep.json", help="JSON output")
    parser.add_argument("--profile", action="store_true", help="print a cProfile of one one-core run")
    args = parser.parse_args(argv)
    repeats = max(args.repeats, 3)

    work = args.work or Path(tempfile.mkdtemp(prefix="bench-sweep-"))
    takes = make_takes(work / "takes", args.seconds)
    plan = sweep.SweepPlan(notches_hz=sweep.notch_steps(3000.0, 12000.0, args.settings))
    rows = {}

    def run(workers: int):
        out = work / f"out-{workers}"
        shutil.rmtree(out, ignore_errors=True)
        rows[workers] = sweep.run_sweep(takes, plan, out, workers=workers).rows

    run(1)  # warm-up: numba caches, imports, page cache
    times, cpu = timed_alternating(run, repeats)
    one, two = statistics.median(times[1]), statistics.median(times[2])
    cpu_one, cpu_two = statistics.median(cpu[1]), statistics.median(cpu[2])
    result = {
        "takes": len(takes), "seconds_per_take": args.seconds, "rate_hz": RATE, "channels": 2,
        "subtype": "PCM_24", "settings": len(plan.notches_hz), "repeats": repeats,
        "cores": os.cpu_count(), "workers_1_s": times[1], "workers_2_s": times[2],
        "median_workers_1_s": one, "median_workers_2_s": two, "speedup": one / two,
        "cpu_workers_1_s": cpu[1], "cpu_workers_2_s": cpu[2], "median_cpu_workers_1_s": cpu_one,
        "median_cpu_workers_2_s": cpu_two, "loadavg_1min_after": os.getloadavg()[0],
        "target_speedup": TARGET_SPEEDUP, "rows_identical": rows[1] == rows[2],
        "worker_openblas_threads": worker_blas_threads(),
        "audio_seconds_per_wall_second_2_workers": len(takes) * args.seconds * len(plan.notches_hz) / two,
    }
    print(f"sweep: {len(takes)} takes x {args.seconds:g} s (48 kHz stereo 24-bit) x "
          f"{len(plan.notches_hz)} settings, median of {repeats}")
    for workers, wall, used in ((1, one, cpu_one), (2, two, cpu_two)):
        print(f"  workers={workers}  {wall:7.2f} s   runs {', '.join(f'{t:.2f}' for t in times[workers])}; "
              f"CPU {used:.2f} s (runs {', '.join(f'{t:.2f}' for t in cpu[workers])})")
    print(f"  speed-up   {one / two:7.2f}   (target >= {TARGET_SPEEDUP}, {os.cpu_count()} cores); "
          f"load average after {result['loadavg_1min_after']:.1f}")
    print(f"  rows identical: {result['rows_identical']}; (OPENBLAS_NUM_THREADS, OS threads) in workers: "
          f"{result['worker_openblas_threads']}")
    if args.profile:
        print(profile_text(run))
    args.json.parent.mkdir(parents=True, exist_ok=True)
    args.json.write_text(json.dumps(result, indent=2))
    print(f"wrote {args.json}")
    if args.work is None:
        shutil.rmtree(work, ignore_errors=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
