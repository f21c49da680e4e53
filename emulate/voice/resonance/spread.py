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
bias; it is what the take allows, not what the finder achieves. Where a low peak is read from
its ring (stage 8) the bound is still the quiet material's, at the parameters read.

Measured on the controlled grid (``tests/resonance_grid.py``), see the benchmark's table
(``tests/benchmarks/bench_finders.py``).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np

from emulate.voice.resonance.fit import ResonancePeak, smeared_db, span_rule
from emulate.voice.resonance.quiet import GRID_PER_OCTAVE, QuietSpectrum

__all__ = ["least_spread", "with_least_spread"]

#: Relative step of the numerical derivatives (central differences) of the centre and Q; the gain's
#: step is this many dB.
STEP = 1e-4


def least_spread(grid_hz, quiet: QuietSpectrum, peak: ResonancePeak) -> tuple[float, float]:
    """The least relative spread (one standard deviation) of ``peak``'s centre and Q that ``quiet``'s
    material allows (this module's docstring); nan where the span holds too little to say.

    Example
    -------
    >>> from emulate.voice.resonance.quiet import spectrum_grid_hz
    >>> grid, unsmeared = spectrum_grid_hz(48000), (np.zeros(1), np.ones(1))
    >>> def spectrum(seconds):
    ...     return QuietSpectrum(0.2, unsmeared, np.zeros(grid.size), (), 100, seconds)
    >>> peak = ResonancePeak(1000.0, 8.0, 12.0, 1.0)
    >>> f4, q4 = least_spread(grid, spectrum(4.0), peak)
    >>> f16, q16 = least_spread(grid, spectrum(16.0), peak)
    >>> round(f4 / f16, 6), round(q4 / q16, 6)  # four times the time: half the spread
    (2.0, 2.0)
    """
    f0, q = peak.frequency_hz, peak.q
    inside = np.abs(np.log2(grid_hz / f0)) <= span_rule(quiet).reach(q)
    f = grid_hz[inside]
    seconds = np.broadcast_to(np.asarray(quiet.seconds, dtype=np.float64), grid_hz.shape)[inside]
    cells = seconds * f * (2.0 ** (0.5 / GRID_PER_OCTAVE) - 2.0 ** (-0.5 / GRID_PER_OCTAVE))
    if f.size < 7 or not np.all(np.isfinite(cells)) or cells.sum() <= 0.0:
        return math.nan, math.nan
    jacobian = np.stack([*_peak_derivatives(f, peak, quiet.kernel), np.ones(f.size), np.log2(f / f0)])
    information = (jacobian * cells) @ jacobian.T
    try:
        bound = np.linalg.inv(information)
    except np.linalg.LinAlgError:
        return math.nan, math.nan
    spread_f, spread_q = bound[0, 0], bound[2, 2]
    if not (spread_f > 0.0 and spread_q > 0.0):
        return math.nan, math.nan
    return float(math.sqrt(spread_f) / f0), float(math.sqrt(spread_q) / q)


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


def with_least_spread(grid_hz, quiet: QuietSpectrum, peak: ResonancePeak) -> ResonancePeak:
    """``peak`` with its :func:`least_spread` filled in."""
    spread_f, spread_q = least_spread(grid_hz, quiet, peak)
    return dataclasses.replace(peak, frequency_spread=spread_f, q_spread=spread_q)
