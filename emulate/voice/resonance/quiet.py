"""Where the voice is absent, and the room's spectrum there (the resonance finder's stages 1, 2
and 6's long frames; the stages are listed in :mod:`emulate.voice.resonance`).

1. quiet moments: 20 ms frames within 12 dB of the take's quietest tenth, in all and in
   every octave band from 60 Hz (each band against its own floor, ``frames.band_floors``:
   after a word a low resonance rings on for tens of ms, quiet in the sum but far above the
   room's noise in its own band, and read as quiet it doubled a low peak's height and
   broadened it), each run less one frame at each end (the edges of words), at most 60 s
   of them in all;
2. quiet spectrum on a 1/96-octave grid from 60 Hz to 0.45 fs (at most 20 kHz): 0.2 s
   Hann frames over the quiet moments joined end to end (at least 4 frames, else nothing is
   examined), also over each half of them;
6. the low range (under 400 Hz): a narrow low peak is a few hertz wide, and short pauses
   (pieces of about 0.15 s) blur it; but the voice leaves a low region to the room's noise
   far longer than it leaves the whole spectrum quiet (under a 210 Hz voice, 100 Hz is
   never sounded). So the take is also read on 1 s Hann frames (hop 0.25 s, at most 480
   spread over the take, nothing else kept), each grid point averaged over the frames whose
   power within +-1/3 octave lies within 6 dB of the quiet moments' there (the room's noise
   and nothing else; the frames are continuous, so the smearing is the window's alone).
   Where that averages more time than the quiet moments hold, the candidates there are
   found and fitted (stages 3-5) on it instead, and must be at least 2.5 Hz wide between
   their half-gain points (a narrower one is a single bin's scatter at 1 s frames). A broad
   peak there (at least 8 of the quiet frames' resolutions, 40 Hz, between its half-gain
   points) is read on the quiet moments too, and that reading replaces the long frames'
   within its half-gain band: their extra time comes from frames near the voice, whose
   splatter the gate lets through just under the voice's pitch, and a broad peak's fit reaches
   up there (under a 210 Hz voice the frames admitted at 107-113 Hz stood 2.2-2.5 dB over the
   room's noise, and a +6 dB Q 2 bump at 100 Hz read 104.1 Hz, +8.0 dB; on the quiet moments
   98.9 Hz, +6.1 dB);
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from emulate.voice.frame_table import FrameTable
from emulate.voice.frames import BandSummer, FrameGrid, band_floors, iter_frame_power, iter_mono, log_band_edges, runs
from emulate.voice.takes import TakeSource

__all__ = ["QuietSpectrum", "cut_spans", "joined", "long_spectrum", "power_db", "quiet_moments", "quiet_spans",
           "quiet_spectrum", "smearing_kernel", "spectrum_grid_hz"]

#: Frame length of the quiet spectrum, s (hop: a quarter frame).
FRAME_S = 0.2
#: The smearing kernel: offsets within this many frame-resolutions (1 / frame length) either
#: side, read from at most this many frames.
KERNEL_REACH = 12.0
KERNEL_FRAMES = 24
#: Quiet moments: 20 ms frames within this of the take's quietest tenth (the percentile), in
#: all and in every octave band, dB; at most this much, s.
GATE_FRAME_S = 0.02
QUIET_WITHIN_DB = 12.0
QUIET_PERCENTILE = 10.0
QUIET_MAX_S = 60.0
#: A range is examined only with at least this many quiet frames (fewer scatter too much).
MIN_FRAMES = 4
#: Lowest frequency examined, Hz; the highest is 0.45 fs, at most TOP_HZ.
LOW_HZ = 60.0
TOP_HZ = 20000.0
#: Grid points per octave and the neighbourhood's half width, octaves.
GRID_PER_OCTAVE = 96
#: The low range: under LOW_RANGE_HZ a peak is also read on long frames (LONG_FRAME_S, hop a
#: quarter, at most LONG_MAX_FRAMES spread over the take; their spectrum kept up to LONG_SPAN_HZ),
#: each grid point averaged over the frames where the power within +-LONG_GATE_OCTAVES lies
#: within LONG_WITHIN_DB of the quiet moments' (the room's noise there, no voice).
LOW_RANGE_HZ = 400.0
LONG_FRAME_S = 1.0
LONG_MAX_FRAMES = 480
LONG_SPAN_HZ = 1600.0
LONG_GATE_OCTAVES = 1.0 / 3.0
LONG_WITHIN_DB = 6.0


def _top_hz(fs: float) -> float:
    return min(TOP_HZ, 0.45 * fs)


def spectrum_grid_hz(fs: float) -> np.ndarray:
    top = _top_hz(fs)
    return LOW_HZ * 2.0 ** (np.arange(int(GRID_PER_OCTAVE * math.log2(top / LOW_HZ)) + 1) / GRID_PER_OCTAVE)


def _on_grid(f_hz: np.ndarray, power: np.ndarray, grid_hz: np.ndarray) -> np.ndarray:
    """Frame spectra (frames, bins) as mean power per bin in each grid cell (interpolated where a
    cell holds no bin)."""
    edges = np.sqrt(grid_hz[1:] * grid_hz[:-1])
    edges = np.concatenate(([grid_hz[0] ** 2 / edges[0]], edges, [grid_hz[-1] ** 2 / edges[-1]]))
    index = np.searchsorted(f_hz, edges)
    count = np.diff(index)
    cumulative = np.concatenate((np.zeros((power.shape[0], 1)), np.cumsum(power, axis=1)), axis=1)
    mean = (cumulative[:, index[1:]] - cumulative[:, index[:-1]]) / np.maximum(count, 1)
    empty = count == 0
    if empty.any():
        mean[:, empty] = np.stack([np.interp(grid_hz[empty], f_hz, row) for row in power])
    return mean


def power_db(power: np.ndarray) -> np.ndarray:
    return 10.0 * np.log10(np.maximum(power, 1e-30))


@dataclass(frozen=True)
class QuietSpectrum:
    """The take's quiet spectrum on the grid (dB) at one frame length, over the whole take and
    over each half (for persistence); ``seconds``: the time it averages (per grid point for
    the long frames); ``long_frames``: read on the long frames (stage 6), whose fit spans are
    their own (:func:`emulate.voice.resonance.fit.span_rule`)."""

    frame_s: float
    kernel: tuple[np.ndarray, np.ndarray]
    level_db: np.ndarray
    halves_db: tuple[np.ndarray, ...]
    frames: int
    seconds: np.ndarray | float = 0.0
    long_frames: bool = False


def quiet_spans(source: TakeSource) -> tuple[list[tuple[int, int]], list[tuple[int, int]]]:
    """The take's quiet moments as (start, stop) samples, in order, at most QUIET_MAX_S
    seconds in all: runs of 20 ms frames whose power lies within QUIET_WITHIN_DB of the
    take's quietest tenth (frames of digital silence aside), in all and in every octave
    band, less one frame at each end (word edges). Also the pauses, the same runs gated on
    the power in all alone and whole, each from a word's end (as many, at most as long)."""
    grid = FrameGrid.at(source.fs, GATE_FRAME_S, GATE_FRAME_S)
    bands = BandSummer(grid.f_hz, log_band_edges(LOW_HZ, _top_hz(source.fs), 1))
    with FrameTable(bands.bins.size) as band_power:  # on disk: memory flat with the take's length
        power = [np.zeros(0)]
        for chunk in iter_frame_power(source, grid):
            power.append(chunk.sum(axis=1))
            band_power.append(bands.sum(chunk))
        power = np.concatenate(power)
        live = power > 0
        if not live.any():
            return [], []
        within = 10.0 ** (QUIET_WITHIN_DB / 10.0)
        floors = band_floors(band_power, QUIET_PERCENTILE, rows=live)
        pause = live & (power <= np.percentile(power[live], QUIET_PERCENTILE) * within)
        quiet = pause.copy()
        for start, block in band_power.chunks():
            quiet[start : start + block.shape[0]] &= np.all(block <= floors * within, axis=1)
    return _spans(runs(quiet), 1, grid.hop, source.fs), _spans(runs(pause), 0, grid.hop, source.fs)


def _spans(frame_runs, trim: int, hop: int, fs: float) -> list[tuple[int, int]]:
    """Runs of frames (start, stop) longer than two frames as samples, less ``trim`` frames at
    each end, at most QUIET_MAX_S seconds in all."""
    spans, budget = [], round(QUIET_MAX_S * fs)
    for a, b in frame_runs:
        if b - a > 2 and budget > 0:
            start, stop = (a + trim) * hop, (b - trim) * hop
            spans.append((start, min(stop, start + budget)))
            budget -= spans[-1][1] - start
    return spans


def quiet_moments(source: TakeSource, spans: list[tuple[int, int]] | None = None) -> tuple[np.ndarray, np.ndarray]:
    """The take's quiet moments (between words: the room's own noise, through the same
    resonance; :func:`quiet_spans` unless given), joined end to end (float32). Also the
    joined pieces' lengths (samples)."""
    return joined(cut_spans(iter_mono(source), quiet_spans(source)[0] if spans is None else spans))


def joined(pieces: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """``pieces`` joined end to end (float32), and their lengths (samples)."""
    return np.concatenate(pieces or [np.zeros(0, np.float32)]), np.array([piece.size for piece in pieces], int)


def cut_spans(blocks, spans: list[tuple[int, int]]) -> list[np.ndarray]:
    """The (start, stop) sample ``spans`` (in order) of a take given as consecutive blocks,
    each as one float32 array; reads no further than the last span."""
    pieces, offset, first = [[] for _ in spans], 0, 0  # spans are in order: walk them with the blocks
    for block in blocks:
        end = offset + block.size
        while first < len(spans) and spans[first][1] <= offset:
            first += 1
        for i in range(first, len(spans)):
            a, b = spans[i]
            if a >= end:
                break
            pieces[i].append(block[max(a, offset) - offset : min(b, end) - offset].astype(np.float32))
        offset = end
        if first >= len(spans):
            break
    return [np.concatenate(piece or [np.zeros(0, np.float32)]) for piece in pieces]


def quiet_spectrum(quiet: np.ndarray, lengths: np.ndarray, fs: float, grid_hz: np.ndarray,
                    frame_s: float, kernel=None) -> QuietSpectrum:
    """The mean power spectrum of the quiet moments (pieces of ``lengths`` joined end to end)
    with frames of ``frame_s`` (hop a quarter of it), over all of them and over each half,
    and the smearing it suffers (:func:`smearing_kernel`, unless given)."""
    grid = FrameGrid.at(fs, frame_s, frame_s / 4.0, padded=True)
    kernel = smearing_kernel(grid, lengths) if kernel is None else kernel
    rows = [_on_grid(grid.f_hz, power, grid_hz)
            for power in iter_frame_power(TakeSource.from_array(quiet, fs), grid)] if quiet.size >= grid.size else []
    if sum(r.shape[0] for r in rows) < MIN_FRAMES:
        return QuietSpectrum(frame_s, kernel, np.zeros(grid_hz.size), (), 0)
    rows = np.concatenate(rows)
    halves = tuple(power_db(chunk.mean(axis=0)) for chunk in np.array_split(rows, 2))
    return QuietSpectrum(frame_s, kernel, power_db(rows.mean(axis=0)), halves, rows.shape[0], quiet.size / fs)


def _density_db(level_db: np.ndarray, grid: FrameGrid) -> np.ndarray:
    """A grid spectrum's mean power per bin (dB) as power per hertz."""
    return level_db - 10.0 * math.log10(grid.fs / grid.nfft)


def long_spectrum(source: TakeSource, grid_hz: np.ndarray, quiet: QuietSpectrum) -> QuietSpectrum:
    """The low range on long frames, each grid point over the frames that hold only the room's
    noise there (see LOW_RANGE_HZ); ``seconds`` per grid point is the time averaged there."""
    from scipy.ndimage import uniform_filter1d

    hop_s = max(LONG_FRAME_S / 4.0, (source.seconds - LONG_FRAME_S) / (LONG_MAX_FRAMES - 1))
    grid = FrameGrid.at(source.fs, LONG_FRAME_S, hop_s, padded=True)  # at most LONG_MAX_FRAMES, spread
    kernel = smearing_kernel(grid, np.array([grid.size]))
    span = grid_hz[grid_hz <= LONG_SPAN_HZ]
    empty = QuietSpectrum(LONG_FRAME_S, kernel, np.zeros(span.size), (), 0, np.zeros(span.size))
    if quiet.frames < MIN_FRAMES:
        return empty
    rows = [_on_grid(grid.f_hz, power, span).astype(np.float32) for power in iter_frame_power(source, grid)]
    if sum(r.shape[0] for r in rows) < MIN_FRAMES:
        return empty
    rows = np.concatenate(rows).astype(np.float64)
    short = FrameGrid.at(source.fs, quiet.frame_s, quiet.frame_s / 4.0, padded=True)
    noise = 10.0 ** (_density_db(quiet.level_db[: span.size], short) / 10.0)
    rows = rows / (grid.fs / grid.nfft)  # power per hertz
    width = 2 * round(LONG_GATE_OCTAVES * GRID_PER_OCTAVE) + 1
    around = uniform_filter1d(rows, width, axis=1, mode="nearest")
    usable = around <= uniform_filter1d(noise, width, mode="nearest") * 10.0 ** (LONG_WITHIN_DB / 10.0)

    def mean(part):
        count = usable[part].sum(axis=0)
        level = (rows[part] * usable[part]).sum(axis=0) / np.maximum(count, 1)
        return power_db(np.where(count > 0, level, noise)) + 10.0 * math.log10(grid.fs / grid.nfft)

    halves = tuple(mean(part) for part in np.array_split(np.arange(rows.shape[0]), 2))
    seconds = usable.sum(axis=0) * min(grid.hop_s, LONG_FRAME_S)  # the time the frames hold, overlaps once
    return QuietSpectrum(LONG_FRAME_S, kernel, mean(slice(None)), halves, rows.shape[0], seconds, long_frames=True)


def smearing_kernel(grid: FrameGrid, lengths: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Frequency offsets (Hz) and weights of the quiet spectrum's smearing of a steady spectrum.

    A frame holding one continuous stretch sees the spectrum through the Hann window's power
    response; the quiet moments are short pieces joined end to end, and a frame spanning a
    join holds unrelated pieces whose powers add, each seen through its own cut of the
    window (a shorter, coarser look: this is what limits a narrow low peak's resolution).
    So the kernel is the mean over frames (at most KERNEL_FRAMES, evenly spread) of the
    summed power responses of each piece's windowed part (the expected periodogram of a
    stationary signal, e.g. P. Welch, IEEE Trans. Audio Electroacoust. 15 (1967), eq. 5)."""
    window, ends = grid.window, np.cumsum(lengths)
    count = 1 + (int(ends[-1]) - grid.size) // grid.hop if ends.size and ends[-1] >= grid.size else 0
    nfft = 1 << (8 * grid.size - 1).bit_length()
    reach = round(KERNEL_REACH / (grid.size / grid.fs) * nfft / grid.fs)
    power = np.zeros(reach + 1)
    starts = np.unique(np.linspace(0, count - 1, min(count, KERNEL_FRAMES)).round().astype(int)) * grid.hop
    for start in starts if count else [None]:
        cuts = [0, grid.size] if start is None else \
            [0, *(ends[(ends > start) & (ends < start + grid.size)] - start), grid.size]
        parts = np.zeros((len(cuts) - 1, grid.size))
        for k, (a, b) in enumerate(zip(cuts[:-1], cuts[1:])):
            parts[k, a:b] = window[a:b]
        spectrum = np.fft.rfft(parts, nfft, axis=1)[:, : reach + 1]
        power += (spectrum.real**2 + spectrum.imag**2).sum(axis=0)
    offsets = np.arange(-reach, reach + 1) * grid.fs / nfft
    weights = np.concatenate((power[:0:-1], power))
    return offsets, weights / weights.sum()
