"""The sibilance finder: where a speaker's /s/ (and /sh/) sits, and a notch for it.

The finder reads a take top to bottom in two passes over its blocks; the per-frame band
powers of the first go to a table on disk (:class:`~emulate.voice.frame_table.FrameTable`),
so memory grows only by a few bytes a frame whatever the take's length (see
:mod:`emulate.voice.frames` for the framing):

1. frame: 25 ms Hann frames every 12.5 ms, mixed to mono; for every frame keep its power
   in 1/6-octave bands from 300 Hz (energy below, hum and breath, is ignored);
2. floors: each band's floor is its 10th percentile over the take, so the floor near
   the sibilant band is the noise (or the vowels' own upper harmonics) *there*;
3. mark sibilant frames: the best half-octave inside the search band stands at least
   5 dB over its floors and 5 dB more than the voice bands (300-1500 Hz) rise, together,
   over their 10th percentile (voiced energy, a louder or brighter vowel, rises with its own lower harmonics;
   a sibilant does not), the excess is within 22 dB of the take's loud frames (/s/ and /sh/
   are the loudest fricatives, /f/, /th/ and aspiration weaker: from memory of Jongman,
   Wayland & Wong, JASA 108, 2000) and
   over -70 dBFS; runs shorter than 80 ms are dropped (stop bursts, aspiration, clicks:
   on 50 recorded words without sibilants it cut those reported from 19 to 12; /s/ lasts longer);
4. classify each run by the band where its excess peaks: /s/-like at 4 kHz and above,
   /sh/-like from 2.5 kHz, none below (a bright vowel's second formant; a boundary between the two fricatives' spectral peaks, from memory
   of Jongman, Wayland & Wong, JASA 108, 2000);
5. second pass: average each class's frame spectra, and the vowel frames' spectra, onto
   the shared log-frequency grid; describe each class (peak, band, levels) and suggest a
   notch for the class asked for (default /s/). A class's peak is read only within the range
   that defines it (step 4, one band wider): the frames of an /s/ run also hold the vowel
   under it, and a bright vowel's formant at 2-3 kHz can outweigh a soft /s/ (on the whole
   controlled grid 1319 of 1365 clearly audible cases found, 33 of the misses read at 2.18
   kHz whatever the burst's centre; so: 1348, the rest 3.0-4.3 % off, negative controls 0 of 27
   either way, the recorded words unchanged).

Levels are in dBFS (AES17: a full-scale sine reads 0 dBFS).

What this module does *not* do: it does not filter audio or know about circuits; the
suggested notch is a starting point for the design and sweep tools.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from emulate.errors import BadValueError
from emulate.voice.frame_table import FrameTable
from emulate.voice.frames import (LOG_GRID_HZ, BandSummer, FrameGrid, band_floors, grid_band_power,
                                  grid_density, iter_frame_power, log_band_edges, peak_on_grid, runs,
                                  smooth_on_grid)
from emulate.voice.pooling import disagreement, label_takes, select_takes
from emulate.voice.takes import TakeSource, check_band, check_seconds, dbfs, take_finder

__all__ = [
    "DEFAULT_SEARCH_BAND_HZ",
    "KINDS",
    "SibilanceReport",
    "SibilantClass",
    "aimed_at",
    "combine_reports",
    "find_sibilance",
    "most_sibilant_excerpt",
]

#: Default search band in Hz: /sh/ (about 2-4 kHz) and /s/ (about 3.5-8 kHz, Jongman,
#: Wayland & Wong, JASA 108, 2000) and bright /s/ up to 12 kHz; clipped to Nyquist.
DEFAULT_SEARCH_BAND_HZ = (2000.0, 12000.0)
#: The two classes of sibilant the finder tells apart.
KINDS = ("s", "sh")
#: Frame length and hop in seconds.
FRAME_S = 0.025
HOP_S = 0.0125
#: Energy below this is ignored (hum, rumble, breath), Hz.
LOW_CUT_HZ = 300.0
#: Analysis bands per octave (the per-band floors live on them).
BANDS_PER_OCTAVE = 6
#: Percentile of a band's frame powers taken as its floor.
FLOOR_PERCENTILE = 10.0
#: A sibilant frame's best half-octave in the search band is this far over its floors, dB.
ABOVE_FLOOR_DB = 5.0
#: ... and this far over the rise of the voice bands (300 Hz to VOICE_TOP_HZ) over their
#: floors, dB: voiced energy (a louder or brighter vowel) rises there too, a sibilant does not ...
ABOVE_VOICE_RISE_DB = 5.0
VOICE_TOP_HZ = 1500.0
#: ... the rise measured from this percentile of the voice bands' summed power (or the sum of
#: their floors, if higher: continuous vowels whose bands dip apart at different times do
#: not make every vowel look like a rise).
VOICE_PERCENTILE = 10.0
#: ... its excess lies within this of the take's loud frames (95th percentile), dB (on 50
#: recorded words without sibilants, 30 dB let 14 through, 22 dB lets 6; the controlled grid
#: and the recorded /s/ and /sh/ are found as before) ...
UNDER_LOUD_MAX_DB = 22.0
#: ... and over this absolute gate, dBFS.
GATE_DBFS = -70.0
#: Runs of sibilant frames shorter than this are dropped, s.
MIN_RUN_S = 0.08
#: /s/-like runs peak at or above this, /sh/-like below down to SH_FROM_HZ; a run peaking
#: lower is a bright vowel's formant, not a sibilant, Hz.
S_FROM_HZ = 4000.0
SH_FROM_HZ = 2500.0
#: Vowel frames: not sibilant, within this of the loud frames, dB.
VOWEL_WITHIN_DB = 20.0
#: Takes shorter than this (seconds) are reported unusable ("too short").
MIN_SECONDS = 0.5
#: A class needs this much sibilant time (seconds) to be usable.
MIN_SIBILANT_S = 0.05
#: The class spectrum is smoothed over this many octaves before its peak is read.
SMOOTH_OCTAVES = 1.0 / 12.0
#: The reported band reaches down this far from the peak, dB.
BAND_DROP_DB = 6.0
#: Suggested Q range: the passive twin-T (0.25) up to a moderate active one (MT-225).
Q_RANGE = (0.25, 5.0)
#: Suggested depth: half the sibilant excess over the vowels in the band, approaching
#: at most this many dB smoothly (our rule, common practice and no source: de-essing
#: deeper than about 12 dB starts to sound lisped).
DEPTH_MAX_DB = 12.0
#: Depth suggested when a take has no vowel frames to compare with, dB.
DEFAULT_DEPTH_DB = 6.0
#: Pooling sets aside a take whose peak lies this far from the others', octaves.
OUTLIER_OCTAVES = 0.25


@dataclass(frozen=True)
class SibilantClass:
    """One class of sibilant (/s/-like or /sh/-like) in a take or a pool of takes.

    Attributes
    ----------
    kind : str
        ``"s"`` or ``"sh"``.
    usable : bool
        False when the class has under 50 ms of sibilant time (``reason`` says so);
        then the frequency and level fields are NaN.
    reason : str
        Empty when usable.
    sibilant_seconds : float
        Time marked as this class, seconds.
    peak_hz : float
        Peak of the class's excess spectrum over the floors (1/12-octave smoothed,
        parabola-refined), Hz; always inside ``band_hz``.
    band_hz : (float, float)
        Where that excess stays within 6 dB of its peak, Hz (inside the search band).
    sibilant_level_db : float
        Mean level of the class's frames in ``band_hz``, dBFS.
    vowel_level_db : float
        Mean level of the vowel frames in the same band, dBFS; NaN without vowels.
    snr_db : float
        Sibilant level over the band floors in ``band_hz``, dB.
    confidence : float
        0..1: ``min(1, sibilant_seconds / 1 s) * (0.5 + 0.5 * clip((snr_db - 5) / 15, 0, 1))``.
    suggested_notch_hz : float
        The peak, Hz.
    suggested_q : float
        ``peak / (hi - lo)``: a notch as wide as the band, within 0.25 (passive) to 5.
    suggested_depth_db : float
        ``12 * tanh(d / 24)`` dB with ``d`` the sibilant level over the vowel level in the
        band (at least 0): about half of ``d`` for small excesses, never over 12 dB;
        6 dB without vowels.
    suggested_mix : float
        ``1 - 10**(-depth / 20)``: the wet share that gives that depth with a full null.
    """

    kind: str
    usable: bool
    reason: str
    sibilant_seconds: float
    peak_hz: float
    band_hz: tuple[float, float]
    sibilant_level_db: float
    vowel_level_db: float
    snr_db: float
    confidence: float
    suggested_notch_hz: float
    suggested_q: float
    suggested_depth_db: float
    suggested_mix: float
    densities: tuple = field(default=(), repr=False, compare=False)  # sibilant, vowel, floor on LOG_GRID_HZ


@dataclass(frozen=True)
class SibilanceReport:
    """What the finder learned about one take (or several takes of one speaker).

    The headline fields repeat those of ``classes[target]`` (the class the notch is
    aimed at); ``classes`` holds both classes.

    Attributes
    ----------
    usable, reason
        As the target class's; or unusable with the take's reason (too short, silence).
    seconds : float
        Duration analysed, seconds (pooled: the takes' sum, repeats not counted).
    sibilant_seconds, sibilant_fraction
        Target-class time, seconds, and its share of ``seconds``.
    peak_hz, band_hz, sibilant_level_db, voiced_level_db, snr_db, confidence,
    suggested_notch_hz, suggested_q, suggested_depth_db, suggested_mix
        The target class's figures (``voiced_level_db`` is its ``vowel_level_db``).
    search_band_hz : (float, float)
        The search band used (after clipping to Nyquist), Hz.
    target : str
        ``"s"`` or ``"sh"``.
    classes : dict
        ``{"s": SibilantClass, "sh": SibilantClass}``.
    set_aside : tuple of str
        Pooled reports only: the takes left out and why (repeats, one outlying take).
    digest : str
        One take's samples (:meth:`~emulate.voice.takes.TakeSource.digest`): pooling tells exact
        repeats by it (empty for a pooled report or one made by hand).
    """

    usable: bool
    reason: str
    seconds: float
    sibilant_seconds: float
    sibilant_fraction: float
    peak_hz: float
    band_hz: tuple[float, float]
    search_band_hz: tuple[float, float]
    sibilant_level_db: float
    voiced_level_db: float
    snr_db: float
    confidence: float
    suggested_notch_hz: float
    suggested_q: float
    suggested_depth_db: float
    suggested_mix: float
    target: str = "s"
    classes: dict = field(default_factory=dict, repr=False, compare=False)
    set_aside: tuple[str, ...] = ()
    digest: str = field(default="", repr=False, compare=False)


# --------------------------------------------------------------------------- describing a class

_NAN = float("nan")


def _unusable_class(kind: str, reason: str, sibilant_seconds: float = 0.0) -> SibilantClass:
    return SibilantClass(kind, False, reason, sibilant_seconds, _NAN, (_NAN, _NAN), _NAN, _NAN, _NAN, 0.0,
                         _NAN, _NAN, _NAN, _NAN)


def _suggest(peak_hz: float, band_hz, sibilant_db: float, vowel_db: float) -> tuple[float, float, float]:
    """Q, depth (dB) and mix from the measured band and levels (continuous, see SibilantClass)."""
    q = float(np.clip(peak_hz / (band_hz[1] - band_hz[0]), *Q_RANGE))
    excess = sibilant_db - vowel_db
    depth = DEFAULT_DEPTH_DB if not np.isfinite(excess) else DEPTH_MAX_DB * math.tanh(max(excess, 0.0) / 24.0)
    return q, float(depth), float(1.0 - 10.0 ** (-depth / 20.0))


def _describe(kind: str, sibilant_seconds: float, densities, search_band) -> SibilantClass:
    """A class from its mean sibilant, vowel and floor densities on the grid (find and pool share it)."""
    if sibilant_seconds < MIN_SIBILANT_S:
        return _unusable_class(kind, f"no /{kind}/ frames: {sibilant_seconds:.3f} s found, need "
                                     f"{MIN_SIBILANT_S:g} s", sibilant_seconds)
    sibilant, vowel, floor = densities
    excess = smooth_on_grid(np.maximum(sibilant - floor, 0.0), SMOOTH_OCTAVES)
    own = _class_range(kind, search_band)
    if not np.any(excess[(LOG_GRID_HZ >= own[0]) & (LOG_GRID_HZ <= own[1])] > 0):
        return _unusable_class(kind, f"nothing over the floors in the /{kind}/ range of the search band",
                               sibilant_seconds)
    peak_hz, band_hz = peak_on_grid(excess, search_band, BAND_DROP_DB, peak_within_hz=own)
    sib_db, vowel_db, floor_db = (float(dbfs(grid_band_power(d, band_hz))) for d in densities)
    q, depth, mix = _suggest(peak_hz, band_hz, sib_db, vowel_db)
    snr = sib_db - floor_db
    confidence = min(1.0, sibilant_seconds) * (0.5 + 0.5 * float(np.clip((snr - ABOVE_FLOOR_DB) / 15.0, 0, 1)))
    return SibilantClass(kind, True, "", float(sibilant_seconds), peak_hz, band_hz, sib_db, vowel_db, snr,
                         confidence, peak_hz, q, depth, mix, tuple(densities))


def _class_range(kind: str, search_band) -> tuple[float, float]:
    """Where a class's peak may lie: the range that defines it (its runs peak there, see
    S_FROM_HZ) widened by one analysis band (a run is classed by its peak band's centre), within
    the search band. The frames of an /s/ run can hold a bright vowel's formant at 2-3 kHz that
    outweighs a soft /s/ (on the controlled grid, bursts 12-18 dB under -6 dB/octave vowels were
    read at 2.18 kHz however high they were)."""
    slack = 2.0 ** (1.0 / BANDS_PER_OCTAVE)
    lo, hi = (S_FROM_HZ / slack, math.inf) if kind == "s" else (SH_FROM_HZ / slack, S_FROM_HZ * slack)
    return max(lo, search_band[0]), min(hi, search_band[1])


def _report(seconds, search_band, classes, target, reason="", set_aside=()) -> SibilanceReport:
    """The headline report for ``target`` (or an unusable one carrying ``reason``)."""
    chosen = classes.get(target) or _unusable_class(target, reason)
    usable = chosen.usable and not reason
    return SibilanceReport(
        usable, reason or chosen.reason, float(seconds), chosen.sibilant_seconds,
        chosen.sibilant_seconds / seconds if seconds else 0.0, chosen.peak_hz, chosen.band_hz,
        tuple(search_band), chosen.sibilant_level_db, chosen.vowel_level_db, chosen.snr_db,
        chosen.confidence, chosen.suggested_notch_hz, chosen.suggested_q, chosen.suggested_depth_db,
        chosen.suggested_mix, target, dict(classes), tuple(set_aside))


def _check_target(target: str) -> str:
    if target not in KINDS:
        raise BadValueError(f"target = {target!r} is not allowed; choose one of {', '.join(KINDS)}")
    return target


# --------------------------------------------------------------------------- the two passes


@dataclass(frozen=True)
class _Detection:
    """Per-frame decisions of pass one (internal; a few bytes a frame, the band powers stay on disk)."""

    grid: FrameGrid
    summer: BandSummer
    floors: np.ndarray  # (bands,)
    search: np.ndarray  # indices of the bands inside the search band
    excess: np.ndarray  # (frames,) search-band power over the floors
    search_power: np.ndarray  # (frames,) search-band power, float32
    kind: np.ndarray  # (frames,) 0 none, 1 /s/, 2 /sh/, 3 vowel
    loudest: float  # the loudest frame's power above the low cut


def _pass_one(source: TakeSource, grid: FrameGrid, summer: BandSummer, table: FrameTable) -> None:
    """Band powers (float32) of every frame, into ``table``."""
    for power in iter_frame_power(source, grid):
        table.append(summer.sum(power))


def _best_half_octave(ratio_num: np.ndarray, ratio_den: np.ndarray) -> np.ndarray:
    """Highest power ratio over any 3 adjacent search bands (half an octave), per frame."""
    width = BANDS_PER_OCTAVE // 2
    num = np.cumsum(np.pad(ratio_num, ((0, 0), (1, 0))), axis=1)
    den = np.cumsum(np.pad(np.broadcast_to(ratio_den, ratio_num.shape), ((0, 0), (1, 0))), axis=1)
    width = min(width, ratio_num.shape[1])
    return ((num[:, width:] - num[:, :-width]) / (den[:, width:] - den[:, :-width])).max(axis=1)


def _decide(band_power: np.ndarray, voice_power: np.ndarray, floors, voice_reference: float, search,
            loud: float) -> tuple[np.ndarray, np.ndarray]:
    """Search-band excess over the floors and the sibilant-candidate mask of some frames (stage 3);
    ``voice_power``: the frames' power in the voice bands, ``voice_reference``: its quiet level."""
    sb = band_power[:, search].astype(np.float64)
    excess = np.maximum(sb - floors[search], 0.0).sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):  # frames of digital silence: never candidates
        snr_db = 10.0 * np.log10(_best_half_octave(sb, floors[search]))
        voice_rise_db = 10.0 * np.log10(voice_power / voice_reference)
        candidate = ((snr_db >= ABOVE_FLOOR_DB) & (snr_db - voice_rise_db >= ABOVE_VOICE_RISE_DB)
                     & (excess >= loud * 10.0 ** (-UNDER_LOUD_MAX_DB / 10.0))
                     & (dbfs(excess) >= GATE_DBFS))
    return excess, candidate


def _frame_sums(table: FrameTable, summer: BandSummer, search) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Per frame: the power above the low cut, in the voice bands and in the search band."""
    voice = summer.centres_hz < VOICE_TOP_HZ
    total, voice_power, search_power = np.empty(table.rows), np.empty(table.rows), np.empty(table.rows, np.float32)
    for start, block in table.chunks():
        part = slice(start, start + block.shape[0])
        total[part] = block.sum(axis=1, dtype=np.float64)
        voice_power[part] = block[:, voice].sum(axis=1, dtype=np.float64)
        search_power[part] = block[:, search].sum(axis=1)
    return total, voice_power, search_power


def _detect(source: TakeSource, band) -> _Detection | None:
    """Pass one and the frame decisions (None when the take is shorter than a frame)."""
    grid = FrameGrid.at(source.fs, FRAME_S, HOP_S, padded=True)
    if source.frames < grid.size:
        return None
    summer = BandSummer(grid.f_hz, log_band_edges(LOW_CUT_HZ, source.fs / 2.0, BANDS_PER_OCTAVE))
    search = np.flatnonzero((summer.centres_hz >= band[0]) & (summer.centres_hz <= band[1]))
    if search.size == 0:
        raise BadValueError(f"search band {band[0]:g}-{band[1]:g} Hz holds no 1/6-octave analysis band; widen it")
    with FrameTable(summer.bins.size) as table:
        _pass_one(source, grid, summer, table)
        return _decisions(table, grid, summer, search)


def _decisions(table: FrameTable, grid: FrameGrid, summer: BandSummer, search) -> _Detection:
    """Floors, candidates, runs and each frame's kind, from the band powers of pass one."""
    floors = band_floors(table, FLOOR_PERCENTILE)
    total, voice_power, search_power = _frame_sums(table, summer, search)
    loud = float(np.percentile(total, 95.0))
    voice_floor = floors[summer.centres_hz < VOICE_TOP_HZ].sum()
    voice_reference = max(float(np.percentile(voice_power, VOICE_PERCENTILE)), voice_floor)
    excess, candidate = np.empty(total.size), np.empty(total.size, bool)
    for start, block in table.chunks():  # in chunks: temporaries stay small for any length
        part = slice(start, start + block.shape[0])
        excess[part], candidate[part] = _decide(block, voice_power[part], floors, voice_reference, search, loud)
    kind = np.zeros(total.size, np.int8)
    min_run = math.ceil(MIN_RUN_S / grid.hop_s - 1e-9)
    for start, stop in runs(candidate):
        if stop - start >= min_run:
            over = np.maximum(table.read(start, stop)[:, search] - floors[search], 0.0)
            peak_band = summer.centres_hz[search][np.argmax(over.sum(axis=0))]
            if peak_band >= SH_FROM_HZ:
                kind[start:stop] = 1 if peak_band >= S_FROM_HZ else 2
    vowel = (kind == 0) & (total >= loud * 10.0 ** (-VOWEL_WITHIN_DB / 10.0)) & (total > 0)
    kind[vowel] = 3
    return _Detection(grid, summer, floors, search, excess, search_power, kind, float(total.max()))


def _pass_two(source: TakeSource, found: _Detection) -> dict[int, np.ndarray]:
    """Mean power spectrum (bins) of the frames of each kind 1..3 (zeros where none)."""
    bins = found.grid.nfft // 2 + 1
    sums = {k: np.zeros(bins) for k in (1, 2, 3)}
    start = 0
    for power in iter_frame_power(source, found.grid):
        kind = found.kind[start : start + power.shape[0]]
        for k in sums:
            chosen = kind == k
            if chosen.any():
                sums[k] += chosen.astype(np.float64) @ power
        start += power.shape[0]
    counts = {k: max(int(np.count_nonzero(found.kind == k)), 1) for k in sums}
    return {k: sums[k] / counts[k] for k in sums}


def _floor_density(found: _Detection) -> np.ndarray:
    """The band floors as a power density on the grid (each band's floor spread over its width)."""
    widths = np.diff(found.summer.edges_hz)
    density = found.floors / widths
    return np.interp(LOG_GRID_HZ, found.summer.centres_hz, density, left=density[0], right=0.0)


# --------------------------------------------------------------------------- public API


@take_finder
def find_sibilance(x, fs: float | None = None, *, search_band_hz=DEFAULT_SEARCH_BAND_HZ,
                   target: str = "s") -> SibilanceReport:
    """Find a take's sibilance (/s/-like and /sh/-like apart) and suggest a notch for one of them.

    Parameters
    ----------
    x : array_like or TakeSource
        Audio, ``(frames, channels)`` or 1-D mono, finite floats (full scale 1.0), or a
        :class:`~emulate.voice.takes.TakeSource` (a file read in blocks; then ``fs`` is
        not needed). Several channels are averaged to mono.
    fs : float
        Sample rate in Hz, 16000 to 384000 (for an array).
    search_band_hz : (float, float), optional
        Where to look for sibilance, Hz; default (2000, 12000). ``hi`` is clipped to
        Nyquist; ``0 < lo < hi`` and ``lo`` below Nyquist; it must hold a 1/6-octave band.
    target : {"s", "sh"}, optional
        The class the headline figures and the suggested notch are for.

    Returns
    -------
    SibilanceReport
        ``usable`` is False (with a ``reason``) when the take is shorter than 0.5 s,
        silent (no frame above -70 dBFS), or has under 50 ms of the target class.

    Raises
    ------
    BadValueError
        On empty, non-finite or wrongly shaped audio, a rate outside 16-384 kHz, a bad
        search band or target.

    Example
    -------
    >>> from emulate.voice.synth import voice_like_take
    >>> r = find_sibilance(voice_like_take(48000, 3.0, pitch_hz=120, sibilance_hz=6000), 48000)
    >>> r.usable and 5700 < r.peak_hz < 6300 and r.band_hz[0] < r.peak_hz < r.band_hz[1]
    True
    """
    source, target = TakeSource.of(x, fs), _check_target(target)
    band = check_band(search_band_hz, source.fs, "search_band_hz")
    seconds = source.seconds
    found = _detect(source, band) if seconds >= MIN_SECONDS else None
    if found is None:
        return _report(seconds, band, {}, target, f"too short: {seconds:.3f} s, need at least {MIN_SECONDS:g} s")
    loudest = float(dbfs(found.loudest))
    if loudest < GATE_DBFS:
        return _report(seconds, band, {}, target,
                       f"silence: loudest frame {loudest:.1f} dBFS, below the {GATE_DBFS:g} dBFS gate")
    means = _pass_two(source, found)
    f_hz, floor = found.grid.f_hz, _floor_density(found)
    vowel = grid_density(f_hz, means[3]) if np.any(found.kind == 3) else np.zeros(LOG_GRID_HZ.size)
    classes = {}
    for code, kind in ((1, "s"), (2, "sh")):
        sibilant_s = float(np.count_nonzero(found.kind == code) * found.grid.hop_s)
        classes[kind] = _describe(kind, sibilant_s, (grid_density(f_hz, means[code]), vowel, floor), band)
    return _report(seconds, band, classes, target)


def _pool_class(kind: str, reports, band) -> SibilantClass:
    """One class pooled over reports, densities weighted by the class's sibilant time."""
    parts = [r.classes[kind] for r in reports if kind in r.classes and r.classes[kind].usable]
    if not parts:
        return _unusable_class(kind, f"no takes with /{kind}/", sum(r.classes[kind].sibilant_seconds
                                                                    for r in reports if kind in r.classes))
    w = np.array([p.sibilant_seconds for p in parts])
    densities = tuple(sum(wi * p.densities[i] for wi, p in zip(w, parts)) / w.sum() for i in range(3))
    return _describe(kind, float(w.sum()), densities, band)


def combine_reports(reports, labels=None) -> SibilanceReport:
    """Pool several takes of one speaker into one report.

    Each class is pooled on its own: the takes' mean spectra are averaged weighted by
    their sibilant time of that class (not by loudness, so one louder take does not
    drag the result), then described like one take. A take that is an exact repeat of
    one already pooled (the same samples, by ``digest``; reports without one, by their
    figures) is left out; with three or more usable takes, one whose target
    peak lies more than a quarter octave from the others' (while they agree) is set
    aside; takes whose target peaks still lie more than that from their median are not
    pooled (the report is unusable and says they disagree: two speakers, or two takes that
    cannot tell which is off). ``set_aside`` names each take left out and why. The search
    band is the union.

    Parameters
    ----------
    reports : iterable of SibilanceReport
        At least one report, all with the same target.
    labels : sequence of str, optional
        A name per report for ``set_aside`` (default "take 1", "take 2", ...).

    Returns
    -------
    SibilanceReport
        Unusable (reason "no usable takes") if no take has the target class.

    Raises
    ------
    BadValueError
        If ``reports`` is empty, holds something else, mixes targets, or ``labels``
        does not match.

    Example
    -------
    >>> from emulate.voice.synth import voice_like_take
    >>> takes = [voice_like_take(48000, 2.0, pitch_hz=120, sibilance_hz=6000, seed=s) for s in (1, 2)]
    >>> r = combine_reports([find_sibilance(t, 48000) for t in takes])
    >>> round(r.seconds, 1), r.usable
    (4.0, True)
    """
    reports = list(reports)
    if not reports or not all(isinstance(r, SibilanceReport) for r in reports):
        raise BadValueError(f"reports = {reports!r:.80} is not allowed; need one or more SibilanceReport")
    labels = label_takes(len(reports), labels)
    if len({r.target for r in reports}) != 1:
        raise BadValueError("combine_reports needs reports with one target")
    target = reports[0].target
    keys = [r.digest or (r.seconds, tuple(sorted((k, c.sibilant_seconds, c.peak_hz, c.sibilant_level_db)
                                                 for k, c in r.classes.items()))) for r in reports]
    peaks = [r.peak_hz if r.usable else float("nan") for r in reports]
    kept, aside = select_takes(keys, peaks, labels, OUTLIER_OCTAVES)
    pool = [reports[i] for i in kept]
    band = (min(r.search_band_hz[0] for r in reports), max(r.search_band_hz[1] for r in reports))
    seconds = sum(r.seconds for r in pool)
    apart = disagreement([r.peak_hz if r.usable else float("nan") for r in pool], OUTLIER_OCTAVES,
                         f"/{target}/ peaks")
    if apart:  # not pooled: no class figures to show either
        return _report(seconds, band, {}, target, f"{apart}; one speaker's sibilance sits in one place, so pool "
                       f"takes of one speaker or read each alone", aside)
    classes = {kind: _pool_class(kind, pool, band) for kind in KINDS}
    reason = "" if any(r.usable for r in pool) else "no usable takes"
    return _report(seconds, band, classes, target, reason, aside)


def most_sibilant_excerpt(x, fs: float | None = None, seconds: float = 3.0, *,
                          search_band_hz=DEFAULT_SEARCH_BAND_HZ):
    """Locate the stretch of a take with the most sibilant energy, for a listening reel.

    Slides a window of ``seconds`` over the frames and picks the one holding the most
    search-band excess (over the floors) in sibilant frames of either class (in all
    frames if none is sibilant).

    Parameters
    ----------
    x : array_like or TakeSource
        Audio as for :func:`find_sibilance`.
    fs : float
        Sample rate in Hz, 16000 to 384000 (for an array).
    seconds : float, optional
        Excerpt length in seconds, > 0. A take no longer than this is returned whole.
    search_band_hz : (float, float), optional
        As for :func:`find_sibilance`.

    Returns
    -------
    (int, int)
        ``(start_frame, stop_frame)`` sample indices, ``x[start:stop]`` is the excerpt.

    Raises
    ------
    BadValueError
        On bad audio, rate, band or length.

    Example
    -------
    >>> from emulate.voice.synth import voice_like_take
    >>> x = voice_like_take(48000, 6.0, pitch_hz=120, sibilance_hz=6000)
    >>> a, b = most_sibilant_excerpt(x, 48000, 2.0)
    >>> b - a
    96000
    """
    seconds = check_seconds(seconds, "seconds")
    source = TakeSource.of(x, fs)
    band = check_band(search_band_hz, source.fs, "search_band_hz")
    n, length = source.frames, round(seconds * source.fs)
    found = _detect(source, band) if length < n else None
    if found is None or found.excess.size == 0:
        return 0, n if found is None else min(n, length)
    sibilant = (found.kind == 1) | (found.kind == 2)
    score = found.excess * sibilant if sibilant.any() else found.search_power
    width = max(1, min(score.size, round(length / found.grid.hop)))
    sums = np.convolve(score, np.ones(width), mode="valid")
    start = min(int(np.argmax(sums)) * found.grid.hop, n - length)
    return start, start + length


def aimed_at(report: SibilanceReport, target: str) -> SibilanceReport:
    """The same report with its headline figures for another class (``"s"`` or ``"sh"``).

    Example
    -------
    >>> from emulate.voice.synth import voice_like_take
    >>> r = find_sibilance(voice_like_take(48000, 2.0, pitch_hz=120, sibilance_hz=6000), 48000)
    >>> aimed_at(r, "sh").target
    'sh'
    """
    target = _check_target(target)
    if not report.classes:
        return replace(report, target=target)
    return _report(report.seconds, report.search_band_hz, report.classes, target, "", report.set_aside)
