"""Dry against wet: sibilance-band reduction, loudness change and speech cost, measured once per take.

What this module does *not* do: it does not render; a sweep hands it the takes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from emulate.errors import BadValueError
from emulate.voice.bands import (BandMeter, ansi_band_edges_hz, band_gains, band_levels_db, intelligibility_cost,
                                 reduction_db)
from emulate.voice.loudness import LoudnessMeter, loudness_change, loudness_lufs

__all__ = ["LevelsMeter", "TakeLevels", "compare_levels", "compare_meters", "take_levels"]


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
    levels = band_levels_db(x, fs, [band_hz, *ansi_band_edges_hz()])
    return TakeLevels(tuple(band_hz), float(levels[0]), levels[1:], loudness_lufs(x, fs))


def compare_levels(dry: TakeLevels, wet: TakeLevels) -> dict[str, float]:
    """Sibilance-band reduction, loudness change and intelligibility cost, dry to wet.

    The same figures as :func:`sibilance_reduction_db`, :func:`loudness_change_db`
    and :func:`intelligibility_cost_of_takes` give for the two takes.
    """
    return {"sibilance_reduction_db": reduction_db(dry.band_db, wet.band_db, dry.band_hz),
            "loudness_change_db": loudness_change(dry.lufs, wet.lufs),
            "intelligibility_cost": intelligibility_cost(band_gains(dry.ansi_bands_db, wet.ansi_bands_db))}


class LevelsMeter:
    """A take's level in one band and its loudness, fed block by block (a render in flight).

    The band through :class:`~emulate.voice.bands.BandMeter` (a band-pass filter), the
    loudness through :class:`~emulate.voice.loudness.LoudnessMeter` (BS.1770); memory
    stays bounded whatever the take's length. Cheaper than :func:`take_levels` (no
    FFT, no ANSI bands: no intelligibility cost).

    Example
    -------
    >>> x = np.random.default_rng(0).standard_normal((48000, 2)) * 0.1
    >>> dry, wet = LevelsMeter(48000, 2, (4000, 8000)), LevelsMeter(48000, 2, (4000, 8000))
    >>> dry.add(x); wet.add(0.5 * x)
    >>> {k: round(v, 2) for k, v in compare_meters(dry, wet).items()}
    {'sibilance_reduction_db': 6.02, 'loudness_change_db': -6.02}
    """

    def __init__(self, fs: float, channels: int, band_hz):
        self.band = BandMeter(fs, channels, band_hz)
        self.loudness = LoudnessMeter(fs, channels)

    def add(self, block) -> None:
        """Feed the next ``(frames, channels)`` block (not kept)."""
        self.band.add(block)
        self.loudness.add(block)


def compare_meters(dry: LevelsMeter, wet: LevelsMeter) -> dict[str, float | None]:
    """Sibilance-band reduction and loudness change, dry to wet, from two meters.

    A figure the takes do not define (silence in the band, a take below the loudness
    gate or shorter than one 400 ms gating block) is None.
    """
    band = dry.band.band_hz
    measures: dict[str, float | None] = {}
    try:
        with np.errstate(invalid="ignore"):
            reduction = reduction_db(dry.band.level_db(), wet.band.level_db(), band)
        measures["sibilance_reduction_db"] = reduction if np.isfinite(reduction) else None
    except BadValueError:  # no energy in the band
        measures["sibilance_reduction_db"] = None
    try:
        change = loudness_change(dry.loudness.lufs(), wet.loudness.lufs())
        measures["loudness_change_db"] = change if np.isfinite(change) else None
    except BadValueError:
        measures["loudness_change_db"] = None
    return measures
