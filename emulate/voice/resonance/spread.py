"""How closely a take's quiet material can pin a resonance's reading: the least spread of its
centre and Q (part of the resonance finder's stage 7, its report; the stages are listed in
:mod:`emulate.voice.resonance`).

A reading rests on the room's noise the resonance shapes, and a few seconds of noise scatter.
Over ``T`` seconds a Gaussian stationary noise holds about ``T df`` independent periodogram
values in a frequency cell ``df``, each spread exponentially about the spectrum ``S``; so the
Fisher information of the spectrum's parameters is, in Whittle's approximation to the likelihood
(e.g. Percival & Walden, *Spectral Analysis for Physical Applications*, from memory),
``I_ij = sum_k T_k df_k (d ln S(f_k) / d theta_i) (d ln S(f_k) / d theta_j)``, and no unbiased
reading of ``theta_i`` scatters less than ``sqrt((I^-1)_ii)`` (the Cramer-Rao bound). Here ``S``
is the fitted peaking response as the spectrum sees it (smeared by its frames), with a level and
a tilt free too (five parameters: centre, gain, Q, level, tilt), over the fit's own span; ``T_k``
the time the spectrum averages at each grid point (the quiet moments', or the long frames' per
point, stage 6) and ``df_k`` the grid cell. The bound is optimistic where the quiet moments come
in short pieces (the pieces' edges lose more than the smearing says), and it says nothing of
bias; it is what the take allows, not what the finder achieves.

A low peak read from its ring after the words (stage 8) rests on other information (the words
excite the poles far more than the room's noise does), so the quiet spectrum's bound does not
hold it: its centre's spread is the scatter of the decays' zero crossings and its Q's that of
their slopes (the standard error of a median, :func:`emulate.voice.resonance.ring.median_spread`),
the Q's widened by the gain's least spread on the quiet spectrum (the Q is the poles' over
``A = 10**(gain/40)``; the gain read from the inverse cut has no spread of its own).

Measured on the controlled grid (``tests/resonance_grid.py``, ``bench_finders.py`` prints it):
the readings' errors over the spread stated, RMS, frequency and Q: on the quiet spectrum 1.0-1.3
from 100 Hz to 4 kHz (the finder reads near the bound there), 3.4 at 8 kHz (errors 0.9 % and 8 %
at most, on average 0.2 % and 2.5 % low: a lean the bound does not count, likely the analog
prototype fitted to the bilinear biquad's shape near Nyquist; not checked further); from the
ring 1.5 and 1.3 (44 readings; without the gain's part the Q's was 2.6: a gain read 4 dB high
puts the Q 21 % low). The grid's two misses on one take lie 1.3 and 2.2 stated spreads off.

What it takes to aim a notch: the finder is held to a centre within AIM_FREQ_REL and a Q within
AIM_Q_REL of the resonance's. A reading that the take pins to no better than half of either
(AIM_SPREADS standard deviations: within the aim 19 times in 20) says how many takes like it,
pooled, would (:func:`more_takes_to_aim`): pooling ``n`` takes of equal length narrows the
spread by ``sqrt(n)``, so ``n = ceil(k s^2 / (aim / 2)^2)`` over both figures for a reading of
``k`` takes of spread ``s``. On the grid 26 of 288 single takes ask for more; read as asked
(``tests/resonance_grid.read_as_advised``: the further takes pooled, asked again, at most 8),
46 more takes in all, at most 7 a case, every one of the 26 met the aim, the two single-take
misses among them (+2.2 % in frequency with 6 takes +1.6 %; Q +51 % with 3 takes +16 %).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from emulate.voice.resonance.fit import ResonancePeak, smeared_db, span_rule
from emulate.voice.resonance.quiet import GRID_PER_OCTAVE, QuietSpectrum

__all__ = ["AIM_FREQ_REL", "AIM_Q_REL", "least_spread", "more_takes_to_aim", "with_stated_spread"]

#: The aim a reading is held to (the resonance finder's targets: centre within 2 %, Q within 30 %) ...
AIM_FREQ_REL = 0.02
AIM_Q_REL = 0.30
#: ... at this many standard deviations (a normal scatter stays within two 19 times in 20).
AIM_SPREADS = 2.0
#: Relative step of the numerical derivatives (central differences) of the centre and Q; the gain's
#: step is this many dB.
STEP = 1e-4


def least_spread(grid_hz, quiet: QuietSpectrum, peak: ResonancePeak) -> tuple[float, float, float]:
    """The least spread (one standard deviation) of ``peak``'s centre and Q (relative) and of its
    gain (dB) that ``quiet``'s material allows (this module's docstring); nan where the span holds
    too little to say.

    Example
    -------
    >>> from emulate.voice.resonance.quiet import spectrum_grid_hz
    >>> grid, unsmeared = spectrum_grid_hz(48000), (np.zeros(1), np.ones(1))
    >>> def spectrum(seconds):
    ...     return QuietSpectrum(0.2, unsmeared, np.zeros(grid.size), (), 100, seconds)
    >>> peak = ResonancePeak(1000.0, 8.0, 12.0, 1.0)
    >>> f4, q4, gain4 = least_spread(grid, spectrum(4.0), peak)
    >>> f16, q16, gain16 = least_spread(grid, spectrum(16.0), peak)
    >>> round(f4 / f16, 6), round(q4 / q16, 6), round(gain4 / gain16, 6)  # four times the time: half the spread
    (2.0, 2.0, 2.0)
    """
    f0, q = peak.frequency_hz, peak.q
    inside = np.abs(np.log2(grid_hz / f0)) <= span_rule(quiet).reach(q)
    f = grid_hz[inside]
    seconds = np.broadcast_to(np.asarray(quiet.seconds, dtype=np.float64), grid_hz.shape)[inside]
    cells = seconds * f * (2.0 ** (0.5 / GRID_PER_OCTAVE) - 2.0 ** (-0.5 / GRID_PER_OCTAVE))
    if f.size < 7 or not np.all(np.isfinite(cells)) or cells.sum() <= 0.0:
        return math.nan, math.nan, math.nan
    jacobian = np.stack([*_peak_derivatives(f, peak, quiet.kernel), np.ones(f.size), np.log2(f / f0)])
    information = (jacobian * cells) @ jacobian.T
    try:
        bound = np.linalg.inv(information)
    except np.linalg.LinAlgError:
        return math.nan, math.nan, math.nan
    variances = np.diag(bound)[:3]
    if not np.all(variances > 0.0):
        return math.nan, math.nan, math.nan
    spread_f, spread_gain, spread_q = np.sqrt(variances)
    return float(spread_f / f0), float(spread_q / q), float(spread_gain)


def _peak_derivatives(f, peak: ResonancePeak, kernel) -> list[np.ndarray]:
    """``d ln S / d theta`` at ``f`` for the centre, gain and Q (central differences)."""
    theta = np.array([peak.frequency_hz, peak.gain_db, peak.q])
    steps = np.array([STEP * peak.frequency_hz, STEP, STEP * peak.q])
    rows = []
    for i, step in enumerate(steps):
        up, down = theta.copy(), theta.copy()
        up[i] += step
        down[i] -= step
        rows.append((smeared_db(f, *up, kernel) - smeared_db(f, *down, kernel)) * (math.log(10.0) / 10.0) / (2 * step))
    return rows


def with_stated_spread(grid_hz, quiet: QuietSpectrum, peak: ResonancePeak) -> ResonancePeak:
    """``peak`` with the spreads its report states: read on ``quiet``, its :func:`least_spread`; read
    from its ring (its spreads the decays' scatter, :func:`emulate.voice.resonance.ring.median_spread`),
    its Q's spread widened by the gain's least spread on ``quiet``: the Q is the poles' Q over
    ``A = 10**(gain/40)``, so a gain off by ``d`` dB puts it off by ``ln(10) d / 40`` relative."""
    spread_f, spread_q, spread_gain = least_spread(grid_hz, quiet, peak)
    if peak.from_ring:
        return dataclasses.replace(peak, q_spread=math.hypot(peak.q_spread, math.log(10.0) / 40.0 * spread_gain))
    return dataclasses.replace(peak, frequency_spread=spread_f, q_spread=spread_q)


def more_takes_to_aim(peak: ResonancePeak, takes: int = 1) -> int:
    """How many more takes like these a reading of ``takes`` pooled takes asks for to pin ``peak``
    within the aim (AIM_FREQ_REL, AIM_Q_REL) at AIM_SPREADS standard deviations; 0 when it is
    pinned already or its spreads are not known.

    Example
    -------
    >>> more_takes_to_aim(ResonancePeak(100.0, 2.0, 6.0, 1.0, 0.017, 0.19))  # 1.7 %: 2.9 takes' worth
    2
    >>> more_takes_to_aim(ResonancePeak(100.0, 2.0, 6.0, 1.0, 0.005, 0.10))
    0
    """
    ratios = (peak.frequency_spread / AIM_FREQ_REL, peak.q_spread / AIM_Q_REL)
    if not all(math.isfinite(r) for r in ratios):
        return 0
    needed = math.ceil(takes * (AIM_SPREADS * max(ratios)) ** 2 - 1e-9)
    return max(0, needed - takes)
