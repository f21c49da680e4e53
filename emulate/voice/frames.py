"""Framed analysis shared by the finders: frames, band powers, per-band floors, runs, peaks.

The finders (sibilance, hum, resonance) read a take the same way:

1. walk it block by block (:class:`~emulate.voice.takes.TakeSource`), mixed to mono
   (the mean of the channels), so memory is bounded by one block whatever the length;
2. cut Hann frames every hop and take one-sided power spectra by ``rfft``, scaled so
   the bins of a frame sum to its mean square (:class:`FrameGrid`, :func:`iter_frame_power`);
3. sum bins into bands (:class:`BandSummer`) and find each band's floor: a low
   percentile of its power over the take (:func:`band_floors`), so a band's floor is
   the noise (or steady programme) *in that band*, not the whole take's;
4. describe averaged spectra on one log-frequency grid (:data:`LOG_GRID_HZ`), so takes
   at different rates pool, and find peaks on it (:func:`peak_on_grid`).

What this module does *not* do: it decides nothing about sibilance, hum or resonance.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np

from emulate.voice.frame_table import FrameTable
from emulate.voice.takes import TakeSource

__all__ = [
    "LOG_GRID_HZ",
    "BandSummer",
    "FrameGrid",
    "band_floors",
    "grid_density",
    "grid_band_power",
    "iter_frame_power",
    "iter_mono",
    "log_band_edges",
    "peak_on_grid",
    "runs",
    "smooth_on_grid",
]

#: Shared log-frequency grid: 1/48 octave from 20 Hz to 48 kHz (reports at any rate pool on it).
LOG_GRID_HZ = 20.0 * 2.0 ** (np.arange(0, 48 * math.log2(2400.0) + 1) / 48.0)
LOG_GRID_HZ.setflags(write=False)
#: Points per octave of :data:`LOG_GRID_HZ`.
GRID_PER_OCTAVE = 48
#: Digital silence counts as this floor per band, in dBFS (keeps distances above floors finite).
FLOOR_MIN_DBFS = -140.0


@dataclass(frozen=True)
class FrameGrid:
    """Frame length, hop and FFT size at a sample rate.

    Attributes
    ----------
    fs : float
        Sample rate, Hz.
    size, hop, nfft : int
        Frame length, hop and FFT length in samples (``nfft >= 2 * size`` when
        ``padded``, so the inverse FFT of a power spectrum is a linear autocorrelation).
    """

    fs: float
    size: int
    hop: int
    nfft: int

    @classmethod
    def at(cls, fs: float, frame_s: float, hop_s: float, *, padded: bool = False) -> FrameGrid:
        """Frames of ``frame_s`` every ``hop_s`` seconds at ``fs`` Hz.

        Example
        -------
        >>> FrameGrid.at(48000, 0.025, 0.0125, padded=True).nfft
        4096
        """
        size, hop = round(frame_s * fs), max(1, round(hop_s * fs))
        nfft = 1 << ((2 * size if padded else size) - 1).bit_length()
        return cls(float(fs), size, hop, nfft)

    @property
    def f_hz(self) -> np.ndarray:
        """Bin frequencies, Hz."""
        return np.fft.rfftfreq(self.nfft, 1.0 / self.fs)

    @property
    def window(self) -> np.ndarray:
        """The Hann window of one frame."""
        return np.hanning(self.size)

    @property
    def hop_s(self) -> float:
        """Hop in seconds."""
        return self.hop / self.fs


def iter_mono(source: TakeSource) -> Iterator[np.ndarray]:
    """The take's blocks mixed to mono (mean of the channels), float64.

    Example
    -------
    >>> s = TakeSource.from_array(np.ones((10, 2)), 48000)
    >>> [b.tolist() for b in iter_mono(s)]
    [[1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0]]
    """
    for block in source.blocks():
        yield np.asarray(block, dtype=np.float64).mean(axis=1)


def iter_frame_power(source: TakeSource, grid: FrameGrid) -> Iterator[np.ndarray]:
    """One-sided power spectra of consecutive frames, a chunk of frames at a time.

    Frame ``i`` starts at sample ``i * hop``; a trailing part shorter than a frame is
    not analysed. Each chunk is ``(frames, nfft // 2 + 1)``; a frame's bins sum to its
    windowed mean square (Parseval with the window's power).

    Example
    -------
    >>> s = TakeSource.from_array(np.sin(np.arange(4800) * 0.3), 48000)
    >>> g = FrameGrid.at(48000, 0.025, 0.0125)
    >>> p = np.concatenate(list(iter_frame_power(s, g)))
    >>> p.shape[0], round(float(p[0].sum()), 2)
    (7, 0.5)
    """
    window = grid.window
    scale = 1.0 / (grid.nfft * np.sum(window**2))  # Parseval: bins of a padded FFT sum to nfft * energy
    carry, skip = np.zeros(0), 0  # skip: samples of the next blocks before the next frame (hop > frame)
    for block in iter_mono(source):
        carry = np.concatenate((carry, block[skip:]))
        skip = max(0, skip - block.size)
        count = 0 if carry.size < grid.size else 1 + (carry.size - grid.size) // grid.hop
        if count == 0:
            continue
        frames = np.lib.stride_tricks.sliding_window_view(carry, grid.size)[:: grid.hop][:count] * window
        spectrum = np.fft.rfft(frames, grid.nfft, axis=1)
        power = spectrum.real**2 + spectrum.imag**2
        power[:, 1:-1] *= 2.0  # one-sided
        yield power * scale
        skip = max(0, count * grid.hop - carry.size)
        carry = carry[count * grid.hop :]


def log_band_edges(lo_hz: float, hi_hz: float, per_octave: int) -> np.ndarray:
    """Edges of bands ``per_octave`` to the octave from ``lo_hz`` up to at most ``hi_hz``.

    Example
    -------
    >>> log_band_edges(1000, 4000, 1).tolist()
    [1000.0, 2000.0, 4000.0]
    """
    count = int(math.floor(per_octave * math.log2(hi_hz / lo_hz) + 1e-9))
    return lo_hz * 2.0 ** (np.arange(count + 1) / per_octave)


class BandSummer:
    """Sums a spectrum's bins into bands ``[edges[i], edges[i+1])`` (one cumulative sum).

    Example
    -------
    >>> b = BandSummer(np.arange(8.0), np.array([0.0, 4.0, 8.0]))
    >>> b.sum(np.ones((1, 8))).tolist()
    [[4.0, 4.0]]
    """

    def __init__(self, f_hz: np.ndarray, edges_hz: np.ndarray):
        self.edges_hz = np.asarray(edges_hz, dtype=np.float64)
        self.index = np.searchsorted(f_hz, self.edges_hz, "left")
        self.bins = np.diff(self.index)
        self.centres_hz = np.sqrt(self.edges_hz[1:] * self.edges_hz[:-1])

    def sum(self, power: np.ndarray) -> np.ndarray:
        """Band powers of ``power`` (frames, bins) as (frames, bands)."""
        cumulative = np.concatenate((np.zeros((power.shape[0], 1)), np.cumsum(power, axis=1)), axis=1)
        return cumulative[:, self.index[1:]] - cumulative[:, self.index[:-1]]


def band_floors(band_power: "np.ndarray | FrameTable", percentile: float, rows: np.ndarray | None = None) -> np.ndarray:
    """Each band's floor: the ``percentile`` of its power over frames (at least -140 dBFS).

    ``band_power`` is ``(frames, bands)``, in memory or in a :class:`FrameTable` on disk;
    ``rows``, a boolean mask over the frames, keeps only some of them.

    Example
    -------
    >>> band_floors(np.array([[1.0, 2.0], [3.0, 4.0], [5.0, 6.0]]), 50).tolist()
    [3.0, 4.0]
    """
    if isinstance(band_power, FrameTable):
        floor = band_power.percentile(percentile, rows=rows)
    else:
        floor = np.percentile(band_power if rows is None else band_power[rows], percentile, axis=0)
    return np.maximum(floor, 10.0 ** (FLOOR_MIN_DBFS / 10.0) / 2.0)


def runs(mask: np.ndarray) -> np.ndarray:
    """``(start, stop)`` index pairs of the runs of True in a 1-D mask, shape (runs, 2).

    Example
    -------
    >>> runs(np.array([0, 1, 1, 0, 1], bool)).tolist()
    [[1, 3], [4, 5]]
    """
    edges = np.diff(np.concatenate(([0], np.asarray(mask, np.int8), [0])))
    return np.stack((np.flatnonzero(edges == 1), np.flatnonzero(edges == -1)), axis=1)


def grid_density(f_hz: np.ndarray, power: np.ndarray) -> np.ndarray:
    """Power per Hz of a spectrum's bins, interpolated onto :data:`LOG_GRID_HZ` (0 beyond).

    Example
    -------
    >>> f = np.linspace(0, 24000, 2049)
    >>> float(grid_density(f, np.full(2049, 11.71875))[100])
    1.0
    """
    density = power / (f_hz[1] - f_hz[0])
    return np.interp(LOG_GRID_HZ, f_hz, density, left=0.0, right=0.0)


def grid_band_power(density: np.ndarray, band_hz) -> float:
    """Power of a grid density inside ``band_hz`` (trapezoids on the grid, edges interpolated).

    Example
    -------
    >>> round(grid_band_power(np.ones(LOG_GRID_HZ.size), (1000, 2000)), 6)
    1000.0
    """
    lo, hi = band_hz
    inside = (LOG_GRID_HZ > lo) & (LOG_GRID_HZ < hi)
    f = np.concatenate(([lo], LOG_GRID_HZ[inside], [hi]))
    d = np.interp(f, LOG_GRID_HZ, density)
    return float(np.sum(0.5 * (d[1:] + d[:-1]) * np.diff(f)))


def smooth_on_grid(density: np.ndarray, octaves: float) -> np.ndarray:
    """Moving average of a grid density over ``octaves`` (an odd number of grid points).

    Example
    -------
    >>> float(smooth_on_grid(np.ones(LOG_GRID_HZ.size), 1 / 12)[200])
    1.0
    """
    points = 2 * max(0, round(octaves * GRID_PER_OCTAVE / 2.0)) + 1
    padded = np.pad(density, points // 2, mode="edge")
    return np.convolve(padded, np.ones(points) / points, mode="valid")


def peak_on_grid(density: np.ndarray, band_hz, drop_db: float,
                 peak_within_hz=None) -> tuple[float, tuple[float, float]]:
    """Peak of a grid density inside ``band_hz`` and the band around it down ``drop_db``.

    The peak is the highest point within ``peak_within_hz`` (default: all of ``band_hz``),
    refined by a parabola through the log-levels of the three grid points around it
    (common practice, no source); the band walks out from the peak until the density
    falls ``drop_db`` under it, and stops at ``band_hz``. The peak always lies inside the
    returned band.

    Example
    -------
    >>> d = np.exp(-0.5 * (np.log2(LOG_GRID_HZ / 5000) / 0.1) ** 2)
    >>> peak, (lo, hi) = peak_on_grid(d, (2000, 12000), 6.0)
    >>> round(peak), lo < peak < hi
    (5000, True)
    """
    lo_hz, hi_hz = band_hz
    inside = np.flatnonzero((LOG_GRID_HZ >= lo_hz) & (LOG_GRID_HZ <= hi_hz))
    d = density[inside]
    lo_peak, hi_peak = band_hz if peak_within_hz is None else peak_within_hz
    allowed = (LOG_GRID_HZ[inside] >= lo_peak) & (LOG_GRID_HZ[inside] <= hi_peak)
    top = int(np.argmax(np.where(allowed, d, -np.inf)))
    peak_hz = float(LOG_GRID_HZ[inside[top]])
    if 0 < top < d.size - 1 and np.all(d[top - 1 : top + 2] > 0):
        y0, y1, y2 = np.log(d[top - 1 : top + 2])
        bend = y0 - 2.0 * y1 + y2
        shift = 0.5 * (y0 - y2) / bend if bend < 0 else 0.0
        peak_hz *= 2.0 ** (float(np.clip(shift, -0.5, 0.5)) / GRID_PER_OCTAVE)
    under = d < d[top] * 10.0 ** (-drop_db / 10.0)
    below, above = np.flatnonzero(under[:top]), np.flatnonzero(under[top:])
    lo = LOG_GRID_HZ[inside[below[-1]]] if below.size else lo_hz
    hi = LOG_GRID_HZ[inside[top + above[0]]] if above.size else hi_hz
    return peak_hz, (float(min(lo, peak_hz)), float(max(hi, peak_hz)))
