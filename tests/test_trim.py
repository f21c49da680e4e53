"""Tests for emulate.analog.trim: the R3 trim over a Monte Carlo run, fixed part + trimmer.

References: the null condition R1 R2 C3 = R3 (R1 + R2)(C1 + C2) (derived symbolically in
test_networks.py; Analog Devices MT-225 for the balanced case); trimmer values and track
tolerance are common practice, no source.
"""

import pytest

from emulate.analog import tolerance as tol
from emulate.analog import trim as trims
from emulate.analog.networks import TwinT
from emulate.errors import BadValueError

NOMINAL = TwinT.balanced(1591.549430919, r_ohms=10e3)  # 10k / 10n, f0 = 1/(2 pi R C) (MT-225)


class TestFixedAndTrimmer:
    @pytest.mark.parametrize("low, high", [(9.7e3, 10e3), (3.2e3, 3.4e3), (150.0, 160.0)])
    def test_reaches_the_range(self, low, high):
        fixed, trimmer = trims.fixed_and_trimmer(low, high)
        assert fixed <= low and fixed + 0.8 * trimmer >= high  # track guaranteed to -20 %
        assert trimmer in trims.TRIMMER_OHMS

    def test_refuses_an_empty_range(self):
        with pytest.raises(BadValueError, match="trim range"):
            trims.fixed_and_trimmer(10e3, 9e3)


class TestR3ForNull:
    def test_restores_an_exact_null(self):
        # MT-225 / derived null condition R1 R2 C3 = R3 (R1 + R2)(C1 + C2): an unbalanced set trimmed
        # by R3 alone has a j-axis zero, so the measured depth reaches the float64 cap
        net = TwinT(10.2e3, 9.9e3, 5e3, 10.3e-9, 9.8e-9, 20.5e-9)
        trimmed = net.replace(r3=trims.r3_for_null(net.r1, net.r2, net.c1, net.c2, net.c3))
        assert trimmed.null_mismatch() == pytest.approx(0.0, abs=1e-14)
        assert tol.measure_builds(trimmed, (1000, 2500), 1591.5).depth_db[0] > 150


class TestSuggestTrim:
    @pytest.fixture(scope="class")
    @classmethod
    def run(cls):
        return tol.monte_carlo(NOMINAL, tol.Tolerances(0.01, 0.05), draws=3000, seed=8)

    def test_covers_the_share_and_deepens_the_notch(self, run):
        trim = trims.suggest_trim(run, share=0.95)
        assert trim.share >= 0.95
        assert trim.trimmer_ohms in trims.TRIMMER_OHMS
        assert trim.fixed_ohms < NOMINAL.r3
        assert trim.depth_db["p50"] > run.percentiles(run.depth_db)["p50"] + 20
        # R3 cannot re-centre the notch: the C mismatch still spreads it (about as before)
        spread = trim.notch_hz["p95"] - trim.notch_hz["p5"]
        assert spread > 0.5 * (run.percentiles(run.notch_hz)["p95"] - run.percentiles(run.notch_hz)["p5"])

    def test_coarser_setting_gives_a_shallower_trimmed_notch(self, run):
        fine, coarse = (trims.suggest_trim(run, resolution=r).depth_db["p50"] for r in (0.001, 0.01))
        # |H| at the notch scales with the residual miss (first order): 10x coarser, about 20 dB less
        assert fine - coarse == pytest.approx(20.0, abs=1.0)

    @pytest.mark.parametrize("kwargs, match", [({"share": 0.2}, "trim share"), ({"resolution": 0}, "resolution")])
    def test_refuses_bad_values(self, run, kwargs, match):
        with pytest.raises(BadValueError, match=match):
            trims.suggest_trim(run, **kwargs)


