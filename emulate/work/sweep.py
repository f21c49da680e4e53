"""Sweep the notch across takes: every take at every setting, reels, a summary, a pick.

The pipeline, top to bottom:

1. settings: one notch frequency per step (geometric steps from ``from_hz`` to
   ``to_hz``, or an explicit list), the rest held (series, impedance, Q, mix,
   source, load); each is designed and snapped to preferred values
   (:func:`emulate.analog.design.design_twin_t`), so the as-built notch is what these
   parts give, not the target;
2. jobs: take x setting, rendered in parallel over the machine's cores
   (processes: each job designs its processor, streams the take through it into
   the output folder, and measures dry against wet);
3. measures per job: sibilance-band reduction (the band the finder found in
   that take), loudness change (ITU-R BS.1770 via pyloudnorm) and intelligibility
   cost (ANSI S3.5-1997 band importance; :func:`emulate.voice.bands.intelligibility_cost`);
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

import contextlib
import dataclasses
import json
import math
import os
from concurrent.futures import Future
from dataclasses import asdict, dataclass, field
from pathlib import Path

import numpy as np

from emulate import files, lifetime
from emulate.audio import stream as audio
from emulate.dsp import emulation
from emulate.voice import compare, sibilance
from emulate.analog.design import design_twin_t
from emulate.errors import BadValueError
from emulate.analog.response import measure
from emulate.report.summary import json_text, rows_as_csv
from emulate.validate import check_count, check_range

TIE_DB = 0.25  # relative reductions this close count as equal (a judgement call)
REEL_GAP_S = 0.6
REEL_EXCERPT_S = 3.0
MAX_STEPS = 64
MAX_WORKERS = 256


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

    def __post_init__(self):
        labels = [setting_label(f, self) for f in self.notches_hz]
        if not labels or len(set(labels)) != len(labels):
            raise BadValueError(f"sweep settings {[round(f) for f in self.notches_hz]} Hz: give one or more "
                                "notch frequencies, no two within 0.5 Hz (each names its renders)")

    @classmethod
    def from_dict(cls, table: dict) -> "SweepPlan":
        """The plan :meth:`SweepResult.as_dict` wrote (``None`` load: no load)."""
        table = dict(table) | {"notches_hz": tuple(table["notches_hz"])}
        if table.get("load_ohms") is None:
            table["load_ohms"] = math.inf
        return cls(**table)

    def design(self, notch_hz: float):
        """The design (ideal and as built) for one setting."""
        return design_twin_t(notch_hz, q=self.q, series=self.series, cap_series=self.cap_series,
                             impedance_ohms=self.impedance_ohms, source_ohms=self.source_ohms,
                             load_ohms=self.load_ohms)

    def network(self, notch_hz: float):
        """The as-built network for one setting, at the plan's mix."""
        return self.design(notch_hz).built.replace(mix=self.mix)


def held_by(network) -> dict:
    """What a sweep holds, read off an existing network (a preset's): the SweepPlan fields.

    Q from the bootstrap (Q = 1/(4(1-K)), Analog Devices MT-225), the impedance level
    from R1 and R2, and the network's mix, source and load.
    """
    held = {"impedance_ohms": (network.r1 + network.r2) / 2, "mix": network.mix,
            "source_ohms": network.source_ohms, "load_ohms": network.load_ohms}
    if network.bootstrap is not None:
        held["q"] = 1.0 / (4.0 * (1.0 - network.bootstrap))
    return held


def notch_steps(from_hz: float, to_hz: float, steps: int) -> tuple[float, ...]:
    """``steps`` notch frequencies in equal ratios from ``from_hz`` to ``to_hz`` (both included).

    Example
    -------
    >>> [round(f) for f in notch_steps(4000, 8000, 3)]
    [4000, 5657, 8000]
    """
    check_count("sweep steps", steps, 1, MAX_STEPS)
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
        """Plain JSON-ready data; non-finite numbers (no load, a silenced band) become None."""
        return _finite({"plan": asdict(self.plan), "rows": self.rows, "pick": self.pick,
                        "reels": self.reels, "jobs": [asdict(job) for job in self.jobs]})


def _finite(value):
    if isinstance(value, dict):
        return {key: _finite(item) for key, item in value.items()}
    if isinstance(value, (list, tuple)):
        return [_finite(item) for item in value]
    return None if isinstance(value, float) and not math.isfinite(value) else value


def setting_label(notch_hz: float, plan: SweepPlan) -> str:
    """A file-name-safe label that says the setting, e.g. ``notch4520Hz-q0.25-mix1.00``."""
    q = 0.25 if plan.q is None else plan.q
    return f"notch{notch_hz:.0f}Hz-q{q:g}-mix{plan.mix:.2f}"


def run_sweep(takes, plan: SweepPlan, out_dir, *, workers: int | None = None, progress=None) -> SweepResult:
    """Render every take at every setting into ``out_dir``; reels and summary beside them.

    ``progress(n)`` is called with the frames finished, across the whole job
    (takes x settings). ``workers`` defaults to the machine's cores; designs,
    sibilance bands and renders run on the same pool; the reels are put together
    here from the excerpts the renders return.
    """
    takes = [Path(t) for t in takes]
    frames = _check_takes(takes)
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    with _executor(workers, len(takes) * len(plan.notches_hz)) as pool:
        # designs and dry takes in one wave, so neither waits for the other
        network_futures = [pool.submit(plan.network, target) for target in plan.notches_hz]
        dry_futures = [pool.submit(_dry_take, t) for t in takes]
        networks = [f.result() for f in network_futures]
        dries = {t: f.result() for t, f in zip(takes, dry_futures)}
        jobs = [(t, target, net, dries[t].levels, dries[t].excerpt,
                 out_dir / f"{t.stem}--{setting_label(target, plan)}.wav")
                for t in takes for target, net in zip(plan.notches_hz, networks)]
        futures = [pool.submit(_render_job, *job) for job in jobs]
        results, excerpts = [], {}
        for future, job in zip(futures, jobs):
            result, excerpts[job[0], job[1]] = future.result()
            results.append(result)
            if progress is not None:
                progress(frames[job[0]])
    # reels from the excerpts the jobs returned: no render is read again
    reels = {str(t): str(write_reel(out_dir / f"reel--{t.stem}.wav", dries[t].excerpt_audio,
                                    [excerpts[t, f] for f in sorted(plan.notches_hz)], dries[t].fs,
                                    dries[t].subtype))
             for t in takes}
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


def check_workers(workers: int | None) -> None:
    """Raise BadValueError unless ``workers`` is None or a whole number 1..MAX_WORKERS."""
    if workers is not None:
        check_count("workers", workers, 1, MAX_WORKERS)


@contextlib.contextmanager
def _executor(workers: int | None, jobs: int):
    """The pool for a sweep; its workers die with this process and are killed on any error."""
    check_workers(workers)
    workers = max(1, min(workers or os.cpu_count() or 1, jobs))
    if workers == 1:
        yield _Inline()
        return
    pool = lifetime.WorkerPool(workers)
    try:
        yield pool
    except BaseException:  # Ctrl-C, a signal, a failed job: stop now, not after the jobs in flight
        lifetime.end_workers(pool)
        raise
    pool.shutdown()


def _check_takes(takes) -> dict:
    """Frames per take; one clear error for no takes, clashing names or unreadable files."""
    if not takes:
        raise BadValueError("no takes given; give one or more audio files")
    stems = [t.stem for t in takes]
    if len(set(stems)) != len(stems):
        raise BadValueError(f"takes need distinct file names (their outputs are named after them): {stems}")
    return {take: audio.read_info(take).frames for take in takes}


@dataclass(frozen=True)
class _DryTake:
    """What the jobs and the reel of one take need from it, found once per take."""

    levels: compare.TakeLevels  # in the sibilant band (the search band if none is usable)
    excerpt: tuple[int, int]  # the reel's stretch, sample frames
    excerpt_audio: np.ndarray
    fs: int
    subtype: str


def _dry_take(take: Path) -> _DryTake:
    x, fs = audio.read_all(take)
    report = sibilance.find_sibilance(x, fs)
    start, stop = sibilance.most_sibilant_excerpt(x, fs, seconds=min(REEL_EXCERPT_S, len(x) / fs))
    band_hz = report.band_hz if report.usable else report.search_band_hz
    levels = compare.take_levels(x, fs, band_hz)
    _check_measurable(take, levels)
    return _DryTake(levels, (start, stop), x[start:stop], fs, audio.read_info(take).subtype)


def _check_measurable(take: Path, levels) -> None:
    """A take the measures cannot compare (silent, or below the loudness gate) fails before any render."""
    try:
        compare.compare_levels(levels, levels)
    except BadValueError as exc:
        raise BadValueError(f"{take}: cannot be swept ({exc}); every take must hold speech "
                            "(nothing was rendered)") from None


def _render_job(take: Path, target_hz: float, network, dry_levels, excerpt, out_path: Path):
    """One take at one setting (runs in a worker process): its result and its reel excerpt."""
    processor = emulation.processor_for(network)
    audio.render_file(take, out_path, processor)
    wet, fs = audio.read_all(out_path)
    measures = compare.compare_levels(dry_levels, compare.take_levels(wet, fs, dry_levels.band_hz))
    result = JobResult(take=str(take), notch_target_hz=target_hz,
                       notch_hz=measure(network.response).notch_hz, path=str(out_path), **measures)
    return result, wet[excerpt[0]:excerpt[1]]


MEASURES = ("sibilance_reduction_db", "loudness_change_db", "intelligibility_cost")


def summarise(results: list[JobResult], plan: SweepPlan) -> list[dict]:
    """One row per setting: the asked and the as-built notch (designed by the same search as
    ``design``) and the means of each measure over takes."""
    rows = []
    for target in plan.notches_hz:
        mine = [r for r in results if r.notch_target_hz == target]
        row = {"setting": setting_label(target, plan), "notch_target_hz": target,
               "notch_hz": mine[0].notch_hz, "notch_error_percent": 100 * (mine[0].notch_hz / target - 1),
               "q": 0.25 if plan.q is None else plan.q, "mix": plan.mix}
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


def write_reel(reel_path, dry, wets, fs: int, subtype: str) -> Path:
    """Write a listening reel: the dry excerpt, then each wet excerpt in turn, ``REEL_GAP_S`` apart.

    Parameters
    ----------
    reel_path : path-like
        The reel file (written atomically).
    dry : numpy.ndarray
        The dry excerpt, ``(frames, channels)``.
    wets : list of numpy.ndarray
        The same excerpt at each setting, in the order they are heard.
    fs : int
        Sample rate, Hz.
    subtype : str
        Sample format of the reel (the take's).

    Returns
    -------
    pathlib.Path
        ``reel_path``; its length is ``len(dry) * (1 + len(wets))`` plus one gap per wet excerpt.

    Raises
    ------
    BadValueError, AudioFileError
        As :func:`emulate.audio.stream.write_array`.

    Example
    -------
    >>> import tempfile, os
    >>> p = write_reel(os.path.join(tempfile.mkdtemp(), "r.wav"), np.ones((10, 1)) / 2,
    ...                [np.zeros((10, 1))], 48000, "PCM_24")
    >>> audio.read_info(p).frames
    28820
    """
    gap = np.zeros((int(REEL_GAP_S * fs), dry.shape[1]))
    pieces = [dry]
    for wet in wets:
        pieces += [gap, wet]
    audio.write_array(reel_path, np.concatenate(pieces), fs, subtype=subtype)
    return Path(reel_path)


_PICK_KEYS = ("setting", "notch_target_hz", "reason")


def read_pick(out_dir) -> tuple[SweepPlan, dict]:
    """The plan and the pick a sweep left in ``out_dir/summary.json``; one clear error if none."""
    path = Path(out_dir) / "summary.json"
    try:
        result = json.loads(path.read_bytes().decode("utf-8"))
        plan, pick = SweepPlan.from_dict(result["plan"]), result["pick"]
        missing = [key for key in _PICK_KEYS if key not in pick]
        if missing:
            raise KeyError(", ".join(missing))
        check_range("pick notch_target_hz", pick["notch_target_hz"], 20.0, 30e3)
    except (OSError, ValueError, KeyError, TypeError, AttributeError) as exc:
        raise BadValueError(f"{path}: not a sweep summary with a pick (missing or bad {exc}); "
                            "give the --out folder of a finished sweep") from None
    return plan, pick


def check_out(takes, out_dir, *, force: bool) -> Path:
    """Refuse an ``--out`` folder that would mix old and new renders, or that holds a take.

    A non-empty folder needs ``force`` (it is then replaced as a whole, atomically);
    a take inside the folder is refused even with ``force`` (it would be replaced or
    deleted), as ``render`` refuses OUT == IN.

    Raises
    ------
    BadValueError, emulate.errors.OutputRefusedError
    """
    out_dir = Path(out_dir)
    inside = [str(t) for t in takes if Path(out_dir).resolve() in Path(t).resolve().parents]
    if inside:
        raise BadValueError(f"{out_dir}: holds the take(s) {', '.join(inside)}; the sweep would "
                            "overwrite or remove them; allowed: an --out folder apart from the takes")
    return files.check_new_folder(out_dir, force=force)


def sweep_into(takes, plan: SweepPlan, out_dir, *, force: bool = False, workers: int | None = None,
               progress=None, finish=None) -> SweepResult:
    """Run a sweep and write its folder atomically: all of it appears, or nothing does.

    Everything is written into a hidden folder beside ``out_dir`` and renamed onto it at
    the end (an existing folder, allowed only with ``force``, is replaced then). The
    result's paths name ``out_dir``. ``finish(result, folder)``, if given, runs last,
    before the rename (e.g. a picture written elsewhere). On any error or interruption
    the hidden folder is removed and the workers are ended.

    Raises
    ------
    BadValueError, emulate.errors.OutputRefusedError, AudioFileError
        As :func:`check_out` and :func:`run_sweep` (nothing is written then).
    """
    out_dir = Path(out_dir)
    _check_takes([Path(t) for t in takes])
    check_out(takes, out_dir, force=force)
    check_workers(workers)
    with files.parents_made(out_dir), files.atomic_path(out_dir) as staging:
        staging.mkdir()
        result = _moved(run_sweep(takes, plan, staging, workers=workers, progress=progress), staging, out_dir)
        write_summary(result, staging)
        if finish is not None:
            finish(result, staging)
    return result


def _moved(result: SweepResult, staging: Path, out_dir: Path) -> SweepResult:
    """The result with paths in the staging folder renamed to the final folder."""
    def final(path) -> str:
        return str(out_dir / Path(path).relative_to(staging))
    result.jobs = [dataclasses.replace(job, path=final(job.path)) for job in result.jobs]
    result.reels = {take: final(reel) for take, reel in result.reels.items()}
    return result


def write_summary(result: SweepResult, out_dir) -> tuple[Path, Path]:
    """``summary.csv`` and ``summary.json`` in ``out_dir``, atomically."""
    out_dir = Path(out_dir)
    csv_path, json_path = out_dir / "summary.csv", out_dir / "summary.json"
    files.write_text(csv_path, rows_as_csv(result.rows))
    files.write_text(json_path, json_text(result.as_dict()))
    return csv_path, json_path
