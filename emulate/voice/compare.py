"""Dry against wet: sibilance-band reduction, loudness change and speech cost, measured once per take.

What this module does *not* do: it does not render; a sweep hands it the takes.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from emulate.voice.bands import (ansi_band_edges_hz, band_gains, band_levels_db, intelligibility_cost,
                                 reduction_db)
from emulate.voice.loudness import loudness_change, loudness_lufs

__all__ = ["TakeLevels", "compare_levels", "take_levels"]


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
