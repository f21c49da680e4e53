"""Takes as the finders read them: validation, dBFS, and block sources for streaming.

A finder reads a take through a :class:`TakeSource`: its sample rate, its length and a
way to walk it block by block (as many times as the analysis needs), so a take held in
memory and a file on disk are analysed by the same code, and a file of any length in
bounded memory.

Levels are in dBFS with the AES17 convention: a full-scale sine reads 0 dBFS, so a mean
square ``ms`` reads ``10*log10(2*ms)``.

What this module does *not* do: it does not analyse; see :mod:`emulate.voice.frames`.
"""

from __future__ import annotations

import dataclasses
import functools
import hashlib
from collections.abc import Callable, Iterator
from dataclasses import dataclass

import numpy as np

from emulate.errors import BadValueError
from emulate.validate import check_band_hz as check_band
from emulate.validate import check_sample_rate_hz, check_seconds

__all__ = [
    "MAX_FS_HZ",
    "MIN_FS_HZ",
    "SectionFilter",
    "TakeSource",
    "as_take",
    "check_band",
    "check_fs",
    "check_seconds",
    "dbfs",
    "take_finder",
]

#: Sample rates accepted by the analysis, in Hz (endpoints allowed).
MIN_FS_HZ = 16000.0
MAX_FS_HZ = 384000.0
#: Frames per block when a take held in memory is walked block by block.
_ARRAY_BLOCK_FRAMES = 1 << 16


def check_fs(fs: float) -> float:
    """Validate an analysis sample rate in Hz; allowed 16000 to 384000 inclusive.

    Raises
    ------
    BadValueError
        Outside that range or not a number.

    Example
    -------
    >>> check_fs(48000)
    48000.0
    """
    return check_sample_rate_hz(fs, MIN_FS_HZ, MAX_FS_HZ)


def as_take(x, name: str = "take") -> np.ndarray:
    """Validate audio and return it as ``(frames, channels)`` float64.

    Accepts 1-D (mono) or 2-D ``(frames, channels)`` finite real samples, at least one frame.

    Raises
    ------
    BadValueError
        Not numeric, wrongly shaped, empty, or holding NaN/inf.

    Example
    -------
    >>> as_take([0.0, 0.5]).shape
    (2, 1)
    """
    try:
        arr = np.asarray(x, dtype=np.float64)
    except (TypeError, ValueError) as exc:
        raise BadValueError(
            f"{name} is not numeric audio ({exc}); expected a (frames, channels) array"
        ) from None
    if arr.ndim == 1:
        arr = arr[:, None]
    if arr.ndim != 2 or arr.shape[0] == 0 or arr.shape[1] == 0:
        raise BadValueError(
            f"{name} has shape {arr.shape}; expected (frames, channels) with frames, channels >= 1"
        )
    if not np.all(np.isfinite(arr)):
        raise BadValueError(
            f"{name} holds {np.count_nonzero(~np.isfinite(arr))} NaN/inf samples; all must be finite"
        )
    return arr


def dbfs(mean_square):
    """Mean square to dBFS (AES17: full-scale sine = 0 dBFS); 0 gives -inf.

    Example
    -------
    >>> float(dbfs(0.5))
    0.0
    """
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(2.0 * np.asarray(mean_square, dtype=np.float64))


@dataclass(frozen=True)
class TakeSource:
    """A take the finders can walk block by block, as often as they need.

    Attributes
    ----------
    fs : float
        Sample rate, Hz (16000 to 384000).
    frames : int
        Length in sample frames.
    blocks : callable
        ``blocks()`` returns a fresh iterator of float64 ``(frames, channels)`` blocks
        that together hold the take.
    """

    fs: float
    frames: int
    blocks: Callable[[], Iterator[np.ndarray]]

    @property
    def seconds(self) -> float:
        """Duration in seconds."""
        return self.frames / self.fs

    def digest(self) -> str:
        """A digest of the take's samples and rate (BLAKE2b, hex): equal for the same audio only,
        whatever file holds it (a WAV and a FLAC of one take agree). The samples are hashed as
        float32 (half the bytes of float64; exact for integer files up to 24 bits): one more
        reading of the take, about 2 s for 20 minutes of 48 kHz stereo (see :meth:`digesting`).

        Example
        -------
        >>> a = TakeSource.from_array(np.zeros(4800), 48000)
        >>> a.digest() == TakeSource.from_array(np.zeros(4800), 48000).digest()
        True
        >>> a.digest() == TakeSource.from_array(np.zeros(4800), 44100).digest()
        False
        """
        digest = self._hasher()
        for block in self.blocks():
            _feed(digest, block)
        return digest.hexdigest()

    def _hasher(self):
        return hashlib.blake2b(f"{self.fs!r} {self.frames}".encode(), digest_size=16)  # frames: the channels

    def digesting(self) -> tuple[TakeSource, Callable[[], str]]:
        """This take, hashed as it is first read through, and a function giving its
        :meth:`digest`: from that reading when it went to the end, else by reading again.
        A finder reads its take at least once anyway; so the digest costs no extra decoding.

        Example
        -------
        >>> a = TakeSource.from_array(np.ones(4800), 48000)
        >>> read, digest = a.digesting()
        >>> sum(block.size for block in read.blocks()), digest() == a.digest()
        (4800, True)
        """
        state = {"hasher": self._hasher(), "done": None}

        def blocks():
            hasher, state["hasher"] = state["hasher"], None  # only the first reading hashes
            for block in self.blocks():
                if hasher is not None:
                    _feed(hasher, block)
                yield block
            if hasher is not None:
                state["done"] = hasher.hexdigest()

        return TakeSource(self.fs, self.frames, blocks), lambda: state["done"] or self.digest()

    @classmethod
    def of(cls, x, fs: float | None = None) -> TakeSource:
        """``x`` if it is a TakeSource, else :meth:`from_array` of it at ``fs``."""
        return x if isinstance(x, TakeSource) else cls.from_array(x, fs)

    @classmethod
    def from_array(cls, x, fs: float) -> TakeSource:
        """A take held in memory (validated once here).

        Raises
        ------
        BadValueError
            Bad audio or rate.

        Example
        -------
        >>> TakeSource.from_array(np.zeros(48000), 48000).seconds
        1.0
        """
        take, fs = as_take(x), check_fs(fs)

        def blocks():
            for start in range(0, take.shape[0], _ARRAY_BLOCK_FRAMES):
                yield take[start : start + _ARRAY_BLOCK_FRAMES]

        return cls(fs, take.shape[0], blocks)

    @classmethod
    def from_file(cls, path) -> TakeSource:
        """A take read from an audio file in blocks (never whole).

        Raises
        ------
        AudioFileError
            The file is unreadable or holds NaN/inf samples.
        BadValueError
            Its sample rate is outside 16000 to 384000 Hz.

        Example
        -------
        >>> import soundfile as sf, tempfile, os
        >>> p = os.path.join(tempfile.mkdtemp(), "a.wav")
        >>> sf.write(p, np.zeros((4800, 1)), 48000)
        >>> TakeSource.from_file(p).seconds
        0.1
        """
        from emulate.audio import stream

        info = stream.read_info(path)
        return cls(check_fs(info.samplerate), info.frames, lambda: stream.iter_blocks(path))


class SectionFilter:
    """Second-order sections run over consecutive blocks with their state carried (the meters' filter).

    The package's numba kernel (:func:`emulate.dsp.kernels.sos_filter`, loaded on first
    use), so measuring a render in flight costs little beside the render itself.

    Parameters
    ----------
    sos : array_like, shape (n_sections, 6)
        ``[b0, b1, b2, 1, a1, a2]`` per row.
    channels : int
        Channels of the blocks.

    Example
    -------
    >>> halve = SectionFilter([[0.5, 0, 0, 1, 0, 0]], 1)
    >>> halve(np.ones((2, 1)))[:, 0].tolist()
    [0.5, 0.5]
    """

    def __init__(self, sos, channels: int):
        self._sos = np.ascontiguousarray(sos, dtype=np.float64)
        self._state = np.zeros((len(self._sos), int(channels), 2))

    def __call__(self, block) -> np.ndarray:
        """The next block filtered (a new array; ``block`` is not changed)."""
        from emulate.dsp.compiled import kernels  # compiled ahead of time if built, else numba's JIT

        x = np.ascontiguousarray(block, dtype=np.float64)
        out = np.empty_like(x)
        kernels().sos_filter(self._sos, x, self._state, out)
        return out


def take_finder(find):
    """Decorator for a finder ``find(x, fs=None, **options)`` whose report has a ``digest`` field:
    the take (an array and its rate, or a :class:`TakeSource`) is made a TakeSource once, and the
    report carries the take's :meth:`TakeSource.digest` (hashed during the finder's own first
    reading, :meth:`TakeSource.digesting`), so pooling tells an exact repeat by its
    audio, not by its figures (two different takes that found nothing have equal figures)."""

    @functools.wraps(find)
    def finder(x, fs: float | None = None, **options):
        source, digest = TakeSource.of(x, fs).digesting()
        return dataclasses.replace(find(source, source.fs, **options), digest=digest())

    return finder


def _feed(hasher, block: np.ndarray) -> None:
    """One block into a take's digest (as float32: exact for integer files up to 24 bits)."""
    hasher.update(np.ascontiguousarray(block, dtype=np.float32).tobytes())
