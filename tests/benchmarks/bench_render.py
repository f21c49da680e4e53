"""Render benchmark: render vs a same-format streaming copy, peak memory, kernel speed, fixed cost.

Makes a --minutes long (default 60) 48 kHz stereo 24-bit WAV of generated noise and tones
(in a temporary folder, or --work DIR; a tmpfs such as /dev/shm keeps disk writeback out
of the timings), then measures in one run, the cases interleaved, as medians of
--repeats runs:

* ``copy_same_format``: the reference of issue 8, a plain soundfile streaming copy that
  reads and writes the same integer format (int32 codes, PCM_24) in the same block size;
* ``copy_file``: the project's own copy (:func:`emulate.audio.stream.copy_file`, the render
  path with no processor);
* ``render``: :func:`emulate.audio.stream.render_file` through
  :class:`emulate.dsp.processor.NotchProcessor` at default fidelity, a balanced twin-T
  notch at 6 kHz, H(s) = (s^2 + w0^2) / (s^2 + 4 w0 s + w0^2) (Analog Devices MT-225).

Each case reports wall time, CPU time (all threads, time.process_time) and the real-time
factor; the render reports render/copy ratios (goal: wall <= 1.25x copy_same_format).

Also:

* kernel: :func:`emulate.dsp.kernels.sos_filter` in M samples/s (stereo, two sections,
  2**20 frames, best of 15, the median beside it) against the feedback-latency limit: 590 M samples/s as issue 8
  measured it on the reference CPU, and this machine's own estimate, twice the rate of
  one section on one channel (one latency-bound recurrence; the stereo pair runs two of
  them side by side) -- goal 80 %;
* fixed cost before the first sample, in a fresh interpreter, along the render's path
  (integer PCM: ``process_codes``): imports, design (processor_for + prepare), choosing
  the kernels, the first block -- goal < 0.3 s -- twice: with the kernels compiled ahead
  of time (built first into the work folder by ``python -m emulate.dsp.compiled``, its
  time shown) and with numba's JIT kernels (an empty kernels folder: numba imported, its
  cached kernels loaded); whether numba and scipy.linalg were loaded;
* peak memory on the user's path: a fresh child runs
  ``python -m emulate render IN OUT --r1 10k --r2 10k --r3 5k --c1 2n2 --c2 2n2 --c3 4n4``
  on a 1-second take (compiled and JIT kernels) and on the timed take; the figure is ru_maxrss from
  resource.getrusage(RUSAGE_CHILDREN) in a small meter process whose only child is the
  CLI, with the CLI's own VmHWM (read at exit) as a cross-check (goal: flat with length,
  < 200 MB); beside it the resident memory after each import on the render path.

Writes JSON (--json, default bench-out/render.json). --profile prints where the render
time goes.

Run: python3 tests/benchmarks/bench_render.py [--minutes 60] [--repeats 3] [--work DIR]
"""

from __future__ import annotations

import argparse
import cProfile
import io
import json
import os
import pstats
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import scipy.signal
import soundfile as sf

KERNEL_LIMIT_ISSUE_MS = 590.0  # M samples/s, stereo, two biquads: issue 8's reference CPU

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from emulate.audio.stream import copy_file, render_file  # noqa: E402

RATE = 48000
NOTCH_HZ = 6000.0
GEN_BLOCK = 1 << 18


def twin_t_zpk(notch_hz: float = NOTCH_HZ):
    """Balanced passive twin-T, H(s) = (s^2 + w0^2)/(s^2 + 4 w0 s + w0^2) (MT-225), rad/s."""
    w0 = 2 * np.pi * notch_hz
    return np.array([1j * w0, -1j * w0]), np.roots([1.0, 4 * w0, w0 ** 2]), 1.0


def notch_processor():
    """The project's NotchProcessor at default fidelity."""
    from emulate.dsp.processor import NotchProcessor

    z, p, k = twin_t_zpk()
    return NotchProcessor(z, p, k, notch_hz=NOTCH_HZ)


def make_take(path: Path, seconds: float) -> Path:
    """Stereo 24-bit WAV: pink-ish noise plus a few tones at about -12 dBFS, in blocks.

    An existing file of the right length (from an earlier run with --work) is reused.
    """
    rng = np.random.default_rng(2024)
    frames = int(seconds * RATE)
    if path.exists() and sf.info(str(path)).frames == frames:
        return path
    shaper = scipy.signal.butter(1, 2000.0, fs=RATE, output="sos")
    zi = np.zeros((1, 2, 2))
    tones_hz = np.array([220.0, 1000.0, 6000.0, 9000.0])
    with sf.SoundFile(path, "w", RATE, 2, "PCM_24", format="WAV") as f:
        for start in range(0, frames, GEN_BLOCK):
            n = min(GEN_BLOCK, frames - start)
            noise, zi = scipy.signal.sosfilt(shaper, rng.standard_normal((n, 2)), axis=0, zi=zi)
            t = (start + np.arange(n)) / RATE
            tones = np.sin(2 * np.pi * tones_hz[:, None] * t).sum(axis=0)
            f.write(0.1 * noise + 0.05 * np.column_stack([tones, np.roll(tones, 7)]))
    return path


def copy_same_format(src: Path, dst: Path, block_frames: int) -> None:
    """Plain streaming copy of the same integer format: int32 codes in, int32 codes out."""
    with sf.SoundFile(src) as a, sf.SoundFile(dst, "w", a.samplerate, a.channels, a.subtype,
                                              format=a.format) as b:
        while True:
            codes = a.read(block_frames, dtype="int32", always_2d=True)
            if not len(codes):
                return
            b.write(codes)


def timed_interleaved(cases: dict, repeats: int) -> dict:
    """Wall and CPU (all threads) seconds of each case, run in turn per repeat (same load drift)."""
    runs = {name: {"wall": [], "cpu": []} for name in cases}
    for _ in range(repeats):
        for name, fn in cases.items():
            t, c = time.perf_counter(), time.process_time()
            fn()
            runs[name]["cpu"].append(time.process_time() - c)
            runs[name]["wall"].append(time.perf_counter() - t)
    return runs


def kernel_rates(repeats: int = 15, frames: int = 1 << 20) -> dict:
    """sos_filter in M samples/s: stereo two sections, and one section on one channel."""
    from emulate.dsp import kernels

    proc = notch_processor()
    proc.prepare(RATE, 2)
    sos = np.vstack([proc.design.sos, proc.design.sos])[:2]  # two sections, as the issue counts
    rates = {}
    for name, n_sections, channels in (("stereo_two_sections", 2, 2), ("mono_one_section", 1, 1)):
        x = np.random.default_rng(1).standard_normal((frames, channels))
        out, state = np.empty_like(x), np.zeros((n_sections, channels, 2))
        kernels.sos_filter(sos[:n_sections], x[:16], state, out[:16])  # load the cache
        times = []
        for _ in range(repeats):
            t = time.perf_counter()
            kernels.sos_filter(sos[:n_sections], x, state, out)
            times.append(time.perf_counter() - t)
        # best run: the least disturbed by other processes on a shared machine
        rates[name] = x.size / min(times) / 1e6
        rates[name + "_median"] = x.size / statistics.median(times) / 1e6
    limit_here = 2.0 * rates["mono_one_section"]
    return {"m_samples_per_s": rates["stereo_two_sections"],
            "m_samples_per_s_median": rates["stereo_two_sections_median"],
            "mono_one_section_m_samples_per_s": rates["mono_one_section"],
            "latency_limit_here_m_samples_per_s": limit_here,
            "share_of_limit_here": rates["stereo_two_sections"] / limit_here,
            "latency_limit_issue_m_samples_per_s": KERNEL_LIMIT_ISSUE_MS,
            "share_of_limit_issue": rates["stereo_two_sections"] / KERNEL_LIMIT_ISSUE_MS}


# Fixed cost before the first sample, in a fresh interpreter (interpreter start excluded),
# along the render's own path (integer PCM in and out: process_codes).
FIXED_COST_CHILD = """
import json, sys, time
sys.path.insert(0, {root!r})
t0 = time.perf_counter()
import numpy as np
t_numpy = time.perf_counter()
from emulate.analog.networks import TwinT
from emulate.audio import stream
from emulate.audio.encode import Encoder
from emulate.dsp.emulation import processor_for
t1 = time.perf_counter()
proc = processor_for(TwinT.balanced(6000.0, r_ohms=10e3))
proc.prepare(48000, 2)
t2 = time.perf_counter()
encoder = Encoder("PCM_24", True, 0)  # chooses the kernels: compiled if built, else numba's JIT
t3 = time.perf_counter()
skip = proc.latency_samples
codes, out = np.zeros((64, 2), np.int32), np.empty((64 - skip, 2), np.int32)
proc.process_codes(codes, 2.0 ** -31, encoder, out, skip)
t4 = time.perf_counter()
print(json.dumps({{"numpy_s": t_numpy - t0, "emulate_imports_s": t1 - t_numpy, "imports_s": t1 - t0,
                  "design_s": t2 - t1, "kernels_load_s": t3 - t2, "first_block_s": t4 - t3,
                  "total_s": t4 - t0, "numba_loaded": "numba" in sys.modules,
                  "scipy_linalg_loaded": "scipy.linalg" in sys.modules}}))
"""


def kernel_envs(work: Path) -> tuple[dict, float]:
    """Environments for the children: numba's JIT kernels (an empty kernels folder) and the
    kernels compiled ahead of time (built into ``work`` first: the seconds that took)."""
    jit_dir, compiled_dir = work / "kernels-none", work / "kernels"
    jit_dir.mkdir(exist_ok=True)
    envs = {"jit": {**os.environ, "EMULATE_KERNELS_DIR": str(jit_dir)},
            "compiled": {**os.environ, "EMULATE_KERNELS_DIR": str(compiled_dir)}}
    t = time.perf_counter()
    subprocess.run([sys.executable, "-m", "emulate.dsp.compiled"], env=envs["compiled"], cwd=ROOT,
                   check=True, capture_output=True)
    return envs, time.perf_counter() - t


def fixed_cost(repeats: int, env: dict) -> dict:
    """Median of each part over ``repeats`` fresh interpreters (the first run warms the caches)."""
    code = FIXED_COST_CHILD.format(root=str(ROOT))
    _fresh_child([sys.executable, "-c", code], env)
    runs = [json.loads(_fresh_child([sys.executable, "-c", code], env)) for _ in range(repeats)]
    return {key: statistics.median(r[key] for r in runs) for key in runs[0]}


CLI_PARTS = ["--r1", "10k", "--r2", "10k", "--r3", "5k", "--c1", "2n2", "--c2", "2n2",
             "--c3", "4n4"]

# The CLI exactly as ``python -m emulate`` runs it, plus an exit hook that writes the
# process's VmHWM (peak resident set) to the file named by the first argument.
CLI_CHILD = """
import atexit, runpy, sys
hwm_path = sys.argv.pop(1)
def _hwm():
    with open("/proc/self/status") as status, open(hwm_path, "w") as out:
        out.write(next(l.split()[1] for l in status if l.startswith("VmHWM")))
atexit.register(_hwm)
sys.argv[0] = "emulate"
runpy.run_module("emulate", run_name="__main__", alter_sys=True)
"""

# The meter: its only child is the CLI, so RUSAGE_CHILDREN is that child's peak.
METER = """
import json, resource, subprocess, sys, time
cmd, hwm_path = json.loads(sys.argv[1]), sys.argv[2]
t = time.perf_counter()
run = subprocess.run(cmd, capture_output=True, text=True)
elapsed = time.perf_counter() - t
if run.returncode:
    sys.exit("CLI failed: " + run.stderr.strip())
ru = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
with open(hwm_path) as f:
    hwm = int(f.read()) / 1024
print(json.dumps({"maxrss_mb": ru, "vmhwm_mb": hwm, "elapsed_s": elapsed}))
"""

# Resident memory after each import on the render path, in a fresh child.
STEPS_CHILD = """
import importlib, json, sys
sys.path.insert(0, {root!r})
def rss_mb():
    with open("/proc/self/status") as status:
        return next(int(l.split()[1]) for l in status if l.startswith("VmRSS")) / 1024
steps = {{"python": rss_mb()}}
for name in {modules!r}:
    importlib.import_module(name)
    steps[name] = rss_mb()
import numpy as np
from emulate.dsp.compiled import kernels
kernels().sos_filter(np.zeros((1, 6)), np.zeros((4, 2)), np.zeros((1, 2, 2)), np.empty((4, 2)))
steps["kernels run once"] = rss_mb()
steps["numba loaded"] = "numba" in sys.modules
steps["scipy modules loaded"] = sorted({{m.split(".")[1] for m in sys.modules
                                        if m.startswith("scipy.") and not m.split(".")[1].startswith("_")}})
print(json.dumps(steps))
"""
RENDER_PATH_MODULES = ["numpy", "click", "soundfile", "emulate.dsp.compiled", "emulate.analog.circuit", "emulate.cli.options", "emulate.dsp.digital",
                       "emulate.dsp.processor", "emulate.audio.encode", "emulate.audio.pipeline",
                       "emulate.cli.sound"]


def _fresh_child(argv: list[str], env: dict | None = None) -> str:
    """stdout of ``argv`` run as a fresh child (see :func:`cli_peak_rss` for why the shell)."""
    out = subprocess.run(["/bin/sh", "-c", '"$@"; exit $?', "sh", *argv], env=env,
                         check=True, capture_output=True, text=True)
    return out.stdout.strip().splitlines()[-1]


def cli_peak_rss(src: Path, dst: Path, env: dict) -> dict:
    """Peak RSS (MB) of ``emulate render SRC DST`` with the bench parts, in a fresh child.

    Linux keeps the larger of a process's own peak and the peak of the memory it had
    before exec, so a child exec'd straight from this (large) process would report this
    process's RSS. The meter is therefore started by a small shell that forks it (the
    trailing ``exit`` stops the shell from exec'ing it in place), and the meter (a bare
    interpreter) starts the CLI; ru_maxrss of RUSAGE_CHILDREN in the meter is the CLI's
    peak, and the CLI's own VmHWM is recorded beside it as a cross-check.
    """
    hwm = dst.with_suffix(".hwm")
    cmd = [sys.executable, "-c", CLI_CHILD, str(hwm), "render", str(src), str(dst), *CLI_PARTS, "--force"]
    result = json.loads(_fresh_child([sys.executable, "-c", METER, json.dumps(cmd), str(hwm)], env))
    hwm.unlink()
    return result


def import_steps_rss(env: dict) -> dict:
    """Resident MB after each import of the render path (a fresh child, nothing rendered)."""
    code = STEPS_CHILD.format(root=str(ROOT), modules=RENDER_PATH_MODULES)
    return json.loads(_fresh_child([sys.executable, "-c", code], env))


def profile_render(src: Path, dst: Path, block_frames: int) -> dict:
    """One render under cProfile: own time summed per source file, and the top functions."""
    proc = notch_processor()
    prof = cProfile.Profile()
    prof.enable()
    render_file(src, dst, proc, block_frames=block_frames)
    prof.disable()
    stats = pstats.Stats(prof)
    by_file: dict[str, float] = {}
    for (filename, _, func), (_, _, own_s, _, _) in stats.stats.items():
        key = Path(filename).name if filename != "~" else func
        by_file[key] = by_file.get(key, 0.0) + own_s
    total = sum(by_file.values())
    top = dict(sorted(by_file.items(), key=lambda kv: -kv[1])[:10])
    buf = io.StringIO()
    pstats.Stats(prof, stream=buf).sort_stats("tottime").print_stats(10)
    return {"total_s": total, "own_s_by_file": top, "text": buf.getvalue()}


def run(args) -> dict:
    work = Path(args.work) if args.work else Path(tempfile.mkdtemp(prefix="emulate-bench-"))
    work.mkdir(parents=True, exist_ok=True)
    seconds = args.minutes * 60
    src = make_take(work / f"take{args.minutes:g}min.wav", seconds)
    out = work / "out.wav"
    bf = args.block_frames
    results = {"take": {"seconds": seconds, "rate_hz": RATE, "channels": 2,
                        "subtype": "PCM_24", "block_frames": bf, "repeats": args.repeats}}

    # warm-up: page cache, numba cache load
    copy_same_format(src, out, bf)
    render_file(src, out, notch_processor(), block_frames=bf)

    cases = {"copy_same_format": lambda: copy_same_format(src, out, bf),
             "copy_file": lambda: copy_file(src, out, bf),
             "render": lambda: render_file(src, out, notch_processor(), block_frames=bf)}
    load_before = os.getloadavg()[0]
    runs = timed_interleaved(cases, args.repeats)
    results["take"]["loadavg_1min_before_after"] = [load_before, os.getloadavg()[0]]
    reference = {kind: statistics.median(runs["copy_same_format"][kind]) for kind in ("wall", "cpu")}
    for name, r in runs.items():
        wall, cpu = statistics.median(r["wall"]), statistics.median(r["cpu"])
        results[name] = {"median_wall_s": wall, "median_cpu_s": cpu, "runs_wall_s": r["wall"],
                         "runs_cpu_s": r["cpu"], "rtf": seconds / wall}
        if name != "copy_same_format":
            results[name]["wall_ratio_to_copy_same_format"] = wall / reference["wall"]
            results[name]["cpu_ratio_to_copy_same_format"] = cpu / reference["cpu"]
    proc = notch_processor()
    proc.prepare(RATE, 2)
    results["render"].update(fidelity_db=proc.fidelity_db, method=proc.design.method,
                             sections=int(len(proc.design.sos)))
    results["kernel"] = kernel_rates()
    envs, results["compile_ahead_s"] = kernel_envs(work)
    results["fixed_cost_s"] = {kind: fixed_cost(args.repeats, env) for kind, env in envs.items()}

    # a 1-second take shows the fixed cost (interpreter, imports, kernels, design);
    # longer takes must not add to it if memory is bounded
    short = make_take(work / "take1s.wav", 1.0)
    results["memory"] = {"cli_render_1s_jit": cli_peak_rss(short, work / "out1s.wav", envs["jit"]),
                         "cli_render_1s": cli_peak_rss(short, work / "out1s.wav", envs["compiled"]),
                         f"cli_render_{args.minutes:g}min": cli_peak_rss(src, out, envs["compiled"])}
    results["import_steps_rss_mb"] = import_steps_rss(envs["compiled"])
    if args.profile:
        results["profile"] = profile_render(src, out, bf)
    if not args.work:
        shutil.rmtree(work)
    return results


def report(results: dict) -> None:
    take = results["take"]
    print(f"take: {take['seconds'] / 60:g} min, 48 kHz stereo PCM_24, block {take['block_frames']} "
          f"frames, median of {take['repeats']}; load average before/after "
          f"{take['loadavg_1min_before_after'][0]:.1f}/{take['loadavg_1min_before_after'][1]:.1f}")
    for name in ("copy_same_format", "copy_file", "render"):
        r = results[name]
        ratio = (f"   wall {r['wall_ratio_to_copy_same_format']:.2f}x, CPU "
                 f"{r['cpu_ratio_to_copy_same_format']:.2f}x the same-format copy"
                 if "wall_ratio_to_copy_same_format" in r else "")
        print(f"{name:17s} wall {r['median_wall_s']:7.2f} s  CPU {r['median_cpu_s']:7.2f} s  "
              f"RTF {r['rtf']:6.0f}x{ratio}")
    r = results["render"]
    print(f"  render fidelity {r['fidelity_db']:.3f} dB ({r['method']}, {r['sections']} sections)")
    k = results["kernel"]
    print(f"kernel: {k['m_samples_per_s']:.0f} M samples/s stereo, two sections, best of 15 (median "
          f"{k['m_samples_per_s_median']:.0f}) = "
          f"{k['share_of_limit_issue']:.0%} of issue 8's latency limit ({k['latency_limit_issue_m_samples_per_s']:.0f}), "
          f"{k['share_of_limit_here']:.0%} of this machine's estimate ({k['latency_limit_here_m_samples_per_s']:.0f})")
    print(f"kernels compiled ahead of time in {results['compile_ahead_s']:.1f} s (python -m emulate.dsp.compiled)")
    for kind, f in results["fixed_cost_s"].items():
        print(f"fixed cost before the first sample, {kind} kernels: {f['total_s']:.3f} s (imports {f['imports_s']:.3f}: "
              f"numpy {f['numpy_s']:.3f}, emulate {f['emulate_imports_s']:.3f}; design {f['design_s']:.3f}, "
              f"kernels {f['kernels_load_s']:.3f}, first block {f['first_block_s']:.3f}); numba loaded: "
              f"{bool(f['numba_loaded'])}, scipy.linalg loaded: {bool(f['scipy_linalg_loaded'])}")
    print("peak RSS of `emulate render` in a fresh child (ru_maxrss / VmHWM): " + "; ".join(
        f"{k} {v['maxrss_mb']:.0f} / {v['vmhwm_mb']:.0f} MB ({v['elapsed_s']:.1f} s)"
        for k, v in results["memory"].items()))
    steps = dict(results["import_steps_rss_mb"])
    scipy_loaded = steps.pop("scipy modules loaded")
    print(f"numba loaded on the render path (compiled kernels): {steps.pop('numba loaded')}")
    print("resident MB after each import: " + ", ".join(f"{k} {v:.0f}" for k, v in steps.items()))
    print("scipy subpackages loaded: " + ", ".join(scipy_loaded))
    if "profile" in results:
        prof = results["profile"]
        print(f"profile of one render ({prof['total_s']:.2f} s), own time by file: " + ", ".join(
            f"{k} {v:.2f} s" for k, v in prof["own_s_by_file"].items()))
        print(prof["text"])


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--work", help="folder for the generated takes (default: a temp folder; "
                    "a tmpfs such as /dev/shm keeps disk writeback out of the timings)")
    ap.add_argument("--json", default="bench-out/render.json", help="where to write figures")
    ap.add_argument("--repeats", type=int, default=3, help="runs per case (median), >= 3")
    ap.add_argument("--minutes", type=float, default=60.0, help="length of the timed take")
    ap.add_argument("--block-frames", type=int, default=65536, help="frames per block")
    ap.add_argument("--profile", action="store_true", help="print a cProfile of one render")
    args = ap.parse_args(argv)
    if args.repeats < 3:
        ap.error(f"--repeats must be >= 3 (medians); got {args.repeats}")
    results = run(args)
    report(results)
    out = Path(args.json)
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps(results, indent=2))
    print(f"wrote {out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
