"""Tests of emulate.analog.pencil: a circuit's zeros and poles without scipy.linalg.

References: scipy.linalg.eigvals(a, b) (the QZ algorithm, LAPACK xGGEV) on the same
pencils, as the engine computed them before; a 60-digit evaluation (mpmath: the
determinants N(s), D(s) on a circle, their coefficients by the discrete Fourier
transform and mpmath.polyroots) where QZ itself is not accurate enough to judge; the
nodal solution of the network (``Compiled.response``) for the response the roots give;
hand-computed eigenvalues of small pencils.

When the numpy route gives way to QZ (documented here, ``TestWhenQzTakesOver``): a
singular value of ``b`` between ``RANK_DROP_RTOL`` and ``RANK_KEEP_RTOL`` of the largest
(the rank is unclear), constraint rows that are nearly dependent (a nearly singular
pencil), or no shift that leaves an ill-conditioned pencil well conditioned. None of
the random networks of tests/test_random_networks.py (ideal or with op-amps) needs it.
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.linalg

from emulate.analog import circuit, pencil
from emulate.analog.networks import TwinT
from emulate.analog.opamp import CLASSES
from test_random_networks import DEFAULT_COUNT, SLOW_COUNT, cases

RANDOM = [net for _, net, _ in cases(DEFAULT_COUNT)]
RANDOM_SLOW = [net for _, net, _ in cases(SLOW_COUNT)[DEFAULT_COUNT:]]
HARD = [  # high Q, a double real zero (mix 0.5), a depth pot, a heavy source and load
    TwinT.balanced(1000.0, r_ohms=10e3, bootstrap=0.999),
    TwinT(10e3, 10.3e3, 5e3, 10e-9, 9.8e-9, 20e-9, bootstrap=0.9999),
    TwinT.balanced(1000.0, r_ohms=10e3, mix=0.5),
    TwinT(10e3, 10.3e3, 5e3, 10e-9, 9.8e-9, 20e-9, mix=0.5, bootstrap=0.5),
    TwinT(10e3, 10.3e3, 5e3, 10e-9, 9.8e-9, 20e-9, mix=0.25, depth_pot_ohms=10e3),
    TwinT(10e3, 10.3e3, 5e3, 10e-9, 9.8e-9, 20e-9, source_ohms=5e3, load_ohms=2e3),
]
OPAMP = [net.replace(opamp=list(CLASSES.values())[i % len(CLASSES)]) for i, net in enumerate(RANDOM[:18])]


def zpk_by(route, net):
    """The network's zpk with the engine's eigenvalues taken from ``route``."""
    kept = circuit._finite_eigenvalues
    circuit._finite_eigenvalues = route
    try:
        return net.zpk()
    finally:
        circuit._finite_eigenvalues = kept


def numpy_only(a, b):
    """The numpy route alone (no fallback), so a test sees it if it gives way."""
    return circuit._tidy(pencil.finite_eigenvalues(a, b))


def worst_mismatch(found, reference, below=np.inf) -> float:
    """Largest relative distance from each reference root (|root| < ``below``) to its nearest found root."""
    found, reference = np.asarray(found), np.asarray(reference)
    worst = 0.0
    for root in reference[np.abs(reference) < below]:
        worst = max(worst, float(np.min(np.abs(found - root)) / abs(root)))
    return worst


def reference_scale(net) -> float:
    """The engine's frequency scale w_ref (rad/s): roots far above it are the op-amps' own."""
    c_, out = net.circuit()
    g, c, _, _ = c_.matrices(out)
    dynamic = np.abs(c[0]).sum(axis=1) > 0
    return circuit._typical(g[0][dynamic]) / circuit._typical(c[0])


class TestFiniteEigenvalues:
    def test_hand_computed_pencils(self):
        # a v = lambda b v with b = diag(1, 2, 0): lambda = -1, -3/2 and one infinite eigenvalue
        a = np.array([[-1.0, 0.0, 0.0], [0.0, -3.0, 0.0], [0.0, 0.0, 5.0]])
        b = np.diag([1.0, 2.0, 0.0])
        assert np.sort(pencil.finite_eigenvalues(a, b).real) == pytest.approx([-1.5, -1.0], rel=1e-15)
        # a chain of two infinite eigenvalues (a Jordan block at infinity): only lambda = 2 is finite
        a = np.array([[2.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 0.0, 1.0]])
        b = np.array([[1.0, 0.0, 0.0], [0.0, 0.0, 1.0], [0.0, 0.0, 0.0]])
        assert pencil.finite_eigenvalues(a, b) == pytest.approx([2.0], rel=1e-15)

    def test_invariant_to_row_and_column_scaling(self):
        # scaling equations and unknowns leaves the eigenvalues (reference: the unscaled pencil's)
        rng = np.random.default_rng(3)
        a, b = rng.normal(size=(5, 5)), rng.normal(size=(5, 5))
        left, right = np.diag(10.0 ** rng.uniform(-6, 6, 5)), np.diag(10.0 ** rng.uniform(-6, 6, 5))
        plain = np.sort_complex(pencil.finite_eigenvalues(a, b))
        scaled = np.sort_complex(pencil.finite_eigenvalues(left @ a @ right, left @ b @ right))
        assert worst_mismatch(scaled, plain) < 1e-9


class TestAgainstQz:
    @pytest.mark.parametrize("net", RANDOM + HARD, ids=lambda n: None)
    def test_ideal_networks_roots_and_gain(self, net):
        # reference: scipy.linalg.eigvals(a, b) (QZ) on the same pencils. Both are backward stable;
        # 1e-7 relative covers QZ's own error (up to 3e-8 on these against a 60-digit evaluation)
        # and a double zero (mix 0.5), which any method places to about sqrt(eps) = 1.5e-8
        self.check_ideal(net)

    @pytest.mark.slow
    @pytest.mark.parametrize("net", RANDOM_SLOW, ids=lambda n: None)
    def test_ideal_networks_roots_and_gain_slow(self, net):
        self.check_ideal(net)

    @staticmethod
    def check_ideal(net):
        z, p, k = zpk_by(numpy_only, net)
        zq, pq, kq = zpk_by(circuit._finite_eigenvalues_qz, net)
        assert len(z) == len(zq) and len(p) == len(pq)
        assert worst_mismatch(z, zq) < 1e-7 and worst_mismatch(p, pq) < 1e-7
        assert k == pytest.approx(kq, rel=1e-7)

    @pytest.mark.parametrize("net", OPAMP, ids=lambda n: None)
    def test_opamp_networks_roots_in_range_and_response(self, net):
        # Real op-amps add poles near their gain-bandwidth (10^2-10^4 w_ref) and zeros up to 10^9 w_ref.
        # Below 10^4 w_ref the roots agree with QZ within 1e-5: QZ's own error on these pencils reaches
        # 5e-6 (against the 60-digit evaluation, test_far_roots_against_sixty_digits); the far zeros are
        # set by round-off in either method, and the gain absorbs them, so the response is what matters:
        # the zpk's H(j w) equals the nodal solution within 1e-8 from 1 Hz to 1 MHz.
        z, p, k = zpk_by(numpy_only, net)
        zq, pq, _ = zpk_by(circuit._finite_eigenvalues_qz, net)
        near = 1e4 * reference_scale(net)
        assert worst_mismatch(z, zq, near) < 1e-5 and worst_mismatch(p, pq, near) < 1e-5
        f = np.geomspace(1.0, 1e6, 200)
        s = 2j * np.pi * f
        from_zpk = k * np.prod(s[:, None] - z, axis=1) / np.prod(s[:, None] - p, axis=1)
        exact = net.response(f)
        assert np.max(np.abs(from_zpk / exact - 1)) < 1e-8

    @pytest.mark.slow
    @pytest.mark.parametrize("which", [2, 7, 11])
    def test_far_roots_against_sixty_digits(self, which):
        # reference: the determinants at 60 digits (mpmath) -> coefficients -> mpmath.polyroots
        mpmath = pytest.importorskip("mpmath")
        net = OPAMP[which]
        exact_z, exact_p = sixty_digit_roots(net, mpmath)
        z, p, _ = zpk_by(numpy_only, net)
        near = 1e4 * reference_scale(net)
        assert worst_mismatch(p, exact_p, near) < 1e-9
        assert worst_mismatch(z, exact_z, near) < 1e-9


def sixty_digit_roots(net, mpmath):
    """Zeros and poles (rad/s) of a network at 60 digits, common pairs removed."""
    mpmath.mp.dps = 60
    c_, out = net.circuit()
    g, c, b, l = (m[0] if m.ndim == 3 else m for m in c_.matrices(out))
    n, degree = len(b), int(np.linalg.matrix_rank(c))
    radius = mpmath.mpf(reference_scale(net))
    big_g, big_c = mpmath.matrix(g.tolist()), mpmath.matrix(c.tolist())

    def bordered(s):
        m = mpmath.matrix(n + 1, n + 1)
        for i in range(n):
            for j in range(n):
                m[i, j] = big_g[i, j] + s * big_c[i, j]
            m[i, n], m[n, i] = b[i], l[i]
        return m

    def roots(matrix_at):
        points = degree + 1
        values = [mpmath.det(matrix_at(radius * mpmath.expjpi(mpmath.mpf(2 * k + 1) / points)))
                  for k in range(points)]
        coefficients = [sum(values[k] * mpmath.expjpi(-mpmath.mpf(j * (2 * k + 1)) / points) for k in range(points))
                        .real / points / radius ** j for j in range(points)]
        largest = max(abs(x) for x in coefficients)
        while len(coefficients) > 1 and abs(coefficients[-1]) < mpmath.mpf(10) ** -40 * largest:
            coefficients.pop()
        found = mpmath.polyroots(coefficients[::-1], maxsteps=2000, extraprec=400) if len(coefficients) > 1 else []
        return np.array([complex(x) for x in found])

    return cancelled(roots(bordered), roots(lambda s: big_g + s * big_c))


def cancelled(zeros, poles):
    """Pole-zero pairs within 1e-6 of each other removed (modes the output does not see)."""
    zeros, poles = list(zeros), list(poles)
    for z in list(zeros):
        distance = np.abs(np.array(poles) - z)
        if len(poles) and distance.min() <= 1e-6 * abs(z):
            zeros.remove(z)
            poles.pop(int(np.argmin(distance)))
    return np.array(zeros), np.array(poles)


class TestWhenQzTakesOver:
    def test_unclear_rank_is_refused(self):
        # a singular value 1e-13 of the largest: a zero of b or a finite eigenvalue near 1e13?
        a, b = np.eye(2), np.diag([1.0, 1e-13])
        with pytest.raises(pencil.UntrustedPencil, match="rank is unclear"):
            pencil.finite_eigenvalues(a, b)

    def test_nearly_singular_pencil_is_refused(self):
        # the last equation is (almost) a copy of the one before, in a and b alike
        a = np.array([[1.0, 2.0, 0.0], [0.0, 1.0, 1.0], [0.0, 1.0, 1.0 + 1e-13]])
        b = np.array([[1.0, 0.0, 0.0], [0.0, 0.0, 0.0], [0.0, 0.0, 0.0]])
        with pytest.raises(pencil.UntrustedPencil):
            pencil.finite_eigenvalues(a, b)

    def test_engine_falls_back_to_qz(self, monkeypatch):
        # where the numpy route gives way, the engine's roots are QZ's (scipy.linalg.eigvals)
        net = HARD[0]
        expected = zpk_by(circuit._finite_eigenvalues_qz, net)

        def untrusted(a, b):
            raise pencil.UntrustedPencil("test")

        monkeypatch.setattr(circuit, "finite_eigenvalues", untrusted)
        z, p, k = net.zpk()
        assert np.array_equal(z, expected[0]) and np.array_equal(p, expected[1]) and k == expected[2]

    def test_qz_reference_itself(self):
        # the fallback is scipy.linalg.eigvals's finite eigenvalues of the pencil, unchanged
        a = np.array([[-1.0, 0.0, 0.0], [0.0, -3.0, 0.0], [0.0, 0.0, 5.0]])
        b = np.diag([1.0, 2.0, 0.0])
        values = scipy.linalg.eigvals(a, b)
        assert np.sort(circuit._finite_eigenvalues_qz(a, b).real) == pytest.approx(
            np.sort(values[np.isfinite(values)].real))
