"""The hum finder: mains hum (50 or 60 Hz and its harmonics), its exact frequency and drift.

The finder reads a take in three passes, block by block (memory bounded by a few 4 s segments
and at most 96 short spectra, whatever the take's length):

1. segments: 4 s Hann segments every 2 s (the whole take if shorter, at least 1 s),
   mixed to mono, power spectra up to 1.3 kHz (0.18 Hz bins with zero padding);
2. lines: on the take's steady spectrum (the median over 2 s segments every 0.5 s of their
   power spectra: a mains line is in every segment, a low voice's moving harmonics are
   not), for each harmonic ``k`` of 50 Hz and of 60 Hz the
   line power (the bins within 0.75 Hz of the highest bin within +-0.5 % of ``k * mains``)
   against the larger of the programme's median bin within a sixth of an octave and the
   line's own shoulders (0.75-1.5 Hz beside it), in the same bandwidth (its prominence); a harmonic is present at 10 dB prominence;
3. mains: the family (50 or 60 Hz) with the larger summed prominence of its present
   harmonics, if it has at least one present harmonic *and* that harmonic stands 6 dB
   over the programme around it in at least 60 % of the segments (persistence);
4. frequency: in each segment, each present harmonic's peak refined by a parabola
   through the log powers of its three highest bins (common practice, no source),
   divided by ``k`` and averaged weighted by ``k**2`` times its prominence (higher
   harmonics pin the frequency ``k`` times tighter); the take's frequency is the median over
   segments weighted the same way (a segment where the voice sits on the line counts
   less, and one it pulls far off does not drag the rest: on the hum grid a -50 dBFS
   60.1 Hz line under a 95 Hz voice read 60.218 and 60.113 Hz in the two segments it stood
   out in, their weighted mean 0.062 Hz off; the weighted median over the grid's 64 cases:
   worst 0.014 Hz, RMS 0.0022 Hz, against 0.062 and 0.0078 Hz for the mean, and over 128
   more on other seeds worst 0.008 Hz, RMS 0.0013 and 0.0010 Hz, against 0.007 Hz, 0.0012
   and 0.0009 Hz), its drift the span (max - min) of the segment frequencies;
5. levels and notches: each present harmonic's level (dBFS) and its level over the
   programme in the 1/3-octave band around it (the line taken out), and a suggested notch
   for the fundamental and the three strongest other harmonics (see :class:`HumReport`).

Mains frequency: 50 or 60 Hz, held within about +-0.2 Hz by most grids in normal
operation (common practice); the search allows +-0.5 %.

What this module does *not* do: it does not remove hum (a twin-T does, see the
suggested notches) or look for lines that are not mains harmonics.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from emulate.errors import BadValueError
from emulate.voice.frames import FrameGrid, iter_frame_power
from emulate.voice.notches import SuggestedNotch
from emulate.voice.pooling import disagreement, label_takes, select_takes
from emulate.voice.takes import TakeSource, dbfs, take_finder

__all__ = ["HumLine", "HumReport", "combine_hum", "find_hum"]

#: Nominal mains frequencies, Hz.
MAINS_HZ = (50.0, 60.0)
#: Segment length and hop, s (the whole take when shorter; at least MIN_SECONDS).
SEGMENT_S = 4.0
SEGMENT_HOP_S = 2.0
#: Short segments whose median spectrum tells steady lines from a voice's moving harmonics, s
#: (hop a quarter of it).
STEADY_SEGMENT_S = 2.0
#: At most this many short segments enter the median (spread evenly over a long take).
STEADY_MAX_SEGMENTS = 96
#: Takes shorter than this are reported as too short, s.
MIN_SECONDS = 1.0
#: Highest frequency examined, Hz (harmonics up to this).
TOP_HZ = 1300.0
#: A line is searched within this relative distance of k * mains.
SEARCH_REL = 0.005
#: A line's power is the bins within this of its peak, Hz.
LINE_HALF_WIDTH_HZ = 0.75
#: The programme around a line: this many octaves either side (the line window left out).
AROUND_OCTAVES = 1.0 / 6.0
#: A harmonic is present at this prominence over the programme's median bin, dB ...
PRESENT_DB = 10.0
#: ... and hum is found when a present harmonic stands this far over the programme ...
SEGMENT_PRESENT_DB = 6.0
#: ... in at least this share of the segments.
PERSISTENT_SHARE = 0.6
#: Notches suggested besides the fundamental (the strongest harmonics).
EXTRA_NOTCHES = 3
#: Suggested depth: the line brought this far under the programme, within DEPTH_RANGE_DB.
UNDER_PROGRAMME_DB = 10.0
DEPTH_RANGE_DB = (20.0, 40.0)
#: Suggested Q at most this (narrower notches are touchy to build and to trim).
Q_MAX = 10.0


@dataclass(frozen=True)
class HumLine:
    """One mains harmonic in a take.

    Attributes
    ----------
    k : int
        Harmonic number (1 = the fundamental).
    frequency_hz : float
        ``k`` times the measured fundamental, Hz.
    level_dbfs : float
        Its level, dBFS (AES17: a full-scale sine reads 0 dBFS).
    above_programme_db : float
        Its level over the programme in the 1/3-octave band around it (line left out), dB.
    prominence_db : float
        Its power over the programme's median bin in the same bandwidth, dB.
    """

    k: int
    frequency_hz: float
    level_dbfs: float
    above_programme_db: float
    prominence_db: float


@dataclass(frozen=True)
class HumReport:
    """What the hum finder learned about one take.

    Attributes
    ----------
    found : bool
        True when persistent mains hum was found; else ``reason`` says why not.
    reason : str
        Empty when found.
    seconds : float
        Duration analysed, s.
    mains_hz : float
        50 or 60 (NaN when not found).
    fundamental_hz : float
        Measured fundamental, Hz (mean over segments).
    drift_hz : float
        Span of the segment fundamentals, Hz (0 with one segment).
    track : tuple of (float, float)
        ``(time_s, fundamental_hz)`` per segment, the time at the segment's centre.
    lines : tuple of HumLine
        The present harmonics, by harmonic number.
    set_aside : tuple of str
        Pooled reports only: the takes left out and why (see :func:`combine_hum`).
    digest : str
        One take's samples (:meth:`~emulate.voice.takes.TakeSource.digest`): pooling tells exact
        repeats by it (empty for a pooled report or one made by hand).
    notches : tuple of SuggestedNotch
        The fundamental (if present) and up to three strongest other harmonics, each with
        ``depth = clip(above_programme + 10, 20, 40)`` dB and the highest Q (at most 10)
        that still holds that depth over the drift: a second-order notch's response near
        its null is ``2 Q |df| / f`` (the -3 dB width being ``f / Q``), so
        ``Q = f 10**(-depth/20) / (k drift / 2)``.
    """

    found: bool
    reason: str
    seconds: float
    mains_hz: float
    fundamental_hz: float
    drift_hz: float
    track: tuple[tuple[float, float], ...]
    lines: tuple[HumLine, ...]
    notches: tuple[SuggestedNotch, ...]
    set_aside: tuple[str, ...] = ()
    digest: str = field(default="", repr=False, compare=False)


def _not_found(reason: str, seconds: float, set_aside=()) -> HumReport:
    nan = float("nan")
    return HumReport(False, reason, float(seconds), nan, nan, nan, (), (), (), tuple(set_aside))


def _segment_grid(source: TakeSource) -> tuple[FrameGrid, int]:
    """The segments' framing and the number of bins kept (up to TOP_HZ)."""
    seconds = min(SEGMENT_S, source.seconds)
    grid = FrameGrid.at(source.fs, seconds, min(SEGMENT_HOP_S, seconds / 2.0), padded=True)
    return grid, int(np.searchsorted(grid.f_hz, TOP_HZ))


def _iter_segments(source: TakeSource, grid: FrameGrid, top: int):
    """Power spectra (bins up to TOP_HZ) of the take's segments, one at a time."""
    for power in iter_frame_power(source, grid):
        yield from power[:, :top]


def _mean_spectrum(source: TakeSource, grid: FrameGrid, top: int) -> np.ndarray:
    """Mean power spectrum of the segments (one pass; memory: one spectrum)."""
    total, count = np.zeros(top), 0
    for power in _iter_segments(source, grid, top):
        total += power
        count += 1
    return total / max(count, 1)


def _steady_spectrum(source: TakeSource, f_hz: np.ndarray, mean: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """What stays in every part of the take: the median over short segments of their power
    spectra (a mains line is in all of them; a voice's moving low harmonics in a few), and
    its bin frequencies; the mean spectrum when the take holds under three short segments.
    At most STEADY_MAX_SEGMENTS segments, spread evenly over the take (bounded memory)."""
    grid = FrameGrid.at(source.fs, STEADY_SEGMENT_S, STEADY_SEGMENT_S / 4.0, padded=True)
    if source.seconds < STEADY_SEGMENT_S * 1.5:
        return mean, f_hz
    top = int(np.searchsorted(grid.f_hz, TOP_HZ))
    count = 1 + (source.frames - grid.size) // grid.hop
    step = -(-count // STEADY_MAX_SEGMENTS)
    kept = [power.copy() for i, power in enumerate(_iter_segments(source, grid, top)) if i % step == 0]  # a
    # copy: a view would keep its whole chunk of full-length spectra alive
    return np.median(np.stack(kept), axis=0), grid.f_hz[:top]


def _line(power: np.ndarray, f_hz: np.ndarray, centre_hz: float) -> tuple[int, float, float]:
    """Peak bin near ``centre_hz``, line power around it, and what a line must stand over there.

    That is the larger of the programme's median bin within a sixth of an octave and the
    mean of the shoulders just beside the line (a voice harmonic smeared over hertz has
    shoulders as high as its top; a mains line has none), both in the line's bandwidth.
    """
    df = f_hz[1] - f_hz[0]
    lo, hi = np.searchsorted(f_hz, centre_hz * (1 - SEARCH_REL)), np.searchsorted(f_hz, centre_hz * (1 + SEARCH_REL))
    peak = lo + int(np.argmax(power[lo : hi + 1]))
    half = max(1, round(LINE_HALF_WIDTH_HZ / df))
    line = float(power[max(peak - half, 0) : peak + half + 1].sum())
    a = np.searchsorted(f_hz, centre_hz * 2.0 ** -AROUND_OCTAVES)
    b = np.searchsorted(f_hz, centre_hz * 2.0 ** AROUND_OCTAVES)
    around = np.concatenate((power[a : max(peak - 2 * half, a)], power[peak + 2 * half + 1 : b]))
    shoulders = np.concatenate((power[max(peak - 4 * half, 0) : max(peak - 2 * half, 0)],
                                power[peak + 2 * half + 1 : peak + 4 * half + 1]))
    floor = max(float(np.median(around)) if around.size else 0.0, float(shoulders.mean()) if shoulders.size else 0.0)
    return peak, line, floor * (2 * half + 1)


def _refined_hz(power: np.ndarray, f_hz: np.ndarray, peak: int) -> float:
    """Peak frequency refined by a parabola through the log powers of three bins."""
    if not 0 < peak < power.size - 1 or np.any(power[peak - 1 : peak + 2] <= 0):
        return float(f_hz[peak])
    y0, y1, y2 = np.log(power[peak - 1 : peak + 2])
    bend = y0 - 2.0 * y1 + y2
    shift = 0.5 * (y0 - y2) / bend if bend < 0 else 0.0
    return float(f_hz[peak] + np.clip(shift, -0.5, 0.5) * (f_hz[1] - f_hz[0]))


def _prominences(mean: np.ndarray, f_hz: np.ndarray, mains: float) -> dict[int, float]:
    """Prominence (dB) of each harmonic of ``mains`` on the mean spectrum."""
    found = {}
    for k in range(1, int(TOP_HZ * 2.0 ** -AROUND_OCTAVES // mains) + 1):
        _, line, around = _line(mean, f_hz, k * mains)
        found[k] = 10.0 * math.log10(line / around) if around > 0 and line > 0 else (math.inf if line > 0 else 0.0)
    return found


def _segment_fundamental(power, f_hz, mains, present) -> tuple[float, float, float]:
    """One segment's fundamental (Hz), the share of present harmonics standing 6 dB out, and
    the segment's weight (the sum of the harmonics' weights)."""
    estimates, weights, standing = [], [], 0
    for k in present:
        peak, line, around = _line(power, f_hz, k * mains)
        if around > 0 and line < around * 10.0 ** (SEGMENT_PRESENT_DB / 10.0):
            continue
        standing += 1
        estimates.append(_refined_hz(power, f_hz, peak) / k)
        weights.append(k * k * (line / around if around > 0 else 1e12))
    if not estimates:
        return float("nan"), 0.0, 0.0
    return float(np.average(estimates, weights=weights)), standing / len(present), float(np.sum(weights))


def _weighted_median(values, weights) -> float:
    """The value at half the total weight (values sorted; the lower one at a tie).

    Example
    -------
    >>> _weighted_median([50.0, 50.2, 50.01], [1.0, 1.0, 1.5])
    50.01
    """
    order = np.argsort(values)
    cumulative = np.cumsum(np.asarray(weights, dtype=np.float64)[order])
    return float(np.asarray(values)[order][np.searchsorted(cumulative, cumulative[-1] / 2.0)])


def _level_above_programme(mean: np.ndarray, f_hz: np.ndarray, f_line: float) -> tuple[float, float]:
    """Line level (dBFS) and its level over the programme in the 1/3 octave around it (dB)."""
    _, line, _ = _line(mean, f_hz, f_line)
    a, b = np.searchsorted(f_hz, f_line * 2.0 ** (-1 / 6)), np.searchsorted(f_hz, f_line * 2.0 ** (1 / 6))
    band = mean[a:b].sum() - line
    level = float(dbfs(line))
    return level, level - float(dbfs(max(band, 1e-30)))


def _suggestions(lines, drift_hz: float) -> tuple[SuggestedNotch, ...]:
    """The fundamental and the strongest other harmonics, depth and Q as documented."""
    chosen = [line for line in lines if line.k == 1]
    others = sorted((line for line in lines if line.k != 1), key=lambda line: -line.above_programme_db)
    chosen += others[:EXTRA_NOTCHES]
    notches = []
    for line in chosen:
        depth = float(np.clip(line.above_programme_db + UNDER_PROGRAMME_DB, *DEPTH_RANGE_DB))
        spread = max(line.k * drift_hz / 2.0, 1e-9)
        q = float(np.clip(line.frequency_hz * 10.0 ** (-depth / 20.0) / spread, 0.25, Q_MAX))
        label = "hum fundamental" if line.k == 1 else f"hum harmonic {line.k}"
        notches.append(SuggestedNotch.of(label, line.frequency_hz, q, depth))
    return tuple(notches)


@take_finder
def find_hum(x, fs: float | None = None, *, mains_hz: float | None = None) -> HumReport:
    """Find mains hum in a take: its fundamental to a few hundredths of a hertz, drift, harmonics.

    Parameters
    ----------
    x : array_like or TakeSource
        Audio, ``(frames, channels)`` or 1-D, or a
        :class:`~emulate.voice.takes.TakeSource` (a file read in blocks).
    fs : float
        Sample rate in Hz, 16000 to 384000 (for an array).
    mains_hz : {50, 60}, optional
        Look only for this family; default both (the stronger wins).

    Returns
    -------
    HumReport
        ``found`` is False (with a ``reason``) for a take under 1 s or without
        persistent mains lines.

    Raises
    ------
    BadValueError
        Bad audio or rate, or ``mains_hz`` not 50 or 60.

    Example
    -------
    >>> t = np.arange(10 * 48000) / 48000
    >>> rng = np.random.default_rng(0)
    >>> x = 0.01 * rng.standard_normal(t.size) + 0.003 * np.sin(2 * np.pi * 50.02 * t)
    >>> r = find_hum(x, 48000)
    >>> r.found, round(r.fundamental_hz, 2)
    (True, 50.02)
    """
    source = TakeSource.of(x, fs)
    if mains_hz is not None and float(mains_hz) not in MAINS_HZ:
        raise BadValueError(f"mains_hz = {mains_hz!r} is not allowed; choose 50 or 60 (or none for both)")
    if source.seconds < MIN_SECONDS:
        return _not_found(f"too short: {source.seconds:.3f} s, need at least {MIN_SECONDS:g} s", source.seconds)
    grid, top = _segment_grid(source)
    f_hz, mean = grid.f_hz[:top], _mean_spectrum(source, grid, top)
    steady, steady_f_hz = _steady_spectrum(source, f_hz, mean)
    families = {m: _prominences(steady, steady_f_hz, m)
                for m in (MAINS_HZ if mains_hz is None else (float(mains_hz),))}
    score = {m: sum(p for p in proms.values() if p >= PRESENT_DB) for m, proms in families.items()}
    mains = max(score, key=score.get)
    present = [k for k, p in families[mains].items() if p >= PRESENT_DB]
    if not present:
        return _not_found("no mains line stands out of the programme", source.seconds)
    per_segment = [_segment_fundamental(power, f_hz, mains, present) for power in _iter_segments(source, grid, top)]
    persistent = np.mean([share > 0 for _, share, _ in per_segment])
    if persistent < PERSISTENT_SHARE:
        return _not_found(f"mains lines in only {persistent:.0%} of the take (need {PERSISTENT_SHARE:.0%})",
                          source.seconds)
    track = tuple((float((i * grid.hop + grid.size / 2) / grid.fs), f) for i, (f, _, _) in enumerate(per_segment)
                  if np.isfinite(f))
    f0s = np.array([f for _, f in track])
    weights = [w for f, _, w in per_segment if np.isfinite(f)]
    f0, drift = _weighted_median(f0s, weights), float(f0s.max() - f0s.min())
    lines = []
    for k in present:
        level, above = _level_above_programme(mean, f_hz, k * f0)
        lines.append(HumLine(k, k * f0, level, above, families[mains][k]))
    return HumReport(True, "", source.seconds, mains, f0, drift, track, tuple(lines),
                     _suggestions(lines, drift))


#: Pooling sets aside a take whose fundamental lies this far from the others', octaves
#: (50 against 60 Hz mains is 0.26 octave; one grid's wander is under 0.01).
OUTLIER_OCTAVES = 0.1


def combine_hum(reports, labels=None) -> HumReport:
    """Pool the hum found in several takes (one session, one mains) into one report.

    Exact repeats (the same samples, by ``digest``; reports without one, by their figures)
    are left out and, with three or more takes that found hum, one whose
    fundamental lies far from the others' (another mains family) is set aside
    (:func:`emulate.voice.pooling.select_takes`; ``set_aside`` says which and why). Of the
    rest, the takes that found hum are pooled: the fundamental is their mean weighted by
    duration; the drift spans every segment of every pooled take (one notch must hold its
    depth over all of them); each harmonic's level over the programme is the highest any
    take measured (the notch is deep enough for the worst take). Hum is found when at least
    half the pooled takes found it and their fundamentals agree (each within OUTLIER_OCTAVES of
    their median, :func:`emulate.voice.pooling.disagreement`: two takes of different mains
    cannot be told apart, and the pooled report says they disagree).

    Parameters
    ----------
    reports : iterable of HumReport
        One or more reports of :func:`find_hum`.
    labels : sequence of str, optional
        A name per report for ``set_aside`` (default "take 1", "take 2", ...).

    Returns
    -------
    HumReport

    Raises
    ------
    BadValueError
        No reports, something other than a HumReport, or labels that do not match.

    Example
    -------
    >>> t = np.arange(6 * 48000) / 48000
    >>> noise = np.random.default_rng(0).standard_normal(t.size) * 0.01
    >>> takes = [noise + 0.003 * np.sin(2 * np.pi * f * t) for f in (49.98, 50.02)]
    >>> r = combine_hum([find_hum(x, 48000) for x in takes])
    >>> r.found, round(r.fundamental_hz, 2), r.drift_hz >= 0.04
    (True, 50.0, True)
    """
    reports = list(reports)
    if not reports or not all(isinstance(r, HumReport) for r in reports):
        raise BadValueError(f"reports = {reports!r:.80} is not allowed; need one or more HumReport")
    labels = label_takes(len(reports), labels)
    keys = [r.digest or (r.seconds, r.fundamental_hz, r.track, r.lines) for r in reports]
    kept, aside = select_takes(keys, [r.fundamental_hz for r in reports], labels, OUTLIER_OCTAVES, "fundamental")
    pool = [reports[i] for i in kept]
    seconds = sum(r.seconds for r in pool)
    found = [r for r in pool if r.found]
    if not found or len(found) < len(pool) / 2.0:
        return _not_found(f"hum in {len(found)} of {len(pool)} takes (need half)", seconds, aside)
    apart = disagreement([r.fundamental_hz for r in found], OUTLIER_OCTAVES, "fundamentals")
    if apart:
        return _not_found(f"{apart}; one session has one mains, so pool takes of one or read each alone", seconds, aside)
    mains = found[0].mains_hz  # one family: 50 and 60 Hz lie 0.26 octave apart, beyond the agreement above
    f0 = float(np.average([r.fundamental_hz for r in found], weights=[r.seconds for r in found]))
    points = [f for r in found for _, f in r.track]
    drift = float(max(points) - min(points))
    lines = []
    for k in sorted({line.k for r in found for line in r.lines}):
        worst = max((line for r in found for line in r.lines if line.k == k), key=lambda x: x.above_programme_db)
        lines.append(HumLine(k, k * f0, worst.level_dbfs, worst.above_programme_db, worst.prominence_db))
    track = tuple(point for r in found for point in r.track)
    return HumReport(True, "", seconds, mains, f0, drift, track, tuple(lines), _suggestions(lines, drift),
                     tuple(aside))
