"""Tests for emulate.analog.roots (the one conjugate-pair routine)."""

import numpy as np
import pytest

from emulate.analog.networks import TwinT
from emulate.analog.roots import pair_conjugates, upper_and_real
from emulate.errors import BadValueError


class TestPairConjugates:
    @pytest.mark.parametrize("roots", [
        [-1 + 2e-8j, -1 - 3e-9j],                      # a double real root split unevenly
        [-1 + 2e-8j, -1.0],                             # one half snapped, one half not
        [-2 + 1e-6j, -2 - 1e-6j, -2 + 3e-6j],           # a triple root: eps**(1/3) scatter
        [0.5 + 0.5j, 0.5 - 0.5j + 1e-12, 3.0, 3.0],     # round-off on an ordinary pair
    ])
    def test_complex_root_has_no_conjugate_partner(self, roots):
        # Regression (issue 10, defect 1): clusters of nearly equal roots (Wilkinson 1963: a root of
        # multiplicity m moves by about eps**(1/m)) must pair up or become real, never be refused.
        tidy = pair_conjugates(roots)
        assert len(tidy) == len(roots)
        # exact conjugate symmetry: the multiset equals its conjugate
        np.testing.assert_array_equal(np.sort_complex(tidy), np.sort_complex(np.conj(tidy)))
        # nothing moved by more than the cluster tolerance (1e-4 of its size)
        for r in roots:
            assert np.min(np.abs(tidy - r)) <= 1e-4 * abs(r)

    def test_refuses_clearly_unpaired_root(self):
        with pytest.raises(BadValueError, match=r"root .* has no complex conjugate"):
            pair_conjugates([0.5 + 0.5j, 0.5 - 0.4j])

    @pytest.mark.parametrize("mix", np.linspace(0.0, 1.0, 41))
    def test_mixed_network_every_mix(self, mix):
        # Regression (issue 10, defect 1): "complex root ... has no conjugate partner" at mix 0.5
        # (a double real zero).  Every mix 0..1 gives a tidy zpk whose response is the exact one
        # (the nodal solve; 1e-6 relative allows the root scatter of a double root, ~1e-8).
        net = TwinT(10e3, 10e3, 5e3, 5.6e-9, 5.6e-9, 11.2e-9, mix=float(mix))
        z, p, k = net.zpk()
        f = np.geomspace(20, 20000, 50)
        s = 2j * np.pi * f[:, None]
        h = k * np.prod(s - z, axis=1) / np.prod(s - p, axis=1)
        np.testing.assert_allclose(h, np.atleast_2d(net.response(f))[0], rtol=1e-6, atol=1e-9)


class TestUpperAndReal:
    def test_order(self):
        # common practice, no source: one root per pair (imag > 0) by real part, then real roots
        out = upper_and_real([0.3, -0.1 - 0.2j, 0.1, -0.1 + 0.2j, 0.2 + 0.1j, 0.2 - 0.1j])
        np.testing.assert_array_equal(out, [-0.1 + 0.2j, 0.2 + 0.1j, 0.1, 0.3])


class TestActiveDoubleZero:
    @pytest.mark.parametrize("k", [0.1, 0.2, 0.4])
    def test_no_conjugate_partner_when_mixed_active_halves(self, k):
        # Regression (issue 10, defect 1): active networks were refused whenever
        # (1 - mix)(1 - K) = 1/2 (a double real zero of the mixed response).  The emulation must
        # come back within the 0.1 dB target (the fidelity target of emulate.dsp.digital).
        from emulate.dsp.emulation import digital_for

        mix = 1.0 - 0.5 / (1.0 - k)
        net = TwinT(10e3, 10e3, 5e3, 5.6e-9, 5.6e-9, 11.2e-9, bootstrap=k, mix=mix)
        assert digital_for(net, 48000).fidelity_db <= 0.1
