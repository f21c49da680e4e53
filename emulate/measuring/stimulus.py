"""The test signal: an exponential sine sweep with a sync marker (Farina's method).

A. Farina, "Simultaneous measurement of impulse response and distortion with a
swept-sine technique", AES 108th Convention, Paris, preprint 5093 (2000): the sweep

    x(t) = sin( 2 pi f1 L (exp(t / L) - 1) ),   L = T / ln(f2 / f1),

runs from ``f1`` to ``f2`` in ``T`` seconds, spending equal time per octave. Its
inverse filter is the time-reversed sweep with an amplitude envelope falling
6 dB per octave (``exp(-t / L)``), so that the sweep convolved with it is a
band-limited impulse; harmonic distortion products land at negative times
(``-L ln n`` for the n-th harmonic), clear of the linear response.

The file layout (:class:`SweepPlan`): ``LEAD_S`` of silence, the sync marker
(``MARKER_S`` of a 1-8 kHz chirp under a Hann window), ``GAP_S`` of silence,
the sweep (faded in and out over ``FADE_S``), then ``TAIL_S`` of silence for the
box's ring-out. The marker gives the latency of the playback-record loop at a
glance; the analysis refines it on the impulse response.

Protect your hearing: the default level is a modest -18 dBFS peak, and a sweep
through monitors climbs to 20 kHz; keep the monitors low or off while recording.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from emulate.errors import BadValueError
from emulate.validate import check_range

__all__ = ["DEFAULT_LEVEL_DBFS", "MARKER_HZ", "SweepPlan", "fft_size"]

DEFAULT_LEVEL_DBFS = -18.0
LEAD_S, MARKER_S, GAP_S, FADE_S, TAIL_S = 0.25, 0.03, 0.5, 0.01, 1.0
MARKER_HZ = (1000.0, 8000.0)


@dataclass(frozen=True)
class SweepPlan:
    """What the stimulus holds: rate, band, length and level.

    Parameters
    ----------
    fs : float
        Sample rate, Hz (8000..384000).
    f1_hz, f2_hz : float
        Sweep start and end, Hz; ``f1 < f2 < 0.5 fs``.
    seconds : float
        Length of the sweep itself, s (0.5..120).
    level_dbfs : float
        Peak level of sweep and marker, dBFS (-60..0).

    Raises
    ------
    BadValueError
        If a figure is out of range.

    Example
    -------
    >>> plan = SweepPlan(48000.0, seconds=2.0)
    >>> len(plan.signal()) == plan.total_frames
    True
    """

    fs: float
    f1_hz: float = 20.0
    f2_hz: float = 20000.0
    seconds: float = 10.0
    level_dbfs: float = DEFAULT_LEVEL_DBFS

    def __post_init__(self):
        check_range("sample rate (Hz)", self.fs, 8000.0, 384000.0)
        check_range("sweep start (Hz)", self.f1_hz, 1.0, self.fs / 2, high_open=True)
        check_range("sweep end (Hz)", self.f2_hz, self.f1_hz, self.fs / 2, low_open=True, high_open=True)
        check_range("sweep length (s)", self.seconds, 0.5, 120.0)
        check_range("sweep peak level (dBFS)", self.level_dbfs, -60.0, 0.0)
        if self.f2_hz / self.f1_hz < 2:
            raise BadValueError(f"sweep {self.f1_hz:g}-{self.f2_hz:g} Hz: allowed at least an octave")

    # --- layout ---------------------------------------------------------------
    @property
    def rate_l(self) -> float:
        """Farina's L = T / ln(f2/f1), seconds."""
        return self.seconds / math.log(self.f2_hz / self.f1_hz)

    @property
    def marker_start(self) -> int:
        return round(LEAD_S * self.fs)

    @property
    def sweep_start(self) -> int:
        return self.marker_start + round((MARKER_S + GAP_S) * self.fs)

    @property
    def sweep_frames(self) -> int:
        return round(self.seconds * self.fs)

    @property
    def total_frames(self) -> int:
        return self.sweep_start + self.sweep_frames + round(TAIL_S * self.fs)

    @property
    def amplitude(self) -> float:
        return 10 ** (self.level_dbfs / 20)

    # --- signals --------------------------------------------------------------
    def sweep(self) -> np.ndarray:
        """The bare sweep (unit peak, faded in and out)."""
        t = np.arange(self.sweep_frames) / self.fs
        x = np.sin(2 * np.pi * self.f1_hz * self.rate_l * np.expm1(t / self.rate_l))
        return x * _fades(self.sweep_frames, round(FADE_S * self.fs))

    def marker(self) -> np.ndarray:
        """The sync marker: a short linear chirp over ``MARKER_HZ`` under a Hann window (unit peak)."""
        n = round(MARKER_S * self.fs)
        t = np.arange(n) / self.fs
        f_lo, f_hi = MARKER_HZ
        phase = 2 * np.pi * (f_lo * t + (f_hi - f_lo) * t ** 2 / (2 * MARKER_S))
        return np.sin(phase) * np.hanning(n)

    def signal(self) -> np.ndarray:
        """The whole stimulus, mono, at ``level_dbfs`` peak."""
        x = np.zeros(self.total_frames)
        marker = self.marker()
        x[self.marker_start:self.marker_start + len(marker)] = marker
        x[self.sweep_start:self.sweep_start + self.sweep_frames] = self.sweep()
        return self.amplitude * x

    def inverse(self) -> np.ndarray:
        """Farina's inverse filter: the time-reversed sweep, envelope falling 6 dB/octave.

        Scaled so that the sweep convolved with it has unit gain at the band's
        geometric centre.
        """
        t = np.arange(self.sweep_frames) / self.fs
        inverse = self.sweep()[::-1] * np.exp(-t / self.rate_l)
        n = fft_size(2 * self.sweep_frames)
        centre = math.sqrt(self.f1_hz * self.f2_hz)
        k = round(centre * n / self.fs)
        gain = np.abs(np.fft.rfft(self.sweep(), n)[k] * np.fft.rfft(inverse, n)[k])
        return inverse / gain

    def as_dict(self) -> dict:
        return {"fs": self.fs, "f1_hz": self.f1_hz, "f2_hz": self.f2_hz, "seconds": self.seconds,
                "level_dbfs": self.level_dbfs, "sweep_start_s": self.sweep_start / self.fs,
                "total_s": self.total_frames / self.fs}


def _fades(frames: int, fade: int) -> np.ndarray:
    envelope = np.ones(frames)
    ramp = 0.5 - 0.5 * np.cos(np.pi * np.arange(fade) / fade)
    envelope[:fade] = ramp
    envelope[frames - fade:] = ramp[::-1]
    return envelope


def fft_size(n: int) -> int:
    """The smallest power of two >= ``n`` (at least 2).

    Example
    -------
    >>> fft_size(1000)
    1024
    """
    return 1 << max(int(n - 1).bit_length(), 1)
