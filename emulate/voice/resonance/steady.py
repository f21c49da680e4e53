"""A steady tone is not a resonance: the level of the quiet moments in a peak's band (part of the
resonance finder's stage 7; the stages are listed in :mod:`emulate.voice.resonance`).

A resonance colours the room's noise, and noise through any filter stays Gaussian: in a band
around the peak its power ``P = |z|^2`` (``z`` the band's analytic signal) is exponentially
distributed, so ``kappa = mean(P^2) / mean(P)^2`` is 2. A tone (a fan's or a supply's whine, wobbling
or not, or a mains line) has a steady level: ``kappa`` 1, and a tone ``r`` times the band's noise
power gives ``(r^2 + 4 r + 2) / (r + 1)^2`` (1.44 at ``r = 3``). So the quiet moments are passed
through bands 1, 2 and 4 times as wide as the peak's half-gain band (BAND_WIDTHS; a second-order
Butterworth band-pass, each quiet piece on its own, its first SETTLE_BANDS band periods
dropped), ``P`` taken once per band period (nearly independent), and a peak is a tone when, in
any of them, ``kappa`` lies under TONE_KAPPA and under 2 by more than STANDARD_ERRORS of its
standard error for Gaussian noise, ``2 / sqrt(n)`` (the delta method on ``mean(P^2) /
mean(P)^2`` for an exponential ``P``: variance ``(20 - 32 + 16) / n``). Where the pieces hold
too little (a narrow low peak's band periods outlast the pieces) nothing is told.

Measured: tones of -80 and -70 dBFS at 250 Hz, 1 kHz and 3 kHz under a voice-like 30 s take,
their frequency steady or wobbling +-1 or +-3 % at 0.3 Hz: the steady ones were not reported
anyway (too narrow), 5 of the 12 wobbling ones were, as peaks of Q 15-40 and +16 to +29 dB
(``kappa`` 1.06-1.14 over 54-1483 periods of the reading's band); none now, and a wobbling whine
beside a grid resonance leaves that resonance reported. On the whole grid (288 peaks, read with
this check off, over the three bands): none is told a tone; the nearest, ``kappa`` 1.50 over 93
periods (2.4 standard errors under 2; at 100 Hz, +15 dB, Q 5), and the largest margin under 2, 2.5
standard errors; every grid and control reading unchanged with the check on.
"""

from __future__ import annotations

import math

import numpy as np

from emulate.voice.resonance.fit import ResonancePeak

__all__ = ["band_kappa", "is_steady_tone"]

#: A peak is a tone when its band's kappa lies under this ...
TONE_KAPPA = 1.5
#: ... and this many standard errors under a Gaussian noise's 2.
STANDARD_ERRORS = 3.0
#: The bands read, in half-gain bands of the peak: a wobbling tone's reading is narrower than its
#: wobble (+-3 % at 1 kHz read as Q 33 on 8 s), and leaves a band as narrow as the reading.
BAND_WIDTHS = (1.0, 2.0, 4.0)
#: Band periods (1 / bandwidth) dropped at each piece's start: the band-pass settles.
SETTLE_BANDS = 3.0


def band_kappa(quiet: np.ndarray, lengths: np.ndarray, fs: float, peak: ResonancePeak,
               widths: float = 1.0) -> tuple[float, int]:
    """``kappa = mean(P^2) / mean(P)^2`` of the quiet moments' power in a band ``widths`` times as
    wide as ``peak``'s half-gain band, about its centre, and how many band periods it was read over
    (this module's docstring); (nan, 0) when none.

    Example
    -------
    >>> fs, t = 48000, np.arange(48000 * 4) / 48000
    >>> tone = np.sin(2 * np.pi * 1000 * t) + 0.1 * np.random.default_rng(0).standard_normal(t.size)
    >>> kappa, n = band_kappa(tone, np.array([t.size]), fs, ResonancePeak(1000.0, 20.0, 10.0, 1.0))
    >>> round(kappa, 2), n
    (1.0, 197)
    """
    from scipy.signal import butter, hilbert, sosfilt

    band = widths * peak.frequency_hz / peak.q
    low, high = peak.frequency_hz - band / 2.0, peak.frequency_hz + band / 2.0
    if low <= 0.0 or high >= fs / 2.0:
        return math.nan, 0
    sos = butter(2, (low, high), btype="bandpass", fs=fs, output="sos")
    settle, step = int(SETTLE_BANDS * fs / band), max(1, int(fs / band))
    powers = [np.abs(hilbert(sosfilt(sos, piece.astype(np.float64)))[settle::step]) ** 2
              for piece in np.split(quiet, np.cumsum(lengths)[:-1]) if piece.size > settle + step]
    power = np.concatenate(powers) if powers else np.zeros(0)
    if power.size == 0 or not power.mean() > 0.0:
        return math.nan, 0
    return float(np.mean(power**2) / np.mean(power) ** 2), int(power.size)


def is_steady_tone(quiet: np.ndarray, lengths: np.ndarray, fs: float, peak: ResonancePeak) -> bool:
    """Whether ``peak``'s band holds a steady tone rather than the room's noise coloured by a
    resonance (this module's docstring)."""
    for widths in BAND_WIDTHS:
        kappa, n = band_kappa(quiet, lengths, fs, peak, widths)
        if n > 0 and kappa < TONE_KAPPA and kappa < 2.0 - STANDARD_ERRORS * 2.0 / math.sqrt(n):
            return True
    return False
