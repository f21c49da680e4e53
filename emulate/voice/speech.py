"""Speech analysis: the sibilance finder, band levels, intelligibility weighting, loudness.

The finder reads a take top to bottom in five stages:

1. validate and mix to mono (the mean of the channels);
2. frame: 25 ms Hann frames every 12.5 ms, one-sided power spectra by ``rfft``
   (scaled so the bins of a frame sum to its mean square);
3. mark sibilant frames: the search band holds at least half of the frame's
   energy above 50 Hz, *and* the frame's search-band level is at least 15 dB
   above the take's search-band floor (10th percentile over frames) and above
   an absolute gate of -70 dBFS;
4. average the sibilant frames' spectra onto a fixed 1/24-octave grid
   (:data:`SPECTRUM_GRID_HZ`), so reports of takes at different rates combine;
5. describe that spectrum: peak, band, and a suggested notch
   (see :class:`SibilanceReport`).

Levels are in dBFS with the AES17 convention: a full-scale sine reads 0 dBFS,
so a mean square ``ms`` reads ``10*log10(2*ms)``.

What this module does *not* do: it does not filter audio or know about circuits;
the suggested notch is a starting point for the design and sweep tools.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pyloudnorm

from emulate.errors import BadValueError
from emulate.validate import check_range

__all__ = [
    "ANSI_S35_BANDS_HZ",
    "ANSI_S35_IMPORTANCE",
    "SPECTRUM_GRID_HZ",
    "SibilanceReport",
    "band_gains_db",
    "band_level_db",
    "compare_levels",
    "take_levels",
    "TakeLevels",
    "combine_reports",
    "find_sibilance",
    "intelligibility_cost",
    "intelligibility_cost_of_takes",
    "loudness_change_db",
    "loudness_lufs",
    "most_sibilant_excerpt",
    "sibilance_reduction_db",
]

# --------------------------------------------------------------------------- reference tables

#: One-third-octave band centre frequencies in Hz, ANSI S3.5-1997 Table 3 (18 bands).
# fmt: off
ANSI_S35_BANDS_HZ = np.array(
    [160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250, 1600, 2000, 2500, 3150, 4000, 5000, 6300, 8000],
    dtype=np.float64,
)
ANSI_S35_BANDS_HZ.setflags(write=False)

#: Band-importance function for average speech, ANSI S3.5-1997 Table 3 (one-third-octave
#: procedure); sums to 1. Values are from memory of the published standard (not checked
#: against a copy of it); several independent public SII implementations carry the same numbers.
ANSI_S35_IMPORTANCE = np.array(
    [0.0083, 0.0095, 0.0150, 0.0289, 0.0440, 0.0578, 0.0653, 0.0711, 0.0818,
     0.0844, 0.0882, 0.0898, 0.0868, 0.0844, 0.0771, 0.0527, 0.0364, 0.0185],
    dtype=np.float64,
)
# fmt: on
ANSI_S35_IMPORTANCE.setflags(write=False)

#: Band audibility range of the SII, in dB: audibility runs from 0 to 1 over a 30 dB
#: range of speech level (ANSI S3.5-1997 sec. 4, band audibility (E - D + 15)/30).
SII_DYNAMIC_RANGE_DB = 30.0

# --------------------------------------------------------------------------- finder settings

#: Sample rates accepted by the analysis, in Hz (endpoints allowed).
MIN_FS_HZ = 16000.0
MAX_FS_HZ = 384000.0
#: Default search band in Hz: covers /sh/ (about 2-4 kHz) and /s/ (about 3.5-8 kHz, Jongman,
#: Wayland & Wong, JASA 108, 2000) and bright female /s/ up to 12 kHz; clipped to Nyquist.
DEFAULT_SEARCH_BAND_HZ = (2000.0, 12000.0)
#: Frame length and hop in seconds.
FRAME_S = 0.025
HOP_S = 0.0125
#: Lowest frequency counted in a frame's energy, in Hz (ignores DC and rumble).
_LOW_CUT_HZ = 50.0
#: A sibilant frame has at least this share of its energy in the search band.
DOMINANCE = 0.5
#: ... and a search-band level this many dB over the take's band floor ...
ABOVE_FLOOR_DB = 15.0
#: ... and over this absolute gate in dBFS.
GATE_DBFS = -70.0
#: Percentile of frame band levels taken as the band floor.
_FLOOR_PERCENTILE = 10.0
#: Digital silence counts as this floor, in dBFS (keeps the distance above the floor finite).
_FLOOR_MIN_DBFS = -120.0
#: Takes shorter than this (seconds) are reported unusable ("too short").
MIN_SECONDS = 0.5
#: A take needs this much sibilant time (seconds) to be usable.
MIN_SIBILANT_S = 0.05
#: Fixed analysis grid: 1/24 octave from 500 Hz to 48 kHz.
SPECTRUM_GRID_HZ = 500.0 * 2.0 ** (np.arange(0, 24 * math.log2(96.0) + 1) / 24.0)
SPECTRUM_GRID_HZ.setflags(write=False)
#: Peak picking smooths the spectrum over 1/3 octave (8 grid points).
_SMOOTH_POINTS = 8
#: The reported band holds the central 80 % of the sibilant energy in the search band.
_BAND_SHARE = 0.8
#: Suggestions: a passive network (Q 0.25) unless the band's matching Q reaches this;
#: then an active network at that Q, at most ACTIVE_Q_MAX (bootstrapped twin-T, MT-225).
PASSIVE_Q = 0.25
ACTIVE_Q_FROM = 1.0
ACTIVE_Q_MAX = 5.0
#: Depth: bring the sibilant band 10 dB under the vowel level, within 3-12 dB
#: (common practice, no source: de-essing deeper than about 12 dB starts to sound lisped).
_TARGET_UNDER_VOWELS_DB = 10.0
_DEPTH_RANGE_DB = (3.0, 12.0)
_DEFAULT_DEPTH_DB = 6.0


# --------------------------------------------------------------------------- the report


@dataclass(frozen=True)
class SibilanceReport:
    """What the finder learned about one take (or several takes of one speaker).

    Attributes
    ----------
    usable : bool
        False when the take is too short, silent or has no sibilant frames;
        then ``reason`` says which and the frequency fields are NaN.
    reason : str
        Empty when usable.
    seconds : float
        Duration analysed, in seconds.
    sibilant_seconds : float
        Time marked sibilant, in seconds (frames x hop).
    sibilant_fraction : float
        ``sibilant_seconds / seconds``, 0..1.
    peak_hz : float
        Peak of the 1/3-octave-smoothed mean sibilant spectrum inside the search band.
    band_hz : (float, float)
        ``(lo, hi)`` in Hz holding the central 80 % of the sibilant energy in the search band.
    search_band_hz : (float, float)
        The search band actually used (after clipping to Nyquist), in Hz.
    sibilant_level_db : float
        Mean search-band level of the sibilant frames, dBFS.
    voiced_level_db : float
        Mean level of the other frames 15 dB or more over the take's floor (10th percentile
        of frame levels): the vowels, dBFS; NaN if none.
    dominance : float
        Mean share of the sibilant frames' energy that lies in the search band, 0.5..1.
    snr_db : float
        Sibilant band level over the take's band floor, dB (digital silence counts as -120 dBFS).
    confidence : float
        0..1, the product of three terms: sibilant time (``min(1, sibilant_seconds / 1 s)``),
        dominance (``0.5 + 0.5*(dominance - 0.5)/0.5``) and distance above the floor
        (``0.5 + 0.5*min(1, (snr_db - 15)/15)``). Only sibilant time can bring it to 0.
    suggested_notch_hz : float
        Geometric centre of ``band_hz``: a second-order notch's -3 dB edges have this
        geometric mean, so a notch of width ``hi - lo`` there spans the band.
    suggested_q : float
        0.25 (passive twin-T) when the band's matching Q ``f0 / (hi - lo)`` is below 1
        (band wider than its centre frequency); otherwise that Q, at most 5 (active).
    suggested_depth_db : float
        Dip wanted at the notch, dB: the sibilant level minus the vowel level plus 10 dB,
        within 3..12 dB (6 dB when the take has no vowels).
    suggested_mix : float
        Wet share ``m`` giving that depth with ``out = (1 - m)*dry + m*wet`` and a full
        null in ``wet``: ``m = 1 - 10**(-depth/20)``.
    spectrum_db : tuple of float
        Mean sibilant power density on :data:`SPECTRUM_GRID_HZ`, dB re 1/Hz (for combining).
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
    dominance: float
    snr_db: float
    confidence: float
    suggested_notch_hz: float
    suggested_q: float
    suggested_depth_db: float
    suggested_mix: float
    spectrum_db: tuple[float, ...] = field(repr=False)


# --------------------------------------------------------------------------- validation


def _check_fs(fs: float) -> float:
    """Validate an analysis sample rate in Hz; allowed 16000 to 384000 inclusive."""
    check_range("sample rate (Hz)", fs, MIN_FS_HZ, MAX_FS_HZ)
    return float(fs)


def _as_take(x, name: str = "take") -> np.ndarray:
    """Validate audio and return it as ``(frames, channels)`` float64.

    Accepts 1-D (mono) or 2-D ``(frames, channels)`` finite real samples, at least one frame.
    """
    try:
        arr = np.asarray(x, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise BadValueError(
            f"{name} is not numeric audio ({exc}); expected a (frames, channels) array"
        ) from None
    if arr.ndim == 1:
        arr = arr[:, None]
    if arr.ndim != 2 or arr.shape[0] == 0 or arr.shape[1] == 0:
        raise BadValueError(
            f"{name} has shape {arr.shape}; expected (frames, channels) with frames, channels >= 1"
        )
    if not np.all(np.isfinite(arr)):
        raise BadValueError(
            f"{name} holds {np.count_nonzero(~np.isfinite(arr))} NaN/inf samples; all must be finite"
        )
    return arr


def _check_band(band_hz, fs: float, name: str = "band_hz") -> tuple[float, float]:
    """Validate a band ``(lo, hi)`` in Hz with ``0 < lo < hi``; clip ``hi`` to Nyquist.

    After clipping, ``lo`` must still lie below Nyquist (``fs / 2``).
    """
    try:
        lo, hi = (float(v) for v in band_hz)
    except (TypeError, ValueError):
        raise BadValueError(f"{name} = {band_hz!r} is not a (lo, hi) pair of frequencies in Hz") from None
    nyquist = fs / 2.0
    if not (0.0 < lo < hi and lo < nyquist):
        raise BadValueError(
            f"{name} = ({lo:g}, {hi:g}) Hz is not allowed; need 0 < lo < hi and lo < {nyquist:g} Hz (Nyquist)"
        )
    return lo, min(hi, nyquist)


def _check_seconds(seconds: float, name: str) -> float:
    """Validate a positive finite duration in seconds."""
    seconds = float(seconds)
    if not (np.isfinite(seconds) and seconds > 0.0):
        raise BadValueError(f"{name} = {seconds!r} s is not allowed; need a finite duration > 0 s")
    return seconds


# --------------------------------------------------------------------------- shared analysis


def _dbfs(mean_square):
    """Mean square to dBFS (AES17: full-scale sine = 0 dBFS); 0 gives -inf."""
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(2.0 * np.asarray(mean_square, dtype=np.float64))


@dataclass(frozen=True)
class _Frames:
    """Framed analysis of a mono take (internal)."""

    f_hz: np.ndarray  # bin frequencies, Hz
    power: np.ndarray  # (n_frames, bins) one-sided power; a frame's bins sum to its mean square
    band_power: np.ndarray  # (n_frames,) power in the search band
    total_power: np.ndarray  # (n_frames,) power above the low cut
    band_floor: float  # the take's search-band floor (mean square)
    total_floor: float  # the take's whole-band floor (mean square)
    sibilant: np.ndarray  # (n_frames,) bool
    hop: int  # samples


def _frame_power(mono: np.ndarray, fs: float) -> tuple[np.ndarray, np.ndarray, int]:
    """Hann-windowed frames of ``FRAME_S`` every ``HOP_S``; returns ``f_hz, power, hop``."""
    size, hop = round(FRAME_S * fs), round(HOP_S * fs)
    nfft = 1 << (size - 1).bit_length()
    window = np.hanning(size)
    frames = np.lib.stride_tricks.sliding_window_view(mono, size)[::hop] * window
    spectrum = np.fft.rfft(frames, nfft, axis=1)
    power = spectrum.real**2 + spectrum.imag**2
    power[:, 1:-1] *= 2.0  # one-sided
    power /= size * np.sum(window**2)  # Parseval with the window's power
    return np.fft.rfftfreq(nfft, 1.0 / fs), power, hop


def _analyse(x, fs: float, search_band_hz) -> tuple[_Frames | None, tuple[float, float], float]:
    """Stages 1-3 of the finder; returns the frames (None if shorter than a frame), band, duration."""
    take = _as_take(x)
    fs = _check_fs(fs)
    band = _check_band(search_band_hz, fs, "search_band_hz")
    mono = take.mean(axis=1)
    seconds = mono.size / fs
    if mono.size < round(FRAME_S * fs):
        return None, band, seconds
    f_hz, power, hop = _frame_power(mono, fs)
    lo, hi = np.searchsorted(f_hz, band[0], "left"), np.searchsorted(f_hz, band[1], "right")
    band_power = power[:, lo:hi].sum(axis=1)
    total_power = power[:, np.searchsorted(f_hz, _LOW_CUT_HZ) :].sum(axis=1)
    floor_min = 10.0 ** (_FLOOR_MIN_DBFS / 10.0) / 2.0
    floor = max(float(np.percentile(band_power, _FLOOR_PERCENTILE)), floor_min)
    threshold = max(floor * 10.0 ** (ABOVE_FLOOR_DB / 10.0), 10.0 ** (GATE_DBFS / 10.0) / 2.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        share = np.where(total_power > 0, band_power / total_power, 0.0)
    sibilant = (share >= DOMINANCE) & (band_power > threshold)
    total_floor = max(float(np.percentile(total_power, _FLOOR_PERCENTILE)), floor_min)
    return _Frames(f_hz, power, band_power, total_power, floor, total_floor, sibilant, hop), band, seconds


def _grid_density(f_hz: np.ndarray, power: np.ndarray) -> np.ndarray:
    """Mean power per Hz of the bins, interpolated onto :data:`SPECTRUM_GRID_HZ` (0 beyond)."""
    density = power / (f_hz[1] - f_hz[0])
    return np.interp(SPECTRUM_GRID_HZ, f_hz, density, left=0.0, right=0.0)


def _peak_and_band(density: np.ndarray, band: tuple[float, float]) -> tuple[float, tuple[float, float]]:
    """Stage 5a: smoothed peak and central-80 % band of a grid density inside ``band``."""
    grid = SPECTRUM_GRID_HZ
    smooth = np.convolve(density, np.ones(_SMOOTH_POINTS) / _SMOOTH_POINTS, mode="same")
    inside = (grid >= band[0]) & (grid <= band[1])
    peak_hz = float(grid[inside][np.argmax(smooth[inside])])
    f, d = grid[inside], density[inside]
    cumulative = np.concatenate(([0.0], np.cumsum(0.5 * (d[1:] + d[:-1]) * np.diff(f))))
    cumulative /= cumulative[-1]
    tail = (1.0 - _BAND_SHARE) / 2.0
    lo, hi = np.interp([tail, 1.0 - tail], cumulative, f)
    return peak_hz, (float(lo), float(hi))


def _suggest(band_hz: tuple[float, float], excess_db: float) -> tuple[float, float, float, float]:
    """Stage 5b: notch frequency (Hz), Q, depth (dB) and mix for a sibilant band."""
    lo, hi = band_hz
    notch_hz = math.sqrt(lo * hi)
    q_match = notch_hz / (hi - lo)
    q = PASSIVE_Q if q_match < ACTIVE_Q_FROM else min(q_match, ACTIVE_Q_MAX)
    depth = _DEFAULT_DEPTH_DB if not np.isfinite(excess_db) else excess_db + _TARGET_UNDER_VOWELS_DB
    depth = float(np.clip(depth, *_DEPTH_RANGE_DB))
    return notch_hz, q, depth, 1.0 - 10.0 ** (-depth / 20.0)


def _confidence(sibilant_seconds: float, dominance: float, snr_db: float) -> float:
    """Confidence 0..1 as documented on :class:`SibilanceReport`."""
    t_time = min(1.0, sibilant_seconds / 1.0)
    t_dom = 0.5 + 0.5 * float(np.clip((dominance - DOMINANCE) / (1.0 - DOMINANCE), 0.0, 1.0))
    t_snr = 0.5 + 0.5 * float(np.clip((snr_db - ABOVE_FLOOR_DB) / 15.0, 0.0, 1.0))
    return t_time * t_dom * t_snr


def _unusable(reason: str, seconds: float, band: tuple[float, float], sibilant_seconds: float = 0.0):
    """A report that carries only a reason."""
    nan = float("nan")
    return SibilanceReport(
        False,
        reason,
        seconds,
        sibilant_seconds,
        sibilant_seconds / seconds if seconds else 0.0,
        nan,
        (nan, nan),
        band,
        nan,
        nan,
        nan,
        nan,
        0.0,
        nan,
        nan,
        nan,
        nan,
        (),
    )


def _report(seconds, sibilant_seconds, density, band, sib_level_db, voiced_level_db, dominance, snr_db):
    """Stage 5: build a usable report from the pooled measurements (find and combine share it)."""
    peak_hz, band_hz = _peak_and_band(density, band)
    notch_hz, q, depth, mix = _suggest(band_hz, sib_level_db - voiced_level_db)
    with np.errstate(divide="ignore"):
        spectrum_db = tuple(float(v) for v in 10.0 * np.log10(np.maximum(density, 1e-30)))
    seconds, sibilant_seconds = float(seconds), float(sibilant_seconds)
    return SibilanceReport(
        True,
        "",
        seconds,
        sibilant_seconds,
        sibilant_seconds / seconds,
        peak_hz,
        band_hz,
        band,
        sib_level_db,
        voiced_level_db,
        dominance,
        snr_db,
        float(_confidence(sibilant_seconds, dominance, snr_db)),
        float(notch_hz),
        float(q),
        depth,
        float(mix),
        spectrum_db,
    )


# --------------------------------------------------------------------------- public API


def find_sibilance(x, fs: float, *, search_band_hz=DEFAULT_SEARCH_BAND_HZ) -> SibilanceReport:
    """Find a take's sibilance and suggest a notch for it.

    Parameters
    ----------
    x : array_like
        Audio, ``(frames, channels)`` or 1-D mono, finite floats (full scale 1.0).
        Several channels are averaged to mono for the analysis.
    fs : float
        Sample rate in Hz, 16000 to 384000.
    search_band_hz : (float, float), optional
        Where to look for sibilance, in Hz; default (2000, 12000) covers /sh/ and /s/.
        ``hi`` is clipped to Nyquist; ``0 < lo < hi`` and ``lo`` below Nyquist.

    Returns
    -------
    SibilanceReport
        ``usable`` is False (with a ``reason``) when the take is shorter than 0.5 s,
        silent (no frame above -70 dBFS), or has under 50 ms of sibilant frames.

    Raises
    ------
    BadValueError
        On empty, non-finite or wrongly shaped audio, a rate below 16 kHz or above
        384 kHz, or a bad search band.

    Example
    -------
    >>> from emulate.voice.synth import voice_like_take
    >>> r = find_sibilance(voice_like_take(48000, 3.0, pitch_hz=120, sibilance_hz=6000), 48000)
    >>> r.usable and 5000 < r.peak_hz < 7000
    True
    """
    frames, band, seconds = _analyse(x, fs, search_band_hz)
    if frames is None or seconds < MIN_SECONDS:
        return _unusable(f"too short: {seconds:.3f} s, need at least {MIN_SECONDS:g} s", seconds, band)
    loudest = float(_dbfs(frames.total_power.max()))
    if loudest < GATE_DBFS:
        return _unusable(
            f"silence: loudest frame {loudest:.1f} dBFS, below the {GATE_DBFS:g} dBFS gate", seconds, band
        )
    sib = frames.sibilant
    sibilant_seconds = float(np.count_nonzero(sib) * frames.hop / fs)
    if sibilant_seconds < MIN_SIBILANT_S:
        return _unusable(
            f"no sibilant frames: {sibilant_seconds:.3f} s found, need {MIN_SIBILANT_S:g} s",
            seconds,
            band,
            sibilant_seconds,
        )
    band_power = frames.band_power[sib]
    voiced = ~sib & (frames.total_power > frames.total_floor * 10.0 ** (ABOVE_FLOOR_DB / 10.0))
    voiced_level = float(_dbfs(frames.total_power[voiced].mean())) if voiced.any() else float("nan")
    mean_power = sib.astype(np.float64) @ frames.power / np.count_nonzero(sib)  # BLAS, no copy
    return _report(
        seconds,
        sibilant_seconds,
        _grid_density(frames.f_hz, mean_power),
        band,
        float(_dbfs(band_power.mean())),
        voiced_level,
        float(np.mean(band_power / frames.total_power[sib])),
        float(10.0 * np.log10(band_power.mean() / frames.band_floor)),
    )


def combine_reports(reports) -> SibilanceReport:
    """Pool several takes of one speaker into one report.

    Usable reports are pooled; unusable ones add only their duration. The mean
    sibilant spectra are summed weighted by sibilant time (so louder and longer
    sibilance counts more), then described like one take; the sibilant and vowel
    levels pool as energy (time-weighted mean square), dominance and distance above
    the floor as sibilant-time-weighted means. The search band is the union of the
    takes' bands.

    Parameters
    ----------
    reports : iterable of SibilanceReport
        At least one report.

    Returns
    -------
    SibilanceReport
        Unusable (reason "no usable takes") if none of ``reports`` is usable.

    Raises
    ------
    BadValueError
        If ``reports`` is empty or holds something that is not a SibilanceReport.

    Example
    -------
    >>> from emulate.voice.synth import voice_like_take
    >>> takes = [voice_like_take(48000, 2.0, pitch_hz=120, sibilance_hz=6000, seed=s) for s in (1, 2)]
    >>> r = combine_reports([find_sibilance(t, 48000) for t in takes])
    >>> round(r.seconds, 1)
    4.0
    """
    reports = list(reports)
    if not reports or not all(isinstance(r, SibilanceReport) for r in reports):
        raise BadValueError(f"reports = {reports!r:.80} is not allowed; need one or more SibilanceReport")
    seconds = sum(r.seconds for r in reports)
    good = [r for r in reports if r.usable]
    band = (min(r.search_band_hz[0] for r in reports), max(r.search_band_hz[1] for r in reports))
    if not good:
        return _unusable("no usable takes", seconds, band, sum(r.sibilant_seconds for r in reports))
    w = np.array([r.sibilant_seconds for r in good])
    density = w @ (10.0 ** (np.array([r.spectrum_db for r in good]) / 10.0)) / w.sum()

    def pooled_db(levels):
        levels = np.array(levels)
        ok = np.isfinite(levels)
        return (
            float(10 * np.log10(np.sum(w[ok] * 10 ** (levels[ok] / 10)) / w[ok].sum()))
            if ok.any()
            else float("nan")
        )

    return _report(
        seconds,
        float(w.sum()),
        density,
        band,
        pooled_db([r.sibilant_level_db for r in good]),
        pooled_db([r.voiced_level_db for r in good]),
        float(np.average([r.dominance for r in good], weights=w)),
        float(np.average([r.snr_db for r in good], weights=w)),
    )


def most_sibilant_excerpt(x, fs: float, seconds: float = 3.0, *, search_band_hz=DEFAULT_SEARCH_BAND_HZ):
    """Locate the stretch of a take with the most sibilant energy, for a listening reel.

    Slides a window of ``seconds`` over the frames and picks the one holding the most
    search-band energy in sibilant frames (in all frames if none is sibilant).

    Parameters
    ----------
    x : array_like
        Audio as for :func:`find_sibilance`.
    fs : float
        Sample rate in Hz, 16000 to 384000.
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
    seconds = _check_seconds(seconds, "seconds")
    frames, _, total_s = _analyse(x, fs, search_band_hz)
    n, length = round(total_s * fs), round(seconds * fs)
    if frames is None or length >= n:
        return 0, n
    score = frames.band_power * frames.sibilant if frames.sibilant.any() else frames.band_power
    width = max(1, min(score.size, round(length / frames.hop)))
    sums = np.convolve(score, np.ones(width), mode="valid")
    start = min(int(np.argmax(sums)) * frames.hop, n - length)
    return start, start + length


def _band_levels_db(x, fs: float, bands_hz) -> np.ndarray:
    """Whole-take levels (dBFS) in each band: one ``rfft`` per channel, power averaged over channels."""
    take = _as_take(x)
    fs = _check_fs(fs)
    bands = [_check_band(b, fs) for b in bands_hz]
    n = take.shape[0]
    power = np.abs(np.fft.rfft(take, axis=0)) ** 2
    power[1 : (n + 1) // 2] *= 2.0  # one-sided (the Nyquist bin exists only for even n)
    power = power.mean(axis=1) / n**2
    f_hz = np.fft.rfftfreq(n, 1.0 / fs)
    cumulative = np.concatenate(([0.0], np.cumsum(power)))
    bounds = np.array(bands)
    edges = np.stack(
        [np.searchsorted(f_hz, bounds[:, 0], "left"), np.searchsorted(f_hz, bounds[:, 1], "right")]
    )
    return _dbfs(cumulative[edges[1]] - cumulative[edges[0]])


def band_level_db(x, fs: float, band_hz) -> float:
    """Level of a take's energy in a band, in dBFS.

    The whole take's spectrum (one FFT per channel, no window) is summed over the bins
    in ``[lo, hi]``; the mean square in the band is averaged over channels (not mixed,
    so opposite-phase channels do not cancel) and read in dBFS (AES17: a full-scale
    sine in the band reads 0 dBFS).

    Parameters
    ----------
    x : array_like
        Audio, ``(frames, channels)`` or 1-D, finite floats.
    fs : float
        Sample rate in Hz, 16000 to 384000.
    band_hz : (float, float)
        ``(lo, hi)`` in Hz, ``0 < lo < hi``, ``lo`` below Nyquist; ``hi`` is clipped to Nyquist.

    Returns
    -------
    float
        Level in dBFS; ``-inf`` when there is no energy in the band.

    Raises
    ------
    BadValueError
        On bad audio, rate or band.

    Example
    -------
    >>> t = np.arange(48000) / 48000
    >>> round(band_level_db(np.sin(2 * np.pi * 1000 * t), 48000, (500, 2000)), 2)
    0.0
    """
    return float(_band_levels_db(x, fs, [band_hz])[0])


def sibilance_reduction_db(dry, wet, fs: float, band_hz) -> float:
    """How much quieter the band is in ``wet`` than in ``dry``, in dB (positive = reduced).

    Whole-take band levels by :func:`band_level_db`; with ``band_hz`` the sibilant band
    the sibilant frames dominate both. The takes may differ in length (filter tails).
    The unwindowed whole-take spectrum leaks from the take's ends, so reductions beyond
    about 50 dB read low; a twin-T with a mix does far less than that.

    Parameters
    ----------
    dry, wet : array_like
        The unprocessed and processed takes, same channel count.
    fs : float
        Sample rate in Hz, 16000 to 384000.
    band_hz : (float, float)
        The band in Hz, as for :func:`band_level_db`.

    Returns
    -------
    float
        ``band_level_db(dry) - band_level_db(wet)`` in dB (``inf`` if ``wet`` is silent there).

    Raises
    ------
    BadValueError
        On bad audio, rate or band, differing channel counts, or a ``dry`` take with
        no energy in the band.

    Example
    -------
    >>> x = np.random.default_rng(0).standard_normal(48000) * 0.1
    >>> round(sibilance_reduction_db(x, 0.5 * x, 48000, (4000, 8000)), 2)
    6.02
    """
    dry_db, wet_db = _pair_levels_db(dry, wet, fs, [band_hz])
    return _reduction_db(dry_db[0], wet_db[0], band_hz)


def _reduction_db(dry_db: float, wet_db: float, band_hz) -> float:
    if not np.isfinite(dry_db):
        raise BadValueError(f"dry take has no energy in band_hz = {tuple(band_hz)!r} Hz; nothing to reduce")
    return float(dry_db - wet_db)


def _pair_levels_db(dry, wet, fs, bands_hz):
    """Band levels (dBFS) of a dry/wet pair with matching channel counts."""
    dry, wet = _as_take(dry, "dry"), _as_take(wet, "wet")
    if dry.shape[1] != wet.shape[1]:
        raise BadValueError(f"dry has {dry.shape[1]} channels and wet {wet.shape[1]}; they must match")
    dry_db, wet_db = _band_levels_db(dry, fs, bands_hz), _band_levels_db(wet, fs, bands_hz)
    return dry_db, wet_db


def _ansi_band_edges_hz() -> list[tuple[float, float]]:
    """One-third-octave edges ``centre * 2**(+-1/6)`` of the ANSI S3.5 bands (ANSI S3.5-1997 Table 3)."""
    return [(c * 2.0 ** (-1 / 6), c * 2.0 ** (1 / 6)) for c in ANSI_S35_BANDS_HZ]


def band_gains_db(dry, wet, fs: float) -> np.ndarray:
    """Gain from ``dry`` to ``wet`` in each ANSI S3.5 one-third-octave band, in dB.

    Parameters
    ----------
    dry, wet : array_like
        Unprocessed and processed takes, same channel count.
    fs : float
        Sample rate in Hz, 16000 to 384000 (the 8 kHz band is clipped at Nyquist).

    Returns
    -------
    numpy.ndarray
        18 gains in dB, ordered like :data:`ANSI_S35_BANDS_HZ`; 0 dB where ``dry`` has
        no energy in a band (nothing there to lose).

    Raises
    ------
    BadValueError
        On bad audio or rate, or differing channel counts.

    Example
    -------
    >>> x = np.random.default_rng(0).standard_normal(48000) * 0.1
    >>> np.allclose(band_gains_db(x, 0.5 * x, 48000), -6.0206)
    True
    """
    dry_db, wet_db = _pair_levels_db(dry, wet, fs, _ansi_band_edges_hz())
    return _band_gains(dry_db, wet_db)


def _band_gains(dry_db: np.ndarray, wet_db: np.ndarray) -> np.ndarray:
    """Gains in dB; 0 where the dry take has nothing in a band (nothing there to lose)."""
    with np.errstate(invalid="ignore"):
        gains = wet_db - dry_db
    return np.where(np.isfinite(dry_db), gains, 0.0)


def intelligibility_cost(gain_db_at_bands) -> float:
    """Importance-weighted share of speech audibility lost to a gain change, 0..1.

    Mapping (our simple reading of the SII, ANSI S3.5-1997): each band's speech spans a
    30 dB audibility range whose bottom sits at the listener's threshold, so a cut of
    ``g`` dB removes ``min(g, 30)/30`` of the band's audibility and a boost restores
    nothing. The cost is ``sum(I_i * clip(-g_i / 30, 0, 1))`` with ``I_i`` the average-
    speech band importances (:data:`ANSI_S35_IMPORTANCE`). It is a worst case for a
    listener at threshold; a loud, clean take loses less. 0 means nothing lost, 1 all.

    Parameters
    ----------
    gain_db_at_bands : array_like
        18 gains in dB at :data:`ANSI_S35_BANDS_HZ` (e.g. a filter response there);
        finite, or ``-inf`` for a band removed entirely.

    Returns
    -------
    float
        The cost, 0..1.

    Raises
    ------
    BadValueError
        If there are not 18 gains, or a gain is NaN or ``+inf``.

    Example
    -------
    >>> round(intelligibility_cost(np.full(18, -15.0)), 3)
    0.5
    """
    try:
        g = np.asarray(gain_db_at_bands, dtype=np.float64)
    except (TypeError, ValueError):
        raise BadValueError(
            f"gain_db_at_bands = {gain_db_at_bands!r:.60} is not numeric; need 18 gains in dB"
        ) from None
    if g.shape != ANSI_S35_BANDS_HZ.shape or np.any(np.isnan(g) | (g == np.inf)):
        raise BadValueError(
            f"gain_db_at_bands has shape {g.shape} / values {g!r:.60}; need 18 gains in dB, not NaN or +inf"
        )
    lost = np.clip(-g / SII_DYNAMIC_RANGE_DB, 0.0, 1.0)
    return float(np.sum(ANSI_S35_IMPORTANCE * lost))


def intelligibility_cost_of_takes(dry, wet, fs: float) -> float:
    """:func:`intelligibility_cost` of the band gains measured from ``dry`` to ``wet``.

    Parameters
    ----------
    dry, wet : array_like
        Unprocessed and processed takes, same channel count.
    fs : float
        Sample rate in Hz, 16000 to 384000.

    Returns
    -------
    float
        The cost, 0..1.

    Raises
    ------
    BadValueError
        On bad audio or rate, or differing channel counts.

    Example
    -------
    >>> x = np.random.default_rng(0).standard_normal(48000) * 0.1
    >>> intelligibility_cost_of_takes(x, x, 48000)
    0.0
    """
    return intelligibility_cost(band_gains_db(dry, wet, fs))


#: Shortest take for integrated loudness: one BS.1770 gating block, in seconds.
LOUDNESS_BLOCK_S = 0.4


def loudness_lufs(x, fs: float) -> float:
    """Integrated loudness by ITU-R BS.1770-4 (K-weighting, 400 ms blocks, gating), in LUFS.

    Delegates to the pyloudnorm package (its K-weighting that matches the published
    48 kHz coefficients, redesigned for other rates). Channels are weighted as BS.1770 orders them
    (L, R, C at 1.0; Ls, Rs at 1.41); at most 5 channels. No fallback for short takes:
    a take shorter than one 400 ms gating block is an error, since BS.1770 defines no
    integrated loudness for it.

    Parameters
    ----------
    x : array_like
        Audio, ``(frames, channels)`` or 1-D, finite floats, at least 0.4 s, 1-5 channels.
    fs : float
        Sample rate in Hz, 16000 to 384000.

    Returns
    -------
    float
        Loudness in LUFS; ``-inf`` when every block is below the -70 LUFS absolute gate.

    Raises
    ------
    BadValueError
        On bad audio or rate, more than 5 channels, or a take shorter than 0.4 s.

    Example
    -------
    >>> t = np.arange(48000) / 48000
    >>> round(loudness_lufs(np.sin(2 * np.pi * 997 * t), 48000), 1)
    -3.0
    """
    take = _as_take(x)
    fs = _check_fs(fs)
    if take.shape[1] > 5:
        raise BadValueError(f"take has {take.shape[1]} channels; loudness allows 1 to 5 (L, R, C, Ls, Rs)")
    if take.shape[0] < LOUDNESS_BLOCK_S * fs:
        raise BadValueError(
            f"take is {take.shape[0] / fs:.3f} s long; integrated loudness needs at least "
            f"{LOUDNESS_BLOCK_S:g} s (one BS.1770 gating block)"
        )
    # filter_class "DeMan": the K-weighting design (De Man, AES 145, 2018) whose coefficients
    # equal ITU-R BS.1770-4 Annex 1 Tables 1-2 at 48 kHz; pyloudnorm's default cookbook design
    # reads a full-scale 997 Hz sine 0.04 dB low.
    return float(pyloudnorm.Meter(fs, filter_class="DeMan").integrated_loudness(take))


def loudness_change_db(dry, wet, fs: float) -> float:
    """Change of integrated loudness from ``dry`` to ``wet``, in dB (LU); negative = quieter.

    Parameters
    ----------
    dry, wet : array_like
        Unprocessed and processed takes, each as for :func:`loudness_lufs`.
    fs : float
        Sample rate in Hz, 16000 to 384000.

    Returns
    -------
    float
        ``loudness_lufs(wet) - loudness_lufs(dry)``; ``-inf`` if ``wet`` is below the gate.

    Raises
    ------
    BadValueError
        As :func:`loudness_lufs`, or if ``dry`` is below the -70 LUFS gate.

    Example
    -------
    >>> x = np.random.default_rng(0).standard_normal(48000) * 0.1
    >>> round(loudness_change_db(x, 0.5 * x, 48000), 2)
    -6.02
    """
    return _loudness_change(loudness_lufs(dry, fs), loudness_lufs(wet, fs))


def _loudness_change(dry_lufs: float, wet_lufs: float) -> float:
    if not np.isfinite(dry_lufs):
        raise BadValueError("dry take is below the -70 LUFS gate; its loudness change is undefined")
    return wet_lufs - dry_lufs


# --------------------------------------------------------------------------- dry/wet comparison


@dataclass(frozen=True)
class TakeLevels:
    """What comparing a dry take with a wet one needs of each, measured once.

    ``band_db`` is the level in ``band_hz`` (dBFS), ``ansi_bands_db`` the levels in
    the ANSI S3.5 one-third-octave bands, ``lufs`` the BS.1770 loudness. A sweep
    measures the dry take once and each render once, instead of both per setting.
    """

    band_hz: tuple[float, float]
    band_db: float
    ansi_bands_db: np.ndarray
    lufs: float


def take_levels(x, fs: float, band_hz) -> TakeLevels:
    """Measure a take for :func:`compare_levels` (one FFT for every band, one loudness)."""
    levels = _band_levels_db(x, fs, [band_hz, *_ansi_band_edges_hz()])
    return TakeLevels(tuple(band_hz), float(levels[0]), levels[1:], loudness_lufs(x, fs))


def compare_levels(dry: TakeLevels, wet: TakeLevels) -> dict[str, float]:
    """Sibilance-band reduction, loudness change and intelligibility cost, dry to wet.

    The same figures as :func:`sibilance_reduction_db`, :func:`loudness_change_db`
    and :func:`intelligibility_cost_of_takes` give for the two takes.
    """
    return {"sibilance_reduction_db": _reduction_db(dry.band_db, wet.band_db, dry.band_hz),
            "loudness_change_db": _loudness_change(dry.lufs, wet.lufs),
            "intelligibility_cost": intelligibility_cost(_band_gains(dry.ansi_bands_db, wet.ansi_bands_db))}
