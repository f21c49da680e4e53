"""Integer PCM moved as its bytes: a render's codes without libsndfile's per-sample conversion.

libsndfile converts every sample it reads or writes as int16/int32 (24-bit packed to a
left-aligned int32 and back, a sample at a time, a few kilobytes per system call); on a
60-minute stereo 24-bit file that costs more than filtering it. Where a file's data is
plain interleaved PCM in the machine's byte order, libsndfile's raw calls
(``sf_read_raw``/``sf_write_raw``) move the data bytes in one call per block instead,
and 24-bit samples are unpacked and packed in one kernel pass
(:func:`emulate.dsp.kernels.unpack_pcm24`, :func:`emulate.dsp.kernels.pack_pcm24`). The
codes are exactly libsndfile's (the same int16/int32 values, left-aligned), and libsndfile
still writes the header, so the file is byte for byte the one ``SoundFile.write`` gives.

Used only where it is certain to be the same: WAV, W64, RF64 or CAF with PCM_16, PCM_24 or
PCM_32 data whose bytes need no swapping on this machine (libsndfile's
``SFC_RAW_DATA_NEEDS_ENDSWAP``), and a soundfile that exposes its libsndfile handle;
:func:`raw_pcm` returns None otherwise and the caller reads and writes through
``SoundFile``.
"""

from __future__ import annotations

import numpy as np
import soundfile as sf

__all__ = ["RawPCM", "raw_pcm", "RAW_FORMATS", "RAW_SAMPLE_BYTES"]

RAW_FORMATS = frozenset({"WAV", "W64", "RF64", "CAF"})
RAW_SAMPLE_BYTES = {"PCM_16": 2, "PCM_24": 3, "PCM_32": 4}
_SFC_RAW_DATA_NEEDS_ENDSWAP = 0x1110  # sndfile.h


def _library():
    """soundfile's cffi handle on libsndfile and its ffi, or None if this soundfile hides them."""
    lib, ffi = getattr(sf, "_snd", None), getattr(sf, "_ffi", None)
    if lib is None or ffi is None or not all(hasattr(lib, name) for name in
                                             ("sf_read_raw", "sf_write_raw", "sf_command", "sf_error")):
        return None
    return lib, ffi


class RawPCM:
    """One open file's PCM data read or written as bytes, as int16/int32 codes blocks.

    Made by :func:`raw_pcm`. One instance serves one thread (it owns a byte buffer for
    24-bit samples, made for the largest block seen).

    Parameters
    ----------
    snd : soundfile.SoundFile
        The open file (read or write mode); only its data is moved here.
    sample_bytes : int
        2, 3 or 4.
    """

    def __init__(self, snd: sf.SoundFile, sample_bytes: int, lib, ffi):
        self._snd, self._bytes = snd, sample_bytes
        self._lib, self._ffi = lib, ffi
        self._packed = np.empty(0, np.uint8)

    def _packed_for(self, codes: np.ndarray) -> np.ndarray:
        size = 3 * codes.size
        if self._packed.size < size:
            self._packed = np.empty(size, np.uint8)
        return self._packed[:size]

    def _failed(self) -> None:
        error = self._lib.sf_error(self._snd._file)
        raise sf.LibsndfileError(error or 2, "Error : ")  # 2: SF_ERR_SYSTEM, as a failed read or write

    def read(self, codes: np.ndarray) -> int:
        """Read up to ``len(codes)`` frames into ``codes`` (C-contiguous int16 for 16-bit data,
        int32 otherwise, left-aligned); return the frames read (0 at the end).

        Raises
        ------
        soundfile.LibsndfileError
            libsndfile reported an error (e.g. a read failure).
        """
        target = codes if self._bytes != 3 else self._packed_for(codes)
        want = codes.shape[0] * codes.shape[1] * self._bytes
        got = self._lib.sf_read_raw(self._snd._file, self._ffi.from_buffer(target), want)
        if got < want and self._lib.sf_error(self._snd._file):
            self._failed()
        frames = got // (self._bytes * codes.shape[1])
        if self._bytes == 3 and frames:
            from emulate.dsp.compiled import kernels

            kernels().unpack_pcm24(target[:3 * frames * codes.shape[1]], codes[:frames])
        return frames

    def write(self, codes: np.ndarray) -> None:
        """Write the frames of ``codes`` (C-contiguous, the dtype :meth:`read` uses).

        Raises
        ------
        soundfile.LibsndfileError
            Fewer bytes were written than given (a full disk, an I/O error).
        """
        if not codes.size:
            return
        data = codes
        if self._bytes == 3:
            from emulate.dsp.compiled import kernels

            data = self._packed_for(codes)
            kernels().pack_pcm24(codes, data)
        want = codes.size * self._bytes
        if self._lib.sf_write_raw(self._snd._file, self._ffi.from_buffer(data), want) != want:
            self._failed()


def raw_pcm(snd: sf.SoundFile) -> RawPCM | None:
    """A :class:`RawPCM` for ``snd`` if its data can be moved as bytes exactly, else None.

    Example
    -------
    >>> import numpy as np, soundfile as sf, tempfile, os
    >>> p = os.path.join(tempfile.mkdtemp(), "a.wav")
    >>> sf.write(p, np.full((4, 2), 0.5), 48000, subtype="PCM_24")
    >>> with sf.SoundFile(p) as snd:
    ...     codes = np.empty((8, 2), np.int32)
    ...     raw_pcm(snd).read(codes), codes[0].tolist()
    (4, [1073741824, 1073741824])
    """
    sample_bytes = RAW_SAMPLE_BYTES.get(snd.subtype)
    library = _library()
    if sample_bytes is None or snd.format not in RAW_FORMATS or library is None \
            or not hasattr(snd, "_file"):
        return None
    lib, ffi = library
    if lib.sf_command(snd._file, _SFC_RAW_DATA_NEEDS_ENDSWAP, ffi.NULL, 0):
        return None
    return RawPCM(snd, sample_bytes, lib, ffi)
