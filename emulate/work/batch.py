"""Render many takes, each through its speaker's preset: in parallel, resumable, with a summary.

The pipeline, top to bottom:

1. plan     the takes and their renders' paths (:func:`emulate.work.plan.find_takes`:
            folders mirrored under the output, never next to or over an input);
2. check    everything before anything is written (:func:`prepare_batch`): every preset
            loads and builds, every take's header reads, no two renders share a path,
            nothing at a render's path is replaced unless it is an earlier batch's
            render (or ``force``), the output folder can be made;
3. decide   per take: render it; or keep the render an earlier run left, when it is
            complete (as many frames as the take) and newer than both the take and the
            preset file (``redo`` renders everything again);
4. run      the jobs on a local process pool (:class:`emulate.lifetime.WorkerPool`:
            workers die with this process, killed at once on Ctrl-C) or on a
            dask.distributed cluster (:class:`ClusterRunner`; its workers must see the
            same paths). A job streams its take through the preset's emulation
            (:func:`emulate.audio.stream.render_file`, written atomically) with meters on
            the dry and the wet blocks, so the summary costs no second reading;
5. summary  ``summary.csv`` and ``summary.json`` in the output folder: per take the
            sibilance-band change, loudness change, peak, clipped samples and time;
6. page     ``index.html`` (:mod:`emulate.report.listening`): per take a dry and a wet
            player, level-matched, and its summary row. They play listening excerpts
            the job writes beside the render's mirror under ``listening/`` (``EXCERPT_S``
            seconds from a quarter of the way in, dry and wet, 24-bit WAV that browsers
            play), so the page travels with the folder without a copy of every take.

The summary's figures are measured on the whole take, block by block, in bounded
memory (:class:`emulate.voice.compare.LevelsMeter`): the level in the sibilance band
(one octave centred on the preset's as-built notch, our own choice, through a
4th-order Butterworth band-pass) and the BS.1770 integrated loudness.

An interrupted batch (Ctrl-C, SIGTERM, a failed job) keeps the renders already
complete, removes those in flight (a worker's temporary file is removed once the
worker is gone), writes the summary of what is complete, and is resumed by running
it again. On a cluster, renders already running finish on their workers (they are
written atomically; the next run keeps them).
"""

from __future__ import annotations

import contextlib
import json
import math
import os
import time
from dataclasses import asdict, dataclass, replace
from pathlib import Path

from emulate import files, lifetime
from emulate.errors import BadValueError, EmulateError, OutputRefusedError
from emulate.report.summary import json_text, rows_as_csv
from emulate.validate import check_count
from emulate.work.plan import BatchPlan, PlannedTake, find_takes

__all__ = ["Batch", "ClusterRunner", "LocalRunner", "SUMMARY_KIND", "TakeJob", "TakeResult", "prepare_batch",
           "run_batch", "run_job", "sibilance_band_of", "totals", "write_summary"]

SUMMARY_KIND = "emulate batch"  # summary.json's "kind": marks an output folder as a batch's
SUMMARY_FILES = ("summary.csv", "summary.json", "index.html")
LISTENING_FOLDER = "listening"  # the page's excerpts, under the output folder
EXCERPT_S = 10.0  # seconds of each take heard on the page (the whole take when shorter)
EXCERPT_FROM = 0.25  # where the excerpt starts, as a share of the take
MAX_WORKERS = 256
BAND_HALF_OCTAVES = 1  # the sibilance band: this many half-octaves either side of the notch


@dataclass(frozen=True)
class TakeJob:
    """One take's work, sent to a worker (plain, picklable data)."""

    index: int  # the take's place in the plan
    take: str
    out_path: str
    speaker: str
    preset: str
    network: object  # emulate.analog.networks.TwinT
    band_hz: tuple[float, float]
    frames: int
    fs: int
    action: str = "render"  # or "measure": an earlier run's render whose figures were not kept
    replace: bool = False  # whether an existing file at out_path may be replaced
    excerpts: tuple[str, str] | None = None  # the page's dry and wet excerpt files

    def excerpt_window(self) -> tuple[int, int]:
        """The excerpt's first frame and its length in frames."""
        length = min(self.frames, int(EXCERPT_S * self.fs))
        return min(self.frames - length, int(self.frames * EXCERPT_FROM)), length


@dataclass(frozen=True)
class TakeResult:
    """One row of the summary."""

    index: int
    speaker: str
    preset: str
    take: str
    output: str
    status: str  # rendered, or kept (an earlier run's render)
    band_lo_hz: float
    band_hi_hz: float
    sibilance_band_change_db: float | None
    loudness_change_db: float | None
    peak_dbfs: float | None
    clipped_samples: int | None
    seconds: float | None
    duration_s: float
    worker_peak_rss_mb: float | None = None

    def row(self) -> dict:
        """The summary row (no plan index, no worker memory)."""
        return {k: v for k, v in asdict(self).items() if k not in ("index", "worker_peak_rss_mb")}


@dataclass
class Batch:
    """A checked batch: the jobs to run, the rows kept from an earlier run, where it all goes."""

    plan: BatchPlan
    jobs: list[TakeJob]
    kept: list[TakeResult]
    folders_missing: list[Path]  # output folders that do not exist yet (made as needed, removed if left empty)
    page: bool = True  # write the listening page (and the excerpts it plays)

    @property
    def frames(self) -> int:
        """Frames to get through (for a progress bar)."""
        return sum(job.frames for job in self.jobs)


# --------------------------------------------------------------------------- 2.-3. check and decide
def _notch_hz(network) -> float:
    """The network's as-built notch, Hz (the centre of the summary's sibilance band)."""
    from emulate.analog.response import measure_notch

    return measure_notch(network.response).notch_hz


def sibilance_band_of(notch_hz: float, fs: float) -> tuple[float, float]:
    """One octave centred on the notch within Nyquist: ``(notch / sqrt 2, min(notch * sqrt 2, fs / 2))``, Hz.

    Example
    -------
    >>> [round(f) for f in sibilance_band_of(6000.0, 48000)]
    [4243, 8485]
    """
    half = 2.0 ** (0.5 * BAND_HALF_OCTAVES)
    return (notch_hz / half, min(notch_hz * half, fs / 2.0))


def prepare_batch(plan: BatchPlan, store, *, redo: bool = False, force: bool = False, page: bool = True) -> Batch:
    """Check the whole plan and decide what to run; nothing is written.

    Parameters
    ----------
    plan : BatchPlan
        Speakers, presets, takes and the output folder.
    store : emulate.work.presets.PresetStore
        Where the presets are read.
    redo : bool
        Render every take again (earlier renders replaced).
    force : bool
        Also replace files at render paths that no earlier batch wrote (out of date),
        and summary files that are not a batch's.
    page : bool
        Write the listening page and the excerpts it plays (default).

    Raises
    ------
    BadValueError, emulate.errors.PresetError, emulate.errors.AudioFileError, OutputRefusedError
        The first problem found, in one line.
    """
    from emulate.audio import stream as audio

    out = Path(plan.out)
    files.check_new_folder(out, force=True, what="the batch's output folder")
    earlier = _earlier_rows(out, force)
    takes = find_takes(plan)
    presets = {name: _preset(store, name) for name in dict.fromkeys(s.preset for s in plan.speakers)}
    notches = {name: _notch_hz(network) for name, (network, _) in presets.items()}
    jobs, kept, refused = [], [], []
    for index, planned in enumerate(takes):
        info = audio.read_info(planned.take)
        network, preset_path = presets[planned.speaker.preset]
        _check_not_listening(out, planned.out_path)
        job = TakeJob(index, str(planned.take), str(planned.out_path), planned.speaker.name,
                      planned.speaker.preset, network,
                      sibilance_band_of(notches[planned.speaker.preset], info.samplerate), info.frames,
                      info.samplerate, excerpts=excerpt_paths(out, planned.out_path) if page else None)
        state = _output_state(planned, info.frames, preset_path)
        if redo or state == "missing":
            jobs.append(replace(job, replace=state != "missing"))
        elif state == "current":
            row = earlier.get(str(planned.out_path.resolve()))
            if row is not None and all(os.path.isfile(e) for e in job.excerpts or ()):
                kept.append(_kept_row(job, row))
            else:
                jobs.append(replace(job, action="measure"))
        elif str(planned.out_path.resolve()) in earlier or force:  # out of date: an earlier batch's render
            jobs.append(replace(job, replace=True))
        else:
            refused.append(planned.out_path)
        ours = str(planned.out_path.resolve()) in earlier or force
        refused += [Path(e) for e in job.excerpts or () if os.path.lexists(e) and not ours]
    if refused:
        raise OutputRefusedError(f"{refused[0]}: exists, no earlier batch here wrote it and the batch would "
                                 f"replace it ({len(refused)} such file(s)); pass --force to replace them, or "
                                 "choose another output folder")
    made = [Path(path) for j in jobs for path in (j.out_path, *(j.excerpts or ()))]
    return Batch(plan, jobs, kept, _folders_missing(out, made), page)


def excerpt_paths(out: Path, out_path: Path) -> tuple[str, str]:
    """The page's dry and wet excerpts of a render: ``out/listening/<its mirror>--dry.wav``, ``--wet.wav``."""
    mirror = Path(out) / LISTENING_FOLDER / Path(out_path).relative_to(out)
    return tuple(str(mirror.with_name(f"{mirror.name}--{kind}.wav")) for kind in ("dry", "wet"))


def _check_not_listening(out: Path, out_path: Path) -> None:
    if Path(out_path).relative_to(out).parts[0] in (LISTENING_FOLDER, *SUMMARY_FILES):
        raise BadValueError(f"{out_path}: a render would land where the batch keeps its own "
                            f"{Path(out_path).relative_to(out).parts[0]}; rename that folder of takes")


def _preset(store, name: str):
    """The preset's network (built and checked now) and its file (whose time a render must be newer than)."""
    preset = store.load(name)
    return preset.network(), store.path(name)


def _output_state(planned: PlannedTake, frames: int, preset_path: Path) -> str:
    """``missing``, ``current`` (complete and newer than take and preset) or ``stale``; refuses a non-file."""
    from emulate.audio import stream as audio

    path = planned.out_path
    try:
        info = os.stat(path)
    except FileNotFoundError:
        return "missing"
    except OSError as exc:
        raise OutputRefusedError(f"{path}: cannot be checked ({exc.strerror})") from None
    files.check_new_output(path, force=True, what="render")  # never a folder, FIFO or device
    newest_input = max(os.stat(planned.take).st_mtime, os.stat(preset_path).st_mtime)
    if info.st_mtime <= newest_input:
        return "stale"
    try:
        complete = audio.read_info(path).frames == frames
    except EmulateError:
        complete = False
    return "current" if complete else "stale"


def _earlier_rows(out: Path, force: bool) -> dict[str, dict]:
    """Rows of an earlier batch's summary here, by resolved output path; refuses others' summary files."""
    found = [out / name for name in SUMMARY_FILES if os.path.lexists(out / name)]
    if not found:
        return {}
    try:
        summary = json.loads((out / "summary.json").read_bytes().decode("utf-8"))
        rows = summary["takes"] if summary.get("kind") == SUMMARY_KIND else None
    except (OSError, ValueError, KeyError, TypeError, AttributeError):
        rows = None
    if rows is None:
        if not force:
            raise OutputRefusedError(f"{found[0]}: exists and is not an earlier batch's summary; choose another "
                                     "output folder or pass --force to replace it")
        return {}
    return {str(Path(row["output"]).resolve()): row for row in rows if isinstance(row, dict) and "output" in row}


def _kept_row(job: TakeJob, row: dict) -> TakeResult:
    """An earlier run's figures for a render kept as it is."""
    figures = {key: row.get(key) for key in ("sibilance_band_change_db", "loudness_change_db", "peak_dbfs",
                                             "clipped_samples", "seconds")}
    return _result(job, "kept", **figures)


def _folders_missing(out: Path, paths: list[Path]) -> list[Path]:
    """Output folders to be made, deepest first; refuses a path under something that is not a folder."""
    missing = set()
    for path in paths:
        folder = path.parent
        while not folder.exists():
            missing.add(folder)
            folder = folder.parent
        if not folder.is_dir():
            raise OutputRefusedError(f"{path}: {folder} is not a folder; a render cannot be written there")
    return sorted(missing, key=lambda p: len(p.parts), reverse=True)


# --------------------------------------------------------------------------- 4. the work of one take
def run_job(job: TakeJob) -> TakeResult:
    """Render one take (or measure an earlier render), in whichever process runs it.

    Raises
    ------
    emulate.errors.EmulateError
        As :func:`emulate.audio.stream.render_file` (nothing is left at ``out_path``).
    """
    from emulate.audio import stream as audio

    started = time.perf_counter()
    info = audio.read_info(job.take)
    dry, wet = _meters(info, job.band_hz), _meters(info, job.band_hz)
    dry_excerpt, wet_excerpt = (_Excerpt(*job.excerpt_window()) if job.excerpts else None for _ in range(2))
    if job.action == "measure":
        _measure_blocks(audio.iter_blocks(job.take), dry, dry_excerpt)
        peak = _measure_blocks(audio.iter_blocks(job.out_path), wet, wet_excerpt)
        _write_excerpts(job, dry_excerpt, wet_excerpt)
        return _result(job, "kept", peak_dbfs=_dbfs(peak), **_changes(dry, wet))
    processor = _Metered(_processor(job.network), dry, wet, dry_excerpt, wet_excerpt)
    Path(job.out_path).parent.mkdir(parents=True, exist_ok=True)
    report = audio.render_file(job.take, job.out_path, processor, replace=job.replace)
    _write_excerpts(job, dry_excerpt, wet_excerpt)  # if this fails, the next run measures the render again
    return _result(job, "rendered", peak_dbfs=report.peak_dbfs, clipped_samples=report.clipped_samples,
                   seconds=time.perf_counter() - started, **_changes(dry, wet))


class _Excerpt:
    """The frames ``[first, first + length)`` of a stream of blocks, kept as they pass."""

    def __init__(self, first: int, length: int):
        self.first, self.length, self.seen, self.pieces = first, length, 0, []

    def add(self, block, offset: int = 0) -> None:
        """Keep the part of ``block`` in the window; ``offset``: frames the stream runs ahead (latency)."""
        start, stop = self.first + offset, self.first + offset + self.length
        lo, hi = max(start - self.seen, 0), min(stop - self.seen, len(block))
        if lo < hi:
            self.pieces.append(block[lo:hi].copy())
        self.seen += len(block)

    def samples(self):
        import numpy as np

        return np.concatenate(self.pieces) if self.pieces else None


def _write_excerpts(job: TakeJob, dry: _Excerpt | None, wet: _Excerpt | None) -> None:
    """The page's dry and wet excerpts, 24-bit WAV (exact for 16- and 24-bit takes; browsers play it)."""
    from emulate.audio import stream as audio

    if not job.excerpts:
        return
    for path, excerpt in zip(job.excerpts, (dry, wet)):
        samples = excerpt.samples()
        if samples is not None:
            Path(path).parent.mkdir(parents=True, exist_ok=True)
            audio.write_array(path, samples, job.fs, subtype="PCM_24")


def _meters(info, band_hz):
    """A meter for the summary's figures, or None when the take allows none (rate, channels, band)."""
    from emulate.voice.compare import LevelsMeter

    try:
        return LevelsMeter(info.samplerate, info.channels, band_hz)
    except BadValueError:
        return None


def _changes(dry, wet) -> dict:
    from emulate.voice.compare import compare_meters

    if dry is None:
        return {"sibilance_band_change_db": None, "loudness_change_db": None}
    measures = compare_meters(dry, wet)
    reduction = measures["sibilance_reduction_db"]
    return {"sibilance_band_change_db": None if reduction is None else -reduction,
            "loudness_change_db": measures["loudness_change_db"]}


def _measure_blocks(blocks, meter, excerpt: _Excerpt | None) -> float:
    """Feed every block to ``meter`` (if any) and ``excerpt``; the largest sample magnitude."""
    top = 0.0
    for block in blocks:
        if meter is not None:
            meter.add(block)
        if excerpt is not None:
            excerpt.add(block)
        top = max(top, float(abs(block).max()))
    return top


def _dbfs(peak: float) -> float | None:
    return 20.0 * math.log10(peak) if peak > 0 else None


_processors: dict = {}  # this worker's processors by network: designed once, reset for each take


def _processor(network):
    """The worker's processor for ``network`` (one per preset: the design is the costly part)."""
    key = repr(network)
    if key not in _processors:
        from emulate.dsp import emulation

        _processors[key] = [emulation.processor_for(network), None]
    return _processors[key]


class _Metered:
    """A worker's processor, prepared once per rate and channels, with meters on its dry and wet blocks.

    ``prepare`` designs the sections only when the rate or channel count differs from
    the last take's; otherwise it clears the state (:meth:`NotchProcessor.reset`), which
    renders the same samples as a freshly designed processor. The processor may work
    in place, so the dry block is measured first. The few frames of latency
    compensation (zeros after the take, the first outputs dropped) reach the meters
    too: at most a handful of samples, below what the figures show.
    """

    def __init__(self, cached, dry, wet, dry_excerpt=None, wet_excerpt=None):
        self._cached, self._dry, self._wet = cached, dry, wet
        self._excerpts = (dry_excerpt, wet_excerpt)

    @property
    def latency_samples(self) -> int:
        return self._cached[0].latency_samples

    def prepare(self, rate: int, channels: int) -> None:
        processor, prepared_for = self._cached
        if prepared_for == (rate, channels):
            processor.reset()
        else:
            processor.prepare(rate, channels)
            self._cached[1] = (rate, channels)

    def reset(self) -> None:
        self._cached[0].reset()

    def process(self, block):
        if self._dry is not None:
            self._dry.add(block)
        if self._excerpts[0] is not None:
            self._excerpts[0].add(block)
        out = self._cached[0].process(block)
        if self._wet is not None:
            self._wet.add(out)
        if self._excerpts[1] is not None:  # the output runs the latency behind: its excerpt is as late
            self._excerpts[1].add(out, self.latency_samples)
        return out


def _result(job: TakeJob, status: str, *, sibilance_band_change_db=None, loudness_change_db=None,
            peak_dbfs=None, clipped_samples=None, seconds=None) -> TakeResult:
    finite = lambda v: None if v is None or not math.isfinite(v) else float(v)  # noqa: E731
    return TakeResult(job.index, job.speaker, job.preset, job.take, job.out_path, status, job.band_hz[0],
                      job.band_hz[1], finite(sibilance_band_change_db), finite(loudness_change_db),
                      finite(peak_dbfs), clipped_samples, finite(seconds), job.frames / job.fs, _peak_rss_mb())


def _peak_rss_mb() -> float | None:
    """This process's peak resident memory, MB, or None where unknown.

    Linux's ``VmHWM`` (the peak of this process image; ``ru_maxrss`` would carry a
    spawning parent's peak over ``exec``), else ``ru_maxrss`` (kB on Linux).
    """
    try:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1]) / 1024.0
    except (OSError, ValueError, IndexError):
        pass
    try:
        import resource
    except ImportError:
        return None
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


# --------------------------------------------------------------------------- runners
class LocalRunner:
    """Jobs on this machine: a :class:`~emulate.lifetime.WorkerPool`, or this process for one worker."""

    def __init__(self, workers: int | None = None):
        if workers is not None:
            check_count("workers", workers, 1, MAX_WORKERS)
        self.workers = workers or os.cpu_count() or 1
        self._pool = None

    def results(self, jobs):
        """``(job, result)`` pairs as the jobs finish."""
        jobs = list(jobs)
        if min(self.workers, len(jobs)) <= 1:
            for job in jobs:
                yield job, run_job(job)
            return
        from concurrent.futures import as_completed

        self._pool = lifetime.WorkerPool(min(self.workers, len(jobs)))
        futures = {self._pool.submit(run_job, job): job for job in jobs}
        for future in as_completed(futures):
            yield futures[future], future.result()
        self._pool.shutdown()

    def stop(self) -> None:
        """Kill the workers now (their jobs' temporaries are removed by the caller)."""
        if self._pool is not None:
            lifetime.end_workers(self._pool)


class ClusterRunner:
    """Jobs on a dask.distributed cluster; its workers read the takes and write the renders at the same paths.

    Raises
    ------
    BadValueError
        ``distributed`` is not installed, or no scheduler answers at ``address``.
    """

    def __init__(self, address: str, *, timeout_s: float = 10.0):
        try:
            from distributed import Client
        except ImportError:
            raise BadValueError("--cluster needs the dask.distributed package; install it with "
                                "pip install 'emulate[cluster]'") from None
        try:
            self._client = Client(address, timeout=f"{timeout_s}s", set_as_default=False)
        except (OSError, TimeoutError, ValueError, TypeError) as exc:
            raise BadValueError(f"--cluster {address}: no scheduler answered ({str(exc).splitlines()[0]}); "
                                "start one with 'dask scheduler' and workers with 'dask worker ADDRESS'") from None
        self._futures = []

    def results(self, jobs):
        from distributed import as_completed

        futures = {}
        for job in jobs:
            future = self._client.submit(run_job, job, pure=False, key=f"emulate-batch-{os.getpid()}-{job.index}")
            futures[future] = job
        self._futures = list(futures)
        for future in as_completed(self._futures, loop=self._client.loop):
            yield futures[future], future.result()

    def stop(self) -> None:
        """Cancel what has not started (renders already running finish, atomically)."""
        with contextlib.suppress(Exception):
            self._client.cancel(self._futures)

    def close(self) -> None:
        with contextlib.suppress(Exception):
            self._client.close()


# --------------------------------------------------------------------------- 4.-5. run and summarise
def run_batch(batch: Batch, runner, *, progress=None) -> list[TakeResult]:
    """Run a checked batch; write the summary (also of what is complete when interrupted).

    ``progress(frames)`` is called as each take finishes. Temporaries that a killed
    run left beside renders kept now are removed first. On any error or interruption
    the runner is stopped, the renders in flight are removed (their temporaries too,
    once their workers are gone), folders the batch made and left empty are removed,
    the summary of the complete renders is written, and the exception goes on.

    Returns
    -------
    list of TakeResult
        Every take of the plan, in plan order (rendered, or kept from an earlier run).
    """
    results = list(batch.kept)
    pending = {job.index: job for job in batch.jobs}
    for path in [r.output for r in batch.kept] + [j.out_path for j in batch.jobs if j.action == "measure"]:
        files.remove_stale(path)  # a killed run's temporary beside a render it completed (link, then unlink)
    try:
        for job, result in runner.results(batch.jobs):
            results.append(result)
            del pending[job.index]
            if progress is not None:
                progress(job.frames)
    except BaseException:
        runner.stop()
        for job in pending.values():
            files.remove_stale(job.out_path)
        _remove_empty(batch.folders_missing)
        if any(r.status == "rendered" for r in results) or batch.kept:
            with contextlib.suppress(Exception):
                write_summary(batch.plan, results, page=batch.page)
        raise
    write_summary(batch.plan, results, page=batch.page)
    return sorted(results, key=lambda r: r.index)


def _remove_empty(folders: list[Path]) -> None:
    for folder in folders:  # deepest first
        with contextlib.suppress(OSError):
            folder.rmdir()


def write_summary(plan: BatchPlan, results: list[TakeResult], *, page: bool = True) -> tuple[Path, Path, Path | None]:
    """``summary.csv``, ``summary.json`` and (``page``) the listening page ``index.html`` in the plan's output folder."""
    results = sorted(results, key=lambda r: r.index)
    out = Path(plan.out)
    out.mkdir(parents=True, exist_ok=True)
    rows = [r.row() for r in results]
    csv_path, json_path = out / "summary.csv", out / "summary.json"
    files.write_text(csv_path, rows_as_csv(rows) if rows else "")
    files.write_text(json_path, json_text({"kind": SUMMARY_KIND, "plan": plan.as_dict(), "totals": totals(results),
                                           "takes": rows}))
    return csv_path, json_path, write_page(out, results) if page else None


#: The page's table: row key and heading.
PAGE_COLUMNS = (("render", "render"), ("speaker", "speaker"), ("preset", "preset"),
                ("sibilance_band_change_db", "sibilance band (dB)"), ("loudness_change_db", "loudness (dB)"),
                ("peak_dbfs", "peak (dBFS)"), ("clipped_samples", "clipped samples"), ("status", "status"))


def write_page(out: Path, results: list[TakeResult]) -> Path:
    """``index.html``: per take its dry and wet excerpts, level-matched, with its summary row.

    The players are matched by the whole take's loudness change (BS.1770), measured
    while rendering; a take whose excerpts are missing is left off the page.
    """
    from emulate.report import listening  # the page: loaded only when written

    heard = [r for r in results if all(os.path.isfile(e) for e in excerpt_paths(out, r.output))]
    rows = [{"render": str(Path(r.output).relative_to(out))} | r.row() for r in heard]
    pairs = [listening.RenderPair(row["render"], *excerpt_paths(out, r.output), r.loudness_change_db,
                                  label=f"through {r.preset}") for r, row in zip(heard, rows)]
    page = listening.page_from_pairs(
        pairs, title=f"Listening: a batch of {len(results)} take(s)", columns=PAGE_COLUMNS, rows=rows,
        notes=(f"Each player holds {EXCERPT_S:g} s of its take from a quarter of the way in (the files "
               f"under {LISTENING_FOLDER}/); the renders themselves are beside that folder.",
               "Listen at a moderate level."))
    takes = tuple(replace(listing, notes=(_row_words(r),)) for listing, r in zip(page.takes, heard))
    return listening.write_page(replace(page, takes=takes, caption="one row per take"), out)


def _row_words(r: TakeResult) -> str:
    figure = lambda v, unit: "n/a" if v is None else f"{v:+.1f} {unit}"  # noqa: E731
    return (f"{r.speaker}, preset {r.preset}: sibilance band {figure(r.sibilance_band_change_db, 'dB')}, "
            f"loudness {figure(r.loudness_change_db, 'dB')}, peak {figure(r.peak_dbfs, 'dBFS')}, "
            f"{r.clipped_samples if r.clipped_samples is not None else 'n/a'} samples clipped ({r.status})")


def totals(results: list[TakeResult]) -> dict:
    """Counts and sums over the takes (for the summary and the command's last lines)."""
    rendered = [r for r in results if r.status == "rendered"]
    return {"takes": len(results), "rendered": len(rendered), "kept": len(results) - len(rendered),
            "speakers": len({r.speaker for r in results}),
            "audio_hours": sum(r.duration_s for r in results) / 3600.0,
            "render_seconds": sum(r.seconds or 0.0 for r in rendered),
            "clipped_takes": sum(1 for r in results if r.clipped_samples)}

