"""Render benchmark: streaming copy vs notch render of a long take, and peak memory.

Makes a 10-minute 48 kHz stereo 24-bit WAV of generated noise and tones (in a temporary
folder, or --work DIR), then measures in one run, as medians of --repeats runs:

* the bare streaming copy (:func:`emulate.audio.stream.copy_file`), the reference time;
* a render through :class:`emulate.dsp.processor.NotchProcessor` at default fidelity, a
  balanced twin-T notch at 6 kHz, H(s) = (s^2 + w0^2) / (s^2 + 4 w0 s + w0^2)
  (Analog Devices MT-225) as z, p, k;
* a render through the plain prewarped bilinear filter of the same H(s)
  (scipy.signal.bilinear_zpk -> zpk2sos, run by scipy.signal.sosfilt) on the same path;

and reports the real-time factor (audio seconds per wall second), the ratio
render/copy and the fidelity the processor reports.

Peak memory is measured on the user's path: a fresh child runs the command line,
``python -m emulate render IN OUT --r1 10k --r2 10k --r3 5k --c1 2n2 --c2 2n2 --c3 4n4``
(a balanced twin-T at about 7.2 kHz), on a 1-second take, the timed take and, with
--hour, a 1-hour take; the figure is ru_maxrss from
resource.getrusage(RUSAGE_CHILDREN) in a small meter process whose only child is
the CLI, with the CLI's own VmHWM (read at exit) as a cross-check. Beside it: the
resident memory after each import on the render path (where the fixed cost goes).
Targets: render <= 4x copy (goal 2x); 1-hour peak RSS <= 200 MB. Writes JSON
(--json, default bench-out/render.json). --profile prints where the render time goes.

Run: python3 tests/benchmarks/bench_render.py [--hour] [--repeats 3] [--work DIR]
"""

from __future__ import annotations

import argparse
import cProfile
import io
import json
import os
import pstats
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import scipy.signal
import soundfile as sf

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


class BilinearSos:
    """Plain bilinear transform prewarped at the notch, run by scipy.signal.sosfilt."""

    latency_samples = 0

    def __init__(self, notch_hz: float = NOTCH_HZ):
        self.notch_hz = notch_hz

    def prepare(self, sample_rate, channels):
        # prewarp (Oppenheim & Schafer sec. 7.2): the analog notch placed at
        # 2 fs tan(pi f / fs) maps exactly onto f after s = 2 fs (z - 1)/(z + 1)
        warped_hz = sample_rate / np.pi * np.tan(np.pi * self.notch_hz / sample_rate)
        z, p, k = scipy.signal.bilinear_zpk(*twin_t_zpk(warped_hz), sample_rate)
        self.sos = scipy.signal.zpk2sos(z, p, k)
        self.zi = np.zeros((len(self.sos), 2, channels))

    def process(self, block):
        out, self.zi = scipy.signal.sosfilt(self.sos, block, axis=0, zi=self.zi)
        return out


def notch_processor():
    """The project's NotchProcessor at default fidelity, or None if it is missing."""
    try:
        from emulate.dsp.processor import NotchProcessor
    except ImportError:
        return None
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


def timed_interleaved(cases: dict, repeats: int) -> dict:
    """Median wall time of each case, the cases run in turn per repeat (same load drift)."""
    runs = {name: [] for name in cases}
    for _ in range(repeats):
        for name, fn in cases.items():
            t = time.perf_counter()
            fn()
            runs[name].append(time.perf_counter() - t)
    return {name: (statistics.median(r), r) for name, r in runs.items()}


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
from emulate.dsp import kernels
kernels.sos_filter(np.zeros((1, 6)), np.zeros((4, 2)), np.zeros((1, 2, 2)), np.empty((4, 2)))
steps["kernels run once"] = rss_mb()
steps["scipy modules loaded"] = sorted({{m.split(".")[1] for m in sys.modules
                                        if m.startswith("scipy.") and not m.split(".")[1].startswith("_")}})
print(json.dumps(steps))
"""
RENDER_PATH_MODULES = ["numpy", "click", "soundfile", "scipy.linalg", "numba", "emulate.dsp.kernels",
                       "emulate.analog.circuit", "emulate.cli.options", "emulate.dsp.digital",
                       "emulate.dsp.processor", "emulate.cli.sound"]


def _fresh_child(argv: list[str]) -> str:
    """stdout of ``argv`` run as a fresh child (see :func:`cli_peak_rss` for why the shell)."""
    out = subprocess.run(["/bin/sh", "-c", '"$@"; exit $?', "sh", *argv],
                         check=True, capture_output=True, text=True)
    return out.stdout.strip().splitlines()[-1]


def cli_peak_rss(src: Path, dst: Path) -> dict:
    """Peak RSS (MB) of ``emulate render SRC DST`` with the bench parts, in a fresh child.

    Linux keeps the larger of a process's own peak and the peak of the memory it had
    before exec, so a child exec'd straight from this (large) process would report this
    process's RSS. The meter is therefore started by a small shell that forks it (the
    trailing ``exit`` stops the shell from exec'ing it in place), and the meter (a bare
    interpreter) starts the CLI; ru_maxrss of RUSAGE_CHILDREN in the meter is the CLI's
    peak, and the CLI's own VmHWM is recorded beside it as a cross-check.
    """
    hwm = dst.with_suffix(".hwm")
    cmd = [sys.executable, "-c", CLI_CHILD, str(hwm), "render", str(src), str(dst), *CLI_PARTS]
    result = json.loads(_fresh_child([sys.executable, "-c", METER, json.dumps(cmd), str(hwm)]))
    hwm.unlink()
    return result


def import_steps_rss() -> dict:
    """Resident MB after each import of the render path (a fresh child, nothing rendered)."""
    code = STEPS_CHILD.format(root=str(ROOT), modules=RENDER_PATH_MODULES)
    return json.loads(_fresh_child([sys.executable, "-c", code]))


def profile_render(src: Path, dst: Path, block_frames: int) -> dict:
    """One render under cProfile: own time summed per source file, and the top functions."""
    proc = notch_processor() or BilinearSos()
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
    src = make_take(work / "take10.wav", args.minutes * 60)
    seconds = args.minutes * 60
    out = work / "out.wav"
    bf = args.block_frames
    results = {"take": {"seconds": seconds, "rate_hz": RATE, "channels": 2,
                        "subtype": "PCM_24", "block_frames": bf, "repeats": args.repeats}}

    proc = notch_processor()
    # warm-up: page cache, numba compile/cache load, scipy imports
    copy_file(src, out, bf)
    if proc is not None:
        render_file(src, out, proc, block_frames=bf)

    cases = {"copy": lambda: copy_file(src, out, bf),
             "bilinear_scipy": lambda: render_file(src, out, BilinearSos(), block_frames=bf)}
    if proc is not None:
        cases["notch_processor"] = lambda: render_file(src, out, notch_processor(),
                                                       block_frames=bf)
    load_before = os.getloadavg()[0]
    timings = timed_interleaved(cases, args.repeats)
    results["take"]["loadavg_1min_before_after"] = [load_before, os.getloadavg()[0]]
    copy_s = timings["copy"][0]
    for name, (med, runs) in timings.items():
        results[name] = {"median_s": med, "runs_s": runs, "rtf": seconds / med}
        if name != "copy":
            results[name]["ratio_to_copy"] = med / copy_s
    if proc is not None:
        proc.prepare(RATE, 2)
        results["notch_processor"].update(
            fidelity_db=proc.fidelity_db, latency_samples=proc.latency_samples,
            method=getattr(proc.design, "method", None),
            sections=int(len(proc.design.sos)))
    else:
        results["notch_processor"] = "emulate.dsp.processor.NotchProcessor not available"

    # a 1-second take shows the fixed cost (interpreter, imports, kernels, design);
    # longer takes must not add to it if memory is bounded
    short = make_take(work / "take1s.wav", 1.0)
    results["memory"] = {
        "cli_render_1s": cli_peak_rss(short, work / "out1s.wav"),
        f"cli_render_{args.minutes:g}min": cli_peak_rss(src, out)}
    if args.hour:
        hour = make_take(work / "take60.wav", 3600)
        results["memory"]["cli_render_60min"] = cli_peak_rss(hour, work / "out60.wav")
        (work / "out60.wav").unlink()
        if not args.work:
            hour.unlink()
    results["import_steps_rss_mb"] = import_steps_rss()
    if args.profile:
        results["profile"] = profile_render(src, out, bf)
    if not args.work:
        for p in work.iterdir():
            p.unlink()
        work.rmdir()
    return results


def report(results: dict) -> None:
    print(f"take: {results['take']['seconds'] / 60:.0f} min, 48 kHz stereo PCM_24, "
          f"block {results['take']['block_frames']} frames, median of "
          f"{results['take']['repeats']}")
    c = results["copy"]
    print(f"copy              {c['median_s']:7.2f} s   RTF {c['rtf']:7.0f}x")
    for name in ("bilinear_scipy", "notch_processor"):
        r = results[name]
        if isinstance(r, str):
            print(f"{name:17s} {r}")
            continue
        extra = (f"  fidelity {r['fidelity_db']:.3f} dB ({r['method']}, {r['sections']} "
                 "sections)" if "fidelity_db" in r else "")
        print(f"{name:17s} {r['median_s']:7.2f} s   RTF {r['rtf']:7.0f}x   "
              f"render/copy {r['ratio_to_copy']:.2f}{extra}")
    print("peak RSS of `emulate render` in a fresh child (ru_maxrss / VmHWM): " + "; ".join(
        f"{k} {v['maxrss_mb']:.0f} / {v['vmhwm_mb']:.0f} MB ({v['elapsed_s']:.1f} s)"
        for k, v in results["memory"].items()))
    steps = dict(results["import_steps_rss_mb"])
    scipy_loaded = steps.pop("scipy modules loaded")
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
    ap.add_argument("--minutes", type=float, default=10.0, help="length of the timed take")
    ap.add_argument("--block-frames", type=int, default=65536, help="frames per block")
    ap.add_argument("--hour", action="store_true", help="also measure RSS on a 1-hour take")
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
