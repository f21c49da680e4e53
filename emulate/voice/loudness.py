"""Integrated loudness of takes by ITU-R BS.1770 (through pyloudnorm).

What this module does *not* do: it does not weight bands or find anything in a take.
"""

from __future__ import annotations

import numpy as np
import pyloudnorm

from emulate.errors import BadValueError
from emulate.voice.takes import as_take, check_fs

__all__ = ["LOUDNESS_BLOCK_S", "loudness_change", "loudness_change_db", "loudness_lufs"]


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
    take = as_take(x)
    fs = check_fs(fs)
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
    return loudness_change(loudness_lufs(dry, fs), loudness_lufs(wet, fs))


def loudness_change(dry_lufs: float, wet_lufs: float) -> float:
    if not np.isfinite(dry_lufs):
        raise BadValueError("dry take is below the -70 LUFS gate; its loudness change is undefined")
    return wet_lufs - dry_lufs
