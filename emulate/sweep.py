"""Sweep the notch across takes: every take at every setting, reels, a summary, a pick.

The pipeline, top to bottom:

1. settings: one notch frequency per step (geometric steps from ``from_hz`` to
   ``to_hz``, or an explicit list), the rest held (series, impedance, Q, mix,
   source, load); each is designed and snapped to preferred values
   (:func:`emulate.design.design_twin_t`), so the as-built notch is what these
   parts give, not the target;
2. jobs: take x setting, rendered in parallel over the machine's cores
   (processes: each job designs its processor, streams the take through it into
   the output folder, and measures dry against wet);
3. measures per job: sibilance-band reduction (the band the finder found in
   that take), loudness change (ITU-R BS.1770 via pyloudnorm) and intelligibility
   cost (ANSI S3.5-1997 band importance; :func:`emulate.speech.intelligibility_cost`);
4. reels: per take, the most sibilant few seconds dry, then at each setting in
   order, separated by short silences;
5. summary: per setting the means over takes, and a pick with its reason.

The pick maximises the *relative* reduction: how much further the sibilance band
falls than the programme as a whole (sibilance-band reduction plus loudness
change), because the user can make up overall level afterwards but not the
balance. Ties within ``TIE_DB`` go to the cheaper setting in speech importance.
This rule is our own judgement, not a published method.
"""

from __future__ import annotations

import math
import os
from concurrent.futures import Future, ProcessPoolExecutor
from dataclasses import asdict, dataclass, field
from pathlib import Path

import numpy as np

from emulate import audio, emulation, files, speech
from emulate.design import design_twin_t
from emulate.errors import BadValueError
from emulate.response import measure
from emulate.validate import check_range

TIE_DB = 0.25  # relative reductions this close count as equal (a judgement call)
REEL_GAP_S = 0.6
REEL_EXCERPT_S = 3.0
MAX_STEPS = 64


@dataclass(frozen=True)
class SweepPlan:
    """What to sweep: the notch frequencies and what stays the same."""

    notches_hz: tuple[float, ...]
    q: float | None = None
    series: str = "E24"
    cap_series: str = "E12"
    impedance_ohms: float | None = None
    mix: float = 1.0
    source_ohms: float = 0.0
    load_ohms: float = math.inf

    def design(self, notch_hz: float):
        """The design (ideal and as built) for one setting."""
        return design_twin_t(notch_hz, q=self.q, series=self.series, cap_series=self.cap_series,
                             impedance_ohms=self.impedance_ohms, source_ohms=self.source_ohms,
                             load_ohms=self.load_ohms)

    def network(self, notch_hz: float):
        """The as-built network for one setting, at the plan's mix."""
        return self.design(notch_hz).built.replace(mix=self.mix)


def notch_steps(from_hz: float, to_hz: float, steps: int) -> tuple[float, ...]:
    """``steps`` notch frequencies in equal ratios from ``from_hz`` to ``to_hz`` (both included).

    Example
    -------
    >>> [round(f) for f in notch_steps(4000, 8000, 3)]
    [4000, 5657, 8000]
    """
    check_range("sweep steps", steps, 1, MAX_STEPS)
    check_range("sweep start (Hz)", from_hz, 20.0, 30e3)
    check_range("sweep end (Hz)", to_hz, 20.0, 30e3)
    if steps == 1:
        return (float(from_hz),)
    return tuple(float(f) for f in np.geomspace(from_hz, to_hz, int(steps)))


@dataclass(frozen=True)
class JobResult:
    take: str
    notch_target_hz: float
    notch_hz: float
    path: str
    sibilance_reduction_db: float
    loudness_change_db: float
    intelligibility_cost: float


@dataclass
class SweepResult:
    plan: SweepPlan
    jobs: list[JobResult]
    rows: list[dict]
    pick: dict
    reels: dict[str, str] = field(default_factory=dict)

    def as_dict(self) -> dict:
        return {"plan": asdict(self.plan), "rows": self.rows, "pick": self.pick, "reels": self.reels,
                "jobs": [asdict(job) for job in self.jobs]}


def setting_label(notch_hz: float, plan: SweepPlan) -> str:
    """A file-name-safe label that says the setting, e.g. ``notch4520Hz-q0.25-mix1.00``."""
    q = 0.25 if plan.q is None else plan.q
    return f"notch{notch_hz:.0f}Hz-q{q:g}-mix{plan.mix:.2f}"


def run_sweep(takes, plan: SweepPlan, out_dir, *, workers: int | None = None, progress=None) -> SweepResult:
    """Render every take at every setting into ``out_dir``; reels and summary beside them.

    ``progress(n)`` is called with the frames finished, across the whole job
    (takes x settings). ``workers`` defaults to the machine's cores; designs,
    sibilance bands, renders and reels all run on the same pool.
    """
    takes = [Path(t) for t in takes]
    frames = _check_takes(takes)
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    with _executor(workers, len(takes) * len(plan.notches_hz)) as pool:
        networks = list(pool.map(plan.network, plan.notches_hz))
        bands = dict(zip(takes, pool.map(_sibilance_band, takes)))
        jobs = [(t, target, net, bands[t], out_dir / f"{t.stem}--{setting_label(target, plan)}.wav")
                for t in takes for target, net in zip(plan.notches_hz, networks)]
        futures = [pool.submit(_render_job, *job) for job in jobs]
        results = []
        for future, job in zip(futures, jobs):
            results.append(future.result())
            if progress is not None:
                progress(frames[job[0]])
        mine = [[r for r in results if r.take == str(t)] for t in takes]
        reels = dict(zip(map(str, takes), map(str, pool.map(write_reel, takes, mine, [out_dir] * len(takes)))))
    rows = summarise(results, plan)
    return SweepResult(plan, results, rows, pick_setting(rows), reels)


class _Inline:
    """The executor interface, run in this process (one worker: no start-up cost)."""

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return False

    map = staticmethod(map)

    @staticmethod
    def submit(function, *args) -> Future:
        future = Future()
        future.set_result(function(*args))
        return future


def _executor(workers: int | None, jobs: int):
    workers = max(1, min(workers or os.cpu_count() or 1, jobs))
    return _Inline() if workers == 1 else ProcessPoolExecutor(max_workers=workers)


def _check_takes(takes) -> dict:
    """Frames per take; one clear error for no takes, clashing names or unreadable files."""
    if not takes:
        raise BadValueError("no takes given; give one or more audio files")
    stems = [t.stem for t in takes]
    if len(set(stems)) != len(stems):
        raise BadValueError(f"takes need distinct file names (their outputs are named after them): {stems}")
    return {take: audio.read_info(take).frames for take in takes}


def _sibilance_band(take: Path) -> tuple[float, float]:
    x, fs = audio.read_all(take)
    report = speech.find_sibilance(x, fs)
    return report.band_hz if report.usable else report.search_band_hz


def _render_job(take: Path, target_hz: float, network, band_hz, out_path: Path) -> JobResult:
    """One take at one setting (runs in a worker process)."""
    processor = emulation.processor_for(network)
    audio.render_file(take, out_path, processor)
    (dry, fs), (wet, _) = audio.read_all(take), audio.read_all(out_path)
    return JobResult(
        take=str(take), notch_target_hz=target_hz, notch_hz=measure(network.response).notch_hz,
        path=str(out_path),
        sibilance_reduction_db=speech.sibilance_reduction_db(dry, wet, fs, band_hz),
        loudness_change_db=speech.loudness_change_db(dry, wet, fs),
        intelligibility_cost=speech.intelligibility_cost_of_takes(dry, wet, fs))


MEASURES = ("sibilance_reduction_db", "loudness_change_db", "intelligibility_cost")


def summarise(results: list[JobResult], plan: SweepPlan) -> list[dict]:
    """One row per setting: the as-built notch and the means of each measure over takes."""
    rows = []
    for target in plan.notches_hz:
        mine = [r for r in results if r.notch_target_hz == target]
        row = {"setting": setting_label(target, plan), "notch_target_hz": target,
               "notch_hz": mine[0].notch_hz, "q": 0.25 if plan.q is None else plan.q, "mix": plan.mix}
        row |= {name: float(np.mean([getattr(r, name) for r in mine])) for name in MEASURES}
        row["relative_reduction_db"] = row["sibilance_reduction_db"] + row["loudness_change_db"]
        rows.append(row)
    return rows


def pick_setting(rows: list[dict]) -> dict:
    """The largest relative reduction (ties to the lower speech cost), with why."""
    best_relative = max(r["relative_reduction_db"] for r in rows)
    near = [r for r in rows if r["relative_reduction_db"] >= best_relative - TIE_DB]
    best = min(near, key=lambda r: r["intelligibility_cost"])
    why = (f"the sibilance band falls {best['relative_reduction_db']:.1f} dB more than the programme "
           f"({best['sibilance_reduction_db']:.1f} dB, loudness {best['loudness_change_db']:+.1f} dB), "
           f"the most of the {len(rows)} settings"
           + (f" within {TIE_DB:g} dB, and at the lowest speech cost ({best['intelligibility_cost']:.1%})"
              if len(near) > 1 else f"; speech cost {best['intelligibility_cost']:.1%}"))
    return {"setting": best["setting"], "notch_hz": best["notch_hz"],
            "notch_target_hz": best["notch_target_hz"], "reason": why}


def write_reel(take: Path, results: list[JobResult], out_dir: Path) -> Path:
    """Dry excerpt, then the same excerpt at each setting in order, with silences between."""
    dry, fs = audio.read_all(take)
    start, stop = speech.most_sibilant_excerpt(dry, fs, seconds=min(REEL_EXCERPT_S, len(dry) / fs))
    gap = np.zeros((int(REEL_GAP_S * fs), dry.shape[1]))
    pieces = [dry[start:stop]]
    for result in sorted(results, key=lambda r: r.notch_target_hz):
        wet, _ = audio.read_all(result.path)
        pieces += [gap, wet[start:stop]]
    reel = out_dir / f"reel--{take.stem}.wav"
    audio.write_array(reel, np.concatenate(pieces), fs, subtype=audio.read_info(take).subtype)
    return reel


def rows_as_csv(rows: list[dict]) -> str:
    """The summary table as CSV text (header line, one line per setting)."""
    columns = list(rows[0])
    lines = [",".join(columns)]
    lines += [",".join(_csv_cell(row[c]) for c in columns) for row in rows]
    return "\n".join(lines) + "\n"


def _csv_cell(value) -> str:
    return f"{value:.6g}" if isinstance(value, float) else str(value)


def write_summary(result: SweepResult, out_dir) -> tuple[Path, Path]:
    """``summary.csv`` and ``summary.json`` in ``out_dir``, atomically."""
    import json

    out_dir = Path(out_dir)
    csv_path, json_path = out_dir / "summary.csv", out_dir / "summary.json"
    files.write_text(csv_path, rows_as_csv(result.rows))
    files.write_text(json_path, json.dumps(result.as_dict(), indent=2, default=str))
    return csv_path, json_path
