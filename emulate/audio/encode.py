"""The encoder: float64 blocks -> what libsndfile writes, with peak, clip and over-scale counts.

Integer PCM (Lipshitz, Wannamaker & Vanderkooy, "Quantization and Dither: A Theoretical
Survey", JAES 40(5), 1992): ``code = rint(x * 2**(N-1) + d)`` with TPDF dither
``d = u1 - u2``, ``u1, u2`` uniform on [0, 1) (triangular on (-1, 1) LSB, variance
1/6 LSB^2) for 8- and 16-bit output, then clipped explicitly to
``[-2**(N-1), 2**(N-1) - 1]`` and counted. Scaling, measuring, dither, rounding and
clipping are one pass of :func:`emulate.dsp.kernels.encode_codes`; the dither comes from
one seeded generator stepped once per sample in sample order (frame by frame, channel by
channel), so the output does not depend on the block size.

Float PCM (FLOAT/DOUBLE) is written as is, never clipped; samples over full scale are
counted. Lossy codecs take floats clipped to full scale here (counted as clipped).

The codes go to libsndfile left-aligned in int16/int32 (which it truncates exactly),
because libsndfile's own float-to-int conversion scales by ``2**(N-1) - 1`` and so does
not round-trip its reads.
"""

from __future__ import annotations

import math

import numpy as np

from emulate.dsp.state_layout import TALLY_BOTTOM, TALLY_CLIPPED, TALLY_NON_FINITE, TALLY_TOP
from emulate.errors import EmulateError

__all__ = ["Encoder", "PCM_BITS", "FLOAT_SUBTYPES", "DITHER_MAX_BITS", "container_bits", "code_dtype"]

PCM_BITS = {"PCM_S8": 8, "PCM_U8": 8, "PCM_16": 16, "PCM_24": 24, "PCM_32": 32}
FLOAT_SUBTYPES = frozenset({"FLOAT", "DOUBLE"})
DITHER_MAX_BITS = 16
_JUST_ABOVE_ONE = float(np.nextafter(1.0, 2.0))


def container_bits(bits: int) -> int:
    """Bits of the integer type that carries ``bits``-bit codes to libsndfile (16 or 32).

    Example
    -------
    >>> container_bits(24)
    32
    """
    return 16 if bits <= 16 else 32


def code_dtype(bits: int) -> np.dtype:
    """The numpy type that carries ``bits``-bit codes to and from libsndfile (int16 or int32).

    Example
    -------
    >>> code_dtype(24)
    dtype('int32')
    """
    return np.dtype(np.int16 if container_bits(bits) == 16 else np.int32)


class Encoder:
    """Encode float64 ``(frames, channels)`` blocks for one output subtype.

    Parameters
    ----------
    subtype : str
        libsndfile subtype of the output ("PCM_16", "PCM_24", "FLOAT", "VORBIS", ...).
    dither : bool
        Whether 8- and 16-bit integer output gets TPDF dither (wider output never does).
    seed : int
        Seed (>= 0, not checked here) of the dither generator.

    Attributes
    ----------
    peak : float
        Largest ``|x|`` seen so far (full scale 1.0).
    clipped : int
        Samples clipped to the code range (integer PCM) or to full scale (lossy codecs).
    over : int
        FLOAT/DOUBLE output: samples with ``|x| > 1.0`` (written unclipped).
    dither : bool
        Whether dither is being added.

    Raises
    ------
    Nothing on construction; :meth:`encode` raises EmulateError on NaN/Inf samples.

    Example
    -------
    >>> enc = Encoder("PCM_16", dither=False, seed=0)
    >>> enc.encode(np.array([[0.5, 2.0]])).tolist(), enc.clipped
    ([[16384, 32767]], 1)
    """

    def __init__(self, subtype: str, dither: bool, seed: int):
        self.bits = PCM_BITS.get(subtype)
        self.is_float = subtype in FLOAT_SUBTYPES
        self.dither = bool(dither and self.bits is not None and self.bits <= DITHER_MAX_BITS)
        self.peak = 0.0
        self.clipped = 0
        self.over = 0
        if self.bits is not None:
            from emulate.dsp.compiled import kernels  # loaded only when integers are written

            self._kernels = kernels()
            self.scale = float(2 ** (self.bits - 1))
            self.lo, self.hi = -self.scale, self.scale - 1.0
            wide = container_bits(self.bits)
            self.align = float(2 ** (wide - self.bits))
            self._dtype = code_dtype(self.bits)
            self._rng = np.array([seed], dtype=np.uint64)
            self._tally = np.array([-np.inf, np.inf, 0.0, 0.0])

    def encode(self, y: np.ndarray) -> np.ndarray:
        """Measure ``y`` and return a new array to hand libsndfile for this block.

        Raises
        ------
        EmulateError
            ``y`` holds NaN/Inf samples.
        """
        if self.bits is not None:
            return self._encode_int(y)
        top, bottom = self._measure(y)
        outside = _count_outside(y, top, bottom, -1.0, _JUST_ABOVE_ONE)
        if self.is_float:
            self.over += outside  # float PCM holds values beyond full scale: not clipped
            return y
        self.clipped += outside  # lossy codecs: clipped to full scale here, explicitly
        return np.clip(y, -1.0, 1.0)

    def copy_codes(self, codes: np.ndarray, in_scale: float) -> None:
        """Measure a block of codes written as they were read (a copy into the same subtype:
        nothing to round, dither or clip), as :meth:`encode` measures ``codes * in_scale``."""
        if codes.size:
            self.peak = max(self.peak, float(codes.max()) * in_scale, -float(codes.min()) * in_scale)

    def _measure(self, y: np.ndarray) -> tuple[float, float]:
        top, bottom = float(y.max()), float(y.min())
        if not (math.isfinite(top) and math.isfinite(bottom)):
            raise _non_finite()
        self.peak = max(self.peak, top, -bottom)
        return top, bottom

    def _encode_int(self, y: np.ndarray) -> np.ndarray:
        codes = np.empty(y.shape, self._dtype)  # new per block: the writer may still hold the last
        self._kernels.encode_codes(np.ascontiguousarray(y, dtype=np.float64), *self.code_args(), codes)
        self.count_codes()
        return codes

    @property
    def code_dtype(self):
        """numpy dtype of the codes handed to libsndfile (int16 or int32); integer PCM only."""
        return self._dtype

    def code_args(self) -> tuple:
        """``scale, lo, hi, align, dither, rng, tally`` as :func:`emulate.dsp.kernels.encode_codes`
        takes them (integer PCM only): for a kernel that encodes in its own pass; call
        :meth:`count_codes` after each such call."""
        return self.scale, self.lo, self.hi, self.align, self.dither, self._rng, self._tally

    def count_codes(self) -> None:
        """Take the peak and clip counts from the kernels' tally.

        Raises
        ------
        EmulateError
            The samples encoded held NaN/Inf.
        """
        tally = self._tally
        if tally[TALLY_NON_FINITE]:
            raise _non_finite()
        self.clipped = int(tally[TALLY_CLIPPED])
        self.peak = max(tally[TALLY_TOP], -tally[TALLY_BOTTOM], 0.0) / self.scale


def _non_finite() -> EmulateError:
    return EmulateError("the processor produced NaN/Inf samples; nothing written")


def _count_outside(s: np.ndarray, top: float, bottom: float, lo: float, hi: float) -> int:
    """Samples with ``s < lo`` or ``s >= hi``; ``top``/``bottom`` (max/min) skip the scan."""
    count = 0
    if top >= hi:
        count += int(np.count_nonzero(s >= hi))
    if bottom < lo:
        count += int(np.count_nonzero(s < lo))
    return count
