"""A peak of the quiet spectrum: candidates, the fitted peaking response, acceptance (the resonance
finder's stages 3-5; the stages are listed in :mod:`emulate.voice.resonance`).

3. neighbourhood: the spectrum in dB against its running median over +-1 octave; local
   maxima standing 2 dB out are candidates (the 24 strongest; a broad bump fills its own
   neighbourhood: the response of +6 dB at Q 2 stands only 2.7 dB out, and the scatter of the
   quiet moments' noise took one such bump to 2.3 dB);
4. fit: for each, a second-order peaking response (the analog prototype of R.
   Bristow-Johnson's audio EQ cookbook peaking filter, ``H(s) = (s^2 + s (A/Q) w0 + w0^2) /
   (s^2 + s w0 / (A Q) + w0^2)``, ``A = 10**(gain/40)``), as the quiet spectrum sees it
   (its power smeared by the Hann frame cut at the joins of the quiet pieces: short pieces
   blur a narrow low peak, and the fit undoes that rather than reading a low Q), plus a level
   and a tilt, by least squares on the spectrum (dB) within six of its half-gain widths either
   side: frequency, gain and Q. The span is first set from the candidate's half-height run and
   then again from the fitted Q, and the fit repeated from its result: a low narrow peak's
   first guess scatters, and a span too narrow for the peak leaves its skirts to the level
   and tilt (on the long frames of stage 6: four widths of the first guess but at least
   +-0.3 octave, one fit);
5. accepted: gain 4 to 30 dB (a peak under 1 kHz on the quiet moments up to 40 dB until
   stage 8 reads its gain again) and Q 1.5 to 40 (narrow: broad tilts are not ringing), a
   fit that explains the peak (RMS misfit under a quarter of the gain), standing at least
   half as high as the fit in both halves of the quiet material (persistent; the height
   each half shows is the least-squares scale of the fitted response, as the quiet
   spectrum sees it, over the fit's whole span, not a reading at three points);
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

from emulate.voice.resonance.quiet import GRID_PER_OCTAVE, MIN_FRAMES, QuietSpectrum

__all__ = ["Fitted", "ResonancePeak", "SpanRule", "accepted_peaks", "excess_db", "explains", "heights", "peaking_db",
           "same_peak", "smeared_db", "span_rule", "within_band", "within_widths"]

#: The neighbourhood's half width, octaves.
NEIGHBOURHOOD_OCTAVES = 1.0
#: A candidate's excess over the neighbourhood, dB. The fit and the tests of stage 5 decide; a
#: broad bump stands little out (this module's docstring, stage 3): at 2.5 dB a +6 dB Q 2 bump at 100 Hz
#: (2.3 dB) was not found; at 2 dB it was, no case lost, no control reported (whole grid).
CANDIDATE_DB = 2.0
#: An accepted peak's fitted gain (dB) and Q ...
MIN_GAIN_DB = 4.0
MAX_GAIN_DB = 30.0
MIN_Q = 1.5
MAX_Q = 40.0
#: ... standing at least this share of its fitted height in both halves of the take ...
STANDING_SCALE = 0.5
PERSISTENT_SHARE = 1.0
#: ... and its largest RMS misfit as a share of its gain.
MAX_MISFIT = 1.0 / 4.0
#: A fit reads the spectrum within this many half-gain widths (in octaves, 1/Q) of the centre
#: (the long frames' fit, stage 6, four widths of the first guess but at least LONG_MIN_SPAN_OCTAVES;
#: stage 8's height) ...
FIT_WIDTHS = 4.0
#: ... the quiet moments' fit this many, its span set again from the fitted Q and refitted this
#: many times (this module's docstring, stage 4). Measured on the grid, not derived: at 250 Hz-1.6 kHz
#: (144 cases) 4 widths of the first guess read the Q with 14.2 % RMS error, 6 widths 11.6 %
#: but with 2 cases lost, 6 with one refit 11.7 % and none lost (4 with one refit: 12.0 %, 2
#: lost). Not on the long frames: there a wider span reaches towards the voice's pitch and the
#: grid's 60 Hz bottom (with 6 widths 4 cases at 100 Hz under a 210 Hz voice were lost, 2 not
#: found; with the span set again from the fitted Q a +6 dB Q 5 peak's misfit rose from 0.7 to
#: 1.7 dB and it was not accepted).
QUIET_FIT_WIDTHS = 6.0
FIT_REPEATS = 1
#: Candidates fitted at most (strongest first).
MAX_CANDIDATES = 24
#: The long frames' fit reads at least +-this many octaves (the span of four half-gain widths of a
#: Q 13 peak): a narrow peak's first guess left its skirts, and so the level and tilt, to a few
#: points. Measured at 100 Hz, +6 dB Q 20 under a 210 Hz voice, the grid's seed and 10 others: Q
#: error +16 % on average, spread 38 % -> -2 %, 26 % (noise alone through that peak, 22 s
#: continuous, 40 seeds: 4 widths +14 %, 28 %; 8 widths +6 %, 20 %; the Fisher information of
#: 20 s of it over +-0.3 octave, five parameters free, bounds the spread at about 21 %). Not
#: more widths: on those takes 6 or 8 widths (with a refit) spread 30 %, the skirts nearer the voice.
#: That least span must lie inside the spectrum (from LOW_HZ): under 74 Hz the fit would see one
#: skirt, and on 96 clean 8 s voice-like takes (seeds 3000-3007) the long frames' scatter read 5
#: "peaks" at 62-66 Hz (Q 4-26, +4 to +8 dB) there; none since, every grid reading unchanged.
LONG_MIN_SPAN_OCTAVES = 0.3


@dataclass(frozen=True)
class SpanRule:
    """How far a fit reads a spectrum: ``widths`` half-gain widths either side of the centre, at
    least ``least_octaves``, the span set again from the fitted Q and refitted ``repeats`` times."""

    widths: float
    repeats: int
    least_octaves: float

    def reach(self, q: float) -> float:
        """How far either side of the centre a fit of a peak of Q ``q`` reads, octaves."""
        return max(self.widths / q, self.least_octaves)


QUIET_SPAN = SpanRule(QUIET_FIT_WIDTHS, FIT_REPEATS, 0.0)
LONG_SPAN = SpanRule(FIT_WIDTHS, 0, LONG_MIN_SPAN_OCTAVES)


def span_rule(quiet: QuietSpectrum) -> SpanRule:
    """The span rule for a spectrum: the long frames' own (stage 6) or the quiet moments'."""
    return LONG_SPAN if quiet.long_frames else QUIET_SPAN


@dataclass(frozen=True)
class ResonancePeak:
    """One narrow persistent peak.

    Attributes
    ----------
    frequency_hz : float
        Centre, Hz.
    q : float
        Q in the cookbook's sense (bandwidth between the half-gain-in-dB points).
    gain_db : float
        Height over the neighbourhood, dB.
    persistence : float
        Share of the take's halves where it stands out, 0..1.
    frequency_spread, q_spread : float
        How closely the take pins the centre and the Q, relative, one standard deviation: for a
        reading of the quiet spectrum the least spread its material allows
        (:mod:`emulate.voice.resonance.spread`), for one read from its ring the scatter of the
        decays it was read from (:func:`emulate.voice.resonance.ring.median_spread`; the Q's
        widened by the gain's, :func:`emulate.voice.resonance.spread.with_stated_spread`); nan
        where not known.
    from_ring : bool
        Read from its ring after the words (stage 8) rather than from the quiet spectrum.
    """

    frequency_hz: float
    q: float
    gain_db: float
    persistence: float
    frequency_spread: float = math.nan
    q_spread: float = math.nan
    from_ring: bool = False


def peaking_db(f_hz, f0_hz: float, gain_db: float, q: float) -> np.ndarray:
    """Magnitude (dB) of the cookbook's analog peaking response at ``f_hz``.

    Example
    -------
    >>> round(float(peaking_db(1000.0, 1000.0, 9.0, 4.0)), 6)
    9.0
    """
    return 10.0 * np.log10(_peaking_power(f_hz, f0_hz, gain_db, q))


def _peaking_power(f_hz, f0_hz: float, gain_db: float, q: float) -> np.ndarray:
    """:func:`peaking_db` as power, ``|H|^2``, in real arithmetic (the fits call it thousands of
    times): with ``x = f / f0``, ``((1 - x^2)^2 + (x A / Q)^2) / ((1 - x^2)^2 + (x / (A Q))^2)``."""
    a = 10.0 ** (gain_db / 40.0)
    x = np.asarray(f_hz, dtype=np.float64) / f0_hz
    x2 = x * x
    real = (1.0 - x2) ** 2
    return (real + x2 * (a / q) ** 2) / (real + x2 / (a * q) ** 2)


def smeared_db(f_hz, f0: float, gain: float, q: float, kernel) -> np.ndarray:
    """The peaking response as the quiet spectrum sees it (its power smeared by ``kernel``,
    offsets and weights from :func:`smearing_kernel`), dB."""
    offsets, weights = kernel
    f = np.abs(np.asarray(f_hz)[:, None] + offsets[None, :]) + 1e-9
    return 10.0 * np.log10(_peaking_power(f, f0, gain, q) @ weights)


class Fitted(NamedTuple):
    """An accepted fit: its RMS misfit (dB) over the span it read (``span_hz``, low and high
    ends), and the peak."""

    misfit: float
    peak: ResonancePeak
    span_hz: tuple[float, float]


def excess_db(level_db: np.ndarray) -> np.ndarray:
    """Level over its running median within +-NEIGHBOURHOOD_OCTAVES, dB."""
    from scipy.ndimage import median_filter

    width = 2 * round(NEIGHBOURHOOD_OCTAVES * GRID_PER_OCTAVE) + 1
    return level_db - median_filter(level_db, size=width, mode="nearest")


def _fit(grid_hz, quiet: QuietSpectrum, excess, i: int) -> tuple[float, float, float, float, tuple] | None:
    """Fit the smeared peaking response + a level tilt near grid point ``i``; (f0, gain, Q, misfit,
    the span read, Hz).

    The first fit reads ``span_rule(quiet).widths`` half-gain widths of the first guess (the excess's half-height
    run); its span is then set again from the fitted Q and the fit repeated from its result
    (``span_rule(quiet).repeats`` times): the span follows the peak rather than the guess."""
    centre, gain0 = float(grid_hz[i]), float(excess[i])
    half = excess >= gain0 / 2.0
    lo, hi = i, i
    while lo > 0 and half[lo - 1]:
        lo -= 1
    while hi < half.size - 1 and half[hi + 1]:
        hi += 1
    q0 = float(np.clip(centre / max(grid_hz[hi] - grid_hz[lo], centre / MAX_Q), 0.5, MAX_Q))
    fit = _fit_span(grid_hz, quiet, centre, q0, [centre, max(gain0, 1.0), q0, float(quiet.level_db[i] - gain0), 0.0])
    for _ in range(span_rule(quiet).repeats):
        if fit is None:
            return None
        better = _fit_span(grid_hz, quiet, centre, float(np.clip(fit[0][2], 0.5, MAX_Q)), fit[0])
        if better is None:
            break
        fit = better
    return None if fit is None else (*(float(v) for v in fit[0][:3]), fit[1], fit[2])


def _fit_span(grid_hz, quiet: QuietSpectrum, centre: float, q_span: float,
              start) -> tuple[np.ndarray, float, tuple[float, float]] | None:
    """One least-squares fit (see :func:`_fit`) over ``span_rule(quiet).widths`` half-gain widths (of Q ``q_span``)
    either side of ``centre``, from ``start`` (f0, gain, Q, level, tilt); the parameters, the
    RMS misfit, dB, and the span, Hz, or None when the span holds under 7 grid points."""
    from scipy.optimize import least_squares

    rule = span_rule(quiet)
    reach = rule.reach(q_span)
    span = (centre * 2.0 ** -reach, centre * 2.0 ** reach)
    if centre * 2.0 ** -rule.least_octaves < grid_hz[0]:
        return None  # its least span reaches under the spectrum: one skirt seen (LONG_MIN_SPAN_OCTAVES)
    inside = (grid_hz >= span[0]) & (grid_hz <= span[1])
    if np.count_nonzero(inside) < 7:
        return None
    f_fit, target = grid_hz[inside], quiet.level_db[inside]
    bounds = ([span[0], 0.0, 0.3, -400.0, -60.0], [span[1], 40.0, 200.0, 100.0, 60.0])

    def misfit(p):
        return smeared_db(f_fit, p[0], p[1], p[2], quiet.kernel) + p[3] + p[4] * np.log2(f_fit / centre) - target

    try:
        result = least_squares(misfit, np.clip(start, *bounds), bounds=bounds)
    except ValueError:
        return None
    return result.x, float(np.sqrt(np.mean(result.fun**2))), span


def _standing_share(grid_hz, quiet: QuietSpectrum, f0: float, gain: float, q: float) -> float:
    """Share of the take's halves where the peak stands at least half as high as the fit says.

    In each half, the fitted response as the quiet spectrum sees it (smeared by ``kernel``)
    is scaled to that half's spectrum by linear least squares over the fit's span (``span_rule(quiet).widths``
    half-gain widths either side; a level and a tilt free too): the scale is the height the
    half shows, read from every point of the span rather than from three, so a single noisy
    point neither makes nor breaks it."""
    inside = within_widths(grid_hz, f0, q, span_rule(quiet).widths)
    scales = heights(grid_hz[inside], f0, gain, q, quiet.kernel, [h[inside] for h in quiet.halves_db])
    return float(np.mean([scale >= STANDING_SCALE for scale in scales]))


def within_widths(grid_hz, f0: float, q: float, widths: float) -> np.ndarray:
    """The grid points within ``widths`` half-gain widths (``1 / q`` octave each) either side of ``f0``."""
    return (grid_hz >= f0 * 2.0 ** (-widths / q)) & (grid_hz <= f0 * 2.0 ** (widths / q))


def heights(f, f0: float, gain: float, q: float, kernel, levels) -> list[float]:
    """How many times the peaking response (``f0``, ``gain``, ``q``, as the quiet spectrum sees it:
    smeared by ``kernel``) each of ``levels`` (dB at ``f``) shows: its least-squares scale, with a
    level and a tilt free too."""
    columns = np.column_stack((smeared_db(f, f0, gain, q, kernel), _level_and_tilt(f, f0)))
    return [float(np.linalg.lstsq(columns, level, rcond=None)[0][0]) for level in levels]


def _level_and_tilt(f, f0: float) -> np.ndarray:
    """The columns a level and a tilt (per octave from ``f0``) add to a least-squares fit at ``f``."""
    return np.stack((np.ones(f.size), np.log2(f / f0)), axis=1)


def explains(grid_hz, quiet: QuietSpectrum, peak: ResonancePeak, span: tuple[float, float]) -> bool:
    """Whether ``peak``'s response, as ``quiet`` sees it, explains ``quiet`` over ``span`` (Hz) as
    acceptance asks over its own (stage 5): RMS misfit within MAX_MISFIT of its gain, a level and
    a tilt free (by linear least squares; the peak's frequency, gain and Q as fitted)."""
    inside = (grid_hz >= span[0]) & (grid_hz <= span[1])
    f = grid_hz[inside]
    rest = quiet.level_db[inside] - smeared_db(f, peak.frequency_hz, peak.gain_db, peak.q, quiet.kernel)
    columns = _level_and_tilt(f, peak.frequency_hz)
    misfit = rest - columns @ np.linalg.lstsq(columns, rest, rcond=None)[0]
    return bool(np.sqrt(np.mean(misfit**2)) <= MAX_MISFIT * peak.gain_db)


def _candidates(quiet: QuietSpectrum, excess: np.ndarray, inside: np.ndarray) -> list[tuple[float, int]]:
    """Local maxima of the quiet spectrum's ``excess`` (:func:`excess_db`) where ``inside``: (excess
    dB, grid index), strongest first."""
    if quiet.frames < MIN_FRAMES:
        return []
    peak = np.zeros(excess.size, bool)
    peak[1:-1] = (excess[1:-1] >= excess[:-2]) & (excess[1:-1] > excess[2:]) & (excess[1:-1] >= CANDIDATE_DB)
    peak &= inside
    found = [(float(excess[i]), int(i)) for i in np.flatnonzero(peak)]
    return sorted(found, key=lambda c: -c[0])[:MAX_CANDIDATES]


def accepted_peaks(grid_hz, quiet: QuietSpectrum, inside: np.ndarray, min_width_hz: float = 0.0,
                   gain_top_db=lambda f0_hz: MAX_GAIN_DB) -> list[Fitted]:
    """Accepted peaks of the quiet spectrum where ``inside`` (stages 3-5, this module's docstring), at
    least ``min_width_hz`` wide between the half-gain points and standing at most
    ``gain_top_db(f0_hz)`` (dB; on the quiet moments a ringing peak may stand higher until stage 8
    reads its gain again: :func:`emulate.voice.resonance.ring.gain_top_db`), each with its misfit and
    span."""
    accepted, excess = [], excess_db(quiet.level_db)
    for _, i in _candidates(quiet, excess, inside):
        fit = _fit(grid_hz, quiet, excess, i)
        if fit is None:
            continue
        f0, gain, q, misfit, span = fit
        if span_rule(quiet).least_octaves and f0 * 2.0 ** -span_rule(quiet).least_octaves < grid_hz[0]:
            continue
        if not MIN_GAIN_DB <= gain <= gain_top_db(f0) or not MIN_Q <= q <= MAX_Q or misfit > MAX_MISFIT * gain \
                or f0 / q < min_width_hz:
            continue
        share = _standing_share(grid_hz, quiet, f0, gain, q)
        if share >= PERSISTENT_SHARE:
            accepted.append(Fitted(misfit, ResonancePeak(f0, q, gain, share), span))
    return accepted


def same_peak(f_hz: float, g_hz: float) -> bool:
    """Whether two readings at ``f_hz`` and ``g_hz`` land on one peak: within 1/24 octave."""
    return abs(math.log2(f_hz / g_hz)) <= 1 / 24


def within_band(f_hz: float, peak: ResonancePeak) -> bool:
    """Whether ``f_hz`` lies within ``peak``'s half-gain band, counted as the fits' spans count it
    (``1 / q`` octave wide, about its centre)."""
    return abs(math.log2(f_hz / peak.frequency_hz)) <= 0.5 / peak.q
