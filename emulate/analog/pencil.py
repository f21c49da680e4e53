"""Finite eigenvalues of a matrix pencil ``a v = lambda b v`` with numpy alone.

A circuit's poles and zeros are the finite eigenvalues of pencils whose ``b``
(the capacitances) is singular: the nodes without a capacitor, the source and
follower branches are algebraic equations, and each one is an infinite
eigenvalue. The reference route is the QZ algorithm (``scipy.linalg.eig(a, b)``),
but importing scipy.linalg costs about 0.16-0.3 s, a large share of a render's
fixed cost. Here the infinite eigenvalues are deflated by orthogonal
transformations instead, and the finite ones are the eigenvalues of a smaller
standard matrix (``numpy.linalg.eigvals``):

1. equilibrate: scale rows and columns by powers of two (exact; the eigenvalues
   do not move) so that rank decisions compare like with like;
2. rotate by the singular value decomposition of ``b``, ``b = U S V^T``: in the
   coordinates ``V^T x`` and the rows ``U^T``, ``b`` is ``diag(S)``, and the rows
   where ``S`` is zero are constraints ``c x = 0`` that hold for every finite
   eigenvector;
3. restrict the pencil to the null space of the constraints (an orthonormal
   basis from their singular value decomposition): a pencil ``n - rank(b)``
   smaller with the same finite eigenvalues; repeat from 2 until its ``b`` is
   invertible (several rounds when infinite eigenvalues come in chains: a zero
   at infinity behind an op-amp's roll-off);
4. the finite eigenvalues are those of ``b^-1 a``.

Every step is backward stable (orthogonal transformations and one solve with a
well-conditioned ``b``) as long as each rank decision is clear. Where one is
not, a singular value in the grey zone between ``RANK_DROP_RTOL`` and
``RANK_KEEP_RTOL`` of the largest, or constraints that are nearly dependent
(a pencil close to singular), the routine says so (:class:`UntrustedPencil`) and
the caller falls back to QZ (``tests/test_pencil.py`` shows both cases and
checks the result against ``scipy.linalg.eigvals(a, b)`` over the random
networks of ``tests/test_random_networks.py``).

Only numpy is imported.
"""

from __future__ import annotations

import numpy as np

__all__ = ["finite_eigenvalues", "UntrustedPencil", "RANK_DROP_RTOL", "RANK_KEEP_RTOL", "SOLVE_RTOL", "INFINITE_ABOVE"]

# A singular value at or below this share of the largest is a zero (rank deficiency; round-off
# leaves structural zeros below 1e-16 in the circuits tried) ...
RANK_DROP_RTOL = 1e-14
# ... and one at or above this share is kept (a genuine one: a finite eigenvalue up to about
# 1e12, as an op-amp's feedthrough zero near 1e9); between the two the rank is unclear.
RANK_KEEP_RTOL = 1e-12
# b is solved directly when its singular values span less than this; else shift and invert.
SOLVE_RTOL = 1e-8
_SHIFTS = (0.0, -0.7548776662, 1.3247179572, -2.1478990357)  # away from the moderate eigenvalues
# Eigenvalues larger than this (in the units of the scaled pencil, where the finite ones are
# of order 1 to 1e4) count as infinite, as the QZ route's |beta| <= 1e-9 |alpha| did.
INFINITE_ABOVE = 1e9


class UntrustedPencil(ArithmeticError):
    """The numpy route cannot decide the pencil's structure reliably; use QZ instead."""


def finite_eigenvalues(a, b) -> np.ndarray:
    """Finite eigenvalues of ``a v = lambda b v`` (square real ``a``, ``b``), numpy only.

    Parameters
    ----------
    a, b : array_like, shape (n, n)
        The pencil, scaled so that its finite eigenvalues are of moderate size.

    Returns
    -------
    ndarray of complex
        The finite eigenvalues (any order), those above ``INFINITE_ABOVE`` left out.

    Raises
    ------
    UntrustedPencil
        A rank decision is unclear or the pencil is (nearly) singular.

    Example
    -------
    >>> a = np.array([[-1.0, 0.0], [0.0, 1.0]])
    >>> b = np.array([[1.0, 0.0], [0.0, 0.0]])
    >>> finite_eigenvalues(a, b)
    array([-1.+0.j])
    """
    a, b = _equilibrated(np.array(a, float), np.array(b, float))
    while len(a):
        u, s, vt = np.linalg.svd(b)
        rank = _clear_rank(s)
        if rank == len(a):
            values = _eigenvalues_of_regular(a, b, s)
            return values[np.abs(values) <= INFINITE_ABOVE]
        if rank == 0:
            break
        a, b = _deflated(u.T @ a @ vt.T, s, rank)
    return np.zeros(0, complex)


def _eigenvalues_of_regular(a: np.ndarray, b: np.ndarray, s: np.ndarray) -> np.ndarray:
    """Eigenvalues of a pencil whose ``b`` (singular values ``s``) has no zero singular value.

    A well-conditioned ``b``: those of ``b^-1 a``. An ill-conditioned one (a few
    far eigenvalues, as an op-amp's feedthrough zero hundreds of millions of times
    above the notch): shift and invert, ``lambda = s0 + 1/mu`` with ``mu`` those of
    ``(a - s0 b)^-1 b``, so the far eigenvalues become small ``mu`` and the
    near ones stay accurate.
    """
    if s[-1] >= SOLVE_RTOL * s[0]:
        return np.linalg.eigvals(np.linalg.solve(b, a)).astype(complex)
    for shift in _SHIFTS:
        shifted = a - shift * b
        if np.linalg.cond(shifted) < 1.0 / SOLVE_RTOL:
            mu = np.linalg.eigvals(np.linalg.solve(shifted, b)).astype(complex)
            mu = mu[np.abs(mu) > 1.0 / INFINITE_ABOVE]
            return shift + 1.0 / mu
    raise UntrustedPencil("no shift leaves the pencil well conditioned")


def _deflated(rotated: np.ndarray, s: np.ndarray, rank: int):
    """The pencil on the null space of the constraint rows (those where ``b`` is zero)."""
    constraints = rotated[rank:]
    _, cs, cvt = np.linalg.svd(constraints)
    if cs[-1] < RANK_KEEP_RTOL * max(cs[0], np.max(np.abs(rotated))):
        raise UntrustedPencil("the constraint rows are nearly dependent (a nearly singular pencil)")
    basis = cvt[len(cs):].T  # orthonormal, n x rank: every finite eigenvector lies in it
    return rotated[:rank] @ basis, s[:rank, None] * basis[:rank]


def _clear_rank(s: np.ndarray) -> int:
    """The number of singular values that are clearly not zero; raises when one is unclear."""
    if s[0] == 0:
        return 0
    share = s / s[0]
    if np.any((share > RANK_DROP_RTOL) & (share < RANK_KEEP_RTOL)):
        raise UntrustedPencil(f"a singular value {share[share < RANK_KEEP_RTOL][0]:.3g} of the largest: "
                              "the rank is unclear")
    return int(np.count_nonzero(share >= RANK_KEEP_RTOL))


def _equilibrated(a: np.ndarray, b: np.ndarray):
    """Rows, then columns, scaled by powers of two to a largest entry near 1 (exact: eigenvalues kept)."""
    for axis in (1, 0):
        size = np.maximum(np.max(np.abs(a), axis=axis), np.max(np.abs(b), axis=axis))
        scale = np.exp2(-np.round(np.log2(np.where(size > 0, size, 1.0))))
        a, b = (a * scale[:, None], b * scale[:, None]) if axis == 1 else (a * scale, b * scale)
    return a, b
