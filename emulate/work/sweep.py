"""Sweep the notch across takes: every take at every setting, reels, a summary, a pick.

The pipeline, top to bottom:

1. settings: one notch frequency per step (geometric steps from ``from_hz`` to
   ``to_hz``, or an explicit list), the rest held (series, impedance, Q, mix,
   source, load); or, at one held notch, one mix (depth) or one Q per step
   (:func:`mix_steps`, :func:`q_steps`). Each is designed and snapped to preferred
   values (:func:`emulate.analog.design.design_twin_t`), so the as-built notch is what
   these parts give, not the target;
2. jobs: take x setting, rendered in parallel over the machine's cores
   (processes: each job designs its processor, streams the take through it into
   the output folder, and measures dry against wet);
3. measures per job: sibilance-band reduction (the band the finder found in
   that take), loudness change (ITU-R BS.1770 via pyloudnorm) and intelligibility
   cost (ANSI S3.5-1997 band importance; :func:`emulate.voice.bands.intelligibility_cost`);
4. reels: per take, the most sibilant few seconds dry, then at each setting in
   order, separated by short silences, loudness-matched to the dry excerpt unless
   asked not to (:mod:`emulate.work.reels`);
5. summary: per setting the means over takes, and a pick with its reason;
6. on request, per take, what the picked notch removes (dry minus wet, time-aligned;
   :mod:`emulate.dsp.removed`).

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
import shutil
from concurrent.futures import Future, as_completed
from dataclasses import asdict, dataclass, field
from pathlib import Path

import numpy as np

from emulate import files, lifetime
from emulate.audio import stream as audio
from emulate.dsp import emulation
from emulate.voice import compare, sibilance
from emulate.work import reels
from emulate.dsp.removed import RemovedPart
from emulate.analog.design import design_twin_t
from emulate.errors import BadValueError
from emulate.analog.response import measure
from emulate.report.summary import json_text, rows_as_csv
from emulate.validate import check_count, check_range

__all__ = ["TIE_DB", "MAX_STEPS", "PASSIVE_Q", "Q_STEPS_TOP", "Setting", "MAX_WORKERS", "SweepPlan",
           "mix_steps", "q_steps", "held_by", "notch_steps", "JobResult", "SweepResult", "setting_label",
           "render_path", "removed_path", "run_sweep", "check_workers", "MEASURES", "summarise",
           "pick_setting", "rows_as_csv", "read_pick", "check_out", "sweep_into", "write_listening_page",
           "write_summary"]

TIE_DB = 0.25  # relative reductions this close count as equal (a judgement call)
MAX_STEPS = 64
PASSIVE_Q = 0.25  # the passive balanced twin-T (Analog Devices MT-225)
Q_STEPS_TOP = 2.0  # the highest Q of a Q sweep when none is given (a judgement call)


@dataclass(frozen=True)
class Setting:
    """One setting of a sweep: the notch asked for (Hz), its Q (None: passive) and the mix (0..1)."""

    notch_hz: float
    q: float | None
    mix: float

    @property
    def label(self) -> str:
        """A file-name-safe label that says the setting, e.g. ``notch4520Hz-q0.25-mix1.00``."""
        q = PASSIVE_Q if self.q is None else self.q
        return f"notch{self.notch_hz:.0f}Hz-q{q:g}-mix{self.mix:.2f}"
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
    mixes: tuple[float, ...] = ()  # step the mix at the one notch instead (``mix`` is then unused)
    qs: tuple[float, ...] = ()  # step the Q at the one notch instead (``q`` is then unused)

    def __post_init__(self):
        if self.mixes and self.qs:
            raise BadValueError("a sweep steps one thing: the notch, the mix or the Q; not both mix and Q")
        if (self.mixes or self.qs) and len(self.notches_hz) != 1:
            raise BadValueError(f"a mix or Q sweep holds one notch; got {len(self.notches_hz)} notch "
                                "frequencies (give one with --at)")
        labels = [s.label for s in self.settings]
        if not labels or len(set(labels)) != len(labels):
            raise BadValueError(f"sweep settings {labels}: give one or more settings, no two within 0.5 Hz "
                                "(notch), 0.005 (mix) or alike to 3 digits (Q); each names its renders")

    @property
    def axis(self) -> str:
        """What the sweep steps: ``notch``, ``mix`` or ``q``."""
        return "mix" if self.mixes else "q" if self.qs else "notch"

    @property
    def axis_words(self) -> str:
        """What the sweep steps, for people: ``notch frequency``, ``mix`` or ``Q``."""
        return {"notch": "notch frequency", "mix": "mix", "q": "Q"}[self.axis]

    @property
    def settings(self) -> tuple[Setting, ...]:
        """Every setting, in the order given."""
        if self.mixes:
            return tuple(Setting(self.notches_hz[0], self.q, m) for m in self.mixes)
        if self.qs:
            return tuple(Setting(self.notches_hz[0], q, self.mix) for q in self.qs)
        return tuple(Setting(f, self.q, self.mix) for f in self.notches_hz)

    @property
    def heard(self) -> tuple[Setting, ...]:
        """The settings in the order a reel plays them: rising along the swept axis."""
        return tuple(sorted(self.settings, key=lambda s: (s.notch_hz, _q_value(s.q), s.mix)))

    @classmethod
    def from_dict(cls, table: dict) -> "SweepPlan":
        """The plan :meth:`SweepResult.as_dict` wrote (``None`` load: no load)."""
        table = dict(table)
        for key in ("notches_hz", "mixes", "qs"):
            table[key] = tuple(table.get(key) or ())
        if table.get("load_ohms") is None:
            table["load_ohms"] = math.inf
        return cls(**table)

    def design(self, setting: "Setting | float"):
        """The design (ideal and as built) for one setting (or a notch frequency at the held Q)."""
        setting = self._setting(setting)
        return design_twin_t(setting.notch_hz, q=setting.q, series=self.series, cap_series=self.cap_series,
                             impedance_ohms=self.impedance_ohms, source_ohms=self.source_ohms,
                             load_ohms=self.load_ohms)

    def network(self, setting: "Setting | float"):
        """The as-built network for one setting (or a notch frequency at the held Q and mix)."""
        setting = self._setting(setting)
        return self.design(setting).built.replace(mix=setting.mix)

    def _setting(self, setting) -> Setting:
        return setting if isinstance(setting, Setting) else Setting(float(setting), self.q, self.mix)


def _q_value(q: float | None) -> float:
    return PASSIVE_Q if q is None else q


def mix_steps(steps: int, top: float = 1.0) -> tuple[float, ...]:
    """``steps`` mixes in equal steps up to ``top`` (``top/steps`` .. ``top``), rounded to 0.01.

    The depth of each follows from the mix (:func:`emulate.dsp.depth.mix_to_depth_db`).

    Example
    -------
    >>> mix_steps(4)
    (0.25, 0.5, 0.75, 1.0)
    """
    check_count("mix steps", steps, 1, MAX_STEPS)
    check_range("mix", top, 0.0, 1.0)
    return tuple(round(top * i / steps, 2) for i in range(1, int(steps) + 1))


def q_steps(steps: int, top: float = Q_STEPS_TOP) -> tuple[float, ...]:
    """``steps`` values of Q in equal ratios from the passive 0.25 to ``top``, to 3 significant digits.

    Example
    -------
    >>> q_steps(3, 1.0)
    (0.25, 0.5, 1.0)
    """
    check_count("Q steps", steps, 1, MAX_STEPS)
    check_range("Q (top of the Q steps)", top, PASSIVE_Q, 20.0)
    if steps == 1:
        return (float(top),)
    return tuple(float(f"{q:.3g}") for q in np.geomspace(PASSIVE_Q, top, int(steps)))


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
    setting: str
    q: float
    mix: float
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
    reels: dict[str, reels.Reel] = field(default_factory=dict)
    removed: dict[str, str] = field(default_factory=dict)  # take -> what the picked notch removes

    def as_dict(self) -> dict:
        """Plain JSON-ready data; non-finite numbers (no load, a silenced band) become None."""
        return _finite({"plan": asdict(self.plan), "axis": self.plan.axis, "rows": self.rows,
                        "pick": self.pick, "reels": {t: r.as_dict() for t, r in self.reels.items()},
                        "removed": self.removed, "jobs": [asdict(job) for job in self.jobs]})


def _finite(value):
    if isinstance(value, dict):
        return {key: _finite(item) for key, item in value.items()}
    if isinstance(value, (list, tuple)):
        return [_finite(item) for item in value]
    return None if isinstance(value, float) and not math.isfinite(value) else value


def setting_label(notch_hz: float, plan: SweepPlan) -> str:
    """The label of the setting at ``notch_hz`` with the plan's held Q and mix (:attr:`Setting.label`)."""
    return Setting(notch_hz, plan.q, plan.mix).label


def render_path(out_dir, take, label: str) -> Path:
    """Where a sweep writes ``take`` at the setting ``label``."""
    return Path(out_dir) / f"{Path(take).stem}--{label}.wav"


def removed_path(out_dir, take, label: str) -> Path:
    """Where a sweep writes what the setting ``label`` removes from ``take``."""
    return Path(out_dir) / f"removed--{Path(take).stem}--{label}.wav"


def run_sweep(takes, plan: SweepPlan, out_dir, *, workers: int | None = None, progress=None,
              match: bool = True, removed: bool = False) -> SweepResult:
    """Render every take at every setting into ``out_dir``; reels and summary beside them.

    ``progress(n)`` is called with the frames finished, across the whole job
    (takes x settings). ``workers`` defaults to the machine's cores; designs,
    sibilance bands and renders run on the same pool (a take's renders are queued as soon
    as its own dry analysis is done); the reels are put together
    here from the excerpts the renders return, loudness-matched unless ``match`` is
    False. With ``removed``, each take is rendered once more at the picked setting as
    dry minus wet (:class:`emulate.dsp.removed.RemovedPart`).
    """
    takes = [Path(t) for t in takes]
    frames = _check_takes(takes)
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    settings = plan.settings
    with _executor(workers, len(takes) * len(settings)) as pool:
        # designs and dry takes in one wave, so neither waits for the other; each take's renders
        # are queued as soon as its own dry analysis is done, not after every take's
        network_futures = [pool.submit(_built, plan, setting) for setting in settings]
        dry_futures = {pool.submit(_dry_take, t): t for t in takes}
        built = {s.label: f.result() for s, f in zip(settings, network_futures)}
        dries, futures = {}, {}
        for done in as_completed(dry_futures):
            take = dry_futures[done]
            dries[take] = dry = done.result()
            for s in settings:
                network, notch_hz = built[s.label]
                futures[take, s.label] = pool.submit(_render_job, take, s, network, notch_hz, dry.levels,
                                                     dry.excerpt, render_path(out_dir, take, s.label))
        networks = {label: network for label, (network, _) in built.items()}
        results, excerpts, made = [], {}, {}

        def reel(take):  # from the excerpts the jobs returned (no render is read again)
            made[str(take)] = _reel(out_dir, take, dries[take], [excerpts[take, s.label] for s in plan.heard],
                                    plan, match)

        for i, take in enumerate(takes):  # results in take x setting order, whichever finished first
            for s in settings:
                result, excerpts[take, s.label] = futures[take, s.label].result()
                results.append(result)
                if progress is not None:
                    progress(frames[take])
            if i < len(takes) - 1:
                reel(take)  # while the workers render the later takes
        rows = summarise(results, plan)
        pick = pick_setting(rows)
        chosen = networks[pick["setting"]]
        removing = {str(t): pool.submit(_render_removed, t, chosen, removed_path(out_dir, t, pick["setting"]))
                    for t in (takes if removed else [])}
        reel(takes[-1])  # while the pool removes
        removed_paths = {take: str(future.result()) for take, future in removing.items()}
    return SweepResult(plan, results, rows, pick, made, removed_paths)


def _reel(out_dir: Path, take: Path, dry: "_DryTake", wets, plan: SweepPlan, match: bool) -> reels.Reel:
    segments = [reels.Segment("dry", dry.excerpt_audio)]
    segments += [reels.Segment(s.label, wet) for s, wet in zip(plan.heard, wets)]
    return reels.write_reel(out_dir / f"reel--{take.stem}.wav", segments, dry.fs, dry.subtype, match=match)


def _render_removed(take: Path, network, out_path: Path) -> Path:
    """What ``network`` removes from ``take`` (runs in a worker process), written to ``out_path``."""
    audio.render_file(take, out_path, RemovedPart(emulation.processor_for(network)))
    return out_path


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
    start, stop = sibilance.most_sibilant_excerpt(x, fs, seconds=min(reels.REEL_EXCERPT_S, len(x) / fs))
    band_hz = report.band_hz if report.usable else report.search_band_hz
    levels = compare.take_levels(x, fs, band_hz)
    _check_measurable(take, levels)
    return _DryTake(levels, (start, stop), x[start:stop].copy(), fs, audio.read_info(take).subtype)  # not the take


def _check_measurable(take: Path, levels) -> None:
    """A take the measures cannot compare (silent, or below the loudness gate) fails before any render."""
    try:
        compare.compare_levels(levels, levels)
    except BadValueError as exc:
        raise BadValueError(f"{take}: cannot be swept ({exc}); every take must hold speech "
                            "(nothing was rendered)") from None


def _built(plan: SweepPlan, setting: Setting):
    """The as-built network of one setting and its measured notch (Hz), found once per setting."""
    network = plan.network(setting)
    return network, measure(network.response).notch_hz


def _render_job(take: Path, setting: Setting, network, notch_hz: float, dry_levels, excerpt,
                out_path: Path):
    """One take at one setting (runs in a worker process): its result and its reel excerpt."""
    processor = emulation.processor_for(network)
    audio.render_file(take, out_path, processor)
    wet, fs = audio.read_all(out_path)
    measures = compare.compare_levels(dry_levels, compare.take_levels(wet, fs, dry_levels.band_hz))
    result = JobResult(take=str(take), setting=setting.label, q=_q_value(setting.q), mix=setting.mix,
                       notch_target_hz=setting.notch_hz, notch_hz=notch_hz, path=str(out_path), **measures)
    return result, wet[excerpt[0]:excerpt[1]].copy()  # a copy: a slice would keep the whole render alive


MEASURES = ("sibilance_reduction_db", "loudness_change_db", "intelligibility_cost")


def summarise(results: list[JobResult], plan: SweepPlan) -> list[dict]:
    """One row per setting: the asked and the as-built notch (designed by the same search as
    ``design``) and the means of each measure over takes."""
    rows = []
    for setting in plan.settings:
        mine = [r for r in results if r.setting == setting.label]
        target = setting.notch_hz
        row = {"setting": setting.label, "notch_target_hz": target,
               "notch_hz": mine[0].notch_hz, "notch_error_percent": 100 * (mine[0].notch_hz / target - 1),
               "q": _q_value(setting.q), "mix": setting.mix}
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
            "notch_target_hz": best["notch_target_hz"], "q": best["q"], "mix": best["mix"], "reason": why}


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
               progress=None, finish=None, match: bool = True, removed: bool = False,
               page: bool = True) -> SweepResult:
    """Run a sweep and write its folder atomically: all of it appears, or nothing does.

    Everything is written into a hidden folder beside ``out_dir`` and renamed onto it at
    the end (an existing folder, allowed only with ``force``, is replaced then). The
    result's paths name ``out_dir``. ``finish(result, folder)``, if given, runs before the
    listening page and the rename (e.g. a picture written elsewhere); the pictures it
    returns (paths, or None) are shown on the page. With ``page``, each take is copied
    into the folder (``dry--NAME``) and ``index.html`` written
    (:mod:`emulate.report.listening`). ``match`` and ``removed`` are as for
    :func:`run_sweep`. On any error or interruption the hidden folder is removed and the
    workers are ended.

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
        result = _moved(run_sweep(takes, plan, staging, workers=workers, progress=progress, match=match,
                                  removed=removed), staging, out_dir)
        write_summary(result, staging)
        pictures = (finish(result, staging) if finish is not None else None) or ()
        if page:
            write_listening_page(result, out_dir, into=staging, pictures=pictures, match=match)
    return result


def write_listening_page(result: SweepResult, out_dir, *, into=None, pictures=(), match: bool = True) -> Path:
    """Copy each take into the folder (the page plays only what is inside it) and write ``index.html``.

    ``out_dir`` is the folder the result's paths name; ``into`` the folder actually written
    (a staging folder renamed to ``out_dir`` later; default ``out_dir``). Returns the page's path.
    """
    from emulate.report import listening  # the page: loaded only when written

    out_dir = Path(out_dir)
    staging = out_dir if into is None else Path(into)
    dries = {}
    for take in result.reels:
        copy = staging / f"dry--{Path(take).name}"
        shutil.copyfile(take, copy)  # byte for byte: the dry take as it is
        dries[take] = str(out_dir / copy.name)
    page = listening.page_from_sweep(result, pictures=pictures, matched=match, dries=dries)
    return listening.write_page(page, out_dir, into=staging)


def _moved(result: SweepResult, staging: Path, out_dir: Path) -> SweepResult:
    """The result with paths in the staging folder renamed to the final folder."""
    def final(path) -> str:
        return str(out_dir / Path(path).relative_to(staging))
    result.jobs = [dataclasses.replace(job, path=final(job.path)) for job in result.jobs]
    result.reels = {take: dataclasses.replace(reel, path=final(reel.path), cues_path=final(reel.cues_path))
                    for take, reel in result.reels.items()}
    result.removed = {take: final(path) for take, path in result.removed.items()}
    return result


def write_summary(result: SweepResult, out_dir) -> tuple[Path, Path]:
    """``summary.csv`` and ``summary.json`` in ``out_dir``, atomically."""
    out_dir = Path(out_dir)
    csv_path, json_path = out_dir / "summary.csv", out_dir / "summary.json"
    files.write_text(csv_path, rows_as_csv(result.rows))
    files.write_text(json_path, json_text(result.as_dict()))
    return csv_path, json_path
