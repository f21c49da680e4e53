"""From a recording of the stimulus (or an analyser's CSV) to a measured frequency response.

Deconvolution, top to bottom (A. Farina, AES 108th Convention, preprint 5093, 2000):

1. sync      find the marker by cross-correlation: the loop latency in samples
             (any latency up to the recording's length);
2. convolve  the recording from the sweep's start with the inverse filter
             (:meth:`emulate.measuring.stimulus.SweepPlan.inverse`), by FFT;
3. window    the linear impulse response around time zero, half-Hann faded at
             both ends, clear of the harmonic responses at negative times;
4. transform its spectrum, zero-padded to a fine frequency grid;
5. reference divided by the spectrum the same steps give for the stimulus itself
             (a perfect wire at the stimulus level): what remains is the box's
             gain (any playback/record gain included), without the ripple the
             band limits and the window leave; only the band the sweep covered
             with full energy, ``USABLE`` of it, is kept, on a log grid of
             ``POINTS_PER_OCTAVE`` points an octave (complex-averaged bins).

A CSV table (frequency in Hz, gain in dB, optional phase in degrees; a header
line is allowed) is the plain exchange form for any other analyser.

:func:`band_metrics` measures notch frequency, depth and Q on any sampled
response, so the measurement and the model are measured the same way.
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from emulate.errors import AudioFileError, BadValueError
from emulate.measuring.stimulus import SweepPlan
from emulate.measuring.stimulus import fft_size as _fft_size

__all__ = [
    "POINTS_PER_OCTAVE",
    "USABLE",
    "BandMetrics",
    "MeasuredResponse",
    "band_metrics",
    "deconvolve",
    "read_csv",
]

USABLE = (2.0, 1 / 1.25)  # keep f1*2 .. f2/1.25: the sweep's fades leave its ends short of energy
POINTS_PER_OCTAVE = 96
_IR_SECONDS = 0.5
_FINE_HZ = 0.25
_MARKER_MIN_SCORE = 8.0


@dataclass(frozen=True)
class MeasuredResponse:
    """A measured response on ``f_hz``: gain in dB, phase in degrees where known.

    ``latency_samples`` is the playback-record loop latency (None for a CSV).
    """

    f_hz: np.ndarray
    gain_db: np.ndarray
    phase_deg: np.ndarray | None = None
    latency_samples: int | None = None
    source: str = ""

    def on(self, f_hz) -> np.ndarray:
        """Gain in dB interpolated on ``f_hz`` (log frequency), within the measured band."""
        return np.interp(np.log(f_hz), np.log(self.f_hz), self.gain_db)

    @property
    def band_hz(self) -> tuple[float, float]:
        return float(self.f_hz[0]), float(self.f_hz[-1])


def deconvolve(recording: np.ndarray, plan: SweepPlan, *, source: str = "") -> MeasuredResponse:
    """The response of whatever the stimulus of ``plan`` was played through.

    Parameters
    ----------
    recording : ndarray, shape (frames,) or (frames, channels)
        The recording at ``plan.fs``; the first channel is used.
    plan : SweepPlan
        The stimulus (same rate, band and length as the file that was played).
    source : str
        Shown in reports.

    Raises
    ------
    BadValueError
        No sync marker found, or the recording stops before the sweep's end.

    Example
    -------
    >>> plan = SweepPlan(48000.0, seconds=1.0)
    >>> x = np.concatenate([np.zeros(300), 0.5 * plan.signal()])
    >>> m = deconvolve(x, plan)
    >>> m.latency_samples, bool(np.max(np.abs(m.gain_db[m.f_hz > 200] + 6.02)) < 0.05)
    (300, True)
    """
    x = np.asarray(recording, float)
    x = x[:, 0] if x.ndim == 2 else x
    latency = _find_marker(x, plan)
    start = plan.sweep_start + latency
    pre = _pre_samples(plan)
    if start - pre < 0 or start + plan.sweep_frames > len(x):
        raise BadValueError(f"{source or 'recording'}: it ends before the sweep does; record the whole "
                            f"stimulus ({plan.total_frames / plan.fs:.1f} s) and the box's ring-out")
    latency += _ir_offset(x[start - pre:], plan, pre)
    start = plan.sweep_start + latency
    f, h = _windowed_spectrum(x[start - pre:], plan, pre)
    # the same steps on the stimulus itself: what the band limits and the window do to a
    # perfect wire, divided out (their ripple at the band's low end, mostly)
    _, reference = _windowed_spectrum(plan.signal()[plan.sweep_start - pre:], plan, pre)
    return _on_log_grid(f, h / reference, latency, source)


def _on_log_grid(f, h, latency, source) -> MeasuredResponse:
    """``POINTS_PER_OCTAVE`` points an octave, each the complex average of the bins within
    +-half a point (fractional-octave smoothing).

    Complex, not power: near a null the response passes linearly through zero, and a
    symmetric complex average of a linear function is its centre value, where a power
    average would fill the null in. The time zero is right to a sample or two, so the
    phase turns by under 0.02 rad across a window.
    """
    grid = np.exp(np.arange(np.log(f[0]), np.log(f[-1]), np.log(2) / POINTS_PER_OCTAVE))
    half = 2 ** (0.5 / POINTS_PER_OCTAVE)
    total = np.concatenate([[0.0], np.cumsum(h)])
    lo, hi = np.searchsorted(f, grid / half), np.searchsorted(f, grid * half)
    hi = np.maximum(hi, lo + 1)
    mean = (total[hi] - total[lo]) / (hi - lo)
    return MeasuredResponse(grid, 20 * np.log10(np.maximum(np.abs(mean), 1e-12)), np.degrees(np.angle(mean)),
                            int(latency), source)


def _impulse_response(segment, plan: SweepPlan, pre: int):
    """The deconvolved response and the index of its time zero (the sweep started ``pre`` in)."""
    n = _fft_size(len(segment) + plan.sweep_frames)
    ir = np.fft.irfft(np.fft.rfft(segment, n) * np.fft.rfft(plan.inverse(), n), n)
    return ir, plan.sweep_frames - 1 + pre


def _ir_offset(segment, plan: SweepPlan, pre: int) -> int:
    """How far the response's largest peak lies from where the marker put time zero, samples.

    The marker's own path through the box (a notch across its band) can shift its
    correlation peak by a few samples; a twin-T's impulse response peaks at its
    direct path, so the peak is the better time zero (searched within +-pre/4).
    """
    ir, zero = _impulse_response(segment, plan, pre)
    reach = max(pre // 4, 1)
    return int(np.argmax(np.abs(ir[zero - reach:zero + reach + 1]))) - reach


def _windowed_spectrum(segment, plan: SweepPlan, pre: int):
    """Deconvolve, window the linear response around time zero, transform; keep the usable band."""
    ir, zero = _impulse_response(segment, plan, pre)
    post = min(round(_IR_SECONDS * plan.fs), len(ir) - zero)
    window = ir[zero - pre:zero + post] * _window(pre, post)
    n = _fft_size(max(len(window), round(plan.fs / _FINE_HZ)))
    f = np.fft.rfftfreq(n, 1 / plan.fs)
    h = np.fft.rfft(window, n) * np.exp(2j * np.pi * f * pre / plan.fs)
    keep = (f >= plan.f1_hz * USABLE[0]) & (f <= plan.f2_hz * USABLE[1])
    return f[keep], h[keep]


def _pre_samples(plan: SweepPlan) -> int:
    """Half way from time zero to the 2nd harmonic's response (at -L ln 2), at most 0.2 s."""
    return round(min(0.5 * plan.rate_l * math.log(2), 0.2) * plan.fs)


def _window(pre: int, post: int) -> np.ndarray:
    w = np.ones(pre + post)
    w[:pre] = 0.5 - 0.5 * np.cos(np.pi * np.arange(pre) / pre)
    fade = post // 5
    w[pre + post - fade:] = 0.5 + 0.5 * np.cos(np.pi * np.arange(fade) / fade)
    return w


def _find_marker(x: np.ndarray, plan: SweepPlan) -> int:
    """Latency in samples: where the marker sits in ``x`` minus where it sits in the stimulus."""
    marker = plan.marker()
    # the whole sweep must follow the marker, so the marker lies no later than this
    last = len(x) - plan.sweep_frames - (plan.sweep_start - plan.marker_start)
    if last < 0:
        raise BadValueError(f"the recording ({len(x) / plan.fs:.2f} s) is shorter than the stimulus "
                            f"({plan.total_frames / plan.fs:.2f} s)")
    head = x[:last + len(marker)]
    n = _fft_size(len(head) + len(marker))
    score = np.fft.irfft(np.fft.rfft(head, n) * np.conj(np.fft.rfft(marker, n)), n)[:len(head)]
    score = np.abs(score)
    best = int(np.argmax(score))
    floor = np.median(score) + 1e-300
    if score[best] / floor < _MARKER_MIN_SCORE:
        raise BadValueError("no sync marker found in the recording: is it a recording of "
                            "'emulate measure stimulus' at the same rate?")
    return best - plan.marker_start


def read_csv(path) -> MeasuredResponse:
    """A measured response from a CSV table: frequency (Hz), gain (dB)[, phase (deg)].

    A first line that is not numbers is taken as a header. Frequencies must rise
    and be positive; at least 8 rows.

    Raises
    ------
    AudioFileError
        If the file cannot be read.
    BadValueError
        For a malformed row or too few rows (the message names the line).

    Example
    -------
    >>> import tempfile, os
    >>> path = os.path.join(tempfile.mkdtemp(), "m.csv")
    >>> _ = open(path, "w").write("f,db\\n" + "".join(f"{100 * 2 ** i},{-i}\\n" for i in range(8)))
    >>> float(read_csv(path).gain_db[-1])
    -7.0
    """
    try:
        with open(path, newline="", encoding="utf-8") as handle:
            rows = [row for row in csv.reader(handle) if row and any(cell.strip() for cell in row)]
    except (OSError, UnicodeDecodeError) as exc:
        raise AudioFileError(f"{path}: cannot read the CSV ({exc})") from None
    values = []
    for line, row in enumerate(rows, start=1):
        try:
            values.append([float(cell) for cell in row[:3]])
        except ValueError:
            if line == 1:
                continue
            raise BadValueError(f"{path}, line {line}: {row!r}: allowed numbers: frequency Hz, gain dB"
                                "[, phase deg]") from None
    widths = {len(v) for v in values}
    if len(values) < 8 or not widths <= {2, 3} or len(widths) != 1:
        raise BadValueError(f"{path}: {len(values)} rows: allowed at least 8 rows of 2 or 3 columns each "
                            "(frequency Hz, gain dB[, phase deg])")
    table = np.array(values)
    f = table[:, 0]
    if not np.all(np.isfinite(table)) or np.any(f <= 0) or np.any(np.diff(f) <= 0):
        raise BadValueError(f"{path}: frequencies must be positive and rising, every value finite")
    return MeasuredResponse(f, table[:, 1], table[:, 2] if table.shape[1] == 3 else None, None,
                            Path(path).name)


@dataclass(frozen=True)
class BandMetrics:
    """Notch frequency (Hz), depth below the band's peak (dB, positive), Q (nan without both edges)."""

    notch_hz: float
    depth_db: float
    q: float
    peak_db: float

    def as_dict(self) -> dict:
        return dict(self.__dict__)


def band_metrics(f_hz, gain_db) -> BandMetrics:
    """Notch, depth and Q of a sampled response (the same way for a measurement and a model).

    The notch is the lowest point refined by a parabola through it and its
    neighbours in log frequency; the depth is below the highest gain in the
    band; Q is the notch over the distance between the -3 dB crossings
    (linear interpolation), nan where one falls outside the band.

    Example
    -------
    >>> f = np.geomspace(100, 10000, 2001)
    >>> s = 1j * f / 1000
    >>> m = band_metrics(f, 20 * np.log10(np.maximum(np.abs((s ** 2 + 1) / (s ** 2 + s + 1)), 1e-12)))
    >>> round(m.notch_hz, 1), round(m.q, 1)
    (1000.0, 1.0)
    """
    f, g = np.asarray(f_hz, float), np.asarray(gain_db, float)
    i = int(np.clip(np.argmin(g), 1, len(g) - 2))
    x, y = np.log(f[i - 1:i + 2]), g[i - 1:i + 2]
    denominator = (y[0] - 2 * y[1] + y[2])
    step = (x[2] - x[0]) / 2
    offset = 0.5 * step * (y[0] - y[2]) / denominator if denominator > 0 else 0.0
    notch = float(np.exp(x[1] + np.clip(offset, -step, step)))
    peak = float(np.max(g))
    depth = peak - float(np.min(g))
    edge = peak - 10 * math.log10(2)
    lower = _crossing(f[:i + 1][::-1], g[:i + 1][::-1], edge)
    upper = _crossing(f[i:], g[i:], edge)
    return BandMetrics(notch, depth, notch / (upper - lower), peak)


def _crossing(f, g, level) -> float:
    """First frequency along ``f`` where ``g`` rises through ``level`` (nan if it never does)."""
    above = np.nonzero(g >= level)[0]
    if len(above) == 0 or above[0] == 0:
        return math.nan
    j = above[0]
    t = (level - g[j - 1]) / (g[j] - g[j - 1])
    return float(np.exp(np.log(f[j - 1]) + t * (np.log(f[j]) - np.log(f[j - 1]))))

