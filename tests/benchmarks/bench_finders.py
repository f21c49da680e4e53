"""Finders benchmark: the controlled grids' tables (sibilance, hum, resonance) and memory on long takes.

Tables (the issue's targets beside each):
- sibilance (``tests/sibilance_grid.py``): clearly audible cases found with the peak within
  3 % (target >= 95 %), by centre and level and by background; negative controls reported
  (target none);
- hum (``tests/hum_grid.py``): found with the fundamental within 0.05 Hz, by frequency and
  level, worst error; clean takes reported (target none);
- resonance (``tests/resonance_grid.py``): frequency within 2 % and Q within 30 % of the
  filter actually applied, by centre and Q, and frequency-only, each case read as the finder
  advises (its 30 s take, and where its report asks for them further takes, pooled:
  ``resonance_grid.read_as_advised``); the same on one take each; the misses; how the one-take
  errors compare with the spreads stated; controls reported (target none).
Cost: the resonance finder's time on one take, median of 3 in a fresh interpreter: 30 s grid takes without
a peak and with a ringing one at 100 Hz and 630 Hz, and continuous room tone (noise alone) of
3 s and 5 s, where the whole take is quiet and the fits have most to do; with ``--against REV``
also the finder as it was at git revision REV, in the same run, and the ratio.
Memory: peak resident memory (ru_maxrss, in a fresh interpreter) of each finder on a take
file of --short and --long minutes (a 30 s invented take repeated); the target is no growth
with the take's length.

``--seed-offset N`` reads the resonance grid and its controls with every seed moved by N: the
same cases on takes the finder was not tuned on (a fault on the grid's own seeds can hide).
``--stride N`` runs every N-th grid case (the whole grids take long on a shared machine);
choose N coprime with 2, 3 and 4 (e.g. 7, 11) so that every background, rate and tilt occurs.
Figures measured on a loaded machine are indicative only. Writes JSON (--json, default
bench-out/finders.json).

Run: python3 tests/benchmarks/bench_finders.py [--stride 1] [--only sibilance,hum,resonance,cost,memory]
    [--against REV] [--seed-offset N]
"""

from __future__ import annotations

import argparse
import collections
import dataclasses
import json
import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

import hum_grid  # noqa: E402
import resonance_grid  # noqa: E402
import sibilance_grid  # noqa: E402


def _share(ok: int, n: int) -> str:
    return f"{ok}/{n} ({100.0 * ok / n:.0f} %)" if n else "-"


def _table(title: str, rows: dict, header: str) -> None:
    print(f"\n{title}\n  {header:30s} found")
    for key, (ok, n) in sorted(rows.items()):
        print(f"  {str(key):30s} {_share(ok, n)}")


def bench_sibilance(stride: int) -> dict:
    from emulate.voice.sibilance import find_sibilance

    by_cell, by_background, errors = collections.defaultdict(lambda: [0, 0]), collections.defaultdict(lambda: [0, 0]), []
    misses = []
    for case in sibilance_grid.grid_cases()[::stride]:
        x, margin = sibilance_grid.make_case(case)
        if not sibilance_grid.audible(margin):
            continue
        ok, error = sibilance_grid.judge(find_sibilance(x, case.fs), case)
        for table, key in ((by_cell, f"{case.centre_hz:g} Hz, {case.level_db:+g} dB"), (by_background, case.background)):
            table[key][0] += ok
            table[key][1] += 1
        if ok:
            errors.append(error)
        else:
            misses.append(case.name)
    controls = sibilance_grid.negative_controls()
    reported = [c.name for c in controls if not sibilance_grid.judge(find_sibilance(*_take(c), ), c)[0]]
    found, audible = sum(v[0] for v in by_cell.values()), sum(v[1] for v in by_cell.values())
    _table("sibilance grid: clearly audible cases, peak within 3 % (target >= 95 %)", by_cell, "centre, level")
    _table("  by background", by_background, "background")
    worst = float(np.nanmax(np.abs(errors))) if errors else float("nan")
    print(f"  all: {_share(found, audible)}; worst peak error of those found: {100 * worst:.1f} %")
    print(f"  negative controls reported: {len(reported)} of {len(controls)} (target 0)")
    return {"found": found, "audible": audible, "negative_controls": len(controls), "controls_reported": reported,
            "misses": misses}


def _take(case):
    x, _ = sibilance_grid.make_case(case)
    return x, case.fs


def bench_hum(stride: int) -> dict:
    from emulate.voice.hum import find_hum

    cells, errors, misses = collections.defaultdict(lambda: [0, 0]), [], []
    for case in hum_grid.grid_cases()[::stride]:
        ok, error = hum_grid.judge(find_hum(hum_grid.make_case(case), case.fs), case)
        key = f"{case.fundamental_hz:g} Hz, {case.level_dbfs:+g} dBFS"
        cells[key][0] += ok
        cells[key][1] += 1
        errors.append(error)
        if not ok:
            misses.append(f"{case.name}: error {error:.3f} Hz")
    reported = [c.name for c in hum_grid.controls() if find_hum(hum_grid.make_case(c), c.fs).found]
    found, total = sum(v[0] for v in cells.values()), sum(v[1] for v in cells.values())
    _table("hum grid: fundamental within 0.05 Hz (with and without harmonics)", cells, "frequency, level")
    finite = [abs(e) for e in errors if np.isfinite(e)]
    print(f"  all: {_share(found, total)}; worst error found: {max(finite) if finite else float('nan'):.3f} Hz")
    print(f"  clean takes reported: {len(reported)} of {len(hum_grid.controls())} (target 0)")
    for miss in misses:
        print(f"  miss: {miss}")
    return {"found": found, "cases": total, "misses": misses, "clean_reported": reported}


def _reseeded(cases, offset: int) -> list:
    """``cases`` with every seed moved by ``offset``."""
    return [dataclasses.replace(case, seed=case.seed + offset) for case in cases]


def bench_resonance(stride: int, seed_offset: int = 0) -> dict:
    from emulate.voice.resonance.finder import find_resonance

    cells, freq_only, rows = collections.defaultdict(lambda: [0, 0]), collections.defaultdict(lambda: [0, 0]), []
    controls = _reseeded(resonance_grid.controls(), seed_offset)
    for case in _reseeded(resonance_grid.grid_cases()[::stride], seed_offset):
        report, takes = resonance_grid.read_as_advised(case)
        ok, f_err, q_err = resonance_grid.judge(report, case)
        cells[f"{case.centre_hz:g} Hz, Q {case.q:g}"][0] += ok
        cells[f"{case.centre_hz:g} Hz, Q {case.q:g}"][1] += 1
        near = bool(np.isfinite(f_err) and abs(f_err) <= resonance_grid.FREQ_REL)
        freq_only[f"{case.centre_hz:g} Hz"][0] += near
        freq_only[f"{case.centre_hz:g} Hz"][1] += 1
        one = takes[0]
        one_ok, one_f_err, one_q_err = resonance_grid.judge(one, case)
        spreads = (one.peak.frequency_spread, one.peak.q_spread) if one.found else (np.nan, np.nan)
        rows.append({"case": case.name, "passes": ok, "f_err": f_err, "q_err": q_err, "takes": len(takes),
                     "one_take_passes": one_ok, "one_f_err": one_f_err, "one_q_err": one_q_err,
                     "f_spread": spreads[0], "q_spread": spreads[1], "from_ring": one.found and one.peak.from_ring})
    reported = [c.name for c in controls if find_resonance(resonance_grid.make_case(c), c.fs).found]
    found, total = sum(v[0] for v in cells.values()), sum(v[1] for v in cells.values())
    _table(f"resonance grid: frequency within 2 % and Q within 30 % (takes of {resonance_grid.SECONDS:g} s, "
           f"more where the report asks for them; seeds moved by {seed_offset})", cells, "centre, Q")
    _table("  frequency within 2 % (Q aside)", freq_only, "centre")
    advised = [row for row in rows if row["takes"] > 1]
    print(f"  all: {_share(found, total)}; controls reported: {len(reported)} of "
          f"{len(controls)} (target 0)")
    print(f"  one take each: {_share(sum(row['one_take_passes'] for row in rows), len(rows))}; "
          f"{len(advised)} cases asked for more takes ({sum(row['takes'] - 1 for row in advised)} in all, "
          f"at most {max((row['takes'] for row in rows), default=1)} a case), met so "
          f"{sum(row['passes'] for row in advised)} of {len(advised)}")
    for row in rows:
        if not row["one_take_passes"]:
            print(f"  one-take miss: {row['case']}: frequency {row['one_f_err']:+.3f}, Q {row['one_q_err']:+.2f} "
                  f"(spread stated: {row['f_spread']:.3f}, {row['q_spread']:.2f}); with {row['takes']} takes "
                  f"{row['f_err']:+.3f}, {row['q_err']:+.2f}")
        elif not row["passes"]:
            print(f"  miss with {row['takes']} takes: {row['case']}: frequency {row['f_err']:+.3f}, "
                  f"Q {row['q_err']:+.2f}")
    _spread_summary(rows)
    return {"found": found, "cases": total, "rows": rows, "controls_reported": reported}


def _spread_summary(rows) -> None:
    """How the readings' errors compare with the spreads the reports state (frequency_spread and
    q_spread: the least the quiet spectrum allows, emulate.voice.resonance.spread, or the scatter of
    a ring's decays), by centre and for readings from the ring apart. An RMS ratio near 1 means the
    stated spread is what the readings do; under 1, it is cautious; over 1, they scatter (or lean)
    more than it says."""
    print("  errors over the stated spread, RMS (frequency, Q), readings:")
    groups = collections.defaultdict(list)
    for r in rows:
        if np.isfinite(r["one_f_err"]) and np.isfinite(r["f_spread"]):
            where = "from the ring" if r["from_ring"] else r["case"].split()[0].replace("fc=", "spectrum, ") + " Hz"
            groups[where].append((r["one_f_err"] / r["f_spread"], r["one_q_err"] / r["q_spread"]))
    for where, z in sorted(groups.items(), key=lambda item: (item[0] == "from the ring", len(item[0]), item[0])):
        rms = np.sqrt(np.mean(np.square(z), axis=0))
        print(f"    {where:<22} {rms[0]:5.2f} {rms[1]:5.2f}  {len(z)}")


_TIME_TAKES = """
import json, statistics, sys, time
from pathlib import Path
import numpy as np
try:  # a package since 2026-12-04, one module before
    from emulate.voice.resonance.finder import find_resonance
except ImportError:
    from emulate.voice.resonance import find_resonance
times = {}
for path in sorted(Path(sys.argv[1]).glob("*.npy")):
    x, runs = np.load(path), []
    for _ in range(3):
        start = time.perf_counter()
        find_resonance(x, 48000)
        runs.append(time.perf_counter() - start)
    times[path.stem] = statistics.median(runs)
print(json.dumps(times))
"""


def _times(package_root: Path, takes_dir: Path) -> dict:
    """The resonance finder's median time (of 3) on each take in ``takes_dir``, s, with the
    ``emulate`` package found under ``package_root`` (a fresh interpreter, so that two
    revisions of the package never meet)."""
    env = {**os.environ, "PYTHONPATH": str(package_root)}
    run = subprocess.run([sys.executable, "-c", _TIME_TAKES, str(takes_dir)], check=True, capture_output=True,
                         text=True, env=env, cwd=package_root)
    return json.loads(run.stdout)


def bench_cost(against: str | None) -> dict:
    fs, rng = 48000, np.random.default_rng(5)
    case = resonance_grid.Case
    takes = {"30 s, no peak": resonance_grid.make_case(resonance_grid.controls()[-1]),
             "30 s, +10 dB Q 20 at 100 Hz": resonance_grid.make_case(case(100.0, 10.0, 20.0, fs, 110.0)),
             "30 s, +10 dB Q 20 at 630 Hz": resonance_grid.make_case(case(630.0, 10.0, 20.0, fs, 110.0)),
             "room tone 3 s": 0.05 * rng.standard_normal(3 * fs),
             "room tone 5 s": 0.05 * rng.standard_normal(5 * fs)}
    with tempfile.TemporaryDirectory() as scratch:
        takes_dir, old_root = Path(scratch, "takes"), Path(scratch, "old")
        takes_dir.mkdir()
        for i, x in enumerate(takes.values()):
            np.save(takes_dir / f"{i}.npy", x)
        roots = {"now": ROOT}
        if against:  # the package as it was at git revision ``against``, whatever its shape then
            old_root.mkdir()
            archive = subprocess.run(["git", "-C", str(ROOT), "archive", against, "emulate"], check=True,
                                     capture_output=True).stdout
            subprocess.run(["tar", "-x", "-C", str(old_root)], input=archive, check=True)
            roots[against] = old_root
        measured = {label: _times(root, takes_dir) for label, root in roots.items()}
    rows = {name: {label: measured[label][str(i)] for label in roots} for i, name in enumerate(takes)}
    print("\nresonance finder's cost, s (median of 3, a fresh interpreter per revision)")
    for name, row in rows.items():
        ratio = f"  ({against} / now: {row[against] / row['now']:.2f})" if against else ""
        print(f"  {name:30s} " + "  ".join(f"{label} {t:6.2f}" for label, t in row.items()) + ratio)
    return rows


_MEASURE = """
import resource, sys
from emulate.voice.takes import TakeSource
from emulate.voice import sibilance, hum
from emulate.voice.resonance import finder as resonance
finder = {"sibilance": sibilance.find_sibilance, "hum": hum.find_hum, "resonance": resonance.find_resonance}[sys.argv[1]]
before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
finder(TakeSource.from_file(sys.argv[2]))
print(before, resource.getrusage(resource.RUSAGE_SELF).ru_maxrss)
"""


def _long_take(path: Path, minutes: float) -> None:
    """A take file of ``minutes``: a 30 s invented take with 50 Hz hum, repeated, written in blocks."""
    import soundfile as sf

    from emulate.voice.synth import voice_like_take

    fs = 48000
    piece = voice_like_take(fs, 30.0, pitch_hz=130, sibilance_hz=6000, seed=7)[:, 0]
    piece = piece + 0.002 * np.sin(2 * np.pi * 50.0 * np.arange(piece.size) / fs)
    with sf.SoundFile(path, "w", fs, 1, subtype="PCM_16") as f:
        for _ in range(round(minutes * 2)):
            f.write(piece)


def bench_memory(short_min: float, long_min: float) -> dict:
    figures = {}
    with tempfile.TemporaryDirectory() as folder:
        paths = {m: Path(folder) / f"take-{m:g}min.wav" for m in (short_min, long_min)}
        for minutes, path in paths.items():
            _long_take(path, minutes)
        print("\npeak resident memory (MB) of each finder on a take file, in a fresh interpreter")
        print(f"  {'finder':12s} {'imports':>8s} " + " ".join(f"{m:>7g}min" for m in paths) + "   seconds (long)")
        for name in ("sibilance", "hum", "resonance"):
            peaks, seconds = [], 0.0
            for minutes, path in paths.items():
                t0 = time.perf_counter()
                out = subprocess.run([sys.executable, "-c", _MEASURE, name, str(path)], capture_output=True,
                                     text=True, check=True, cwd=ROOT).stdout.split()
                seconds = time.perf_counter() - t0
                base, peak = (int(v) / 1024 for v in out)
                peaks.append(peak)
            figures[name] = {"imports_mb": base, "peak_mb": dict(zip(map(str, paths), peaks)), "long_seconds": seconds}
            print(f"  {name:12s} {base:8.0f} " + " ".join(f"{p:10.0f}" for p in peaks) + f"   {seconds:.1f}")
    return figures


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--stride", type=int, default=1, help="run every N-th grid case")
    parser.add_argument("--only", default="sibilance,hum,resonance,cost,memory", help="comma-separated parts to run")
    parser.add_argument("--against", help="with cost: also time the resonance finder as at this git revision")
    parser.add_argument("--short", type=float, default=2.0, help="short take for the memory check, minutes")
    parser.add_argument("--long", type=float, default=20.0, help="long take for the memory check, minutes")
    parser.add_argument("--seed-offset", type=int, default=0,
                        help="read the resonance grid and its controls with every seed moved by this")
    parser.add_argument("--json", type=Path, default=ROOT / "bench-out" / "finders.json", help="JSON output path")
    args = parser.parse_args(argv)
    parts = set(args.only.split(","))
    figures = {"stride": args.stride}
    if "sibilance" in parts:
        figures["sibilance"] = bench_sibilance(args.stride)
    if "hum" in parts:
        figures["hum"] = bench_hum(args.stride)
    if "resonance" in parts:
        figures["resonance"] = bench_resonance(args.stride, args.seed_offset)
    if "cost" in parts:
        figures["cost"] = bench_cost(args.against)
    if "memory" in parts:
        figures["memory"] = bench_memory(args.short, args.long)
    args.json.parent.mkdir(parents=True, exist_ok=True)
    args.json.write_text(json.dumps(figures, indent=2, default=float) + "\n")
    print(f"\nwrote {args.json}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
