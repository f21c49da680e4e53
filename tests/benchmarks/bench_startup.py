"""Start-up benchmark: wall time and modules loaded by the commands a user runs most.

Each command runs as a fresh process (``python -m emulate ...``), --repeats times (default
7, the first run before them warms the file and numba caches), and the median wall time
is reported beside its goal from issue 8:

* ``emulate --help``                        < 0.2 s
* ``emulate response`` (parts, no plot)     < 0.5 s
* ``emulate response --rate 48000``         (the digital design too; no goal)
* every ``--plot``: response, tolerance, render, sibilance   < 2 s

Beside each, what the command loads, from ``python -X importtime`` in one more fresh
process: the total import time and whether numpy, scipy, numba, matplotlib, pyloudnorm
and the sweep are among the modules. The bare interpreter (``python -c pass``) is
measured too, as the floor under every figure. Takes are invented: a 3-second 48 kHz
stereo 24-bit voice-like take with sibilance at 6 kHz (:mod:`emulate.voice.synth`; a plain
sine has no sibilant frames to draw), in a temporary folder.

With ``--baseline DIR`` (another checkout, e.g. the main branch's), every command also
runs from that checkout, alternating with this one run by run, so both medians come
from the same minutes of a shared machine; the report gives both and their ratio.

Writes JSON (--json, default bench-out/startup.json).

Run: python3 tests/benchmarks/bench_startup.py [--repeats 7] [--baseline DIR]
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import soundfile as sf

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from emulate.voice.synth import voice_like_take  # noqa: E402
PARTS = ["--r1", "10k", "--r2", "10k", "--r3", "5k", "--c1", "2n2", "--c2", "2n2", "--c3", "4n4"]
WATCHED = ("numpy", "scipy", "scipy.signal", "scipy.stats", "numba", "matplotlib", "pyloudnorm", "emulate.work.sweep")
GOALS_S = {"help": 0.2, "response": 0.5}
PLOT_GOAL_S = 2.0


def commands(work: Path) -> dict[str, list[str]]:
    take, out = str(work / "take.wav"), str(work / "out.wav")
    return {
        "python -c pass": [],
        "help": ["--help"],
        "response": ["response", *PARTS],
        "response --rate": ["response", *PARTS, "--rate", "48000"],
        "response --plot": ["response", *PARTS, "--plot", str(work / "r.png")],
        "tolerance --plot": ["tolerance", *PARTS, "--plot", str(work / "t.png")],
        "render --plot": ["render", take, out, *PARTS, "--plot", str(work / "s.png")],
        "sibilance --plot": ["sibilance", take, "--plot", str(work / "b.png")],
    }


def argv(args: list[str]) -> list[str]:
    return [sys.executable, "-c", "pass"] if not args else [sys.executable, "-m", "emulate", *args]


def environment(work: Path, root: Path = ROOT) -> dict:
    return dict(os.environ, PYTHONPATH=str(root), EMULATE_PRESETS_DIR=str(work / "presets"))


def clean(work: Path) -> None:
    """Remove what the last run wrote (pictures, the render), so the next one may write them."""
    for leftover in work.glob("*.png"):
        leftover.unlink()
    (work / "out.wav").unlink(missing_ok=True)


def wall_times(args: list[str], work: Path, repeats: int, roots=(ROOT,)) -> list[list[float]]:
    """Wall times per checkout in ``roots``, the checkouts alternating run by run."""
    for root in roots:  # warm the file and numba caches of each
        clean(work)
        subprocess.run(argv(args), cwd=work, env=environment(work, root), check=True, capture_output=True)
    times = [[] for _ in roots]
    for _ in range(repeats):
        for i, root in enumerate(roots):
            clean(work)
            t = time.perf_counter()
            subprocess.run(argv(args), cwd=work, env=environment(work, root), check=True, capture_output=True)
            times[i].append(time.perf_counter() - t)
    return times


def imports(args: list[str], work: Path) -> dict:
    """Total import time (s) and which watched packages load, from ``-X importtime``."""
    clean(work)
    run = subprocess.run([sys.executable, "-X", "importtime", *argv(args)[1:]], cwd=work,
                         env=environment(work), check=True, capture_output=True, text=True)
    names, total_us = set(), 0
    for line in run.stderr.splitlines():
        if not line.startswith("import time:") or "|" not in line or "self [us]" in line:
            continue
        _, cumulative, name = (part.strip() for part in line[len("import time:"):].split("|"))
        names.add(name)
        if not line.split("|")[2].startswith("  "):  # a top-level import: its cumulative counts
            total_us += int(cumulative)
    loaded = {w: any(n == w or n.startswith(w + ".") for n in names) for w in WATCHED}
    return {"import_s": total_us / 1e6, "modules": len(names), "loads": loaded}


def run(args) -> dict:
    with tempfile.TemporaryDirectory(prefix="emulate-startup-") as folder:
        work = Path(folder)
        take = voice_like_take(48000, 3.0, pitch_hz=120.0, sibilance_hz=6000.0, seed=1, channels=2)
        sf.write(work / "take.wav", take, 48000, subtype="PCM_24")
        results = {"repeats": args.repeats, "loadavg_1min_before": os.getloadavg()[0], "commands": {}}
        roots = (ROOT,) if args.baseline is None else (ROOT, Path(args.baseline).resolve())
        results["baseline"] = None if args.baseline is None else str(roots[1])
        for name, cmd in commands(work).items():
            times = wall_times(cmd, work, args.repeats, roots)
            goal = GOALS_S.get(name, PLOT_GOAL_S if "--plot" in name else None)
            entry = {"median_wall_s": statistics.median(times[0]), "runs_s": times[0], "goal_s": goal}
            if args.baseline is not None:
                entry |= {"baseline_median_wall_s": statistics.median(times[1]), "baseline_runs_s": times[1]}
            if cmd:
                entry |= imports(cmd, work)
            results["commands"][name] = entry
        results["loadavg_1min_after"] = os.getloadavg()[0]
    return results


def report(results: dict) -> None:
    print(f"fresh processes, median of {results['repeats']}; load average "
          f"{results['loadavg_1min_before']:.1f} before, {results['loadavg_1min_after']:.1f} after")
    for name, r in results["commands"].items():
        goal = f"(goal < {r['goal_s']:g} s)" if r["goal_s"] else ""
        line = f"{name:18s} {r['median_wall_s']:6.3f} s {goal:16s}"
        if "baseline_median_wall_s" in r:
            base = r["baseline_median_wall_s"]
            line += f" baseline {base:6.3f} s ({r['median_wall_s'] / base:.2f}x)"
        if "import_s" in r:
            loads = ", ".join(w for w, on in r["loads"].items() if on) or "none of the watched"
            line += f" imports {r['import_s']:.3f} s, {r['modules']} modules; loads {loads}"
        print(line)


def main(argv_=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=7, help="fresh processes per command (median), >= 3")
    ap.add_argument("--json", default="bench-out/startup.json", help="where to write figures")
    ap.add_argument("--baseline", help="another checkout to time alongside, run by run (e.g. the main branch)")
    args = ap.parse_args(argv_)
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
