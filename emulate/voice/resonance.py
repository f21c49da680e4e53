"""The resonance finder: one narrow, persistent spectral peak (a room mode, a stand or capsule ringing).

The finder reads a take once, block by block:

1. frames: 1 s Hann frames every 0.5 s, mixed to mono (about 0.7 Hz bins with zero
   padding, fine enough for a Q of 20 at 100 Hz, whose -3 dB width is 5 Hz); the mean
   power spectrum over the take, and over each quarter of it;
2. neighbourhood: the mean spectrum on a 1/96-octave grid from 60 Hz to 0.45 fs (at
   most 20 kHz), its level in dB against the running median over +-half an octave; the
   excess is where the take stands over its own neighbourhood;
3. candidates: local maxima of the excess of at least 4 dB; for each, a second-order
   peaking response (the analog prototype of R. Bristow-Johnson's audio EQ cookbook
   peaking filter, ``H(s) = (s^2 + s (A/Q) w0 + w0^2) / (s^2 + s w0 / (A Q) + w0^2)``,
   ``A = 10**(gain/40)``) is fitted by least squares to the excess (dB) within two of its
   widths, on the fine bins: frequency, gain and Q;
4. accepted: a fit with gain >= 5 dB and Q >= 1.5 (narrow: broad tilts and formant
   averages are not ringing), standing at least half its gain over the neighbourhood in
   at least three quarters of the take (persistent), and where the fit explains the
   excess (RMS misfit under a third of the gain);
5. the strongest accepted peak is reported with a suggested notch: at its frequency, its
   Q, as deep as its gain (``mix = 1 - 10**(-gain/20)``).

What this module does *not* do: it does not tell a resonance of the room from one of the
voice or the instrument; a steady tone in the programme reads as a (very narrow)
resonance too.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from emulate.voice.frames import FrameGrid, iter_frame_power
from emulate.voice.notches import SuggestedNotch
from emulate.voice.takes import TakeSource

__all__ = ["ResonancePeak", "ResonanceReport", "find_resonance", "peaking_db"]

#: Frame lengths, s (hop: half a frame): long frames below SPLIT_HZ, short ones above.
LONG_FRAME_S = 1.0
SHORT_FRAME_S = 0.2
SPLIT_HZ = 400.0
#: Takes shorter than this are reported as too short, s.
MIN_SECONDS = 2.0
#: Lowest frequency examined, Hz; the highest is 0.45 fs, at most TOP_HZ.
LOW_HZ = 60.0
TOP_HZ = 20000.0
#: Grid points per octave and the neighbourhood's half width, octaves.
GRID_PER_OCTAVE = 96
NEIGHBOURHOOD_OCTAVES = 1.0
#: A candidate's excess over the neighbourhood, dB.
CANDIDATE_DB = 3.0
#: An accepted peak's fitted gain (dB) and Q ...
MIN_GAIN_DB = 4.0
MIN_Q = 1.5
MAX_Q = 60.0
#: ... its share of quarters where it stands at least half its gain out ...
PERSISTENT_SHARE = 0.75
#: ... and its largest RMS misfit as a share of its gain.
MAX_MISFIT = 1.0 / 3.0
#: Candidates fitted at most (strongest first).
MAX_CANDIDATES = 8


@dataclass(frozen=True)
class ResonancePeak:
    """One narrow persistent peak.

    Attributes
    ----------
    frequency_hz : float
        Centre, Hz.
    q : float
        Q in the cookbook's sense (bandwidth between the half-gain-in-dB points).
    gain_db : float
        Height over the neighbourhood, dB.
    persistence : float
        Share of the take's quarters where it stands out, 0..1.
    """

    frequency_hz: float
    q: float
    gain_db: float
    persistence: float


@dataclass(frozen=True)
class ResonanceReport:
    """What the resonance finder learned about one take.

    Attributes
    ----------
    found : bool
        True when a narrow persistent peak was found; else ``reason`` says why not.
    reason : str
    seconds : float
    peak : ResonancePeak or None
        The strongest accepted peak.
    others : tuple of ResonancePeak
        Further accepted peaks, strongest first.
    notch : SuggestedNotch or None
        At the peak's frequency and Q, as deep as its gain.
    grid_hz, excess_db : numpy.ndarray
        The mean excess over the neighbourhood (dB) the finder read, for pictures.
    """

    found: bool
    reason: str
    seconds: float
    peak: ResonancePeak | None
    others: tuple[ResonancePeak, ...]
    notch: SuggestedNotch | None
    grid_hz: np.ndarray = field(default=None, repr=False, compare=False)
    excess_db: np.ndarray = field(default=None, repr=False, compare=False)


def peaking_db(f_hz, f0_hz: float, gain_db: float, q: float) -> np.ndarray:
    """Magnitude (dB) of the cookbook's analog peaking response at ``f_hz``.

    Example
    -------
    >>> round(float(peaking_db(1000.0, 1000.0, 9.0, 4.0)), 6)
    9.0
    """
    a = 10.0 ** (gain_db / 40.0)
    s = 1j * np.asarray(f_hz, dtype=np.float64) / f0_hz
    h = (s * s + s * (a / q) + 1.0) / (s * s + s / (a * q) + 1.0)
    return 20.0 * np.log10(np.abs(h))


def _grid_hz(fs: float) -> np.ndarray:
    top = min(TOP_HZ, 0.45 * fs)
    return LOW_HZ * 2.0 ** (np.arange(int(GRID_PER_OCTAVE * math.log2(top / LOW_HZ)) + 1) / GRID_PER_OCTAVE)


def _on_grid(f_hz: np.ndarray, power: np.ndarray, grid_hz: np.ndarray) -> np.ndarray:
    """Frame spectra (frames, bins) as mean power per bin in each grid cell (interpolated where a
    cell holds no bin), float32."""
    edges = np.sqrt(grid_hz[1:] * grid_hz[:-1])
    edges = np.concatenate(([grid_hz[0] ** 2 / edges[0]], edges, [grid_hz[-1] ** 2 / edges[-1]]))
    index = np.searchsorted(f_hz, edges)
    count = np.diff(index)
    cumulative = np.concatenate((np.zeros((power.shape[0], 1)), np.cumsum(power, axis=1)), axis=1)
    mean = (cumulative[:, index[1:]] - cumulative[:, index[:-1]]) / np.maximum(count, 1)
    empty = count == 0
    if empty.any():
        mean[:, empty] = np.stack([np.interp(grid_hz[empty], f_hz, row) for row in power])
    return mean.astype(np.float32)


def _frames_excess_db(source: TakeSource, grid_hz: np.ndarray, frame_s: float) -> np.ndarray:
    """Each frame's level on the grid (dB) over its own running median within +-half an octave,
    (frames, grid points) float32; frames of digital silence left out."""
    from scipy.ndimage import median_filter

    grid = FrameGrid.at(source.fs, frame_s, frame_s / 2.0, padded=True)
    width = 2 * round(NEIGHBOURHOOD_OCTAVES * GRID_PER_OCTAVE) + 1
    out = []
    for power in iter_frame_power(source, grid):
        power = power[power.sum(axis=1) > 0]
        level = _level_db(_on_grid(grid.f_hz, power, grid_hz).astype(np.float64))
        out.append((level - median_filter(level, size=(1, width), mode="nearest")).astype(np.float32))
    return np.concatenate(out) if out else np.zeros((0, grid_hz.size), np.float32)


def _spectra(source: TakeSource, grid_hz: np.ndarray) -> tuple[np.ndarray, list[np.ndarray]]:
    """The mean over frames of each frame's excess over its neighbourhood (dB), and the same
    over each quarter of the take: long frames below SPLIT_HZ (resolution), short above
    (a frame holds about one syllable, so one vowel's formants do not persist)."""
    low = grid_hz < SPLIT_HZ
    parts = [_frames_excess_db(source, grid_hz, LONG_FRAME_S)[:, low],
             _frames_excess_db(source, grid_hz, SHORT_FRAME_S)[:, ~low]]
    mean = np.concatenate([p.mean(axis=0) for p in parts])
    quarters = [np.concatenate([q.mean(axis=0) for q in qs])
                for qs in zip(*(np.array_split(p, 4) for p in parts)) if all(q.size for q in qs)]
    return mean, quarters


def _level_db(power: np.ndarray) -> np.ndarray:
    return 10.0 * np.log10(np.maximum(power, 1e-30))


def _fit(grid_hz, level, excess, i: int) -> tuple[float, float, float, float] | None:
    """Fit peaking response + a level tilt near grid point ``i``; (f0, gain, Q, misfit) or None."""
    from scipy.optimize import least_squares

    centre, gain0 = float(grid_hz[i]), float(excess[i])
    half = excess >= gain0 / 2.0
    lo, hi = i, i
    while lo > 0 and half[lo - 1]:
        lo -= 1
    while hi < half.size - 1 and half[hi + 1]:
        hi += 1
    q0 = float(np.clip(centre / max(grid_hz[hi] - grid_hz[lo], centre / MAX_Q), 0.5, MAX_Q))
    span = (centre * 2.0 ** (-2.0 / q0), centre * 2.0 ** (2.0 / q0))
    inside = (grid_hz >= span[0]) & (grid_hz <= span[1])
    if np.count_nonzero(inside) < 7:
        return None
    f_fit, target = grid_hz[inside], level[inside]

    def misfit(p):
        return peaking_db(f_fit, p[0], p[1], p[2]) + p[3] + p[4] * np.log2(f_fit / centre) - target

    start = [centre, max(gain0, 1.0), q0, float(level[i] - gain0), 0.0]
    try:
        result = least_squares(misfit, start, bounds=([span[0], 0.0, 0.3, -400.0, -60.0],
                                                      [span[1], 40.0, 200.0, 100.0, 60.0]))
    except ValueError:
        return None
    f0, gain, q = result.x[:3]
    return float(f0), float(gain), float(q), float(np.sqrt(np.mean(result.fun**2)))


def _standing_share(grid_hz, quarters, f0: float, gain: float) -> float:
    """Share of the quarters where the take stands at least half the gain out at ``f0``."""
    standing = [float(np.interp(f0, grid_hz, q)) >= gain / 2.0 for q in quarters]
    return float(np.mean(standing)) if standing else 0.0


def _peaks(grid_hz, level, quarters) -> list[ResonancePeak]:
    """Accepted peaks of the mean excess spectrum (see the module's stages 3-4)."""
    excess = level
    maxima = np.flatnonzero((excess[1:-1] >= excess[:-2]) & (excess[1:-1] > excess[2:])
                            & (excess[1:-1] >= CANDIDATE_DB)) + 1
    accepted = []
    for i in maxima[np.argsort(-excess[maxima])][:MAX_CANDIDATES]:
        fit = _fit(grid_hz, level, excess, int(i))
        if fit is None:
            continue
        f0, gain, q, misfit = fit
        if gain < MIN_GAIN_DB or not MIN_Q <= q <= MAX_Q or misfit > MAX_MISFIT * gain:
            continue
        share = _standing_share(grid_hz, quarters, f0, gain)
        if share >= PERSISTENT_SHARE:
            accepted.append(ResonancePeak(f0, q, gain, share))
    return accepted


def find_resonance(x, fs: float | None = None) -> ResonanceReport:
    """Find one narrow, persistent spectral peak in a take: frequency, Q, height, a notch.

    Parameters
    ----------
    x : array_like or TakeSource
        Audio, ``(frames, channels)`` or 1-D, or a
        :class:`~emulate.voice.takes.TakeSource` (a file read in blocks).
    fs : float
        Sample rate in Hz, 16000 to 384000 (for an array).

    Returns
    -------
    ResonanceReport
        ``found`` is False (with a ``reason``) for a take under 2 s or without an
        accepted peak.

    Raises
    ------
    BadValueError
        Bad audio or rate.

    Example
    -------
    >>> from scipy.signal import lfilter
    >>> x = np.random.default_rng(0).standard_normal(48000 * 8) * 0.05
    >>> w0, q, a = 2 * np.pi * 1000 / 48000, 8.0, 10 ** (12 / 40)
    >>> al = np.sin(w0) / (2 * q)
    >>> b = [1 + al * a, -2 * np.cos(w0), 1 - al * a]
    >>> r = find_resonance(lfilter(b, [1 + al / a, -2 * np.cos(w0), 1 - al / a], x), 48000)
    >>> r.found, abs(r.peak.frequency_hz / 1000 - 1) < 0.02
    (True, True)
    """
    source = x if isinstance(x, TakeSource) else TakeSource.from_array(x, fs)
    if source.seconds < MIN_SECONDS:
        return ResonanceReport(False, f"too short: {source.seconds:.3f} s, need at least {MIN_SECONDS:g} s",
                               source.seconds, None, (), None)
    grid_hz = _grid_hz(source.fs)
    accepted = []
    mean, quarters = _spectra(source, grid_hz)
    for peak in _peaks(grid_hz, mean, quarters):
        if all(abs(math.log2(peak.frequency_hz / p.frequency_hz)) > 1 / 24 for p in accepted):
            accepted.append(peak)
    if not accepted:
        return ResonanceReport(False, "no narrow persistent peak over the neighbourhood", source.seconds,
                               None, (), None, grid_hz, mean)
    accepted.sort(key=lambda p: -p.gain_db)
    peak = accepted[0]
    notch = SuggestedNotch.of("resonance", peak.frequency_hz, peak.q, peak.gain_db)
    return ResonanceReport(True, "", source.seconds, peak, tuple(accepted[1:]), notch, grid_hz, mean)
