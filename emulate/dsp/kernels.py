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

from emulate.dsp.state_layout import (RAMP_STEP, RAMP_TARGET, RAMP_VALUE, TALLY_BOTTOM, TALLY_CLIPPED,
                                       TALLY_NON_FINITE, TALLY_TOP)

__all__ = ["sos_filter", "ramp_blend", "delay_line", "codes_to_float", "encode_codes", "filter_codes",
           "unpack_pcm24", "pack_pcm24",
           "RAMP_VALUE", "RAMP_STEP", "RAMP_TARGET", "TALLY_TOP", "TALLY_BOTTOM", "TALLY_CLIPPED",
           "TALLY_NON_FINITE"]

# splitmix64 (Steele, Lea & Flood, "Fast splittable pseudorandom number generators",
# OOPSLA 2014): a 64-bit counter, stepped by the golden gamma and mixed.
_GAMMA = np.uint64(0x9E3779B97F4A7C15)
_MIX1 = np.uint64(0xBF58476D1CE4E5B9)
_MIX2 = np.uint64(0x94D049BB133111EB)
_HALF = np.uint64(32)
_LOW32 = np.uint64(0xFFFFFFFF)
_TWO_POW_MINUS_32 = 2.0 ** -32


@njit(cache=True, nogil=True)
def sos_filter(sos, x, state, out):
    """Filter ``x`` through cascaded second-order sections (Direct Form II transposed).

    The sections run two at a time (the last three of an odd cascade at once) over two
    channels at a time, with the coefficients and the state values held in local
    variables (registers) for the whole block: four (six) independent recurrences per
    sample, so the processor overlaps their feedback latencies. The arithmetic per section and sample is the textbook DF-II-T
    order, so the samples equal a section-by-section, sample-by-sample loop exactly.

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
    _sections(sos, x, x.shape[0], state, out)


@njit(cache=True, nogil=True)
def _sections(sos, x, frames, state, out):
    """:func:`sos_filter` on the first ``frames`` frames of ``x`` into ``out``."""
    channels, sections = x.shape[1], sos.shape[0]
    src = x
    s = 0
    while s < sections:
        width = 3 if sections - s == 3 else 2  # an odd cascade ends with three at once, not a pass-through
        for c in range(0, channels, 2):
            if c + 1 < channels and width == 3:
                _section_triple_stereo(sos, s, src, c, state, out, frames)
            elif c + 1 < channels:
                _section_pair_stereo(sos, s, src, c, state, out, frames)
            else:
                _section_pair_mono(sos, s, src, c, state, out, frames)
                if width == 3:
                    _section_pair_mono(sos, s + 2, out, c, state, out, frames)
        src = out
        s += width


@njit(cache=True, nogil=True, inline="always")
def _coefficients(sos, s):
    """``b0, b1, b2, a1, a2`` of section ``s``; a pass-through section past the last one."""
    if s < sos.shape[0]:
        return sos[s, 0], sos[s, 1], sos[s, 2], sos[s, 4], sos[s, 5]
    return 1.0, 0.0, 0.0, 0.0, 0.0


@njit(cache=True, nogil=True, inline="always")
def _state(state, s, c):
    if s < state.shape[0]:
        return state[s, c, 0], state[s, c, 1]
    return 0.0, 0.0


@njit(cache=True, nogil=True, inline="always")
def _keep_state(state, s, c, s1, s2):
    if s < state.shape[0]:
        state[s, c, 0] = s1
        state[s, c, 1] = s2


@njit(cache=True, nogil=True, inline="always")
def _step(coefficients, v, s1, s2):
    """One DF-II-T sample of one section: ``(y, s1, s2)`` after input ``v``."""
    b0, b1, b2, a1, a2 = coefficients
    y = b0 * v + s1
    return y, b1 * v - a1 * y + s2, b2 * v - a2 * y


@njit(cache=True, nogil=True)
def _section_pair_stereo(sos, s, x, c, state, out, frames):
    """Sections ``s`` and ``s + 1`` on channels ``c`` and ``c + 1`` (a missing section passes)."""
    first, second = _coefficients(sos, s), _coefficients(sos, s + 1)
    p1, p2 = _state(state, s, c)
    q1, q2 = _state(state, s, c + 1)
    r1, r2 = _state(state, s + 1, c)
    t1, t2 = _state(state, s + 1, c + 1)
    for i in range(frames):
        y, p1, p2 = _step(first, x[i, c], p1, p2)
        z, q1, q2 = _step(first, x[i, c + 1], q1, q2)
        out[i, c], r1, r2 = _step(second, y, r1, r2)
        out[i, c + 1], t1, t2 = _step(second, z, t1, t2)
    _keep_state(state, s, c, p1, p2)
    _keep_state(state, s, c + 1, q1, q2)
    _keep_state(state, s + 1, c, r1, r2)
    _keep_state(state, s + 1, c + 1, t1, t2)


@njit(cache=True, nogil=True)
def _section_triple_stereo(sos, s, x, c, state, out, frames):
    """Sections ``s``, ``s + 1`` and ``s + 2`` on channels ``c`` and ``c + 1``: six recurrences at once."""
    first, second, third = _coefficients(sos, s), _coefficients(sos, s + 1), _coefficients(sos, s + 2)
    p1, p2 = _state(state, s, c)
    q1, q2 = _state(state, s, c + 1)
    r1, r2 = _state(state, s + 1, c)
    t1, t2 = _state(state, s + 1, c + 1)
    m1, m2 = _state(state, s + 2, c)
    n1, n2 = _state(state, s + 2, c + 1)
    for i in range(frames):
        y, p1, p2 = _step(first, x[i, c], p1, p2)
        z, q1, q2 = _step(first, x[i, c + 1], q1, q2)
        u, r1, r2 = _step(second, y, r1, r2)
        h, t1, t2 = _step(second, z, t1, t2)
        out[i, c], m1, m2 = _step(third, u, m1, m2)
        out[i, c + 1], n1, n2 = _step(third, h, n1, n2)
    _keep_state(state, s, c, p1, p2)
    _keep_state(state, s, c + 1, q1, q2)
    _keep_state(state, s + 1, c, r1, r2)
    _keep_state(state, s + 1, c + 1, t1, t2)
    _keep_state(state, s + 2, c, m1, m2)
    _keep_state(state, s + 2, c + 1, n1, n2)


@njit(cache=True, nogil=True)
def _section_pair_mono(sos, s, x, c, state, out, frames):
    """Sections ``s`` and ``s + 1`` on channel ``c`` (a missing section passes)."""
    first, second = _coefficients(sos, s), _coefficients(sos, s + 1)
    p1, p2 = _state(state, s, c)
    r1, r2 = _state(state, s + 1, c)
    for i in range(frames):
        y, p1, p2 = _step(first, x[i, c], p1, p2)
        out[i, c], r1, r2 = _step(second, y, r1, r2)
    _keep_state(state, s, c, p1, p2)
    _keep_state(state, s + 1, c, r1, r2)


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
    _ramp_blend(a, b, ramp, out, a.shape[0])


@njit(cache=True, nogil=True, inline="always")
def _ramp_blend(a, b, ramp, out, frames):
    """:func:`ramp_blend` on the first ``frames`` frames."""
    channels = a.shape[1]
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
    _delay(x, buffer, position, out, x.shape[0])


@njit(cache=True, nogil=True, inline="always")
def _delay(x, buffer, position, out, frames):
    """:func:`delay_line` on the first ``frames`` frames."""
    channels = x.shape[1]
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


@njit(cache=True, nogil=True)
def codes_to_float(codes, scale, out):
    """``out = codes * scale``: integer sample codes to float64, exact for a power-of-two scale.

    Parameters
    ----------
    codes : ndarray of int16 or int32, shape (frames, channels), C-contiguous
        Codes as libsndfile hands them (left-aligned in the container).
    scale : float
        ``2**-(container bits - 1)``, so a full-scale code reads 1.0.
    out : ndarray, shape (frames, channels), C-contiguous
        float64 output.

    Raises
    ------
    Nothing (no checks; the caller validates).

    Example
    -------
    >>> out = np.empty((2, 1)); codes_to_float(np.array([[16384], [-32768]], np.int16), 2.0 ** -15, out)
    >>> out[:, 0].tolist()
    [0.5, -1.0]
    """
    flat_codes, flat_out = codes.ravel(), out.ravel()  # C order: one vectorised loop
    for i in range(flat_codes.size):
        flat_out[i] = flat_codes[i] * scale


@njit(cache=True, nogil=True, inline="always")
def _uniform_pair(rng):
    """Two uniforms on [0, 1) from one splitmix64 step of ``rng[0]`` (32 bits each)."""
    rng[0] += _GAMMA
    z = rng[0]
    z = (z ^ (z >> np.uint64(30))) * _MIX1
    z = (z ^ (z >> np.uint64(27))) * _MIX2
    z = z ^ (z >> np.uint64(31))
    return float(z >> _HALF) * _TWO_POW_MINUS_32, float(z & _LOW32) * _TWO_POW_MINUS_32


@njit(cache=True, nogil=True)
def encode_codes(y, scale, lo, hi, align, dither, rng, tally, codes):
    """Float samples to integer codes in one pass: scale, measure, dither, round, clip.

    Per sample, frame by frame and channel by channel: ``s = y * scale``; the tally
    keeps the largest and smallest ``s``, counts NaN/Inf and counts ``s`` whose nearest
    code is outside ``[lo, hi]`` (``s < lo - 0.5`` or ``s >= hi + 0.5``: round half to
    even sends ``hi + 0.5`` up and ``lo - 0.5`` up); with ``dither`` TPDF dither
    ``u1 - u2`` is added (``u1, u2`` uniform on [0, 1), one generator step per sample);
    then ``code = clip(rint(s), lo, hi) * align``.

    Parameters
    ----------
    y : ndarray, shape (frames, channels), C-contiguous
        float64 samples, full scale 1.0.
    scale : float
        ``2**(bits - 1)``.
    lo, hi : float
        Smallest and largest code, ``-2**(bits - 1)`` and ``2**(bits - 1) - 1``.
    align : float
        ``2**(container bits - bits)``: codes go to libsndfile left-aligned.
    dither : bool
        Add TPDF dither.
    rng : ndarray of uint64, shape (1,)
        splitmix64 counter of the dither generator, updated in place.
    tally : ndarray, shape (4,)
        See ``TALLY_*``; updated in place.
    codes : ndarray of int16 or int32, shape (frames, channels), C-contiguous
        Output codes.

    Raises
    ------
    Nothing (no checks; the caller validates and reads the tally).

    Example
    -------
    >>> tally = np.array([-np.inf, np.inf, 0.0, 0.0]); codes = np.empty((3, 1), np.int16)
    >>> encode_codes(np.array([[0.5], [1.5], [-1.0]]), 32768.0, -32768.0, 32767.0, 1.0, False,
    ...              np.zeros(1, np.uint64), tally, codes)
    >>> codes[:, 0].tolist(), float(tally[2])
    ([16384, 32767, -32768], 1.0)
    """
    flat_y, flat_codes = y.ravel(), codes.ravel()  # C order: frame by frame, channel by channel
    _encode_span(flat_y, 0, flat_y.size, scale, lo, hi, align, dither, rng, tally, flat_codes, 0)


@njit(cache=True, nogil=True, inline="always")
def _encode_span(flat_y, first, count, scale, lo, hi, align, dither, rng, tally, flat_codes, first_code):
    """:func:`encode_codes` on ``flat_y[first:first + count]`` into ``flat_codes`` from ``first_code``."""
    ys = flat_y[first:first + count]  # views indexed from 0: the loop vectorises (3x faster than offsets)
    codes = flat_codes[first_code:first_code + count]
    top, bottom = tally[0], tally[1]
    clipped, non_finite = 0, 0
    clip_lo, clip_hi = lo - 0.5, hi + 0.5
    for i in range(count):
        s = ys[i] * scale
        if not (-np.inf < s < np.inf):
            non_finite += 1
            s = 0.0
        top = max(top, s)
        bottom = min(bottom, s)
        if s >= clip_hi or s < clip_lo:
            clipped += 1
        if dither:
            u1, u2 = _uniform_pair(rng)
            s += u1
            s -= u2
        codes[i] = min(max(np.rint(s), lo), hi) * align
    tally[0], tally[1] = top, bottom
    tally[2] += clipped
    tally[3] += non_finite


@njit(cache=True, nogil=True)
def filter_codes(codes, in_scale, sos, state, blend, ramp, dry_buffer, dry_position, skip,
                 scale, lo, hi, align, dither, rng, tally, scratch, out):
    """Integer codes through the sections (and the wet/dry blend) to integer codes, in one pass.

    :func:`codes_to_float`, :func:`sos_filter`, with ``blend`` :func:`delay_line` and
    :func:`ramp_blend` (``out = (1 - g) dry + g wet``), then :func:`encode_codes`, run a
    chunk of ``scratch.shape[1]`` frames at a time, so the float samples stay in the
    processor's cache and memory is touched once per sample. Each sample gets the same
    arithmetic as those kernels one after the other, so the codes are identical.

    Parameters
    ----------
    codes : ndarray of int16 or int32, shape (frames, channels), C-contiguous
        Input codes, left-aligned in the container.
    in_scale : float
        ``2**-(container bits - 1)`` of the input.
    sos, state :
        As :func:`sos_filter`.
    blend : bool
        Mix the delayed dry signal in (False: the wet signal alone, the delay untouched).
    ramp : ndarray, shape (3,)
        The mix ramp, as :func:`ramp_blend` (g is the wet share).
    dry_buffer, dry_position :
        As :func:`delay_line`; a buffer of 0 frames means no delay.
    skip : int
        Frames at the start filtered but not encoded (latency compensation), <= frames.
    scale, lo, hi, align, dither, rng, tally :
        As :func:`encode_codes`, for the output.
    scratch : ndarray, shape (3, chunk, channels), C-contiguous
        float64 work space (input, wet, dry of one chunk).
    out : ndarray of int16 or int32, shape (frames - skip, channels), C-contiguous
        Output codes.

    Raises
    ------
    Nothing (no checks; the caller validates and reads the tally).

    Example
    -------
    >>> sos = np.array([[0.5, 0.0, 0.0, 1.0, 0.0, 0.0]]); out = np.empty((2, 1), np.int16)
    >>> filter_codes(np.array([[1000], [-1000], [7]], np.int16), 2.0 ** -15, sos, np.zeros((1, 1, 2)),
    ...              False, np.zeros(3), np.zeros((0, 1)), np.zeros(1, np.int64), 1, 32768.0, -32768.0,
    ...              32767.0, 1.0, False, np.zeros(1, np.uint64), np.array([-np.inf, np.inf, 0.0, 0.0]),
    ...              np.empty((3, 4, 1)), out)
    >>> out[:, 0].tolist()
    [-500, 4]
    """
    frames, channels = codes.shape
    x, wet, dry = scratch[0], scratch[1], scratch[2]
    chunk = x.shape[0]
    flat_in, flat_x, flat_wet, flat_out = codes.ravel(), x.ravel(), wet.ravel(), out.ravel()
    for first in range(0, frames, chunk):
        n = min(chunk, frames - first)
        chunk_in = flat_in[first * channels:(first + n) * channels]
        for i in range(n * channels):
            flat_x[i] = chunk_in[i] * in_scale
        _sections(sos, x, n, state, wet)
        if blend:
            if dry_buffer.shape[0]:
                _delay(x, dry_buffer, dry_position, dry, n)
                _ramp_blend(dry, wet, ramp, wet, n)
            else:
                _ramp_blend(x, wet, ramp, wet, n)
        skipped = min(max(skip - first, 0), n)  # frames of this chunk not encoded
        _encode_span(flat_wet, skipped * channels, (n - skipped) * channels, scale, lo, hi, align, dither,
                     rng, tally, flat_out, (first + skipped - skip) * channels)


@njit(cache=True, nogil=True)
def unpack_pcm24(packed, codes):
    """Little-endian 24-bit samples (3 bytes each) to int32 codes left-aligned, as libsndfile reads them.

    Parameters
    ----------
    packed : ndarray of uint8, shape (3 * codes.size,), C-contiguous
        The samples as a WAV file holds them (least significant byte first).
    codes : ndarray of int32, shape (frames, channels), C-contiguous
        Output: each sample times 256 (libsndfile's int reading of 24-bit PCM).

    Raises
    ------
    Nothing (no checks; the caller validates).

    Example
    -------
    >>> codes = np.empty((2, 1), np.int32)
    >>> unpack_pcm24(np.array([1, 0, 0, 0, 0, 0x80], np.uint8), codes); codes[:, 0].tolist()
    [256, -2147483648]
    """
    flat = codes.ravel()
    for i in range(flat.size):
        flat[i] = ((np.int32(packed[3 * i]) << 8) | (np.int32(packed[3 * i + 1]) << 16)
                   | (np.int32(np.int8(packed[3 * i + 2])) << 24))


@njit(cache=True, nogil=True)
def pack_pcm24(codes, packed):
    """Left-aligned int32 codes to little-endian 24-bit samples: their top three bytes, as libsndfile writes them.

    Parameters
    ----------
    codes : ndarray of int32, shape (frames, channels), C-contiguous
        Codes left-aligned in int32 (the low byte is dropped).
    packed : ndarray of uint8, shape (3 * codes.size,), C-contiguous
        Output, least significant byte first.

    Raises
    ------
    Nothing (no checks; the caller validates).

    Example
    -------
    >>> packed = np.empty(3, np.uint8); pack_pcm24(np.array([[-256]], np.int32), packed); packed.tolist()
    [255, 255, 255]
    """
    flat = codes.ravel()
    for i in range(flat.size):
        value = flat[i]
        packed[3 * i] = (value >> 8) & 0xFF
        packed[3 * i + 1] = (value >> 16) & 0xFF
        packed[3 * i + 2] = (value >> 24) & 0xFF
