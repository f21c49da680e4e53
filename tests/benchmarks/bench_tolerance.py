"""Tolerance benchmark: 10,000 Monte Carlo builds (and the 64 corners) on one core.

Times :func:`emulate.analog.tolerance.monte_carlo` on the balanced 10k / 10n twin-T
(f0 = 1/(2 pi R C) = 1591.5 Hz, Analog Devices MT-225) with 1 % resistors and
5 % capacitors, uniform; and, separately, the trim sizing.  One core: the thread
counts of numba, OpenMP and OpenBLAS are set to 1 before numpy is imported.
Reports the median of --repeats runs (>= 3) and each stage's share (cProfile with
--profile). Target: 10,000 draws in 2 s or less. Writes JSON (--json, default
bench-out/tolerance.json).

Run: python3 tests/benchmarks/bench_tolerance.py [--draws 10000] [--repeats 5]
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

from emulate.analog import tolerance  # noqa: E402
from emulate.analog.networks import TwinT  # noqa: E402

TARGET_S = 2.0


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
    args = parser.parse_args()
    repeats = max(3, args.repeats)
    nominal = TwinT.balanced(1591.549430919, r_ohms=10e3)
    tolerances = tolerance.Tolerances(0.01, 0.05)
    tolerance.monte_carlo(nominal, tolerances, draws=100)  # warm up imports and caches
    run = lambda: tolerance.monte_carlo(nominal, tolerances, draws=args.draws, seed=1)  # noqa: E731
    mc_s, result = timed(run, repeats)
    trim_s, trim = timed(lambda: tolerance.suggest_trim(result), repeats)
    figures = {
        "draws": args.draws, "repeats": repeats, "threads": 1,
        "monte_carlo_s": mc_s, "per_draw_us": 1e6 * mc_s / args.draws, "trim_s": trim_s,
        "target_s": TARGET_S, "meets_target": mc_s <= TARGET_S,
        "depth_db_p50": result.as_dict()["depth_db_p50"], "trim": trim.describe(),
    }
    print(f"monte carlo: {args.draws} draws in {mc_s:.3f} s (median of {repeats}; "
          f"{figures['per_draw_us']:.1f} us a draw; target <= {TARGET_S} s: "
          f"{'met' if figures['meets_target'] else 'MISSED'})")
    print(f"trim sizing + trimmed measurement: {trim_s:.3f} s")
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
