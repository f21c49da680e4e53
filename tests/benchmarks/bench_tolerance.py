"""Tolerance benchmark: Monte Carlo builds on one core; time and peak memory up to 1M draws.

Times :func:`emulate.analog.tolerance.monte_carlo` on the balanced 10k / 10n twin-T
(f0 = 1/(2 pi R C) = 1591.5 Hz, Analog Devices MT-225) with 1 % resistors and
5 % capacitors, uniform; and, separately, the trim sizing.  One core: the thread
counts of numba, OpenMP and OpenBLAS are set to 1 before numpy is imported.
Reports the median of --repeats runs (>= 3) and each stage's share (cProfile with
--profile). Target: 10,000 draws in 0.5 s or less. Then each of --scale counts
(default 100,000 and 1,000,000) runs once in a fresh process, which reports its
time and its peak resident memory (target: under 300 MB for any count, time
linear in the count). Writes JSON (--json, default bench-out/tolerance.json).

Run: python3 tests/benchmarks/bench_tolerance.py [--draws 10000] [--repeats 5] [--scale 100000 1000000]
"""

from __future__ import annotations

import os

for _name in ("NUMBA_NUM_THREADS", "OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_name] = "1"

import argparse  # noqa: E402
import cProfile  # noqa: E402
import json  # noqa: E402
import pstats  # noqa: E402
import statistics  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

from emulate.analog import tolerance, trim  # noqa: E402
from emulate.analog.networks import TwinT  # noqa: E402

TARGET_S = 0.5
TARGET_PEAK_MB = 300.0
_SCALE_RUN = """
import json, os, resource, sys, time
for name in ("NUMBA_NUM_THREADS", "OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[name] = "1"
from emulate.analog import tolerance
from emulate.analog.networks import TwinT
nominal = TwinT.balanced(1591.549430919, r_ohms=10e3).replace(bootstrap=0.75)
start = time.perf_counter()
tolerance.monte_carlo(nominal, tolerance.Tolerances(0.01, 0.05), draws=int(sys.argv[1]), seed=1)
seconds = time.perf_counter() - start
print(json.dumps({"draws": int(sys.argv[1]), "seconds": seconds,
                  "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024}))
"""


def scale_run(draws: int) -> dict:
    """One Monte Carlo run of ``draws`` (active network, divider varied) in a fresh process."""
    import subprocess
    import sys

    out = subprocess.run([sys.executable, "-c", _SCALE_RUN, str(draws)], check=True, capture_output=True,
                         text=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def timed(function, repeats: int) -> tuple[float, object]:
    times, value = [], None
    for _ in range(repeats):
        start = time.perf_counter()
        value = function()
        times.append(time.perf_counter() - start)
    return statistics.median(times), value


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--draws", type=int, default=tolerance.DEFAULT_DRAWS)
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument("--json", default="bench-out/tolerance.json", help="where to write the figures")
    parser.add_argument("--profile", action="store_true", help="print where the time goes")
    parser.add_argument("--scale", type=int, nargs="*", default=[100_000, 1_000_000],
                        help="draw counts run once each in a fresh process for time and peak memory")
    args = parser.parse_args()
    repeats = max(3, args.repeats)
    nominal = TwinT.balanced(1591.549430919, r_ohms=10e3)
    tolerances = tolerance.Tolerances(0.01, 0.05)
    tolerance.monte_carlo(nominal, tolerances, draws=100)  # warm up imports and caches
    run = lambda: tolerance.monte_carlo(nominal, tolerances, draws=args.draws, seed=1)  # noqa: E731
    mc_s, result = timed(run, repeats)
    trim_s, trimmed = timed(lambda: trim.suggest_trim(result), repeats)
    figures = {
        "draws": args.draws, "repeats": repeats, "threads": 1,
        "monte_carlo_s": mc_s, "per_draw_us": 1e6 * mc_s / args.draws, "trim_s": trim_s,
        "target_s": TARGET_S, "meets_target": mc_s <= TARGET_S,
        "depth_below_passband_db_p50": result.as_dict()["depth_below_passband_db_p50"], "trim": trimmed.describe(),
    }
    print(f"monte carlo: {args.draws} draws in {mc_s:.3f} s (median of {repeats}; "
          f"{figures['per_draw_us']:.1f} us a draw; target <= {TARGET_S} s: "
          f"{'met' if figures['meets_target'] else 'MISSED'})")
    print(f"trim sizing + trimmed measurement: {trim_s:.3f} s")
    figures["scale"] = []
    for count in args.scale:
        row = scale_run(count)
        row["us_per_draw"] = 1e6 * row["seconds"] / count
        row["meets_memory_target"] = row["peak_mb"] < TARGET_PEAK_MB
        figures["scale"].append(row)
        print(f"scale: {count} draws (active, divider varied) in {row['seconds']:.2f} s "
              f"({row['us_per_draw']:.1f} us a draw), peak resident {row['peak_mb']:.0f} MB "
              f"(target < {TARGET_PEAK_MB:.0f} MB: {'met' if row['meets_memory_target'] else 'MISSED'})")
    if args.profile:
        profile = cProfile.Profile()
        profile.runcall(run)
        stream = pstats.Stats(profile).sort_stats("cumulative")
        stream.print_stats(15)
    out = Path(args.json)
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps(figures, indent=2))
    print(f"wrote {out}")


if __name__ == "__main__":
    main()
