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
measured too, as the floor under every figure. Takes are invented: a 1-second 48 kHz
stereo 24-bit sine at 6 kHz, in a temporary folder.

Writes JSON (--json, default bench-out/startup.json).

Run: python3 tests/benchmarks/bench_startup.py [--repeats 7]
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

import numpy as np
import soundfile as sf

ROOT = Path(__file__).resolve().parents[2]
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


def environment(work: Path) -> dict:
    return dict(os.environ, PYTHONPATH=str(ROOT), EMULATE_PRESETS_DIR=str(work / "presets"))


def wall_times(args: list[str], work: Path, repeats: int) -> list[float]:
    env = environment(work)
    subprocess.run(argv(args), cwd=work, env=env, check=True, capture_output=True)  # warm caches
    times = []
    for _ in range(repeats):
        for leftover in work.glob("*.png"):
            leftover.unlink()
        (work / "out.wav").unlink(missing_ok=True)
        t = time.perf_counter()
        subprocess.run(argv(args), cwd=work, env=env, check=True, capture_output=True)
        times.append(time.perf_counter() - t)
    return times


def imports(args: list[str], work: Path) -> dict:
    """Total import time (s) and which watched packages load, from ``-X importtime``."""
    for leftover in work.glob("*.png"):
        leftover.unlink()
    (work / "out.wav").unlink(missing_ok=True)
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
        t = np.arange(48000) / 48000
        sf.write(work / "take.wav", 0.3 * np.column_stack([np.sin(2 * np.pi * 6000 * t)] * 2), 48000,
                 subtype="PCM_24")
        results = {"repeats": args.repeats, "loadavg_1min_before": os.getloadavg()[0], "commands": {}}
        for name, cmd in commands(work).items():
            times = wall_times(cmd, work, args.repeats)
            goal = GOALS_S.get(name, PLOT_GOAL_S if "--plot" in name else None)
            entry = {"median_wall_s": statistics.median(times), "runs_s": times, "goal_s": goal}
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
        if "import_s" in r:
            loads = ", ".join(w for w, on in r["loads"].items() if on) or "none of the watched"
            line += f" imports {r['import_s']:.3f} s, {r['modules']} modules; loads {loads}"
        print(line)


def main(argv_=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=7, help="fresh processes per command (median), >= 3")
    ap.add_argument("--json", default="bench-out/startup.json", help="where to write figures")
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
