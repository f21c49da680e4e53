"""Fault benchmark: run the whole fault matrix (tests/fault_matrix.py) and count the outcomes.

Every case runs in a fresh copy of a small workspace through click's CliRunner, in this
process. Counts: cases tried; clean (expected exit and message, one line, nothing lost,
nothing stray, no traceback); traceback (a Python traceback or an "unexpected error"
line); data lost (a file that existed before changed or vanished without --force);
stray output (a partial file, hidden temporary or empty folder left behind); and cases
whose exit status or message differs from what the matrix expects. Also the CPU time of
the whole run. Writes JSON (--json, default bench-out/faults.json); --verbose lists
every case that is not clean.

Run: python3 tests/benchmarks/bench_faults.py [--verbose]
"""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

from fault_matrix import CASES, make_template, run_case  # noqa: E402


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--json", default=str(ROOT / "bench-out" / "faults.json"), help="where to write the figures")
    parser.add_argument("--verbose", action="store_true", help="list every case that is not clean")
    args = parser.parse_args()
    cpu, wall = time.process_time(), time.perf_counter()
    with tempfile.TemporaryDirectory() as folder:
        template = make_template(Path(folder) / "template")
        outcomes = [run_case(case, template, Path(folder) / f"case{i}") for i, case in enumerate(CASES)]
    figures = {
        "cases_tried": len(outcomes),
        "clean": sum(o.clean for o in outcomes),
        "traceback": sum(o.traceback for o in outcomes),
        "data_lost": sum(bool(o.lost) for o in outcomes),
        "stray_output": sum(bool(o.stray) for o in outcomes),
        "unexpected_exit_or_message": sum(not (o.matches and o.one_line) for o in outcomes),
        "commands": sorted({o.case.args[0] for o in outcomes}),
        "injected_disk_full": sum(o.case.inject == "disk_full" for o in outcomes),
        "cpu_s": round(time.process_time() - cpu, 1),
        "wall_s": round(time.perf_counter() - wall, 1),
    }
    for key in ("cases_tried", "clean", "traceback", "data_lost", "stray_output", "unexpected_exit_or_message",
                "injected_disk_full", "cpu_s", "wall_s"):
        print(f"{key:28} {figures[key]}")
    if args.verbose:
        for o in outcomes:
            if not o.clean:
                print(f"- {o.case.name}: exit {o.exit_code} (expected {o.case.exit}), lost {o.lost}, "
                      f"stray {o.stray}\n  {o.output.strip()[:300]}")
    Path(args.json).parent.mkdir(parents=True, exist_ok=True)
    Path(args.json).write_text(json.dumps(figures, indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
