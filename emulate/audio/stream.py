"""Audio files: streaming blocks, sample-format keeping, atomic writes (encoding: :mod:`emulate.audio.encode`).

Everything goes through libsndfile (the ``soundfile`` package), so WAV, FLAC, AIFF and
every other container libsndfile reads are accepted. Audio is always handled as
float64 arrays of shape ``(frames, channels)``, one block at a time, so memory stays
bounded whatever the file length.

:func:`render_file` reads top to bottom as its stages:

1. check    IN is readable; OUT is not IN, its folder exists and is writable, its
            extension names a container libsndfile writes, and the container holds
            the subtype (kept from IN unless one is asked for). Nothing is processed
            before all of this passes.
2. read     in a reader thread: integer PCM as its codes, scaled to float64 once in a
            numba kernel (exactly libsndfile's float reading); float input as float64,
            checked for NaN/Inf.
3. process  ``processor.process(block)``; the processor's latency is compensated by
            feeding ``latency_samples`` frames of zeros after the input and dropping
            the first ``latency_samples`` output frames, so OUT lines up with IN
            sample for sample and has exactly its length.
4.-5. measure and encode in one pass (:mod:`emulate.audio.encode`): peak, clip and
            over-scale counts; integer PCM: codes with TPDF dither for 8/16-bit and an
            explicit clip to the code range; float PCM: written as is (never clipped).
6. write    in a writer thread, into a hidden temporary file beside OUT, moved onto
            OUT with :func:`os.replace` at the end; on any error or Ctrl-C both threads
            are stopped and joined, then the file is removed
            (:mod:`emulate.audio.pipeline`).

Reading, processing and writing overlap (libsndfile and the kernels release the GIL);
bounded queues keep memory at a few blocks whatever the length.

Integer PCM in and out with a processor that offers ``process_codes`` (the notch
processor) takes a shorter road: the reader reads codes into reused int16/int32 blocks,
one kernel pass turns them into output codes (2.-5. together: scale, filter, mix,
measure, dither, round, clip) in reused blocks, and the writer hands those to
libsndfile; no float block exists and nothing is allocated per block. The file is
byte for byte the one the float path writes.

Sample scaling is libsndfile's read convention in both directions: an N-bit code ``c``
is the value ``c / 2**(N-1)``, so 0 dBFS is 1.0, the largest positive code is
``1 - 2**-(N-1)`` and the smallest is exactly -1.0. Integer codes are computed here and
handed to libsndfile as int16/int32 (exact), because libsndfile's own float-to-int
conversion scales by ``2**(N-1) - 1`` and so does not round-trip its reads.

An existing OUT that is not IN is replaced, atomically (readers see the old file or
the new one, never a partial one). IN is never written.
"""

from __future__ import annotations

import math
import os
import shutil
import struct
import time
import warnings
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import asdict, dataclass
from pathlib import Path

import numpy as np
import soundfile as sf

from emulate.audio import pipeline, rawpcm
from emulate.audio.encode import PCM_BITS, Encoder, code_dtype, container_bits
from emulate.errors import AudioFileError, BadValueError, EmulateWarning, OutputRefusedError
from emulate.files import atomic_path
from emulate.validate import check_count

__all__ = [
    "AudioInfo",
    "RenderReport",
    "read_info",
    "iter_blocks",
    "render_file",
    "copy_file",
    "output_format",
    "check_out_format",
    "check_out_path",
    "read_all",
    "write_array",
]

DEFAULT_BLOCK_FRAMES = 65536
MAX_BLOCK_FRAMES = 1 << 20
_EXTENSION_ALIASES = {"aif": "AIFF"}


# --- results ------------------------------------------------------------------------
@dataclass(frozen=True)
class AudioInfo:
    """What libsndfile reports about an audio file.

    Attributes
    ----------
    path : str
        The file as given.
    frames : int
        Sample frames per channel (>= 1).
    samplerate : int
        Sample rate in Hz.
    channels : int
        Number of channels.
    format : str
        libsndfile container name, e.g. ``"WAV"``, ``"FLAC"``, ``"AIFF"``.
    subtype : str
        libsndfile sample format, e.g. ``"PCM_16"``, ``"PCM_24"``, ``"FLOAT"``.
    duration_s : float
        ``frames / samplerate`` in seconds.
    """

    path: str
    frames: int
    samplerate: int
    channels: int
    format: str
    subtype: str
    duration_s: float

    def to_dict(self) -> dict:
        """Plain JSON-ready dict of the fields."""
        return asdict(self)


@dataclass(frozen=True)
class RenderReport:
    """What :func:`render_file` or :func:`copy_file` wrote.

    Attributes
    ----------
    in_path, out_path : str
        Source and written file.
    frames, samplerate, channels : int
        Frames per channel, rate in Hz and channels of OUT (the same as IN).
    format, subtype : str
        libsndfile container and sample format of OUT.
    latency_samples : int
        Processor latency that was compensated (0 for a copy).
    peak_dbfs : float
        Peak sample level of the processed signal before encoding, in dBFS
        (``-inf`` for digital silence).
    clipped_samples : int
        Integer PCM (and lossy codecs): samples whose nearest code lay outside the code
        range, clipped to the largest/smallest code. Always 0 for FLOAT/DOUBLE.
    over_full_scale_samples : int
        FLOAT/DOUBLE output: samples with ``|x| > 1.0``, written unclipped. 0 otherwise.
    dithered : bool
        Whether TPDF dither was added (8- and 16-bit integer PCM when rendering).
    elapsed_s : float
        Wall-clock seconds for the whole call.
    """

    in_path: str
    out_path: str
    frames: int
    samplerate: int
    channels: int
    format: str
    subtype: str
    latency_samples: int
    peak_dbfs: float
    clipped_samples: int
    over_full_scale_samples: int
    dithered: bool
    elapsed_s: float

    def to_dict(self) -> dict:
        """Plain JSON-ready dict of the fields (``peak_dbfs`` of silence becomes None)."""
        d = asdict(self)
        if not math.isfinite(d["peak_dbfs"]):
            d["peak_dbfs"] = None
        return d


# --- validators (one per concept) ------------------------------------------------------
def _check_processor(processor) -> None:
    for name in ("prepare", "process"):
        if not callable(getattr(processor, name, None)):
            raise BadValueError(
                f"processor {type(processor).__name__} has no {name}() method; "
                "allowed: an object with prepare(sample_rate, channels), process(block), "
                "latency_samples")


def output_format(out_path) -> str:
    """Container libsndfile writes for ``out_path``, from its extension.

    Parameters
    ----------
    out_path : str or path-like
        The output file; only its extension is used (case-insensitive).

    Returns
    -------
    str
        libsndfile format name, e.g. ``"WAV"`` for ``.wav``, ``"AIFF"`` for ``.aif``.

    Raises
    ------
    AudioFileError
        The extension is missing or names no container libsndfile can write.

    Example
    -------
    >>> output_format("take1.Flac")
    'FLAC'
    """
    ext = Path(out_path).suffix.lower().lstrip(".")
    fmt = _EXTENSION_ALIASES.get(ext, ext.upper())
    if not ext or fmt not in sf.available_formats():
        allowed = ", ".join(sorted({"." + f.lower() for f in sf.available_formats()}
                                   | {"." + a for a in _EXTENSION_ALIASES}))
        raise AudioFileError(
            f"{out_path}: extension {('.' + ext) if ext else '(none)'!r} is not a container "
            f"libsndfile can write; allowed: {allowed}")
    return fmt


def _check_subtype(out_path, fmt: str, subtype: str, kept: bool) -> str:
    subtype = str(subtype).upper()
    if subtype not in sf.available_subtypes(fmt) or not sf.check_format(fmt, subtype):
        allowed = ", ".join(sf.available_subtypes(fmt))
        why = " (kept from IN; pass an explicit subtype)" if kept else ""
        raise AudioFileError(
            f"{out_path}: {fmt} cannot hold subtype {subtype}{why}; allowed: {allowed}")
    return subtype


def check_out_format(out_path, subtype: str) -> tuple[str, str]:
    """Refuse an OUT that could not be written, before any work; return (format, subtype).

    Raises
    ------
    AudioFileError
        OUT is a folder, its folder is missing or not writable, its extension names no
        writable container, or the container cannot hold ``subtype``.

    Example
    -------
    >>> import tempfile, os
    >>> check_out_format(os.path.join(tempfile.mkdtemp(), "sweep.flac"), "pcm_24")
    ('FLAC', 'PCM_24')
    """
    _check_out_folder(out_path)
    fmt = output_format(out_path)
    return fmt, _check_subtype(out_path, fmt, subtype, kept=False)


def check_out_path(in_path, out_path) -> None:
    """Raise AudioFileError if OUT is IN, is a folder, or lies in a missing or read-only folder."""
    _check_out_path(in_path, out_path)


def _check_out_path(in_path, out_path) -> None:
    src, dst = Path(in_path), Path(out_path)
    if src.resolve() == dst.resolve() or (dst.exists() and src.exists()
                                          and os.path.samefile(src, dst)):
        raise AudioFileError(
            f"{out_path}: OUT is the same file as IN; allowed: any other path (IN is never "
            "overwritten)")
    _check_out_folder(out_path)


def _check_out_folder(out_path) -> None:
    dst = Path(out_path)
    if dst.is_dir():
        raise AudioFileError(f"{out_path}: OUT is a folder; allowed: a file path")
    folder = dst.parent
    if not folder.is_dir():
        raise AudioFileError(f"{out_path}: folder {str(folder)!r} does not exist; "
                             "allowed: a path in an existing folder")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise AudioFileError(f"{out_path}: folder {str(folder)!r} is not writable; "
                             "allowed: a folder you can write to")


# --- reading ----------------------------------------------------------------------------
def _open_read(path) -> sf.SoundFile:
    p = Path(path)
    if not p.exists():
        raise AudioFileError(f"{path}: no such file")
    if p.is_dir():
        raise AudioFileError(f"{path}: is a folder, not an audio file")
    if p.stat().st_size == 0:
        raise AudioFileError(f"{path}: empty file (0 bytes)")
    try:
        snd = sf.SoundFile(os.fsencode(p))  # bytes: any name the file system holds
    except (sf.SoundFileError, OSError) as exc:
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise AudioFileError(
            f"{path}: not an audio file libsndfile can read ({reason})") from None
    if snd.frames <= 0:
        snd.close()
        raise AudioFileError(f"{path}: holds no audio frames")
    _warn_if_cut(path, snd)
    return snd


_SAMPLE_BYTES = {"PCM_U8": 1, "PCM_S8": 1, "ULAW": 1, "ALAW": 1, "PCM_16": 2, "PCM_24": 3,
                 "PCM_32": 4, "FLOAT": 4, "DOUBLE": 8}


def promised_frames(path, snd: sf.SoundFile) -> int | None:
    """Frames a WAV file's header promises (its data chunk size), or None if it does not say.

    libsndfile reports the frames actually present; a WAV cut mid-data (a copy or a
    recording stopped short) promises more in its ``data`` chunk header.
    """
    width = _SAMPLE_BYTES.get(snd.subtype)
    if snd.format != "WAV" or width is None:
        return None
    with open(path, "rb") as handle:
        riff = handle.read(12)
        if riff[:4] not in (b"RIFF", b"RIFX") or riff[8:12] != b"WAVE":
            return None
        order = "<" if riff[:4] == b"RIFF" else ">"
        while len(header := handle.read(8)) == 8:
            size = struct.unpack(order + "I", header[4:])[0]
            if header[:4] == b"data":
                return None if size in (0, 0xFFFFFFFF) else size // (width * snd.channels)
            handle.seek(size + (size & 1), os.SEEK_CUR)
    return None


def _warn_if_cut(path, snd: sf.SoundFile) -> None:
    promised = promised_frames(path, snd)
    if promised is not None and promised > snd.frames:
        warnings.warn(f"{path}: cut short: its header promises {promised} frames, the file holds "
                      f"{snd.frames} ({(promised - snd.frames) / snd.samplerate:.3f} s missing); "
                      "only the frames present are used", EmulateWarning, stacklevel=3)


def _read(snd: sf.SoundFile, path, done: int, *args, reader=None, **kwargs):
    """``snd.read(...)`` (or ``reader(...)``, e.g. :meth:`emulate.audio.rawpcm.RawPCM.read`); a
    decoding failure (a damaged or cut FLAC) becomes one AudioFileError."""
    try:
        return (reader or snd.read)(*args, **kwargs)
    except (sf.SoundFileError, OSError) as exc:
        reason = str(exc).splitlines()[0].strip().removeprefix("Error : ") if str(exc) else type(exc).__name__
        raise AudioFileError(f"{path}: cannot be decoded from frame {done} on, of the {snd.frames} its "
                             f"header promises ({reason}); the file is damaged or cut short "
                             "(nothing was written)") from None


def read_info(path) -> AudioInfo:
    """Describe an audio file without reading its samples.

    Parameters
    ----------
    path : str or path-like
        Any file libsndfile reads (WAV, FLAC, AIFF, CAF, OGG, ...).

    Returns
    -------
    AudioInfo
        Frames, rate (Hz), channels, container, subtype, duration (s).

    Raises
    ------
    AudioFileError
        Missing, a folder, empty (0 bytes or 0 frames), or not audio libsndfile reads.

    Example
    -------
    >>> import numpy as np, soundfile as sf, tempfile, os
    >>> p = os.path.join(tempfile.mkdtemp(), "a.wav")
    >>> sf.write(p, np.zeros((480, 2)), 48000, subtype="PCM_24")
    >>> read_info(p).duration_s
    0.01
    """
    with _open_read(path) as snd:
        return AudioInfo(str(path), int(snd.frames), int(snd.samplerate), int(snd.channels),
                         snd.format, snd.subtype, snd.frames / snd.samplerate)


def _check_finite(block: np.ndarray, path, first_frame: int) -> None:
    # A sum of finite audio is finite unless values near 1e308 overflow; only then (or on
    # a real NaN/Inf) is the exact per-sample check run.
    if math.isfinite(block.sum()) or np.isfinite(block).all():
        return
    frame, channel = np.argwhere(~np.isfinite(block))[0]
    raise AudioFileError(
        f"{path}: sample at frame {first_frame + int(frame)}, channel {int(channel)} is "
        f"{block[frame, channel]}; allowed: finite samples only (nothing written)")


def _read_blocks(snd: sf.SoundFile, path, block_frames: int, *, kernel: bool = True) -> Iterator[np.ndarray]:
    """New float64 blocks; integer PCM is read as its codes and converted once, exactly.

    ``kernel`` converts the codes in one numba pass (a render); False converts them with
    numpy (the same values: an integer times a power of two is exact in float64), so that
    reading a take for analysis does not load numba.
    """
    if snd.subtype in PCM_BITS:
        yield from _read_codes_as_float(snd, path, block_frames, kernel)
        return
    done = 0
    while True:
        block = _read(snd, path, done, block_frames, dtype="float64", always_2d=True)
        if not len(block):
            return
        _check_finite(block, path, done)
        done += len(block)
        yield block


def _read_codes_as_float(snd: sf.SoundFile, path, block_frames: int, kernel: bool) -> Iterator[np.ndarray]:
    """Integer PCM (which cannot hold NaN/Inf) as codes, scaled to float64 in one pass.

    The codes come left-aligned in int16/int32, so ``code * 2**-(container bits - 1)``
    is exactly libsndfile's own float reading, ``c / 2**(N-1)``. With ``kernel``, WAV-like
    files are read as bytes (:mod:`emulate.audio.rawpcm`) into one reused codes block.
    """
    if kernel:
        from emulate.dsp.compiled import kernels  # loaded only when rendering

        codes_to_float = kernels().codes_to_float
    else:
        codes_to_float = _codes_to_float_numpy
    dtype, scale = _codes_of(snd.subtype)
    raw = rawpcm.raw_pcm(snd) if kernel else None  # 24-bit bytes are unpacked by a kernel
    codes_block = np.empty((block_frames, snd.channels), dtype) if raw else None
    done = 0
    while True:
        if raw:
            codes = codes_block[:_read(snd, path, done, codes_block, reader=raw.read)]
        else:
            codes = _read(snd, path, done, block_frames, dtype=dtype, always_2d=True)
        if not len(codes):
            return
        block = np.empty(codes.shape)
        codes_to_float(codes, scale, block)
        done += len(block)
        yield block


def _codes_of(subtype: str) -> tuple[np.dtype, float]:
    """How libsndfile hands an integer PCM subtype's codes over: their numpy type (left-aligned
    int16/int32) and what one code is worth (``2**-(container bits - 1)``, full scale 1.0)."""
    bits = PCM_BITS[subtype]
    return code_dtype(bits), 2.0 ** -(container_bits(bits) - 1)


def _codes_to_float_numpy(codes: np.ndarray, scale: float, out: np.ndarray) -> None:
    """:func:`emulate.dsp.kernels.codes_to_float` in numpy (two passes, no numba)."""
    np.multiply(codes, scale, out=out)


def iter_blocks(path, block_frames: int = DEFAULT_BLOCK_FRAMES) -> Iterator[np.ndarray]:
    """Read a file as consecutive float64 ``(frames, channels)`` blocks.

    Memory is bounded by one block. Every block has ``block_frames`` frames except
    possibly the last. Each yielded array is new (safe to keep).

    Parameters
    ----------
    path : str or path-like
        Audio file libsndfile reads.
    block_frames : int, optional
        Frames per block, 1 to 1048576 (default 65536).

    Yields
    ------
    numpy.ndarray
        float64 block, full scale 1.0 (an N-bit code ``c`` reads as ``c / 2**(N-1)``).

    Raises
    ------
    AudioFileError
        The file is unreadable (see :func:`read_info`) or holds NaN/Inf samples.
    BadValueError
        ``block_frames`` is outside 1..1048576.

    Example
    -------
    >>> import numpy as np, soundfile as sf, tempfile, os
    >>> p = os.path.join(tempfile.mkdtemp(), "a.flac")
    >>> sf.write(p, np.zeros((1000, 1)), 44100)
    >>> [b.shape for b in iter_blocks(p, block_frames=400)]
    [(400, 1), (400, 1), (200, 1)]
    """
    block_frames = check_count("block_frames", block_frames, 1, MAX_BLOCK_FRAMES)
    with _open_read(path) as snd:
        yield from _read_blocks(snd, path, block_frames, kernel=False)  # analysis: no numba


# --- processing with latency compensation ------------------------------------------------
def _zero_blocks(frames: int, channels: int, block_frames: int) -> Iterator[np.ndarray]:
    while frames > 0:
        n = min(frames, block_frames)
        yield np.zeros((n, channels))  # fresh: a processor may work in place
        frames -= n


def _processed(blocks: Iterator[np.ndarray], processor, latency: int, channels: int,
               block_frames: int, progress) -> Iterator[np.ndarray]:
    """Input blocks then ``latency`` zeros through the processor; first ``latency`` dropped."""
    skip = latency

    def feed(block):
        nonlocal skip
        out = processor.process(block)
        if not isinstance(out, np.ndarray) or out.shape != block.shape:
            raise BadValueError(
                f"processor returned {getattr(out, 'shape', type(out).__name__)} for a "
                f"block of shape {block.shape}; allowed: the same (frames, channels) shape")
        drop = min(skip, len(out))
        skip -= drop
        return out[drop:]

    for block in blocks:
        out = feed(block)
        if progress is not None:
            progress(len(block))
        if len(out):
            yield out
    for block in _zero_blocks(latency, channels, block_frames):
        out = feed(block)
        if len(out):
            yield out


# --- writing -----------------------------------------------------------------------------
@contextmanager
def _atomic_output(out_path, fmt: str, subtype: str, samplerate: int,
                   channels: int, replace: bool = True) -> Iterator[sf.SoundFile]:
    """A SoundFile on a hidden temporary file beside OUT, moved onto OUT on success.

    On any exception (KeyboardInterrupt included) the temporary file is removed and the
    exception goes on; OUT is untouched (:func:`emulate.files.atomic_path`). With
    ``replace=False`` a file that appeared at OUT meanwhile is never replaced.
    """
    try:
        with atomic_path(out_path, replace=replace) as tmp:
            try:
                snd = sf.SoundFile(os.fsencode(tmp), "w", samplerate, channels, subtype, format=fmt)
            except (sf.SoundFileError, OSError) as exc:
                raise AudioFileError(f"{out_path}: cannot write {fmt} {subtype} at {samplerate} Hz, "
                                     f"{channels} channel(s) ({exc})") from None
            try:
                with snd:
                    yield snd
            except (sf.SoundFileError, OSError) as exc:  # disk full, quota, I/O error while writing
                raise AudioFileError(f"{out_path}: writing failed ({_write_reason(exc, out_path)}); "
                                     "nothing was written") from None
    except FileExistsError:  # replace=False, and another program created OUT while we wrote
        raise OutputRefusedError(f"{out_path}: appeared while rendering (written by another program) and "
                                 "was left as it is; nothing was written; pass --force to replace it") from None


_LOW_SPACE_BYTES = 1 << 20


def _write_reason(exc: Exception, out_path) -> str:
    """Why writing failed, in words: the OS's reason, or libsndfile's plus the free space left."""
    if isinstance(exc, OSError) and exc.strerror:
        return exc.strerror
    reason = str(exc).splitlines()[0].strip().removeprefix("Error : ").rstrip(".") if str(exc) else type(exc).__name__
    try:
        free = shutil.disk_usage(Path(out_path).parent).free
    except OSError:
        return reason
    return f"{reason}: no space left on the device" if free < _LOW_SPACE_BYTES else reason


def _stream(in_path, out_path, processor, subtype, block_frames, progress, dither,
            dither_seed, replace=True) -> RenderReport:
    start = time.perf_counter()
    # 1. check: everything about IN and OUT before any processing
    block_frames = check_count("block_frames", block_frames, 1, MAX_BLOCK_FRAMES)
    dither_seed = check_count("dither_seed", dither_seed, 0)
    if processor is not None:
        _check_processor(processor)
    if progress is not None and not callable(progress):
        raise BadValueError(f"progress must be callable or None; got {progress!r}")
    _check_out_path(in_path, out_path)
    fmt = output_format(out_path)
    with _open_read(in_path) as src:
        out_subtype = _check_subtype(out_path, fmt, subtype or src.subtype, kept=not subtype)
        rate, channels = int(src.samplerate), int(src.channels)
        latency = 0
        if processor is not None:
            processor.prepare(rate, channels)
            latency = check_count("processor latency_samples",
                                  getattr(processor, "latency_samples", 0), 0)
        encoder = Encoder(out_subtype, dither, dither_seed)
        if _codes_through(processor, src.subtype, encoder) or _codes_copied(processor, src.subtype, out_subtype):
            with _atomic_output(out_path, fmt, out_subtype, rate, channels, replace) as dst:
                frames = _render_codes(src, in_path, dst, processor, encoder, latency, block_frames,
                                       progress)
            return _report(in_path, out_path, frames, rate, channels, fmt, out_subtype, latency,
                           encoder, start)
        frames = 0
        # reading (thread), processing and encoding (here), writing (thread) overlap
        with _atomic_output(out_path, fmt, out_subtype, rate, channels, replace) as dst, \
                pipeline.read_ahead(_read_blocks(src, in_path, block_frames)) as blocks, \
                pipeline.write_behind(dst.write) as write:
            # 2. read
            # 3. process (latency compensated)
            if processor is not None:
                blocks = _processed(blocks, processor, latency, channels, block_frames,
                                    progress)
            for block in blocks:
                # 4.-5. measure and encode, 6. write
                write(encoder.encode(block))
                frames += len(block)
                if processor is None and progress is not None:
                    progress(len(block))
    return _report(in_path, out_path, frames, rate, channels, fmt, out_subtype, latency,
                   encoder, start)


def _codes_through(processor, in_subtype: str, encoder: Encoder) -> bool:
    """Whether the render runs codes to codes in one kernel pass: integer PCM in and out and a
    processor whose class defines it (:meth:`emulate.dsp.processor.NotchProcessor.process_codes`;
    a wrapper that forwards attributes to a notch processor, e.g. the real box, has its own
    ``process`` and must not be bypassed)."""
    return (processor is not None and callable(getattr(type(processor), "process_codes", None))
            and in_subtype in PCM_BITS and encoder.bits is not None)


def _codes_copied(processor, in_subtype: str, out_subtype: str) -> bool:
    """Whether a copy (no processor) writes the codes as read: integer PCM into the same subtype."""
    return processor is None and in_subtype in PCM_BITS and out_subtype == in_subtype


def _render_codes(src: sf.SoundFile, in_path, dst: sf.SoundFile, processor, encoder: Encoder,
                  latency: int, block_frames: int, progress) -> int:
    """Integer PCM in, integer PCM out: read codes, filter and encode them in one pass, write codes.

    The reader thread reads into reused int16/int32 blocks, this thread runs
    ``processor.process_codes`` into reused output blocks, the writer thread writes them
    and gives them back: no float block, no conversion outside the kernel, no allocation
    per block. WAV-like files move their data as bytes (:mod:`emulate.audio.rawpcm`: one
    call per block, 24-bit unpacked and packed in a kernel pass), others through
    libsndfile's int16/int32 conversion. The latency is compensated as in :func:`_processed` (its first output
    frames dropped, as many zero frames fed after the input). With no processor (a copy into
    the same subtype) the blocks read are written as they are. Returns the frames written.
    """
    in_dtype, in_scale = _codes_of(src.subtype)
    channels = src.channels
    inputs = pipeline.BlockPool((block_frames, channels), in_dtype)
    outputs = pipeline.BlockPool((block_frames, channels), encoder.code_dtype)
    skip, written = latency, 0
    raw_in, raw_out = rawpcm.raw_pcm(src), rawpcm.raw_pcm(dst)
    read = raw_in.read if raw_in else lambda block: len(src.read(out=block, always_2d=True))
    write = raw_out.write if raw_out else dst.write

    def read_codes():
        done = 0
        while True:
            block = inputs.take()
            n = _read(src, in_path, done, block, reader=read)
            if not n:
                return
            done += n
            yield block, n

    def write_codes(item):
        block, n, pool = item
        write(block[:n])
        pool.give(block)

    def feed(block, n, put):
        nonlocal skip, written
        dropped = min(skip, n)
        skip -= dropped
        out = outputs.take()
        processor.process_codes(block[:n], in_scale, encoder, out[:n - dropped], dropped)
        if n > dropped:
            put((out, n - dropped, outputs))
            written += n - dropped
        else:
            outputs.give(out)

    with pipeline.read_ahead(read_codes()) as blocks, pipeline.write_behind(write_codes) as put:
        for block, n in blocks:
            if processor is None:  # a copy: the block goes to the writer, which gives it back
                encoder.copy_codes(block[:n], in_scale)
                put((block, n, inputs))
                written += n
            else:
                feed(block, n, put)
                inputs.give(block)
            if progress is not None:
                progress(n)
        zeros = np.zeros((block_frames, channels), in_dtype)
        for first in range(0, latency, block_frames):
            feed(zeros, min(block_frames, latency - first), put)
    return written


def _report(in_path, out_path, frames, rate, channels, fmt, subtype, latency,
            encoder: Encoder, start: float) -> RenderReport:
    peak_dbfs = 20.0 * math.log10(encoder.peak) if encoder.peak > 0 else -math.inf
    return RenderReport(str(in_path), str(out_path), frames, rate, channels, fmt, subtype,
                        latency, peak_dbfs, encoder.clipped, encoder.over, encoder.dither,
                        time.perf_counter() - start)


def render_file(in_path, out_path, processor, *, subtype: str | None = None,
                block_frames: int = DEFAULT_BLOCK_FRAMES,
                progress: Callable[[int], object] | None = None,
                dither_seed: int = 0, replace: bool = True) -> RenderReport:
    """Stream IN through ``processor`` into OUT, keeping rate, channels and sample format.

    The processor follows the plugin API: ``prepare(sample_rate, channels)`` is called
    once, then ``process(block)`` on float64 ``(frames, channels)`` blocks; its
    ``latency_samples`` (read after ``prepare``) is compensated, so OUT has exactly IN's
    length and lines up with it. 8- and 16-bit integer output gets TPDF dither (+-1 LSB
    triangular, from a generator seeded with ``dither_seed``); 24/32-bit and float
    output get none. Integer output is clipped explicitly to the code range and the
    clipped samples are counted; float output is never clipped (samples over 0 dBFS are
    counted). The result does not depend on ``block_frames``. OUT appears complete or
    not at all; an existing OUT (not IN) is replaced atomically, unless ``replace`` is
    False: then OUT is created only if nothing is there when the render ends (a file
    that appeared meanwhile is kept and the render is refused). Does not resample,
    change channel count, or copy metadata tags.

    Parameters
    ----------
    in_path : str or path-like
        Source audio, any file libsndfile reads.
    out_path : str or path-like
        Destination; the container comes from its extension (.wav, .flac, .aiff/.aif,
        .caf, .w64, .rf64, .ogg, ...).
    processor : object
        Has ``prepare(sample_rate, channels)``, ``process(block) -> block`` and
        ``latency_samples`` (int >= 0; absent means 0).
    subtype : str, optional
        libsndfile sample format for OUT ("PCM_16", "PCM_24", "PCM_32", "FLOAT",
        "DOUBLE", ...); default: IN's subtype.
    block_frames : int, optional
        Frames per block, 1 to 1048576 (default 65536). Memory, not output, depends on it.
    progress : callable, optional
        Called after each input block with the number of frames finished in that block
        (an increment, so ``click.progressbar(length=frames).update`` fits).
    dither_seed : int, optional
        Seed (>= 0) of the dither generator; the same seed gives the same file.
    replace : bool, optional
        Whether an existing OUT may be replaced (default True).

    Returns
    -------
    RenderReport
        Frames, rate (Hz), channels, container, subtype, latency (samples), peak (dBFS),
        clipped and over-full-scale sample counts, whether dithered, elapsed seconds.

    Raises
    ------
    AudioFileError
        IN unreadable, missing or empty; IN holds NaN/Inf; OUT is IN; OUT's folder is
        missing or not writable; OUT's extension is no writable container; the container
        cannot hold the subtype. Nothing is written in any of these cases.
    BadValueError
        ``block_frames``, ``dither_seed``, ``progress`` or the processor (its methods,
        its latency, the shape of a block it returns) is not as allowed.
    OutputRefusedError
        ``replace`` is False and OUT exists when the render ends (it is left as it is).
    EmulateError
        The processor produced NaN/Inf samples (nothing written).

    Example
    -------
    >>> import numpy as np, soundfile as sf, tempfile, os
    >>> class Half:
    ...     latency_samples = 0
    ...     def prepare(self, sample_rate, channels): pass
    ...     def process(self, block): return 0.5 * block
    >>> d = tempfile.mkdtemp()
    >>> sf.write(os.path.join(d, "in.wav"), np.full((100, 2), 0.5), 48000, subtype="PCM_24")
    >>> r = render_file(os.path.join(d, "in.wav"), os.path.join(d, "out.flac"), Half())
    >>> r.subtype, round(r.peak_dbfs, 2), r.clipped_samples
    ('PCM_24', -12.04, 0)
    """
    if processor is None:
        raise BadValueError("processor must be given; allowed: an object with prepare(), "
                            "process(); use copy_file for a plain copy")
    return _stream(in_path, out_path, processor, subtype, block_frames, progress,
                   dither=True, dither_seed=dither_seed, replace=replace)


def copy_file(in_path, out_path, block_frames: int = DEFAULT_BLOCK_FRAMES,
              progress: Callable[[int], object] | None = None) -> RenderReport:
    """Stream IN into OUT with no processing, through the same path as :func:`render_file`.

    IN's subtype is kept, so the samples are already on the output grid: no dither is
    added and the copy is sample-exact (for integer PCM, FLOAT and DOUBLE). Integer PCM
    goes as codes (the render's codes path with nothing between reading and writing);
    float PCM through the float path. Same checks, atomic write and replacement rule as
    :func:`render_file`.

    Parameters
    ----------
    in_path, out_path : str or path-like
        Source and destination (container from OUT's extension).
    block_frames : int, optional
        Frames per block, 1 to 1048576 (default 65536).
    progress : callable, optional
        As in :func:`render_file`.

    Returns
    -------
    RenderReport
        As :func:`render_file`, with ``latency_samples == 0`` and ``dithered`` False.

    Raises
    ------
    AudioFileError
        As :func:`render_file` (e.g. FLAC OUT for a FLOAT IN: FLAC cannot hold FLOAT).
    BadValueError
        ``block_frames`` is outside 1..1048576.

    Example
    -------
    >>> import numpy as np, soundfile as sf, tempfile, os
    >>> d = tempfile.mkdtemp()
    >>> sf.write(os.path.join(d, "in.wav"), np.zeros((10, 1)), 44100, subtype="PCM_16")
    >>> copy_file(os.path.join(d, "in.wav"), os.path.join(d, "copy.aif")).format
    'AIFF'
    """
    return _stream(in_path, out_path, None, None, block_frames, progress, dither=False,
                   dither_seed=0)


# --- whole arrays (short takes: demo, reels, analysis) -----------------------------------
def read_all(path) -> tuple[np.ndarray, int]:
    """Read a whole file as float64 ``(frames, channels)`` and its rate in Hz.

    For takes that fit in memory (analysis, reels); long renders stream instead
    (:func:`iter_blocks`, :func:`render_file`). Does not resample.

    Parameters
    ----------
    path : str or path-like
        Audio file libsndfile reads.

    Returns
    -------
    x : numpy.ndarray
        float64 ``(frames, channels)``, full scale 1.0.
    fs : int
        Sample rate in Hz.

    Raises
    ------
    AudioFileError
        Unreadable, missing or empty (see :func:`read_info`), or holds NaN/Inf samples.

    Example
    -------
    >>> import tempfile, os
    >>> p = os.path.join(tempfile.mkdtemp(), "a.wav")
    >>> write_array(p, np.zeros((10, 1)), 48000, subtype="PCM_24").frames
    10
    >>> x, fs = read_all(p); x.shape, fs
    ((10, 1), 48000)
    """
    with _open_read(path) as src:
        x = _read(src, path, 0, dtype="float64", always_2d=True)
        fs = int(src.samplerate)
    _check_finite(x, path, 0)
    return x, fs


def write_array(out_path, x, samplerate: int, *, subtype: str = "PCM_24",
                dither_seed: int = 0) -> RenderReport:
    """Write float samples ``(frames, channels)`` to OUT atomically, encoded as a render is.

    8- and 16-bit output gets TPDF dither; integer output is clipped explicitly and the
    clipped samples are counted; float output is never clipped. An existing OUT is
    replaced atomically. Does not resample or normalise.

    Parameters
    ----------
    out_path : str or path-like
        Destination; the container comes from its extension.
    x : array_like
        Finite float samples, ``(frames,)`` (mono) or ``(frames, channels)``, frames >= 1.
    samplerate : int
        Sample rate in Hz, >= 1.
    subtype : str, optional
        libsndfile sample format the container holds (default "PCM_24").
    dither_seed : int, optional
        Seed (>= 0) of the dither generator.

    Returns
    -------
    RenderReport
        As :func:`render_file`, with an empty ``in_path`` and ``latency_samples == 0``.

    Raises
    ------
    BadValueError
        ``x`` is not a finite, non-empty 1-D/2-D array; ``samplerate`` or ``dither_seed``
        is not an allowed integer.
    AudioFileError
        OUT is a folder, its folder is missing or not writable, its extension names no
        writable container, or the container cannot hold ``subtype``.

    Example
    -------
    >>> import tempfile, os
    >>> p = os.path.join(tempfile.mkdtemp(), "hot.wav")
    >>> write_array(p, np.array([0.5, 1.5, -2.0]), 44100, subtype="PCM_16").clipped_samples
    2
    """
    start = time.perf_counter()
    x = np.asarray(x, dtype=np.float64)
    if x.ndim == 1:
        x = x[:, None]
    if x.ndim != 2 or not x.size or not np.all(np.isfinite(x)):
        raise BadValueError(f"{out_path}: samples of shape {x.shape} are not allowed; "
                            "allowed: a finite, non-empty (frames, channels) array")
    samplerate = check_count("samplerate (Hz)", samplerate, 1)
    dither_seed = check_count("dither_seed", dither_seed, 0)
    fmt, subtype = check_out_format(out_path, subtype)
    frames, channels = x.shape
    block = min(frames, DEFAULT_BLOCK_FRAMES)
    encoder = Encoder(subtype, dither=True, seed=dither_seed)
    with _atomic_output(out_path, fmt, subtype, samplerate, channels) as dst:
        for first in range(0, frames, block):
            dst.write(encoder.encode(np.ascontiguousarray(x[first:first + block])))
    return _report("", out_path, frames, samplerate, channels, fmt, subtype, 0, encoder, start)
