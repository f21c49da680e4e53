"""Conjugate pairing of the roots of a real polynomial: the one routine the package uses.

A real network's zeros and poles (and a real digital filter's) come in exact
conjugate pairs and real roots.  Numerical root finders break that symmetry in
two ways:

* round-off: a pair comes out as ``a + j b`` and ``a - j b'`` with ``b != b'``,
  or a real root with a tiny imaginary part;
* clusters: a root of multiplicity m moves by about eps**(1/m) of its size
  (Wilkinson, *Rounding Errors in Algebraic Processes*, 1963), so a double real
  root (the mixed twin-T at mix 0.5, for example) splits into two real roots or
  into a complex pair with an imaginary part near 1e-8 of its size, and the two
  halves need not mirror each other.

:func:`pair_conjugates` snaps roots whose imaginary part is round-off to the
real axis, pairs the rest with their nearest conjugates (globally nearest
first, so a cluster of nearly equal roots pairs up correctly), averages each
pair into an exact conjugate pair, and makes a nearly real root without a
partner real.  Only a clearly complex root without a conjugate is refused.

Only numpy is imported (the render path uses this module).
"""

from __future__ import annotations

import numpy as np

from emulate.errors import BadValueError

__all__ = ["pair_conjugates", "upper_and_real"]

# |imag| below this share of a root's size is round-off: the root is real.
ROUND_OFF_RTOL = 1e-9
# Two roots within this share of their size are a conjugate pair; an unpaired
# root whose imaginary part is below it is a split real cluster.  A cluster of
# multiplicity 3 splits by about eps**(1/3) = 6e-6 (Wilkinson); the response of a
# pair moved this far changes by about its square, 1e-8 relative.
CLUSTER_RTOL = 1e-4


def _sizes(roots: np.ndarray) -> np.ndarray:
    """Each root's size for relative tolerances, floored at 1e-2 of the largest (roots at 0)."""
    largest = np.max(np.abs(roots), initial=0.0)
    return np.maximum(np.abs(roots), max(1e-2 * largest, 1e-300))


def pair_conjugates(roots) -> np.ndarray:
    """The roots of a real polynomial with exact conjugate pairs, sorted.

    Parameters
    ----------
    roots : array_like of complex
        Roots as a root finder returned them (any order, round-off included).

    Returns
    -------
    ndarray of complex
        Same count: real roots with zero imaginary part and exact pairs
        ``(r, conj(r))``, in ``numpy.sort_complex`` order.

    Raises
    ------
    BadValueError
        If a root with an imaginary part above 1e-4 of its size has no
        conjugate within 1e-4 of its size.

    Example
    -------
    >>> pair_conjugates([-1 + 2e-8j, -1.0, 2j, -2j + 1e-12])
    array([-1.e+00+0.j, -1.e+00+0.j,  5.e-13-2.j,  5.e-13+2.j])
    """
    roots = np.atleast_1d(np.asarray(roots, complex)).ravel()
    size = _sizes(roots)
    real_now = np.abs(roots.imag) <= ROUND_OFF_RTOL * size
    upper = list(np.flatnonzero(~real_now & (roots.imag > 0)))
    lower = list(np.flatnonzero(~real_now & (roots.imag < 0)))
    pairs = []
    while upper and lower:
        distance = np.abs(roots[upper][:, None] - np.conj(roots[lower])[None, :])
        i, j = np.unravel_index(int(np.argmin(distance)), distance.shape)
        u, l = upper[i], lower[j]
        if distance[i, j] > CLUSTER_RTOL * max(size[u], size[l]):
            break
        mean = (roots[u] + np.conj(roots[l])) / 2
        pairs += [mean, np.conj(mean)]
        upper.pop(i)
        lower.pop(j)
    unpaired = np.array(upper + lower, int)
    if np.any(np.abs(roots[unpaired].imag) > CLUSTER_RTOL * size[unpaired]):
        lone = roots[unpaired][np.abs(roots[unpaired].imag) > CLUSTER_RTOL * size[unpaired]]
        raise BadValueError(f"root {lone[0]} has no complex conjugate; allowed: real roots and conjugate pairs")
    real = np.concatenate([roots[real_now].real, roots[unpaired].real])
    return np.sort_complex(np.concatenate([real.astype(complex), np.array(pairs, complex)]))


def upper_and_real(roots) -> np.ndarray:
    """One root per conjugate pair (imag > 0), by real part then |imag|, then the real roots by value.

    Pairs the roots with :func:`pair_conjugates` first.

    Raises
    ------
    BadValueError
        As :func:`pair_conjugates`.

    Example
    -------
    >>> upper_and_real([0.5, 0.1 - 0.2j, 0.1 + 0.2j])
    array([0.1+0.2j, 0.5+0.j ])
    """
    tidy = pair_conjugates(roots)
    upper = tidy[tidy.imag > 0]
    upper = upper[np.lexsort((np.abs(upper.imag), upper.real))]
    return np.concatenate([upper, np.sort(tidy[tidy.imag == 0].real).astype(complex)])
