"""Tests for emulate.analog.stability (poles of one build, of a batch, the bootstrap margin)."""

import itertools
import math

import numpy as np
import pytest

from emulate.analog import tolerance as tol
from emulate.analog.networks import TwinT
from emulate.analog.stability import batch_stability, bootstrap_margin, check_stability, margin_warning
from emulate.errors import BadValueError

ISSUE_NOMINAL = TwinT(10e3, 10e3, 5e3, 3.3e-9, 3.3e-9, 6.6e-9, bootstrap=0.9875)
# the corner R1 -1 %, R2 +1 %, R3 -1 %, C1 -5 %, C2 -5 %, C3 +5 % of the issue's network
UNSTABLE = TwinT(9900.0, 10100.0, 4950.0, 3.135e-9, 3.135e-9, 6.93e-9, bootstrap=0.9875)


class TestCheckStability:
    @pytest.mark.parametrize("k", [None, 0.0, 0.5, 0.9, 0.99])
    def test_balanced_is_stable(self, k):
        # MT-225: balanced bootstrapped twin-T, D(s) = s^2 + 4 w0 (1 - K) s + w0^2, stable for K < 1
        assert check_stability(TwinT.balanced(1000.0, r_ohms=10e3, bootstrap=k)).stable

    def test_unstable_corner_reported_as_oscillating(self):
        # Regression (issue 10, defect 5): poles at 103.8 +- j30938 rad/s were analysed as a notch;
        # the corner here has its pole pair at +36.7 +- j31170 rad/s: 31170 / (2 pi) = 4961 Hz
        # (the pole pair also checked with scipy.signal.tf2zpk below).
        found = check_stability(UNSTABLE)
        assert not found.stable
        assert found.oscillation_hz == pytest.approx(31170.4 / (2 * math.pi), rel=1e-4)
        assert "oscillates at 4961 Hz" in found.describe()

    def test_poles_against_scipy(self):
        # Reference: the roots of the exact denominator (Rational.den, lowest power first) by numpy.
        rational = UNSTABLE.rational(4900.0)
        roots = np.roots(rational.den[0][::-1]) * 2 * np.pi * 4900.0
        assert np.max(roots.real) == pytest.approx(check_stability(UNSTABLE).growth_per_s, rel=1e-5)


class TestBatchStability:
    def test_three_of_64_corners_oscillate(self):
        # Regression (issue 10, defect 5): "3 of 64 corners are unstable" (R 1 %, C 5 %); the
        # 64 are the twin-T's six parts with the bootstrap divider (R4, R5) held exact
        t = tol.Tolerances(0.01, 0.05, overrides=(("r4", 0.0), ("r5", 0.0)))
        signs = tol.worst_corners(ISSUE_NOMINAL, t).signs
        batch = tol.builds(ISSUE_NOMINAL, signs * t.fractions(tol.varied_parts(ISSUE_NOMINAL)))
        unstable, hz = batch_stability(batch.rational(4823.0))
        assert int(unstable.sum()) == 3 * 4  # the divider's four corners each repeat the 64
        # each agrees with the single-network check
        for i, signs in enumerate(itertools.islice(signs, 64)):
            single = TwinT(*(float(getattr(batch, n)[i]) for n in ("r1", "r2", "r3", "c1", "c2", "c3")),
                           bootstrap=0.9875)
            assert check_stability(single).stable == (not unstable[i])


class TestWorstCornerOscillates:
    def test_worst_corner_minus_0_04_db(self):
        # Regression (issue 10, defect 5): the worst corner read "-0.04 dB" for an oscillating build.
        corners = tol.worst_corners(ISSUE_NOMINAL, tol.Tolerances(0.01, 0.05, overrides=(("r4", 0.0), ("r5", 0.0))))
        d = corners.as_dict()
        assert d["corners"] == 256 and d["oscillating_corners"] == 3 * 4  # the divider held exact
        # with the divider at 1 % its K moves too: more corners oscillate, never fewer
        assert tol.worst_corners(ISSUE_NOMINAL, tol.Tolerances(0.01, 0.05)).oscillating >= 12
        assert 4900 < d["worst_oscillation_hz"] < 5000

    def test_oscillating_builds_fail_the_yield(self):
        # An oscillating build has no depth: it must never count towards the yield.
        result = tol.monte_carlo(ISSUE_NOMINAL.replace(bootstrap=0.999), tol.Tolerances(0.01, 0.05), draws=400)
        assert 0 < np.mean(result.oscillating) < 1
        good = result.measured & (result.depth_db >= result.spec_db)
        assert result.yield_fraction == pytest.approx(np.mean(good))
        assert not np.any(good & result.oscillating)
        assert result.as_dict()["oscillating_share"] == pytest.approx(np.mean(result.oscillating))


class TestNoNotchInSearchBand:
    def test_q20_fifth_percentile_is_the_edge(self):
        # Regression (issue 10, defect 7): at Q 20 some builds have no dip inside their search band;
        # they were counted in the percentiles (the 5th percentile was the band edge).
        nominal = TwinT.balanced(6300.0, r_ohms=10e3, bootstrap=1 - 1 / 80)
        result = tol.monte_carlo(nominal, tol.Tolerances(0.01, 0.05), draws=600)
        band = tol.search_band_hz(result.nominal_notch_hz, result.tolerances)
        assert np.any(~result.in_range)
        p5 = result.as_dict()["notch_hz_p5"]
        assert band[0] * 1.001 < p5  # not the edge
        assert result.as_dict()["no_notch_share"] == pytest.approx(np.mean(~result.in_range & ~result.oscillating))


class TestBootstrapMargin:
    @pytest.mark.parametrize("k", [0.5, 0.9, 0.9875])
    def test_balanced_margin_is_one_minus_k(self, k):
        # MT-225: the balanced network's poles reach the j axis at K = 1 exactly.
        assert bootstrap_margin(TwinT.balanced(1000.0, r_ohms=10e3, bootstrap=k)) == pytest.approx(1 - k, abs=1e-6)

    def test_unstable_build_has_no_margin(self):
        assert bootstrap_margin(UNSTABLE) == 0.0
        assert "oscillates" in margin_warning(UNSTABLE)

    def test_passive_refused(self):
        with pytest.raises(BadValueError, match="passive"):
            bootstrap_margin(TwinT.balanced(1000.0, r_ohms=10e3))


class TestSheetMarginLine:
    @pytest.mark.slow
    def test_sheet_warns_with_the_margin(self, tmp_path):
        # Regression (issue 10, defect 5): the build sheet of an active network states how far K
        # may rise before it oscillates (1 - K for the balanced network, MT-225).
        from emulate.report import sheet

        path = sheet.write_sheet(tmp_path / "s", ISSUE_NOMINAL, tolerances=tol.Tolerances(0.01, 0.05))
        text = (path / "sheet.md").read_text()
        assert "K may rise by only 0.0125" in text
