"""numba kernel for a real op-amp stage's large-signal limits: slew rate, then the rails.

Kernels only: nopython, ``cache=True``, float64 ``(frames, channels)`` arrays
preallocated by the caller, state updated in place, no checks inside. The Python
wrapper (:mod:`emulate.dsp.realstage`) validates and converts volts to samples.
A per-sample recurrence: splitting a signal into blocks and carrying the state
gives the same output as one call on the whole signal.
"""

from __future__ import annotations

from numba import njit

__all__ = ["HIT_RAIL", "HIT_SLEW", "rail_stage"]

# Layout of the hit counter array (int64[2]).
HIT_RAIL = 0
HIT_SLEW = 1


@njit(cache=True, nogil=True)
def rail_stage(x, step, high, low, last, out, hits):
    """Follow ``x`` no faster than ``step`` per sample, then hold it within ``[low, high]``.

    Parameters
    ----------
    x : ndarray, shape (frames, channels)
        What the ideal stage would output.
    step : float
        Largest change per sample (slew rate / sample rate, in sample units; inf for none).
    high, low : float
        The output's highest and lowest value (the swing to each rail).
    last : ndarray, shape (channels,)
        The previous output sample per channel; updated in place.
    out : ndarray, shape (frames, channels)
        Output, may be ``x``.
    hits : ndarray of int64, shape (2,)
        Counters, incremented in place: ``[HIT_RAIL]`` samples held at a rail,
        ``[HIT_SLEW]`` samples limited by the slew rate.

    Raises
    ------
    Nothing (no checks; the caller validates).

    Example
    -------
    >>> import numpy as np
    >>> x = np.array([[0.0], [2.0], [2.0], [2.0]]); y = np.empty_like(x); h = np.zeros(2, np.int64)
    >>> rail_stage(x, 0.75, 1.0, -1.0, np.zeros(1), y, h); y[:, 0].tolist(), h.tolist()
    ([0.0, 0.75, 1.0, 1.0], [2, 3])
    """
    frames, channels = x.shape
    for c in range(channels):
        previous = last[c]
        for t in range(frames):
            v = x[t, c]
            change = v - previous
            if change > step:
                v = previous + step
                hits[1] += 1
            elif change < -step:
                v = previous - step
                hits[1] += 1
            if v > high:
                v = high
                hits[0] += 1
            elif v < low:
                v = low
                hits[0] += 1
            out[t, c] = v
            previous = v
        last[c] = previous
