"""A take's averaged power spectrum (Welch's method), streamed from a file or an array.

Per chunk of the take, top to bottom:

1. segment   frames cut into Hann-windowed segments of ``nperseg`` with half overlap
             (chunks of whole segments, so a file is read a chunk at a time);
2. detrend   each segment's mean removed, per channel;
3. transform one real FFT per segment and channel;
4. average   |X|^2 summed over segments, scaled to a one-sided power density
             (Welch, IEEE Trans. Audio Electroacoust. 15(2), 1967), then averaged
             over channels.

The same figures as ``scipy.signal.welch`` with its defaults (periodic Hann window,
half overlap, constant detrend, density scaling, mean average), which the tests use
as the reference; numpy only, so drawing a take loads no scipy.signal, and memory
stays flat with the length of a file.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from emulate.errors import BadValueError

__all__ = ["average_power_density"]

SEGMENTS_PER_CHUNK = 64  # segments transformed together (a chunk of about 2 MB of stereo samples)


def average_power_density(take, fs: float | None = None, nperseg: int = 8192):
    """Frequencies (Hz) and the channel-averaged one-sided power density (per Hz) of a take.

    Parameters
    ----------
    take : ndarray, (frames,) or (frames, channels), or str or Path
        Samples, or a sound file read a chunk at a time (its own rate is used).
    fs : float, optional
        Sample rate, Hz (> 0); required for an array, ignored for a file.
    nperseg : int, optional
        Segment length, frames; a take shorter than that is one segment.

    Returns
    -------
    f_hz : ndarray
        0 to fs/2 in steps of fs / segment length.
    density : ndarray
        Power per Hz, the mean over channels (scipy.signal.welch's figures).

    Raises
    ------
    BadValueError
        A take with fewer than 16 frames or not (frames, channels), or a bad rate.

    Example
    -------
    >>> x = np.sin(2 * np.pi * 1000 * np.arange(48000) / 48000)
    >>> f, p = average_power_density(x, 48000)
    >>> float(f[np.argmax(p)])
    1001.953125
    """
    if isinstance(take, (str, Path)):
        import soundfile as sf

        info = sf.info(str(take))
        fs, frames = float(info.samplerate), info.frames
        segment = _segment_frames(frames, nperseg, (frames, info.channels))
        step = segment - segment // 2
        chunks = sf.blocks(str(take), blocksize=segment + (SEGMENTS_PER_CHUNK - 1) * step,
                           overlap=segment - step, dtype="float64", always_2d=True)
    else:
        x = np.asarray(take, float)
        x = x[:, None] if x.ndim == 1 else x
        segment = _segment_frames(len(x), nperseg, x.shape if x.ndim == 2 else None)
        step = segment - segment // 2
        chunks = (x[start:start + segment + (SEGMENTS_PER_CHUNK - 1) * step]
                  for start in range(0, max(len(x) - segment, 0) + 1, SEGMENTS_PER_CHUNK * step))
    if not (fs is not None and np.isfinite(fs) and fs > 0):
        raise BadValueError(f"sample rate {fs!r} Hz: allowed a finite rate > 0")
    window = 0.5 - 0.5 * np.cos(2.0 * np.pi * np.arange(segment) / segment)  # periodic Hann
    total, count = 0.0, 0
    for chunk in chunks:
        if len(chunk) < segment:
            break
        segments = np.lib.stride_tricks.sliding_window_view(chunk, segment, axis=0)[::step]
        segments = segments - segments.mean(axis=-1, keepdims=True)
        total = total + np.sum(np.abs(np.fft.rfft(segments * window, axis=-1)) ** 2, axis=0)
        count += len(segments)
    density = total / (count * fs * np.sum(window ** 2))
    density[..., 1:] *= 2.0
    if segment % 2 == 0:
        density[..., -1] /= 2.0  # the Nyquist bin has no mirror image
    return np.fft.rfftfreq(segment, 1.0 / fs), np.mean(density, axis=0)


def _segment_frames(frames: int, nperseg: int, shape) -> int:
    if shape is None or len(shape) != 2 or frames < 16 or shape[1] < 1:
        raise BadValueError(f"take of shape {shape}: needs (frames, channels) with at least 16 frames")
    return min(int(nperseg), frames)
