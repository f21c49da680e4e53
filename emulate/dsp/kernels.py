"""numba kernels for the block processor: cascaded biquads, ramped blends, a delay line.

Kernels only: nopython, ``cache=True``, float64 ``(frames, channels)`` arrays
preallocated by the caller, state updated in place, no checks inside.  The
Python wrapper (:mod:`emulate.dsp.processor`) validates shapes and values.
Every kernel is a per-sample recurrence, so splitting a signal into blocks and
carrying the state gives the same output as one call on the whole signal.
"""

from __future__ import annotations

import numpy as np  # noqa: F401  (the docstring examples use it)
from numba import njit

__all__ = ["sos_filter", "ramp_blend", "delay_line", "RAMP_VALUE", "RAMP_STEP", "RAMP_TARGET"]

# Layout of a ramp state array (float64[3]).
RAMP_VALUE = 0
RAMP_STEP = 1
RAMP_TARGET = 2


@njit(cache=True, nogil=True)
def sos_filter(sos, x, state, out):
    """Filter ``x`` through cascaded second-order sections (Direct Form II transposed).

    Parameters
    ----------
    sos : ndarray, shape (n_sections, 6)
        ``[b0, b1, b2, a0, a1, a2]`` per row with ``a0 == 1`` (not checked).
    x : ndarray, shape (frames, channels)
        Input samples.
    state : ndarray, shape (n_sections, channels, 2)
        Per-section, per-channel DF-II-T state, updated in place.
    out : ndarray, shape (frames, channels)
        Output, may be ``x`` itself.

    Raises
    ------
    Nothing (no checks; the caller validates).

    Example
    -------
    >>> sos = np.array([[0.5, 0.0, 0.0, 1.0, 0.0, 0.0]])
    >>> x = np.ones((3, 1)); y = np.empty_like(x)
    >>> sos_filter(sos, x, np.zeros((1, 1, 2)), y); y[:, 0].tolist()
    [0.5, 0.5, 0.5]
    """
    frames, channels = x.shape
    n_sections = sos.shape[0]
    for c in range(channels):
        for t in range(frames):
            v = x[t, c]
            for s in range(n_sections):
                # y = b0 v + s1; s1 = b1 v - a1 y + s2; s2 = b2 v - a2 y (DF-II-T)
                y = sos[s, 0] * v + state[s, c, 0]
                state[s, c, 0] = sos[s, 1] * v - sos[s, 4] * y + state[s, c, 1]
                state[s, c, 1] = sos[s, 2] * v - sos[s, 5] * y
                v = y
            out[t, c] = v


@njit(cache=True, nogil=True)
def ramp_blend(a, b, ramp, out):
    """``out = (1 - g) a + g b`` with g moving linearly towards its target, per sample.

    Parameters
    ----------
    a, b : ndarray, shape (frames, channels)
        The signals blended (g = 0 gives ``a``, g = 1 gives ``b`` exactly).
    ramp : ndarray, shape (3,)
        ``[value, step, target]``: g moves by ``step`` (> 0) per sample until it
        reaches ``target``, then stays; updated in place, so it carries across blocks.
    out : ndarray, shape (frames, channels)
        Output, may be ``a`` or ``b``.

    Raises
    ------
    Nothing (no checks; the caller validates).

    Example
    -------
    >>> a = np.zeros((4, 1)); b = np.ones((4, 1)); r = np.array([0.0, 0.25, 1.0])
    >>> ramp_blend(a, b, r, a); a[:, 0].tolist()
    [0.25, 0.5, 0.75, 1.0]
    """
    frames, channels = a.shape
    g = ramp[0]
    step = ramp[1]
    target = ramp[2]
    for t in range(frames):
        if g < target:
            g = min(g + step, target)
        elif g > target:
            g = max(g - step, target)
        h = 1.0 - g
        for c in range(channels):
            out[t, c] = h * a[t, c] + g * b[t, c]
    ramp[0] = g


@njit(cache=True, nogil=True)
def delay_line(x, buffer, position, out):
    """Delay ``x`` by ``buffer.shape[0]`` samples through a circular buffer.

    Parameters
    ----------
    x : ndarray, shape (frames, channels)
        Input samples.
    buffer : ndarray, shape (delay, channels)
        Circular buffer holding the last ``delay`` inputs; updated in place.
    position : ndarray of int64, shape (1,)
        Read/write index into ``buffer``; updated in place.
    out : ndarray, shape (frames, channels)
        Output; must not be ``x``.

    Raises
    ------
    Nothing (no checks; the caller validates; ``delay`` must be >= 1).

    Example
    -------
    >>> x = np.arange(4.0).reshape(4, 1); y = np.empty_like(x)
    >>> delay_line(x, np.zeros((2, 1)), np.zeros(1, np.int64), y); y[:, 0].tolist()
    [0.0, 0.0, 0.0, 1.0]
    """
    frames, channels = x.shape
    delay = buffer.shape[0]
    i = position[0]
    for t in range(frames):
        for c in range(channels):
            out[t, c] = buffer[i, c]
            buffer[i, c] = x[t, c]
        i += 1
        if i == delay:
            i = 0
    position[0] = i
