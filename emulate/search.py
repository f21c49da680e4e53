"""The package's one bounded minimum search: golden-section, vectorised over brackets.

Used wherever a smooth or V-shaped minimum is refined inside a known bracket: the
notch of every Monte Carlo build at once (:func:`emulate.analog.response.find_notch`,
on log frequency) and the null of one digital or analog design
(:func:`emulate.dsp.digital.analog_null_hz`).  numpy only, so neither the render path
nor ``response`` loads scipy.optimize for it.
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["golden_section_min"]

# (3 - sqrt 5) / 2: the share of a bracket that lies between an end and the nearer interior point
_GOLDEN = (3.0 - math.sqrt(5.0)) / 2.0


def golden_section_min(fun, lo, hi, xtol: float):
    """Minimiser of a unimodal ``fun`` in each bracket [lo, hi], to within ``xtol``.

    Keeps two interior points per bracket and drops the side beyond the worse one,
    shrinking every bracket by 0.618 per step with one new evaluation (Kiefer 1953;
    Press et al., Numerical Recipes, 3rd ed., sec. 10.2).  All brackets step together:
    ``fun`` is called with a 1-D array (one point per bracket) and returns an array of
    the same shape.  The number of steps is fixed by the widest bracket, so the search
    ends even when ``xtol`` lies below floating-point resolution.  A monotonic ``fun``
    gives the lower end of its bracket.  Does not check that ``fun`` is unimodal.

    Parameters
    ----------
    fun : callable
        ``fun(x) -> ndarray``, vectorised over a 1-D array of points.
    lo, hi : float or array_like
        The brackets, ``lo < hi`` (broadcast together).
    xtol : float
        Width below which a bracket is done, in the units of ``x`` (> 0).

    Returns
    -------
    float or ndarray
        The centre of each final bracket (a float when ``lo`` and ``hi`` are scalars).

    Example
    -------
    >>> round(golden_section_min(lambda x: (x - 2.0) ** 2, 0.0, 5.0, 1e-10), 9)
    2.0
    >>> golden_section_min(lambda x: abs(x - np.array([1.0, 3.0])), [0.0, 2.0], [2.0, 5.0], 1e-9).round(6).tolist()
    [1.0, 3.0]
    """
    scalar = np.ndim(lo) == 0 and np.ndim(hi) == 0
    lo, hi = (np.array(v, dtype=float) for v in np.broadcast_arrays(np.atleast_1d(lo), np.atleast_1d(hi)))
    width = float(np.max(hi - lo, initial=0.0))
    steps = max(0, math.ceil(math.log(xtol / width) / math.log(1.0 - _GOLDEN))) if width > xtol else 0
    a, b = lo + _GOLDEN * (hi - lo), hi - _GOLDEN * (hi - lo)
    fa, fb = np.asarray(fun(a), float), np.asarray(fun(b), float)
    for _ in range(steps):
        left = fa <= fb  # the minimum lies in [lo, b]: b becomes hi, a becomes b
        hi, lo = np.where(left, b, hi), np.where(left, lo, a)
        a, b = np.where(left, lo + _GOLDEN * (hi - lo), b), np.where(left, a, hi - _GOLDEN * (hi - lo))
        probe = np.asarray(fun(np.where(left, a, b)), float)
        fa, fb = np.where(left, probe, fb), np.where(left, fa, probe)
    centre = (lo + hi) / 2.0
    return float(centre[0]) if scalar else centre
