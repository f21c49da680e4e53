"""Band levels of whole takes, and what a gain change costs speech (ANSI S3.5 weighting).

Levels are in dBFS (AES17: a full-scale sine reads 0 dBFS). Each level comes from the
whole take's spectrum (one FFT per channel, no window), power averaged over channels.

What this module does *not* do: it does not find anything in a take (see the finders) or
measure loudness (see :mod:`emulate.voice.loudness`).
"""

from __future__ import annotations

import numpy as np

from emulate.errors import BadValueError
from emulate.voice.takes import SectionFilter, as_take, check_band, check_fs, dbfs

__all__ = [
    "ANSI_S35_BANDS_HZ",
    "BandMeter",
    "ANSI_S35_IMPORTANCE",
    "ansi_band_edges_hz",
    "band_gains",
    "band_gains_db",
    "band_level_db",
    "band_levels_db",
    "intelligibility_cost",
    "intelligibility_cost_of_takes",
    "pair_levels_db",
    "reduction_db",
    "sibilance_reduction_db",
]

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

def band_levels_db(x, fs: float, bands_hz) -> np.ndarray:
    """Whole-take levels (dBFS) in each band: one ``rfft`` per channel, power averaged over channels."""
    take = as_take(x)
    fs = check_fs(fs)
    bands = [check_band(b, fs) for b in bands_hz]
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
    return dbfs(cumulative[edges[1]] - cumulative[edges[0]])


class BandMeter:
    """The level in one band of a take fed block by block, through a band-pass filter, in dBFS.

    A 4th-order Butterworth band-pass (a high-pass when the band reaches Nyquist) with
    its state carried from block to block; the mean square of its output, averaged over
    channels, read in dBFS (AES17). Unlike :func:`band_level_db` (a rectangular band
    from one whole-take FFT), the edges roll off, so the two read alike for a tone
    inside the band and differ slightly for broadband sound; a change from dry to wet
    measured with the same meter on both is what it is for. Memory: the filter state.

    Parameters
    ----------
    fs : float
        Sample rate in Hz, 16000 to 384000.
    channels : int
        Channels of the blocks.
    band_hz : (float, float)
        ``(lo, hi)`` in Hz, as :func:`band_level_db` allows.

    Example
    -------
    >>> t = np.arange(48000) / 48000
    >>> meter = BandMeter(48000, 1, (500, 2000))
    >>> for start in range(0, 48000, 16000):
    ...     meter.add(np.sin(2 * np.pi * 1000 * t[start:start + 16000])[:, None])
    >>> round(meter.level_db(), 1)
    -0.0
    """

    def __init__(self, fs: float, channels: int, band_hz):
        import scipy.signal

        fs = check_fs(fs)
        lo, hi = check_band(band_hz, fs)
        self.band_hz = (lo, hi)
        if hi < 0.49 * fs:
            sos = scipy.signal.butter(2, (lo, hi), btype="bandpass", fs=fs, output="sos")
        else:
            sos = scipy.signal.butter(4, lo, btype="highpass", fs=fs, output="sos")
        self._filter = SectionFilter(sos, channels)
        self._sum, self._count = 0.0, 0

    def add(self, block) -> None:
        """Feed the next ``(frames, channels)`` block (not kept)."""
        y = self._filter(block)
        self._sum += float(np.einsum("ij,ij->", y, y))
        self._count += y.size

    def level_db(self) -> float:
        """The band's level over everything fed, dBFS (``-inf`` for no energy)."""
        return float(dbfs(self._sum / max(self._count, 1)))


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
    return float(band_levels_db(x, fs, [band_hz])[0])


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
    dry_db, wet_db = pair_levels_db(dry, wet, fs, [band_hz])
    return reduction_db(dry_db[0], wet_db[0], band_hz)


def reduction_db(dry_db: float, wet_db: float, band_hz) -> float:
    if not np.isfinite(dry_db):
        raise BadValueError(f"dry take has no energy in band_hz = {tuple(band_hz)!r} Hz; nothing to reduce")
    return float(dry_db - wet_db)


def pair_levels_db(dry, wet, fs, bands_hz):
    """Band levels (dBFS) of a dry/wet pair with matching channel counts."""
    dry, wet = as_take(dry, "dry"), as_take(wet, "wet")
    if dry.shape[1] != wet.shape[1]:
        raise BadValueError(f"dry has {dry.shape[1]} channels and wet {wet.shape[1]}; they must match")
    dry_db, wet_db = band_levels_db(dry, fs, bands_hz), band_levels_db(wet, fs, bands_hz)
    return dry_db, wet_db


def ansi_band_edges_hz() -> list[tuple[float, float]]:
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
    dry_db, wet_db = pair_levels_db(dry, wet, fs, ansi_band_edges_hz())
    return band_gains(dry_db, wet_db)


def band_gains(dry_db: np.ndarray, wet_db: np.ndarray) -> np.ndarray:
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
