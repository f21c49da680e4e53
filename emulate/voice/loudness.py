"""Integrated loudness of takes by ITU-R BS.1770 (through pyloudnorm).

:func:`loudness_lufs` measures a take held in memory with pyloudnorm itself;
:class:`LoudnessMeter` measures a take fed block by block (a render in flight),
with pyloudnorm's K-weighting stages carried from block to block and the 400 ms
gating blocks (75 % overlap) put together from 100 ms sums, so its memory is one
number per channel per 100 ms whatever the take's length.

What this module does *not* do: it does not weight bands or find anything in a take.
"""

from __future__ import annotations

import math

import numpy as np
import pyloudnorm

from emulate.errors import BadValueError
from emulate.voice.takes import SectionFilter, as_take, check_fs

__all__ = ["LOUDNESS_BLOCK_S", "LoudnessMeter", "loudness_change", "loudness_change_db", "loudness_lufs"]


#: Shortest take for integrated loudness: one BS.1770 gating block, in seconds.
LOUDNESS_BLOCK_S = 0.4
#: Step between gating blocks (75 % overlap, ITU-R BS.1770-4 eq. 3), in seconds.
LOUDNESS_STEP_S = 0.1
#: Channel weights G_i (ITU-R BS.1770-4 Table 3): L, R, C, Ls, Rs.
CHANNEL_GAINS = (1.0, 1.0, 1.0, 1.41, 1.41)
#: The K-weighting stages as pyloudnorm's "DeMan" filter class builds them (kind, gain dB, Q,
#: corner Hz): De Man, AES 145th Convention (2018), whose 48 kHz coefficients equal ITU-R
#: BS.1770-4 Annex 1 Tables 1-2; redesigned at other rates by pyloudnorm's IIRfilter.
K_WEIGHTING_STAGES = (("high_shelf_DeMan", 3.99984385397, 0.7071752369554193, 1681.9744509555319),
                      ("high_pass_DeMan", 0.0, 0.5003270373253953, 38.13547087613982))
ABSOLUTE_GATE_LUFS = -70.0
RELATIVE_GATE_LU = -10.0


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


class LoudnessMeter:
    """Integrated loudness (ITU-R BS.1770-4) of a take fed block by block.

    Each block is K-weighted with the filter states carried over (pyloudnorm's stages),
    squared and summed per 100 ms step; the gating blocks are four consecutive steps
    (400 ms, 75 % overlap). Only complete steps count: a take whose length is a whole
    number of steps reads exactly as :func:`loudness_lufs`; otherwise its last partial
    step (< 100 ms) is left out. Memory: one number per channel per 100 ms.

    Parameters
    ----------
    fs : float
        Sample rate in Hz, 16000 to 384000.
    channels : int
        1 to 5 (L, R, C, Ls, Rs).

    Raises
    ------
    BadValueError
        A bad rate or channel count; at :meth:`lufs`, a take shorter than 0.4 s.

    Example
    -------
    >>> t = np.arange(48000) / 48000
    >>> meter = LoudnessMeter(48000, 1)
    >>> for start in range(0, 48000, 10000):
    ...     meter.add(np.sin(2 * np.pi * 997 * t[start:start + 10000])[:, None])
    >>> round(meter.lufs(), 1)
    -3.0
    """

    def __init__(self, fs: float, channels: int):
        fs = check_fs(fs)
        if not 1 <= int(channels) <= len(CHANNEL_GAINS):
            raise BadValueError(f"take has {channels} channels; loudness allows 1 to 5 (L, R, C, Ls, Rs)")
        stages = [pyloudnorm.IIRfilter(gain, q, fc, fs, kind) for kind, gain, q, fc in K_WEIGHTING_STAGES]
        self._weighting = SectionFilter(np.array([np.concatenate([stage.passband_gain * stage.b, stage.a])
                                                  for stage in stages]), int(channels))
        self._fs, self._step = fs, int(round(LOUDNESS_STEP_S * fs))
        self._partial, self._filled = np.zeros(int(channels)), 0
        self._steps: list[np.ndarray] = []  # sums of squares per complete step, (channels,) each

    def add(self, block) -> None:
        """Feed the next ``(frames, channels)`` block (not kept)."""
        squares = np.square(self._weighting(block))
        first = self._step - self._filled  # frames that complete the open 100 ms step
        if len(squares) < first:
            self._partial = self._partial + squares.sum(axis=0)
            self._filled += len(squares)
            return
        starts = np.concatenate(([0], np.arange(first, len(squares), self._step)))
        sums = np.add.reduceat(squares, starts, axis=0)
        sums[0] += self._partial
        last = len(squares) - starts[-1]
        if last == (first if len(starts) == 1 else self._step):  # the block ends where a step ends
            self._steps.extend(sums)
            self._partial, self._filled = np.zeros_like(self._partial), 0
        else:
            self._steps.extend(sums[:-1])
            self._partial, self._filled = sums[-1], int(last)

    def lufs(self) -> float:
        """The integrated loudness of what was fed, LUFS; ``-inf`` when every block is below -70 LUFS."""
        steps = np.array(self._steps).reshape(len(self._steps), -1)
        per_block = round(LOUDNESS_BLOCK_S / LOUDNESS_STEP_S)
        if len(steps) < per_block:
            seconds = (len(steps) * self._step + self._filled) / self._fs
            raise BadValueError(f"take is {seconds:.3f} s long; integrated loudness needs at least "
                                f"{LOUDNESS_BLOCK_S:g} s (one BS.1770 gating block)")
        # mean square of each gating block, per channel (BS.1770-4 eq. 1)
        z = sum(steps[i:len(steps) - per_block + 1 + i] for i in range(per_block)) / (per_block * self._step)
        weighted = z @ np.array(CHANNEL_GAINS[:z.shape[1]])
        with np.errstate(divide="ignore"):
            block_lufs = -0.691 + 10.0 * np.log10(weighted)  # eq. 4
            above = block_lufs >= ABSOLUTE_GATE_LUFS
            if not above.any():
                return -math.inf
            relative = -0.691 + 10.0 * np.log10(weighted[above].mean()) + RELATIVE_GATE_LU  # eq. 6
            gated = above & (block_lufs > relative)
            return float(-0.691 + 10.0 * np.log10(weighted[gated].mean()))  # eq. 7
