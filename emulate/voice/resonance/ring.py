"""A low ringing peak read from its ring after the words (the resonance finder's stage 8; the
stages are listed in :mod:`emulate.voice.resonance`).

8. a low narrow peak read on the quiet moments (under 160 Hz, poles' Q ``A Q`` at least 5.5;
   up to 1 kHz, at least 20): its centre, Q and gain from the ring after the words instead.
   Under a voice whose pitch covers the peak only the pauses are free of the voice, and the
   peak rings into them: at 100 Hz, Q 20 and +6 dB the pauses' spectrum gave +22.8 dB and
   Q 7.9 where the room's noise alone through the same filter, cut at the same moments, gives
   +11.6 dB, and cutting 0.1 s more after each word gave +15.1 dB (the grid case fc=100
   gain=6 q=20 fs=44100 pitch=110 of ``tests/resonance_grid.py``). In a spectrum the ring cannot
   be told from a taller peak: the peaking response's excess power ``|H|^2 - 1`` is
   ``(A^4 - 1)`` times its poles' band-pass shape, and a free ring's spectrum has that shape too.
   But the ring itself is the poles sounding on their own: in a band of +-20 % around the
   centre, the power from each pause's start falls at ``20 pi f0 / (Q_pole ln 10)`` dB/s and the ring crosses zero at
   ``f0 sqrt(1 - 1 / (4 Q_pole^2))``; the medians over the pauses give the poles' Q (on that
   grid's 100 Hz cases within about 10 % of ``A Q`` for ``A Q`` from 7 to 40) and the centre
   (there within 0.1 %). The gain is then read through the inverse (the cookbook cut at that
   centre with the poles' Q: its zeros cancel the poles at any gain, whatever the voice did
   before), applied to the whole take: where the quiet moments' power in the ring's band has a
   clear dip over the cut's gain (at least 1 dB either side, scanned in 1 dB steps from 0 to
   40 dB, then Brent's method), the gain is at the dip: a cut too shallow leaves the poles
   ringing, one too deep rings the words' tail into the pauses through its own broad poles, and
   where the ring stands far over the room's noise both outweigh the room's noise, which a deeper
   cut only lowers. Without a dip (a weaker ring: the band's power falls with every step) the
   gain is the one that leaves the quiet moments flat at the centre (the least-squares height
   of the peak's shape left there crosses zero, Brent's method from 0 to 40 dB). The peak's Q
   is the poles' over ``A``. A fit standing above 30 dB there is kept until so read (the ring
   lifted three Q 20 peaks to 31-37 dB) and reported only if the gain read is at most 30 dB.
   The inverse must sit on the poles to a small part of their bandwidth ``f0 / Q_pole`` (2-4 Hz
   at 100 Hz): the quiet spectrum's centre, up to 0.9 Hz off, left a ring that read 6-10 dB too
   high, hence the zero crossings; and where the ring is strong even the poles' Q read 5 % low
   leaves a residue that keeps the flat height from crossing zero until the cut is too deep
   (+15 dB at Q 20 and 48 kHz read +24.5 dB, Q 45 % low; at the dip +13.3 dB, Q 4 % high).
   From 160 to 400 Hz only a peak that rings long is so read: at 250 Hz the ring's Q of the Q 5
   peaks (poles' Q 6-12) read 13-64 % high, and a +15 dB Q 20 peak under a 110 Hz voice, whose
   pauses read +24 dB and Q 81 % high (poles' Q 143 there), read +14.5 dB and Q 3 % low from its ring.
   From 400 Hz to 1 kHz as well: at 630 Hz a +6 dB Q 20 peak under a 110 Hz voice (poles' Q 28)
   read on the pauses (5-8 s in pieces of about 0.15 s) scatters 19 % over 11 seeds, from its
   ring 6 % (+4.5 % on average); there the ring dies within tens of ms, and it is read down to
   14 dB over the band's floor rather than 6 (where the room's noise flattens its end).

"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from emulate.voice.frames import FrameGrid, iter_mono
from emulate.voice.resonance.fit import (FIT_WIDTHS, MAX_GAIN_DB, MAX_Q, MIN_Q, ResonancePeak, heights, same_peak,
                                         within_widths)
from emulate.voice.resonance.quiet import (FRAME_S, LOW_RANGE_HZ, MIN_FRAMES, QUIET_PERCENTILE, cut_spans, joined,
                                           power_db, quiet_spectrum, smearing_kernel)
from emulate.voice.takes import TakeSource

__all__ = ["Ring", "gain_top_db", "median_spread", "read_from_ring"]

#: The low range's centre and Q from the ring after words (:func:`_decay_ring`): read for a peak under
#: DECAY_TOP_HZ found on the quiet moments (not the long frames) whose poles' Q (``A Q``,
#: ``A = 10**(gain/40)``) is at least DECAY_MIN_POLE_Q (a broader ring dies within the band
#: filter's own ring). Measured on the grid, not derived: at 250 Hz the decay read Q no better
#: than the quiet spectrum (55 vs 66 of 72 cases; broad peaks, Q 5, read 30-66 % high), at 100 Hz
#: under a 110 Hz voice better (14 vs 11 of 24; 21 with the centre and gain read from the ring
#: too); between the two it is untested. The band:
#: +-DECAY_BAND/2 of the centre (a 2nd-order Butterworth band-pass); the power read every
#: DECAY_STEP_S, s, down to DECAY_ABOVE_DB over the band's quiet floor (its QUIET_PERCENTILE), dB
#: (DECAY_HIGH_ABOVE_DB from LOW_RANGE_HZ up, see below),
#: over at least DECAY_MIN_STEPS steps, in at least DECAY_MIN_ENDS pauses.
DECAY_TOP_HZ = 160.0
DECAY_MIN_POLE_Q = 5.5
#: ... and up to DECAY_HIGH_TOP_HZ for a peak whose poles' Q on
#: the quiet moments is at least DECAY_HIGH_MIN_POLE_Q: one that rings long after each word. Measured
#: on the grid's 48 cases at 250 Hz (none between 250 and 400 Hz): read so, all 17 of poles' Q 22-143
#: met (2 more than from the pauses: +15 dB Q 20 under a 110 Hz voice, pauses at +24 dB and Q 81 %
#: high, read +14.5 dB, Q 3 % low; +6 dB Q 20 under 210 Hz, 31 % to 19 % low), but 8 of the 12 of
#: poles' Q 5.6-11.7 were lost (the Q 5 peaks: the ring's Q read 13-64 % high) and a +10 dB Q 10
#: (poles' Q 14) went from 22 % low to 29 % high; 20 lies between (18.5 the highest not read).
#: At 630 Hz (48 cases; none else between 400 Hz and 1 kHz, none above tried) the 10 Q 20 peaks so
#: read met as from the pauses and one more (+6 dB under a 110 Hz voice at 48 kHz: 41 % to 5 % high;
#: over that case's seed and 10 others Q error +0 % on average, spread 19 % -> +4.5 %, 6 %; 11 of
#: 11 met against 9), no case lost, their Q error 0.2-41 % -> 1-12 % (now all high). From
#: LOW_RANGE_HZ up the ring, dying within tens of ms, is read down to DECAY_HIGH_ABOVE_DB over the
#: band's floor: at DECAY_ABOVE_DB the room's noise flattened its end, and the Q read 14 % high at
#: Q 20 and 23-49 % at +15 dB Q 10 (poles' Q 24; 3 of 4 lost); on that case and the +6 dB Q 20 one
#: (4-6 seeds) 10 dB read +18 and +7 %, 14 dB +1 and +4 %. (The ring's power less the room's mean
#: power, fitted down to 6 dB, over-corrected: 12-89 % low.)
DECAY_HIGH_TOP_HZ = 1000.0
DECAY_HIGH_MIN_POLE_Q = 20.0
DECAY_BAND = 0.4
DECAY_STEP_S = 0.005
DECAY_ABOVE_DB = 6.0
DECAY_HIGH_ABOVE_DB = 14.0
DECAY_MIN_STEPS = 6
DECAY_MIN_ENDS = 8
#: ... and its gain where undoing it leaves the quiet moments flat (:func:`_unrung_gain`), sought
#: from 0 to UNRUNG_TOP_DB (the fit's own bound: a ring can lift the quiet moments' peak past
#: MAX_GAIN_DB, measured 31-37 dB at Q 20 and +10/+15 dB on the grid) to within UNRUNG_XTOL_DB.
UNRUNG_TOP_DB = 40.0
UNRUNG_XTOL_DB = 0.1
#: ... unless the ring's band holds least after a cut of one gain (:func:`_least_ring_gain`): a dip
#: at least LEAST_RING_DIP_DB deep either side on a scan in steps of LEAST_RING_STEP_DB. Measured
#: on the grid's 100 Hz cases under a 110 Hz voice (0.5 dB steps): the band's power over the gain
#: had a dip only at Q 20 (0.2-6.4 dB deep on its shallower side; at 5.5 and 9 dB for +6 dB, 10
#: and 10.5 for +10, 14 and 13.5 for +15); elsewhere it fell with every step (no rise at all), so
#: 1 dB is clear of a wiggle.
LEAST_RING_STEP_DB = 1.0
LEAST_RING_DIP_DB = 1.0
#: Under DECAY_TOP_HZ a peak read on the quiet moments must ring: its poles' Q (``A Q``, at least
#: DECAY_MIN_POLE_Q there) keeps it sounding for tens of ms after every word near it, so a peak
#: whose ring cannot be read (too few decays, or one no longer than the measuring band's own: the
#: +-20 % 2nd-order Butterworth band's poles have a Q of about 3.5, under DECAY_MIN_POLE_Q) is the
#: scatter of a few seconds of noise or a steady component of the pauses, not a resonance, and is
#: not reported. Measured on 96 clean 8 s voice-like takes (seeds 3000-3007, six pitches, both
#: rates; the grid's own controls report nothing): 7 such peaks at 73-154 Hz (Q 9-34, +4.6 to
#: +11.9 dB) whose "ring" was the band's own (poles' Q 3.5-4.4, 8-14 % above the peak), now none;
#: every grid reading unchanged. Not above DECAY_TOP_HZ: there a resonance's ring dies within tens
#: of ms and six grid cases at 630 Hz (+6 dB Q 20, +15 dB Q 10) have none that can be read; but
#: up to DECAY_HIGH_TOP_HZ a ring that is read and is no longer than the band's own rejects the
#: peak (a 200 Hz Q 28 'peak' on an 8 s hum-grid take; every grid reading unchanged).


@dataclass(frozen=True)
class Ring:
    """A resonance's free ring after the words: its poles' Q and its undamped centre, Hz, and
    how closely the decays pin each (relative, one standard deviation of their median:
    :func:`median_spread`; nan where unknown)."""

    pole_q: float
    hz: float
    pole_q_spread: float = math.nan
    hz_spread: float = math.nan


def _decay_ring(source: TakeSource, spans: list[tuple[int, int]], f0: float) -> Ring | None:
    """The poles of a resonance near ``f0`` read from its free decay after each word (see
    DECAY_BAND) and the ``spans`` of the pauses (:func:`quiet_spans`: each from a word's end);
    None when fewer than DECAY_MIN_ENDS decays could be read.

    Once its excitation stops, a second-order resonance's output is its poles' free ring,
    ``exp(-sigma t) cos(w_d t)`` with ``sigma = pi f0 / Q_pole`` and ``w_d = 2 pi f0
    sqrt(1 - 1 / (4 Q_pole^2))`` (the impulse response of a second-order system, e.g. A.
    Oppenheim, A. Willsky, Signals and Systems, sec. 6.5; from memory): its power falls at
    ``20 sigma / ln 10`` dB/s whatever the voice did before, and it crosses zero at ``w_d``. So
    in a band around ``f0`` the power of each pause is read every DECAY_STEP_S from its start
    (a word's end) until it comes within DECAY_ABOVE_DB of the band's quiet floor, a line is
    fitted to it in dB, and its upward zero crossings over that stretch are timed; the medians
    over the pauses (robust to a pause the voice or a breath cut short) give the Q and the
    centre. The band filter's own ring is far shorter (DECAY_MIN_POLE_Q)."""
    step = max(1, round(DECAY_STEP_S * source.fs))
    pieces = cut_spans(_filtered(source, _ring_band(f0, source.fs)), spans)
    levels = [power_db(np.square(piece[: piece.size // step * step], dtype=np.float64).reshape(-1, step).mean(axis=1))
              for piece in pieces]
    if not any(level.size for level in levels):
        return None
    above = DECAY_ABOVE_DB if f0 < LOW_RANGE_HZ else DECAY_HIGH_ABOVE_DB
    floor = np.percentile(np.concatenate(levels), QUIET_PERCENTILE) + above
    slopes, crossings = [], []
    for piece, level in zip(pieces, levels):
        below = np.flatnonzero(level <= floor)
        stop = below[0] if below.size else level.size
        if stop >= DECAY_MIN_STEPS:
            slopes.append(np.polyfit(np.arange(stop) * step / source.fs, level[:stop], 1)[0])
            crossings.append(_crossing_hz(piece[: stop * step], source.fs))
    slope = float(np.median(slopes)) if len(slopes) >= DECAY_MIN_ENDS else 0.0
    if slope >= 0.0:
        return None
    pole_q = 20.0 / math.log(10.0) * math.pi * f0 / -slope
    crossing_hz = float(np.nanmedian(crossings))
    return Ring(pole_q, crossing_hz / math.sqrt(1.0 - 1.0 / (4.0 * pole_q**2)),
                median_spread(slopes) / -slope, median_spread(crossings) / crossing_hz)


def median_spread(values) -> float:
    """The standard deviation of the median of ``values`` (NaNs aside) read from their own scatter:
    ``sqrt(pi / 2) * 1.4826 * MAD / sqrt(n)`` (the median's asymptotic standard error for a normal
    scatter, the median absolute deviation scaled to a standard deviation; e.g. Kendall & Stuart,
    from memory); nan with fewer than three.

    Example
    -------
    >>> round(median_spread([1.0, 2.0, 3.0, 4.0, 5.0]), 3)
    0.831
    """
    v = np.asarray(values, dtype=np.float64)
    v = v[np.isfinite(v)]
    if v.size < 3:
        return math.nan
    mad = float(np.median(np.abs(v - np.median(v))))
    return math.sqrt(math.pi / 2.0) * 1.4826 * mad / math.sqrt(v.size)


def _ring_band(f0: float, fs: float) -> np.ndarray:
    """The band the ring is read in: +-DECAY_BAND/2 of ``f0``, a 2nd-order Butterworth band-pass
    (second-order sections)."""
    from scipy.signal import butter

    return butter(2, (f0 * (1.0 - DECAY_BAND / 2.0), f0 * (1.0 + DECAY_BAND / 2.0)), btype="bandpass",
                  fs=fs, output="sos")


def _crossing_hz(y: np.ndarray, fs: float) -> float:
    """The frequency of a (nearly) sinusoidal stretch from its upward zero crossings (each
    placed by linear interpolation between samples), Hz; NaN with fewer than three."""
    up = np.flatnonzero((y[:-1] < 0.0) & (y[1:] >= 0.0))
    if up.size < 3:
        return float("nan")
    at = up + y[up] / (y[up] - y[up + 1])
    return float((up.size - 1) * fs / (at[-1] - at[0]))


def _peaking_sos(f0: float, gain_db: float, q: float, fs: float) -> np.ndarray:
    """The cookbook's digital peaking biquad (its analog prototype bilinear-transformed, as
    one second-order section; R. Bristow-Johnson, audio EQ cookbook, "peakingEQ")."""
    a, w0 = 10.0 ** (gain_db / 40.0), 2.0 * math.pi * f0 / fs
    alpha = math.sin(w0) / (2.0 * q)
    b = np.array([1.0 + alpha * a, -2.0 * math.cos(w0), 1.0 - alpha * a])
    den = np.array([1.0 + alpha / a, -2.0 * math.cos(w0), 1.0 - alpha / a])
    return np.concatenate((b, den))[None, :] / den[0]


def _filtered(source: TakeSource, sos: np.ndarray):
    """The take's mono blocks through the second-order sections ``sos``, one filter state
    carried across the blocks."""
    from scipy.signal import sosfilt

    state = np.zeros((sos.shape[0], 2))
    for block in iter_mono(source):
        y, state = sosfilt(sos, block, zi=state)
        yield y


def _unrung(source: TakeSource, sos: np.ndarray, spans) -> tuple[np.ndarray, np.ndarray]:
    """The quiet moments (``spans``) of the take filtered by ``sos`` (the whole take, so each
    piece carries what the filter made of the words before it), joined, and their lengths."""
    return joined(cut_spans(_filtered(source, sos), spans))


def _residual_height(source, spans, grid_hz, f0: float, pole_q: float, gain_db: float, kernel=None) -> float:
    """The peak the quiet moments still show at ``f0`` after the take has been passed through the
    inverse of a peaking response of ``gain_db`` whose poles have the Q ``pole_q``: its
    least-squares height (dB) in the shape of that response, as the quiet spectrum sees it (its
    smearing ``kernel`` if known: it depends on the spans alone)."""
    q = pole_q / 10.0 ** (gain_db / 40.0)
    quiet, lengths = _unrung(source, _peaking_sos(f0, -gain_db, q, source.fs), spans)
    inside = within_widths(grid_hz, f0, q, FIT_WIDTHS)
    spectrum = quiet_spectrum(quiet, lengths, source.fs, grid_hz[inside], FRAME_S, kernel)
    if spectrum.frames < MIN_FRAMES:
        return float("nan")
    return heights(grid_hz[inside], f0, 1.0, q, spectrum.kernel, [spectrum.level_db])[0]


def gain_top_db(f0_hz: float) -> float:
    """The highest gain a peak read on the quiet moments may show at ``f0_hz``, dB: under
    DECAY_HIGH_TOP_HZ its ring may lift it up to UNRUNG_TOP_DB, and :func:`read_from_ring` reads
    its gain again."""
    return UNRUNG_TOP_DB if f0_hz < DECAY_HIGH_TOP_HZ else MAX_GAIN_DB


def read_from_ring(source: TakeSource, pauses, spans, grid_hz, peak: ResonancePeak) -> ResonancePeak | None:
    """A low, narrow peak read on the quiet moments with its centre and poles' Q from the ring
    after words (:func:`_decay_ring`) and its gain where undoing it leaves the quiet moments
    flat (:func:`_unrung_gain`; stage 8, this module's docstring), else as it is; None for one under
    DECAY_TOP_HZ that does not ring (see the note above DECAY_TOP_HZ's use here). The cookbook
    prototype's poles (its denominator ``s^2 + s w0 / (A Q) + w0^2``) have the Q ``A Q``: the
    peak's Q is the poles' over ``A``."""
    pole_q = 10.0 ** (peak.gain_db / 40.0) * peak.q
    least_pole_q = DECAY_MIN_POLE_Q if peak.frequency_hz < DECAY_TOP_HZ else DECAY_HIGH_MIN_POLE_Q
    if peak.frequency_hz >= DECAY_HIGH_TOP_HZ or pole_q < least_pole_q:
        return peak
    ring = _decay_ring(source, pauses, peak.frequency_hz)
    if ring is not None and math.isfinite(ring.hz) and ring.pole_q < DECAY_MIN_POLE_Q:
        return None  # the measuring band's own ring and no other
    if ring is None or not math.isfinite(ring.hz):
        return None if peak.frequency_hz < DECAY_TOP_HZ else peak  # no ring: not a resonance (see above)
    if not same_peak(ring.hz, peak.frequency_hz):
        return peak  # another peak's ring
    gain = _least_ring_gain(source, spans, ring)
    gain = _unrung_gain(source, spans, grid_hz, ring) if gain is None else gain
    gain = peak.gain_db if gain is None else gain
    q = ring.pole_q / 10.0 ** (gain / 40.0)
    read = ResonancePeak(ring.hz, q, gain, peak.persistence, ring.hz_spread, ring.pole_q_spread, from_ring=True)
    return read if MIN_Q <= q <= MAX_Q else peak


def _unrung_gain(source, spans, grid_hz, ring: Ring) -> float | None:
    """The gain (0 to UNRUNG_TOP_DB) whose inverse, applied to the take, leaves no peak at the ring's
    centre in the quiet moments (:func:`_residual_height` crosses zero), dB; None if none does."""
    from scipy.optimize import brentq

    grid = FrameGrid.at(source.fs, FRAME_S, FRAME_S / 4.0, padded=True)  # as quiet_spectrum's
    kernel = smearing_kernel(grid, np.array([stop - start for start, stop in spans]))

    def height(gain):
        return _residual_height(source, spans, grid_hz, ring.hz, ring.pole_q, gain, kernel)

    low, high = height(0.0), height(UNRUNG_TOP_DB)
    if not (low > 0.0 > high):
        return None
    return float(brentq(height, 0.0, UNRUNG_TOP_DB, xtol=UNRUNG_XTOL_DB))


def _ring_left_db(source, spans, ring: Ring, gain_db: float) -> float:
    """The power (dB) the quiet moments (``spans``) hold in the ring's band (:func:`_ring_band`)
    after the take has been passed through the inverse of a peaking response of ``gain_db`` whose
    poles are the ring's."""
    cut = _peaking_sos(ring.hz, -gain_db, ring.pole_q / 10.0 ** (gain_db / 40.0), source.fs)
    pieces = cut_spans(_filtered(source, np.concatenate((cut, _ring_band(ring.hz, source.fs)))), spans)
    energy, count = sum(float(np.sum(np.square(p, dtype=np.float64))) for p in pieces), sum(p.size for p in pieces)
    return float(power_db(np.array(energy / max(count, 1))))


def _least_ring_gain(source, spans, ring: Ring) -> float | None:
    """The gain whose inverse leaves the least of the ring in the quiet moments, where that is a
    clear dip (LEAST_RING_DIP_DB either side on a scan of LEAST_RING_STEP_DB from 0 to
    UNRUNG_TOP_DB, then Brent's method between the dip's neighbours), dB; None without one.

    The inverse's zeros cancel the ring's poles at any gain; a gain too low leaves a narrower peak
    whose poles still ring after each word, one too high a broad dip whose own poles ring the words'
    tail into the pauses. Where the ring stands far over the room's noise, those leftovers dwarf
    the room's noise (which a deeper cut only lowers), so the band's power dips at the gain that
    undoes the peak; where it does not, the power only falls with the cut, and
    :func:`_unrung_gain` reads the gain instead."""
    from scipy.optimize import minimize_scalar

    gains = np.arange(0.0, UNRUNG_TOP_DB + LEAST_RING_STEP_DB / 2.0, LEAST_RING_STEP_DB)
    left = np.array([_ring_left_db(source, spans, ring, gain) for gain in gains])
    for i in range(1, gains.size - 1):
        after = left[i:]
        rise = after[: np.argmax(np.append(after[1:] < left[i], True)) + 1].max() - left[i]
        if left[i] <= min(left[i - 1], left[i + 1]) and min(left[:i].max() - left[i], rise) >= LEAST_RING_DIP_DB:
            found = minimize_scalar(lambda gain: _ring_left_db(source, spans, ring, gain), method="bounded",
                                    bounds=(gains[i - 1], gains[i + 1]), options={"xatol": UNRUNG_XTOL_DB})
            return float(found.x)
    return None
