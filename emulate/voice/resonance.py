"""The resonance finder: one narrow, persistent spectral peak (a room mode, a stand or capsule ringing).

A voice's own harmonics and formants are peaks too, and they move; a resonance is fixed
and colours everything the microphone hears, the room's quiet noise between words
included. So the finder reads the resonance where the voice is absent:

1. quiet moments: 20 ms frames within 12 dB of the take's quietest tenth, in all and in
   every octave band from 60 Hz (each band against its own floor, ``frames.band_floors``:
   after a word a low resonance rings on for tens of ms, quiet in the sum but far above the
   room's noise in its own band, and read as quiet it doubled a low peak's height and
   broadened it), each run less one frame at each end (the edges of words), at most 60 s
   of them in all;
2. quiet spectrum on a 1/96-octave grid from 60 Hz to 0.45 fs (at most 20 kHz): 0.2 s
   Hann frames over the quiet moments joined end to end (at least 4 frames, else nothing is
   examined), also over each half of them;
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
7. of the fits that land on one peak (within 1/24 octave; each candidate starts its own
   fit, and least squares can stop in a local minimum) the one with the least misfit is
   kept; the strongest accepted peak is reported with a suggested notch: at its frequency, its
   Q, as deep as its gain (``mix = 1 - 10**(-gain/20)``);
8. a low narrow peak read on the quiet moments (under 160 Hz, poles' Q ``A Q`` at least 5.5;
   up to 1 kHz, at least 20): its centre, Q and gain from the ring after the words instead.
   Under a voice whose pitch covers the peak only the pauses are free of the voice, and the
   peak rings into them: at 100 Hz, Q 20 and +6 dB the pauses' spectrum gave +22.8 dB and
   Q 7.9 where the room's noise alone through the same filter, cut at the same moments, gives
   +11.6 dB, and cutting 0.1 s more after each word gave +15.1 dB (the grid case fc=100
   gain=6 q=20 fs=44100 pitch=110 of ``tests/resonance_grid.py``). In a spectrum the ring cannot be told from a taller peak: the
   peaking response's excess power ``|H|^2 - 1`` is ``(A^4 - 1)`` times its poles' band-pass
   shape, and a free ring's spectrum has that shape too. But the ring itself is the poles
   sounding on their own: in a band of +-20 % around the centre, the power from each pause's
   start falls at ``20 pi f0 / (Q_pole ln 10)`` dB/s and the ring crosses zero at
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

Measured on the controlled grid (``tests/resonance_grid.py``: 30 s takes, which says why;
``bench_finders.py`` prints the table): 286 of 288 cases meet frequency within 2 % and Q
within 30 % of the biquad applied (RMS Q error 8.0 %), none of the 24 controls is reported. What each part
brought, on the grid's seeds (no case lost by any): the Q from the ring (stage 8) took 100 Hz
under a 110 Hz voice from 11 to 14 of 24, its centre and gain from the ring to 21, the gain at
the ring's dip to 22; the fit's span set again from the fitted Q (stage 4) took 250 Hz-1.6 kHz
from 136 to 141 of 144 (with other seeds 137 to 140, RMS Q error 12.3 to 9.8 %); stage 8 for
long rings up to 400 Hz took 250 Hz from 46 to 48 of 48 (RMS Q error 17.1 to 10.1 %), up to 1 kHz
630 Hz from 47 to 48 (the grid's RMS Q error 8.9 to 8.2 % with the next); the long frames' fit
over at least +-0.3 octave (stage 4) changed six Q 20 peaks at 100 Hz under a 210 Hz voice, none
lost or won (+6 dB at 48 kHz: over its seed and 10 others Q error +16 % on average, spread 38 %,
to -2 %, 26 %); candidates from 2 dB rather than 2.5 (stage 3) found a +6 dB Q 2 bump at 100 Hz under a
110 Hz voice (99.8 Hz, Q 15 % low; it stood 2.3 dB), and a broad low peak read on the quiet
moments (stage 6) put another, under a 210 Hz voice, from 4.1 % to 1.1 % off (Q 23 % to 4 %
low) and the Q 2 peaks at 100 Hz under that voice nearer their gain (+10 dB read 13.6 dB,
now 9.8; +15 dB 18.9 and 16.8, now 14.5 and 13.9): measured before the two changes above them
(stage 8 to 1 kHz, the long frames' least span) were joined, 283 to 285 of 288, RMS Q error
8.9 to 8.7 %; all together 286, RMS Q error 8.0 %.
References for the method: white noise through the grid's +6 dB Q 20 biquad at 630 Hz, cut at
a grid take's quiet moments (66 pieces, median 0.08 s), reads the Q +4 % on average over 12
seeds, spread 23 % (uncut: -2 %, 13 %), so the smearing kernel does not over-correct and a
+6 dB Q 20 peak's misses are the scatter of 5-8 s of pauses in short pieces, not a bias
(0.1 s or 0.3 s frames scatter as much); fitting dB is harmless, the log of a mean of
periodograms being low by ``10 / ln 10 (psi(nu / 2) - ln(nu / 2))`` dB for ``nu`` degrees of
freedom (e.g. Percival & Walden, from memory: 0.06 dB for a grid cell of one bin, 0.03 dB for
two). Left, all +6 dB peaks: at 100 Hz under a 210 Hz voice (the long frames) a Q 20 peak 51 %
high, scatter rather than waste: the Fisher information of 20 s of noise through that peak
(Whittle's likelihood, five parameters free over +-0.3 octave) bounds the Q's spread at about
21 % (the take averages 21.5 s there; over the 11 seeds 2 s or 4 s frames spread 37 % against
38 %, a gate of 3 dB 40-43 %), so it needs more time, not another fit; a Q 2 bump at 100 Hz
under a 110 Hz voice at 48 kHz 2.2 % high, the scatter of 6.5 s of quiet noise: the room's
noise alone, cut at the same moments, reads 102.1 Hz; pink noise through that bump cut there
reads the centre with a spread of 2.4 % over 12 seeds (mean +0.4 %); over 8 other seeds that
case was not found 6 times and 2.9 and 3.3 % high the others, over seeds 5000-5009 met 5 times,
not found twice, and 2.0-2.4 % high (Q 35-36 % high) or Q 44 % high the others: it is a weak spot
of 6.5 s of pauses, not one unlucky seed (the Q 20 peak under a 210 Hz voice, over the same seeds,
met all 10, Q -28 to +18 %). More time is not there to be had: 0.2 s frames over the whole take,
each grid point kept where the power within +-1/12 octave lies within 3 dB of the pauses', hold
5.0 s at 100 Hz against the pauses' 6.5 s (the 110 Hz voice covers 60-300 Hz whenever it
sounds; 8.7 s even at 62 Hz), and the pauses (gated on the power in all alone, less one frame
at each end) hold 7.2 s: a broad low peak read on them met on 6 of the 11 seeds, the grid's own
2.1 % high. Tried and not kept: the moments
quiet in a peak's own octave bands rather than in all (more time, 6.3 to 10.8 s at 630 Hz, and
the three Q 20 misses then met, but 27 broad peaks lost: the voice leaks in at the joins, and a
band-pass against it cuts a broad peak's neighbourhood); nor, for a narrow peak (Q 8 up, over
400 Hz) alone, its Q read again on the moments quiet within +-1/2 octave of it (10-11 s at 630
Hz: the +6 dB Q 20 peak read 4.2-4.9 dB and its Q 24-47 % high, 6 dB of gate rather than 12 no
better); for the Q 2 bumps: candidates against the neighbourhood less +-1/2 octave (an 8 s
control reported a bump at 86 Hz); the grid down to 30 Hz (the bump's response stands 2.64 dB
over a neighbourhood reaching 30 Hz, 2.70 dB over one cut at 60 Hz, and the fit's span cut at
60 Hz reads it exactly: the low end was not the cause); the long frames' gate at 3 dB (the 4.1
% bump met, but two 100 Hz peaks under a 210 Hz voice lost and an 8 s control reported a 62.7
Hz peak), or at 9 or 12 dB (more time, but the Q 20 peak under a 210 Hz voice met on 8 and 7 of
its 11 seeds against 10); the long frames' fit weighted by the time each point averages (104.1 to 103.8 Hz), or
their spectrum taken from the quiet moments where those hold more time (102.7-104.1 Hz); broad
low peaks read on the quiet moments only (the 48 kHz bump under a 210 Hz voice, which they do
not show, was lost).

What this module does *not* do: it does not tell a resonance of the room from one of the
microphone; a resonance that only the voice excites (a take whose quiet moments are
electrical noise or digital silence) is not seen; a steady tone in the quiet moments
reads as a (very narrow) resonance.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from emulate.voice.frame_table import FrameTable
from emulate.voice.frames import (BandSummer, FrameGrid, band_floors, iter_frame_power, iter_mono,
                                  log_band_edges, runs)
from emulate.errors import BadValueError
from emulate.voice.notches import SuggestedNotch
from emulate.voice.pooling import label_takes, select_takes
from emulate.voice.takes import TakeSource, take_finder

__all__ = ["ResonancePeak", "ResonanceReport", "combine_resonance", "find_resonance", "peaking_db"]

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
#: Takes shorter than this are reported as too short, s.
MIN_SECONDS = 2.0
#: A range is examined only with at least this many quiet frames (fewer scatter too much).
MIN_FRAMES = 4
#: Lowest frequency examined, Hz; the highest is 0.45 fs, at most TOP_HZ.
LOW_HZ = 60.0
TOP_HZ = 20000.0
#: Grid points per octave and the neighbourhood's half width, octaves.
GRID_PER_OCTAVE = 96
NEIGHBOURHOOD_OCTAVES = 1.0
#: A candidate's excess over the neighbourhood, dB. The fit and the tests of stage 5 decide; a
#: broad bump stands little out (module docstring, stage 3): at 2.5 dB a +6 dB Q 2 bump at 100 Hz
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
#: many times (module docstring, stage 4). Measured on the grid, not derived: at 250 Hz-1.6 kHz
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
#: The long frames' fit reads at least +-this many octaves (the span of four half-gain widths of a
#: Q 13 peak): a narrow peak's first guess left its skirts, and so the level and tilt, to a few
#: points. Measured at 100 Hz, +6 dB Q 20 under a 210 Hz voice, the grid's seed and 10 others: Q
#: error +16 % on average, spread 38 % -> -2 %, 26 % (noise alone through that peak, 22 s
#: continuous, 40 seeds: 4 widths +14 %, 28 %; 8 widths +6 %, 20 %; the Fisher information of
#: 20 s of it over +-0.3 octave, five parameters free, bounds the spread at about 21 %). Not
#: more widths: on those takes 6 or 8 widths (with a refit) spread 30 %, the skirts nearer the voice.
LONG_MIN_SPAN_OCTAVES = 0.3
#: A peak read on long frames must be at least this many frame resolutions (1 / LONG_FRAME_S)
#: wide between its half-gain points: a narrower one is not resolved (one bin's scatter fits it).
LONG_MIN_WIDTH = 2.5
#: A low peak at least this many of the quiet frames' resolutions (1 / FRAME_S) wide between its
#: half-gain points is read on the quiet moments even where the long frames average more time, and
#: replaces their readings within its half-gain band (module docstring, stage 6). Not tuned (no other
#: value tried): at 100 Hz it lies between the Q 5 peaks' 20 Hz and the Q 2 bumps' 45-53 Hz.
BROAD_WIDTHS = 8.0
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
        Share of the take's quarters where it stands out, 0..1.
    """

    frequency_hz: float
    q: float
    gain_db: float
    persistence: float


@dataclass(frozen=True)
class ResonanceReport:
    """What the resonance finder learned about one take.

    Attributes
    ----------
    found : bool
        True when a narrow persistent peak was found; else ``reason`` says why not.
    reason : str
    seconds : float
    peak : ResonancePeak or None
        The strongest accepted peak.
    others : tuple of ResonancePeak
        Further accepted peaks, strongest first.
    notch : SuggestedNotch or None
        At the peak's frequency and Q, as deep as its gain.
    grid_hz, excess_db : numpy.ndarray
        The quiet spectrum's excess over the neighbourhood (dB) the finder read, for pictures.
    set_aside : tuple of str
        Pooled reports only: the takes left out and why (see :func:`combine_resonance`).
    digest : str
        One take's samples (:meth:`~emulate.voice.takes.TakeSource.digest`): pooling tells exact
        repeats by it (empty for a pooled report or one made by hand).
    """

    found: bool
    reason: str
    seconds: float
    peak: ResonancePeak | None
    others: tuple[ResonancePeak, ...]
    notch: SuggestedNotch | None
    grid_hz: np.ndarray = field(default=None, repr=False, compare=False)
    excess_db: np.ndarray = field(default=None, repr=False, compare=False)
    set_aside: tuple[str, ...] = ()
    digest: str = field(default="", repr=False, compare=False)


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


def _top_hz(fs: float) -> float:
    return min(TOP_HZ, 0.45 * fs)


def _grid_hz(fs: float) -> np.ndarray:
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


def _level_db(power: np.ndarray) -> np.ndarray:
    return 10.0 * np.log10(np.maximum(power, 1e-30))


@dataclass(frozen=True)
class _Quiet:
    """The take's quiet spectrum on the grid (dB) at one frame length, over the whole take and
    over each half (for persistence); ``seconds``: the time it averages (per grid point for
    the long frames)."""

    frame_s: float
    kernel: tuple[np.ndarray, np.ndarray]
    level_db: np.ndarray
    halves_db: tuple[np.ndarray, ...]
    frames: int
    seconds: np.ndarray | float = 0.0
    fit_widths: float = QUIET_FIT_WIDTHS
    fit_repeats: int = FIT_REPEATS
    min_span_octaves: float = 0.0


def _quiet_spans(source: TakeSource) -> tuple[list[tuple[int, int]], list[tuple[int, int]]]:
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


def _quiet_moments(source: TakeSource, spans: list[tuple[int, int]] | None = None) -> tuple[np.ndarray, np.ndarray]:
    """The take's quiet moments (between words: the room's own noise, through the same
    resonance; :func:`_quiet_spans` unless given), joined end to end (float32). Also the
    joined pieces' lengths (samples)."""
    return _joined(_cut_spans(iter_mono(source), _quiet_spans(source)[0] if spans is None else spans))


def _joined(pieces: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """``pieces`` joined end to end (float32), and their lengths (samples)."""
    return np.concatenate(pieces or [np.zeros(0, np.float32)]), np.array([piece.size for piece in pieces], int)


def _cut_spans(blocks, spans: list[tuple[int, int]]) -> list[np.ndarray]:
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


@dataclass(frozen=True)
class _Ring:
    """A resonance's free ring after the words: its poles' Q and its undamped centre, Hz."""

    pole_q: float
    hz: float


def _decay_ring(source: TakeSource, spans: list[tuple[int, int]], f0: float) -> _Ring | None:
    """The poles of a resonance near ``f0`` read from its free decay after each word (see
    DECAY_BAND) and the ``spans`` of the pauses (:func:`_quiet_spans`: each from a word's end);
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
    pieces = _cut_spans(_filtered(source, _ring_band(f0, source.fs)), spans)
    levels = [_level_db(np.square(piece[: piece.size // step * step], dtype=np.float64).reshape(-1, step).mean(axis=1))
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
    return _Ring(pole_q, float(np.nanmedian(crossings)) / math.sqrt(1.0 - 1.0 / (4.0 * pole_q**2)))


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
    return _joined(_cut_spans(_filtered(source, sos), spans))


def _residual_height(source, spans, grid_hz, f0: float, pole_q: float, gain_db: float, kernel=None) -> float:
    """The peak the quiet moments still show at ``f0`` after the take has been passed through the
    inverse of a peaking response of ``gain_db`` whose poles have the Q ``pole_q``: its
    least-squares height (dB) in the shape of that response, as the quiet spectrum sees it (its
    smearing ``kernel`` if known: it depends on the spans alone)."""
    q = pole_q / 10.0 ** (gain_db / 40.0)
    quiet, lengths = _unrung(source, _peaking_sos(f0, -gain_db, q, source.fs), spans)
    inside = _within_widths(grid_hz, f0, q, FIT_WIDTHS)
    spectrum = _quiet_spectrum(quiet, lengths, source.fs, grid_hz[inside], FRAME_S, kernel)
    if spectrum.frames < MIN_FRAMES:
        return float("nan")
    return _heights(grid_hz[inside], f0, 1.0, q, spectrum.kernel, [spectrum.level_db])[0]


def _quiet_spectrum(quiet: np.ndarray, lengths: np.ndarray, fs: float, grid_hz: np.ndarray,
                    frame_s: float, kernel=None) -> _Quiet:
    """The mean power spectrum of the quiet moments (pieces of ``lengths`` joined end to end)
    with frames of ``frame_s`` (hop a quarter of it), over all of them and over each half,
    and the smearing it suffers (:func:`_smearing_kernel`, unless given)."""
    grid = FrameGrid.at(fs, frame_s, frame_s / 4.0, padded=True)
    kernel = _smearing_kernel(grid, lengths) if kernel is None else kernel
    rows = [_on_grid(grid.f_hz, power, grid_hz)
            for power in iter_frame_power(TakeSource.from_array(quiet, fs), grid)] if quiet.size >= grid.size else []
    if sum(r.shape[0] for r in rows) < MIN_FRAMES:
        return _Quiet(frame_s, kernel, np.zeros(grid_hz.size), (), 0)
    rows = np.concatenate(rows)
    halves = tuple(_level_db(chunk.mean(axis=0)) for chunk in np.array_split(rows, 2))
    return _Quiet(frame_s, kernel, _level_db(rows.mean(axis=0)), halves, rows.shape[0], quiet.size / fs)


def _density_db(level_db: np.ndarray, grid: FrameGrid) -> np.ndarray:
    """A grid spectrum's mean power per bin (dB) as power per hertz."""
    return level_db - 10.0 * math.log10(grid.fs / grid.nfft)


def _long_spectrum(source: TakeSource, grid_hz: np.ndarray, quiet: _Quiet) -> _Quiet:
    """The low range on long frames, each grid point over the frames that hold only the room's
    noise there (see LOW_RANGE_HZ); ``seconds`` per grid point is the time averaged there."""
    from scipy.ndimage import uniform_filter1d

    hop_s = max(LONG_FRAME_S / 4.0, (source.seconds - LONG_FRAME_S) / (LONG_MAX_FRAMES - 1))
    grid = FrameGrid.at(source.fs, LONG_FRAME_S, hop_s, padded=True)  # at most LONG_MAX_FRAMES, spread
    kernel = _smearing_kernel(grid, np.array([grid.size]))
    span = grid_hz[grid_hz <= LONG_SPAN_HZ]
    empty = _Quiet(LONG_FRAME_S, kernel, np.zeros(span.size), (), 0, np.zeros(span.size))
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
        return _level_db(np.where(count > 0, level, noise)) + 10.0 * math.log10(grid.fs / grid.nfft)

    halves = tuple(mean(part) for part in np.array_split(np.arange(rows.shape[0]), 2))
    seconds = usable.sum(axis=0) * min(grid.hop_s, LONG_FRAME_S)  # the time the frames hold, overlaps once
    return _Quiet(LONG_FRAME_S, kernel, mean(slice(None)), halves, rows.shape[0], seconds, FIT_WIDTHS, 0,
                  LONG_MIN_SPAN_OCTAVES)


def _excess(level_db: np.ndarray) -> np.ndarray:
    """Level over its running median within +-NEIGHBOURHOOD_OCTAVES, dB."""
    from scipy.ndimage import median_filter

    width = 2 * round(NEIGHBOURHOOD_OCTAVES * GRID_PER_OCTAVE) + 1
    return level_db - median_filter(level_db, size=width, mode="nearest")


def _smearing_kernel(grid: FrameGrid, lengths: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
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


def _smeared_db(f_hz, f0: float, gain: float, q: float, kernel) -> np.ndarray:
    """The peaking response as the quiet spectrum sees it (its power smeared by ``kernel``,
    offsets and weights from :func:`_smearing_kernel`), dB."""
    offsets, weights = kernel
    f = np.abs(np.asarray(f_hz)[:, None] + offsets[None, :]) + 1e-9
    return 10.0 * np.log10(_peaking_power(f, f0, gain, q) @ weights)


def _fit(grid_hz, quiet: _Quiet, excess, i: int) -> tuple[float, float, float, float] | None:
    """Fit the smeared peaking response + a level tilt near grid point ``i``; (f0, gain, Q, misfit).

    The first fit reads ``quiet.fit_widths`` half-gain widths of the first guess (the excess's half-height
    run); its span is then set again from the fitted Q and the fit repeated from its result
    (``quiet.fit_repeats`` times): the span follows the peak rather than the guess."""
    centre, gain0 = float(grid_hz[i]), float(excess[i])
    half = excess >= gain0 / 2.0
    lo, hi = i, i
    while lo > 0 and half[lo - 1]:
        lo -= 1
    while hi < half.size - 1 and half[hi + 1]:
        hi += 1
    q0 = float(np.clip(centre / max(grid_hz[hi] - grid_hz[lo], centre / MAX_Q), 0.5, MAX_Q))
    fit = _fit_span(grid_hz, quiet, centre, q0, [centre, max(gain0, 1.0), q0, float(quiet.level_db[i] - gain0), 0.0])
    for _ in range(quiet.fit_repeats):
        if fit is None:
            return None
        better = _fit_span(grid_hz, quiet, centre, float(np.clip(fit[0][2], 0.5, MAX_Q)), fit[0])
        if better is None:
            break
        fit = better
    return None if fit is None else (*(float(v) for v in fit[0][:3]), fit[1])


def _fit_span(grid_hz, quiet: _Quiet, centre: float, q_span: float, start) -> tuple[np.ndarray, float] | None:
    """One least-squares fit (see :func:`_fit`) over ``quiet.fit_widths`` half-gain widths (of Q ``q_span``)
    either side of ``centre``, from ``start`` (f0, gain, Q, level, tilt); the parameters and the
    RMS misfit, dB, or None when the span holds under 7 grid points."""
    from scipy.optimize import least_squares

    reach = max(quiet.fit_widths / q_span, quiet.min_span_octaves)
    span = (centre * 2.0 ** -reach, centre * 2.0 ** reach)
    inside = (grid_hz >= span[0]) & (grid_hz <= span[1])
    if np.count_nonzero(inside) < 7:
        return None
    f_fit, target = grid_hz[inside], quiet.level_db[inside]
    bounds = ([span[0], 0.0, 0.3, -400.0, -60.0], [span[1], 40.0, 200.0, 100.0, 60.0])

    def misfit(p):
        return _smeared_db(f_fit, p[0], p[1], p[2], quiet.kernel) + p[3] + p[4] * np.log2(f_fit / centre) - target

    try:
        result = least_squares(misfit, np.clip(start, *bounds), bounds=bounds)
    except ValueError:
        return None
    return result.x, float(np.sqrt(np.mean(result.fun**2)))


def _standing_share(grid_hz, quiet: _Quiet, f0: float, gain: float, q: float) -> float:
    """Share of the take's halves where the peak stands at least half as high as the fit says.

    In each half, the fitted response as the quiet spectrum sees it (smeared by ``kernel``)
    is scaled to that half's spectrum by linear least squares over the fit's span (``fit_widths``
    half-gain widths either side; a level and a tilt free too): the scale is the height the
    half shows, read from every point of the span rather than from three, so a single noisy
    point neither makes nor breaks it."""
    inside = _within_widths(grid_hz, f0, q, quiet.fit_widths)
    scales = _heights(grid_hz[inside], f0, gain, q, quiet.kernel, [h[inside] for h in quiet.halves_db])
    return float(np.mean([scale >= STANDING_SCALE for scale in scales]))


def _within_widths(grid_hz, f0: float, q: float, widths: float) -> np.ndarray:
    """The grid points within ``widths`` half-gain widths (``1 / q`` octave each) either side of ``f0``."""
    return (grid_hz >= f0 * 2.0 ** (-widths / q)) & (grid_hz <= f0 * 2.0 ** (widths / q))


def _heights(f, f0: float, gain: float, q: float, kernel, levels) -> list[float]:
    """How many times the peaking response (``f0``, ``gain``, ``q``, as the quiet spectrum sees it:
    smeared by ``kernel``) each of ``levels`` (dB at ``f``) shows: its least-squares scale, with a
    level and a tilt free too."""
    columns = np.stack((_smeared_db(f, f0, gain, q, kernel), np.ones(f.size), np.log2(f / f0)), axis=1)
    return [float(np.linalg.lstsq(columns, level, rcond=None)[0][0]) for level in levels]


def _candidates(quiet: _Quiet, excess: np.ndarray, inside: np.ndarray) -> list[tuple[float, int]]:
    """Local maxima of the quiet spectrum's ``excess`` (:func:`_excess`) where ``inside``: (excess
    dB, grid index), strongest first."""
    if quiet.frames < MIN_FRAMES:
        return []
    peak = np.zeros(excess.size, bool)
    peak[1:-1] = (excess[1:-1] >= excess[:-2]) & (excess[1:-1] > excess[2:]) & (excess[1:-1] >= CANDIDATE_DB)
    peak &= inside
    found = [(float(excess[i]), int(i)) for i in np.flatnonzero(peak)]
    return sorted(found, key=lambda c: -c[0])[:MAX_CANDIDATES]


def _peaks(grid_hz, quiet: _Quiet, inside: np.ndarray, min_width_hz: float = 0.0,
           ringing: bool = False) -> list[tuple[float, ResonancePeak]]:
    """Accepted peaks of the quiet spectrum where ``inside`` (see the module's stages 3-5), at
    least ``min_width_hz`` wide between the half-gain points, with their RMS misfits, dB. With
    ``ringing`` (the quiet moments), a peak under DECAY_HIGH_TOP_HZ may stand up to UNRUNG_TOP_DB:
    its gain may be the ring's, and stage 8 reads it again (:func:`_read_from_ring`)."""
    accepted, excess = [], _excess(quiet.level_db)
    for _, i in _candidates(quiet, excess, inside):
        fit = _fit(grid_hz, quiet, excess, i)
        if fit is None:
            continue
        f0, gain, q, misfit = fit
        top_db = UNRUNG_TOP_DB if ringing and f0 < DECAY_HIGH_TOP_HZ else MAX_GAIN_DB
        if not MIN_GAIN_DB <= gain <= top_db or not MIN_Q <= q <= MAX_Q or misfit > MAX_MISFIT * gain \
                or f0 / q < min_width_hz:
            continue
        share = _standing_share(grid_hz, quiet, f0, gain, q)
        if share >= PERSISTENT_SHARE:
            accepted.append((misfit, ResonancePeak(f0, q, gain, share)))
    return accepted


def _within_band(f_hz: float, peak: ResonancePeak) -> bool:
    """Whether ``f_hz`` lies within ``peak``'s half-gain band, counted as the fits' spans count it
    (``1 / q`` octave wide, about its centre)."""
    return abs(math.log2(f_hz / peak.frequency_hz)) <= 0.5 / peak.q


def _read_from_ring(source: TakeSource, pauses, spans, grid_hz, peak: ResonancePeak) -> ResonancePeak:
    """A low, narrow peak read on the quiet moments with its centre and poles' Q from the ring
    after words (:func:`_decay_ring`) and its gain where undoing it leaves the quiet moments
    flat (:func:`_unrung_gain`; see the module's stage 8), else as it is. The cookbook
    prototype's poles (its denominator ``s^2 + s w0 / (A Q) + w0^2``) have the Q ``A Q``: the
    peak's Q is the poles' over ``A``."""
    pole_q = 10.0 ** (peak.gain_db / 40.0) * peak.q
    least_pole_q = DECAY_MIN_POLE_Q if peak.frequency_hz < DECAY_TOP_HZ else DECAY_HIGH_MIN_POLE_Q
    if peak.frequency_hz >= DECAY_HIGH_TOP_HZ or pole_q < least_pole_q:
        return peak
    ring = _decay_ring(source, pauses, peak.frequency_hz)
    if ring is None or not math.isfinite(ring.hz) or abs(math.log2(ring.hz / peak.frequency_hz)) > 1 / 24:
        return peak  # no ring, or another peak's (farther than stage 7's one peak)
    gain = _least_ring_gain(source, spans, ring)
    gain = _unrung_gain(source, spans, grid_hz, ring) if gain is None else gain
    gain = peak.gain_db if gain is None else gain
    q = ring.pole_q / 10.0 ** (gain / 40.0)
    return ResonancePeak(ring.hz, q, gain, peak.persistence) if MIN_Q <= q <= MAX_Q else peak


def _unrung_gain(source, spans, grid_hz, ring: _Ring) -> float | None:
    """The gain (0 to UNRUNG_TOP_DB) whose inverse, applied to the take, leaves no peak at the ring's
    centre in the quiet moments (:func:`_residual_height` crosses zero), dB; None if none does."""
    from scipy.optimize import brentq

    grid = FrameGrid.at(source.fs, FRAME_S, FRAME_S / 4.0, padded=True)  # as _quiet_spectrum's
    kernel = _smearing_kernel(grid, np.array([stop - start for start, stop in spans]))

    def height(gain):
        return _residual_height(source, spans, grid_hz, ring.hz, ring.pole_q, gain, kernel)

    low, high = height(0.0), height(UNRUNG_TOP_DB)
    if not (low > 0.0 > high):
        return None
    return float(brentq(height, 0.0, UNRUNG_TOP_DB, xtol=UNRUNG_XTOL_DB))


def _ring_left_db(source, spans, ring: _Ring, gain_db: float) -> float:
    """The power (dB) the quiet moments (``spans``) hold in the ring's band (:func:`_ring_band`)
    after the take has been passed through the inverse of a peaking response of ``gain_db`` whose
    poles are the ring's."""
    cut = _peaking_sos(ring.hz, -gain_db, ring.pole_q / 10.0 ** (gain_db / 40.0), source.fs)
    pieces = _cut_spans(_filtered(source, np.concatenate((cut, _ring_band(ring.hz, source.fs)))), spans)
    energy, count = sum(float(np.sum(np.square(p, dtype=np.float64))) for p in pieces), sum(p.size for p in pieces)
    return float(_level_db(np.array(energy / max(count, 1))))


def _least_ring_gain(source, spans, ring: _Ring) -> float | None:
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


@take_finder
def find_resonance(x, fs: float | None = None) -> ResonanceReport:
    """Find one narrow, persistent spectral peak in a take: frequency, Q, height, a notch.

    Parameters
    ----------
    x : array_like or TakeSource
        Audio, ``(frames, channels)`` or 1-D, or a
        :class:`~emulate.voice.takes.TakeSource` (a file read in blocks).
    fs : float
        Sample rate in Hz, 16000 to 384000 (for an array).

    Returns
    -------
    ResonanceReport
        ``found`` is False (with a ``reason``) for a take under 2 s or without an
        accepted peak.

    Raises
    ------
    BadValueError
        Bad audio or rate.

    Example
    -------
    >>> from scipy.signal import lfilter
    >>> x = np.random.default_rng(0).standard_normal(48000 * 8) * 0.05
    >>> w0, q, a = 2 * np.pi * 1000 / 48000, 8.0, 10 ** (12 / 40)
    >>> al = np.sin(w0) / (2 * q)
    >>> b = [1 + al * a, -2 * np.cos(w0), 1 - al * a]
    >>> r = find_resonance(lfilter(b, [1 + al / a, -2 * np.cos(w0), 1 - al / a], x), 48000)
    >>> r.found, abs(r.peak.frequency_hz / 1000 - 1) < 0.02
    (True, True)
    """
    source = TakeSource.of(x, fs)
    spans, pauses = _quiet_spans(source)  # reads the whole take first: a damaged file is refused, short or not
    quiet, lengths = _quiet_moments(source, spans)
    if source.seconds < MIN_SECONDS:
        return ResonanceReport(False, f"too short: {source.seconds:.3f} s, need at least {MIN_SECONDS:g} s",
                               source.seconds, None, (), None)
    grid_hz = _grid_hz(source.fs)
    accepted = []
    spectrum = _quiet_spectrum(quiet, lengths, source.fs, grid_hz, FRAME_S)
    long = _long_spectrum(source, grid_hz, spectrum)
    low = grid_hz[: long.level_db.size]
    longer = np.zeros(grid_hz.size, bool)
    longer[: low.size] = (low < LOW_RANGE_HZ) & (long.seconds > spectrum.seconds)
    mean = _excess(spectrum.level_db)
    broad = _peaks(grid_hz, spectrum, longer, BROAD_WIDTHS / FRAME_S, ringing=True)  # stage 6: on the quiet moments
    long_peaks = [(misfit, peak) for misfit, peak in _peaks(low, long, longer[: low.size], LONG_MIN_WIDTH / LONG_FRAME_S)
                  if not any(_within_band(peak.frequency_hz, wide) for _, wide in broad)]
    fitted = [(misfit, peak, True) for misfit, peak in _peaks(grid_hz, spectrum, ~longer, ringing=True) + broad] + \
        [(misfit, peak, False) for misfit, peak in long_peaks]
    for _, peak, short in sorted(fitted, key=lambda fitted: fitted[0]):  # of one peak's fits, the best
        if all(abs(math.log2(peak.frequency_hz / p.frequency_hz)) > 1 / 24 for p in accepted):
            peak = _read_from_ring(source, pauses, spans, grid_hz, peak) if short else peak
            if peak.gain_db <= MAX_GAIN_DB:  # a ringing peak's gain read again (stage 8)
                accepted.append(peak)
    if not accepted:
        return ResonanceReport(False, "no narrow persistent peak over the neighbourhood", source.seconds,
                               None, (), None, grid_hz, mean)
    accepted.sort(key=lambda p: -p.gain_db)
    peak = accepted[0]
    notch = SuggestedNotch.of("resonance", peak.frequency_hz, peak.q, peak.gain_db)
    return ResonanceReport(True, "", source.seconds, peak, tuple(accepted[1:]), notch, grid_hz, mean)


#: Pooling sets aside a take whose peak lies this far from the others', octaves (a semitone).
OUTLIER_OCTAVES = 1.0 / 12.0


def combine_resonance(reports, labels=None) -> ResonanceReport:
    """Pool the resonance found in several takes (one room, one microphone) into one report.

    Exact repeats (the same samples, by ``digest``; reports without one, by their figures)
    are left out and, with three or more takes that found a peak, one whose
    peak lies more than a semitone from the others' is set aside
    (:func:`emulate.voice.pooling.select_takes`; ``set_aside`` says which and why). The
    resonance is found when at least half the pooled takes found it; its frequency is the
    duration-weighted geometric mean of theirs, its Q and gain the duration-weighted means,
    its persistence the share of pooled takes that found it.

    Parameters
    ----------
    reports : iterable of ResonanceReport
        One or more reports of :func:`find_resonance`.
    labels : sequence of str, optional
        A name per report for ``set_aside`` (default "take 1", "take 2", ...).

    Returns
    -------
    ResonanceReport
        Without the spectra (``grid_hz`` and ``excess_db`` are None).

    Raises
    ------
    BadValueError
        No reports, something other than a ResonanceReport, or labels that do not match.

    Example
    -------
    >>> peak = ResonancePeak(1000.0, 8.0, 12.0, 1.0)
    >>> a = ResonanceReport(True, "", 10.0, peak, (), None)
    >>> b = ResonanceReport(True, "", 12.0, ResonancePeak(1010.0, 8.0, 12.0, 1.0), (), None)
    >>> r = combine_resonance([a, b, a])
    >>> round(r.peak.frequency_hz), r.set_aside
    (1005, ('take 3: an exact repeat of an earlier take',))
    """
    reports = list(reports)
    if not reports or not all(isinstance(r, ResonanceReport) for r in reports):
        raise BadValueError(f"reports = {reports!r:.80} is not allowed; need one or more ResonanceReport")
    labels = label_takes(len(reports), labels)
    keys = [r.digest or (r.seconds, r.peak, r.others) for r in reports]
    peaks = [r.peak.frequency_hz if r.found else float("nan") for r in reports]
    kept, aside = select_takes(keys, peaks, labels, OUTLIER_OCTAVES)
    pool = [reports[i] for i in kept]
    seconds = sum(r.seconds for r in pool)
    found = [r for r in pool if r.found]
    if not found or len(found) < len(pool) / 2.0:
        return ResonanceReport(False, f"a resonance in {len(found)} of {len(pool)} takes (need half)", seconds,
                               None, (), None, set_aside=tuple(aside))
    w = np.array([r.seconds for r in found])
    f0 = float(2.0 ** np.average([math.log2(r.peak.frequency_hz) for r in found], weights=w))
    q = float(np.average([r.peak.q for r in found], weights=w))
    gain = float(np.average([r.peak.gain_db for r in found], weights=w))
    peak = ResonancePeak(f0, q, gain, len(found) / len(pool))
    return ResonanceReport(True, "", seconds, peak, (), SuggestedNotch.of("resonance", f0, q, gain),
                           set_aside=tuple(aside))
