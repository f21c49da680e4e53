"""Sibilance-finder benchmark: real-time factor on a long synthetic take.

Generates a --seconds (default 60) 48 kHz stereo voice-like take with sibilant bursts at
6 kHz (:func:`emulate.voice.synth.voice_like_take`), then times :func:`emulate.voice.sibilance.find_sibilance`
on it --repeats times (default 7, at least 5) and reports the median wall time, the
real-time factor (audio seconds per wall second; target >= 100) and what the finder found.
Also times :func:`emulate.voice.sibilance.most_sibilant_excerpt` once. Writes JSON (--json, default
bench-out/sibilance.json).

Run: python3 tests/benchmarks/bench_sibilance.py [--seconds 60] [--repeats 7] [--json PATH]
"""

from __future__ import annotations

import argparse
import json
import statistics
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from emulate.voice.sibilance import find_sibilance, most_sibilant_excerpt
from emulate.voice.synth import voice_like_take

FS_HZ = 48000
SIBILANCE_HZ = 6000.0
TARGET_RTF = 100.0


def _median_seconds(func, repeats: int) -> float:
    """Median wall time of ``func()`` over ``repeats`` runs, after one warm-up run."""
    func()
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        func()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seconds", type=float, default=60.0, help="take length in seconds")
    parser.add_argument("--repeats", type=int, default=7, help="timed runs (at least 5)")
    parser.add_argument(
        "--json", type=Path, default=ROOT / "bench-out" / "sibilance.json", help="JSON output path"
    )
    args = parser.parse_args(argv)
    repeats = max(args.repeats, 5)

    take = voice_like_take(FS_HZ, args.seconds, pitch_hz=120, sibilance_hz=SIBILANCE_HZ, channels=2)
    find_s = _median_seconds(lambda: find_sibilance(take, FS_HZ), repeats)
    t0 = time.perf_counter()
    most_sibilant_excerpt(take, FS_HZ, 3.0)
    excerpt_s = time.perf_counter() - t0
    report = find_sibilance(take, FS_HZ)

    figures = {
        "take_seconds": args.seconds,
        "fs_hz": FS_HZ,
        "channels": 2,
        "repeats": repeats,
        "find_sibilance_median_s": find_s,
        "real_time_factor": args.seconds / find_s,
        "target_real_time_factor": TARGET_RTF,
        "meets_target": args.seconds / find_s >= TARGET_RTF,
        "most_sibilant_excerpt_s": excerpt_s,
        "planted_sibilance_hz": SIBILANCE_HZ,
        "found_peak_hz": report.peak_hz,
        "found_band_hz": list(report.band_hz),
        "sibilant_fraction": report.sibilant_fraction,
        "confidence": report.confidence,
    }
    for key, value in figures.items():
        print(f"{key:28s} {value:.4g}" if isinstance(value, float) else f"{key:28s} {value}")
    args.json.parent.mkdir(parents=True, exist_ok=True)
    args.json.write_text(json.dumps(figures, indent=2) + "\n")
    print(f"wrote {args.json}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
