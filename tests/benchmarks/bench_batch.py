"""Batch benchmark: throughput of ``emulate batch`` against single renders, local pool and a LocalCluster.

Generates one invented voice-like take (:func:`emulate.voice.synth.voice_like_take`),
--seconds long (default 60), 48 kHz stereo 24-bit WAV, and links it as --takes files
(default 40) in two folders (the page cache holds one take: reading is not what is
measured). Then, with one preset (an active twin-T at 6 kHz):

- single render: :func:`emulate.audio.stream.render_file` of one take in this process,
  warm (numba compiled), median of --repeats (default 3); and ``emulate render`` of one take
  in a fresh process (what a producer runs per take today, start-up and design included);
- batch with 1 and 2 local workers (:class:`emulate.work.batch.LocalRunner`; 2 also without the
  listening page and its excerpts, ``--no-page``) and on a
  ``distributed.LocalCluster`` of 2 worker processes (:class:`emulate.work.batch.ClusterRunner`),
  each from a fresh output folder, pool or client start-up included, median of --repeats;
- the ratio batch(2 workers) / (takes x single / 2) (goal: at most 1.2);
- peak resident memory per worker (each job reports its process's peak, ``VmHWM``), for
  these takes and for a batch of 2 takes --long-seconds long (default 600): it must not
  grow with the take's length (renders and meters stream in blocks);
- the projected wall time of a 1,000-hour archive on N workers, from the 2-worker
  throughput per worker (linear scaling assumed: shared storage may cap it).

Writes JSON (--json, default bench-out/batch.json). Figures measured on a loaded machine
are indicative only; the load average is printed beside them.

Run: python3 tests/benchmarks/bench_batch.py [--takes 40] [--seconds 60] [--repeats 3] [--work DIR]
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import statistics
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # as the command line sets it

from emulate.audio import stream as audio  # noqa: E402
from emulate.dsp import emulation  # noqa: E402
from emulate.voice import synth  # noqa: E402
from emulate.work import batch  # noqa: E402
from emulate.work.plan import BatchPlan  # noqa: E402
from emulate.work.presets import Preset, PresetStore  # noqa: E402

RATE = 48000
GOAL_RATIO = 1.2
ARCHIVE_HOURS = 1000.0
PROJECTED_WORKERS = (1, 2, 8, 32, 128)


def make_season(work: Path, takes: int, seconds: float, name: str) -> Path:
    """``takes`` links to one invented stereo 24-bit take, in two folders under ``work/name``."""
    folder = work / name
    source = work / f"{name}-source.wav"
    x = synth.voice_like_take(RATE, seconds, pitch_hz=150.0, sibilance_hz=6000.0, seed=7, channels=2)
    audio.write_array(source, x, RATE, subtype="PCM_24")
    del x
    for i in range(takes):
        path = folder / f"ep{i % 2}" / f"take{i:03d}.wav"
        path.parent.mkdir(parents=True, exist_ok=True)
        os.link(source, path)
    return folder


def single_render_s(take: Path, network, out: Path, repeats: int, metered: bool = False) -> list[float]:
    """Wall times of ``render_file`` of one take (``metered``: with the batch's meters on dry and wet)."""
    from emulate.voice.compare import LevelsMeter

    times = []
    for _ in range(repeats + 1):  # the first warms numba and the page cache
        began = time.perf_counter()
        processor = emulation.processor_for(network)
        if metered:
            meters = [LevelsMeter(RATE, 2, (4000.0, 8000.0)) for _ in range(2)]
            processor = batch._Metered([processor, None], *meters)
        audio.render_file(take, out, processor)
        times.append(time.perf_counter() - began)
        out.unlink()
    return times[1:]


def command_render_s(take: Path, presets: Path, out: Path, repeats: int) -> list[float]:
    """Wall times of ``emulate render TAKE OUT --preset bench`` in a fresh process: what a producer runs per take."""
    import subprocess

    env = dict(os.environ, PYTHONPATH=str(ROOT))
    times = []
    for _ in range(repeats):
        out.unlink(missing_ok=True)
        began = time.perf_counter()
        subprocess.run([sys.executable, "-m", "emulate", "render", str(take), str(out), "--preset", "bench",
                        "--presets", str(presets)], env=env, check=True, capture_output=True)
        times.append(time.perf_counter() - began)
    out.unlink(missing_ok=True)
    return times


def run_batch(takes: Path, out: Path, store, runner, page: bool = True) -> tuple[float, list]:
    shutil.rmtree(out, ignore_errors=True)
    plan = BatchPlan.inline("bench", "bench", [str(takes)], str(out), base=Path("/"))
    began = time.perf_counter()
    checked = batch.prepare_batch(plan, store, page=page)
    results = batch.run_batch(checked, runner)
    wall = time.perf_counter() - began
    shutil.rmtree(out, ignore_errors=True)
    return wall, results


def peak_worker_mb(results) -> float:
    return max(r.worker_peak_rss_mb or 0.0 for r in results)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--takes", type=int, default=40, help="takes in the batch")
    parser.add_argument("--seconds", type=float, default=60.0, help="length of each take, s")
    parser.add_argument("--long-seconds", type=float, default=600.0, help="take length for the memory check, s")
    parser.add_argument("--repeats", type=int, default=3, help="timed runs of each kind")
    parser.add_argument("--work", type=Path, help="folder for takes and renders (default: temporary)")
    parser.add_argument("--no-cluster", action="store_true", help="leave out the LocalCluster run")
    parser.add_argument("--json", type=Path, default=ROOT / "bench-out" / "batch.json", help="JSON output")
    args = parser.parse_args(argv)

    work = args.work or Path(tempfile.mkdtemp(prefix="bench-batch-"))
    store = PresetStore(work / "presets")
    store.save(Preset("bench", "Bench speaker", target={"notch": "6k", "q": 1.0},
                      circuit={"r1": "15k", "r2": "15k", "r3": "7k5", "c1": "1n8", "c2": "1n8", "c3": "3n6",
                               "bootstrap": 0.75}, mix=0.8), force=True)
    network = store.load("bench").network()
    takes = make_season(work, args.takes, args.seconds, "season")
    long_takes = make_season(work, 2, args.long_seconds, "long")
    load_before = os.getloadavg()

    single = single_render_s(next(takes.rglob("*.wav")), network, work / "single.wav", args.repeats)
    metered = single_render_s(next(takes.rglob("*.wav")), network, work / "single.wav", args.repeats, metered=True)
    command = command_render_s(next(takes.rglob("*.wav")), work / "presets", work / "single.wav", args.repeats)
    runs = {"1 worker": lambda: batch.LocalRunner(1), "2 workers": lambda: batch.LocalRunner(2),
            "2 workers, --no-page": lambda: batch.LocalRunner(2)}
    cluster = None
    if not args.no_cluster:
        import distributed

        cluster = distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                           dashboard_address=None, silence_logs=50)
        runs["LocalCluster, 2 workers"] = lambda: batch.ClusterRunner(cluster.scheduler_address)
    walls, memory = {name: [] for name in runs}, {}
    try:
        for _ in range(args.repeats):
            for name, make in runs.items():
                runner = make()
                wall, results = run_batch(takes, work / "out", store, runner, page="no-page" not in name)
                if hasattr(runner, "close"):
                    runner.close()
                walls[name].append(wall)
                memory[name] = peak_worker_mb(results)
        _, long_results = run_batch(long_takes, work / "out-long", store, batch.LocalRunner(2))
    finally:
        if cluster is not None:
            cluster.close()
    load_after = os.getloadavg()

    single_s = statistics.median(single)
    ideal_s = args.takes * single_s / 2
    medians = {name: statistics.median(times) for name, times in walls.items()}
    audio_s = args.takes * args.seconds
    per_worker = audio_s / medians["2 workers"] / 2  # audio seconds per wall second per worker
    projected = {n: ARCHIVE_HOURS * 3600.0 / (per_worker * n) / 3600.0 for n in PROJECTED_WORKERS}
    result = {
        "takes": args.takes, "seconds_per_take": args.seconds, "rate_hz": RATE, "channels": 2, "subtype": "PCM_24",
        "cores": os.cpu_count(), "load_average_before": load_before, "load_average_after": load_after,
        "single_render_s": single, "median_single_render_s": single_s,
        "single_render_with_meters_s": metered, "meters_cost": statistics.median(metered) / single_s,
        "ideal_2_workers_s": ideal_s, "batch_s": walls, "median_batch_s": medians,
        "ratio_2_workers_to_ideal": medians["2 workers"] / ideal_s, "goal_ratio": GOAL_RATIO,
        "command_render_s": command, "median_command_render_s": statistics.median(command),
        "ratio_2_workers_to_command_ideal": medians["2 workers"] / (args.takes * statistics.median(command) / 2),
        "ratio_1_worker_to_singles": medians["1 worker"] / (args.takes * single_s),
        "ratio_cluster_to_ideal": (medians["LocalCluster, 2 workers"] / ideal_s) if cluster else None,
        "peak_worker_mb": memory, "long_seconds": args.long_seconds,
        "peak_worker_mb_long_takes": peak_worker_mb(long_results),
        "audio_seconds_per_wall_second_per_worker": per_worker,
        "projected_hours_for_1000_hours": projected,
    }
    print(f"batch: {args.takes} takes x {args.seconds:g} s (48 kHz stereo 24-bit), median of {args.repeats}; "
          f"{os.cpu_count()} cores, load average {load_before[0]:.1f} before, {load_after[0]:.1f} after "
          "(a loaded machine: indicative figures)")
    print(f"  single render          {single_s:7.3f} s a take   ({', '.join(f'{t:.3f}' for t in single)})")
    print(f"  with the batch's meters {statistics.median(metered):6.3f} s a take   "
          f"({result['meters_cost']:.2f}x: loudness and band level measured while rendering)")
    print(f"  ideal on 2 workers     {ideal_s:7.2f} s   (takes x single / 2)")
    print(f"  'emulate render' of one take, fresh process: {statistics.median(command):.2f} s; batch on 2 workers "
          f"= {result['ratio_2_workers_to_command_ideal']:.2f}x (takes x that / 2)")
    for name, median in medians.items():
        peak = "(runs in this process)" if name == "1 worker" else f"peak {memory[name]:.0f} MB a worker"
        print(f"  batch, {name:22} {median:7.2f} s   {median / ideal_s:5.2f}x the ideal   "
              f"{peak}   runs {', '.join(f'{t:.2f}' for t in walls[name])}")
    print(f"  batch on 1 worker against {args.takes} single renders: "
          f"{medians['1 worker'] / (args.takes * single_s):.2f}x (the per-take cost of the batch itself)")
    print(f"  goal: batch on 2 workers at most {GOAL_RATIO}x the ideal: "
          f"{'met' if result['ratio_2_workers_to_ideal'] <= GOAL_RATIO else 'NOT met'}")
    print(f"  peak memory a worker: {memory['2 workers']:.0f} MB with {args.seconds:g} s takes, "
          f"{result['peak_worker_mb_long_takes']:.0f} MB with {args.long_seconds:g} s takes")
    print(f"  throughput {per_worker:.0f}x real time a worker; 1,000 hours of audio would take: "
          + ", ".join(f"{hours:.1f} h on {n}" for n, hours in projected.items()))
    args.json.parent.mkdir(parents=True, exist_ok=True)
    args.json.write_text(json.dumps(result, indent=2))
    print(f"wrote {args.json}")
    if args.work is None:
        shutil.rmtree(work, ignore_errors=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
