"""The one bounded minimum search (emulate.search.golden_section_min)."""

import numpy as np
import pytest
from scipy import optimize

from emulate.search import golden_section_min


class TestGoldenSectionMin:
    @pytest.mark.parametrize("fun, lo, hi, expected", [
        (lambda x: (x - 2.0) ** 2, 0.0, 5.0, 2.0),            # smooth: minimum at 2 (arithmetic)
        (lambda x: np.abs(x - 1.0 / 3.0), 0.0, 1.0, 1.0 / 3.0),  # V-shaped, like |H| at a null
        (lambda x: x, 1.0, 2.0, 1.0),                          # monotonic: the lower bound
    ])
    def test_finds_minimum_within_xtol(self, fun, lo, hi, expected):
        assert golden_section_min(fun, lo, hi, 1e-10) == pytest.approx(expected, abs=1e-10)

    def test_agrees_with_scipy_bounded_minimiser(self):
        # Reference: scipy.optimize.minimize_scalar(method="bounded") (Brent's method on a
        # bracket) on a smooth non-polynomial minimum, x = ln 3 for exp(x) - 3x.
        def fun(x):
            return np.exp(x) - 3.0 * x

        ref = optimize.minimize_scalar(fun, bounds=(0.0, 3.0), method="bounded", options={"xatol": 1e-12}).x
        # A smooth minimum is found only to about sqrt(machine epsilon) of its scale (the
        # function is flat there to rounding; Numerical Recipes, 3rd ed., sec. 10.1): 1e-7.
        assert golden_section_min(fun, 0.0, 3.0, 1e-12) == pytest.approx(ref, abs=1e-7)
        assert golden_section_min(fun, 0.0, 3.0, 1e-12) == pytest.approx(np.log(3.0), abs=1e-7)

    def test_each_bracket_searched_on_its_own(self):
        centres = np.array([0.25, 1.5, -4.0])
        found = golden_section_min(lambda x: (x - centres) ** 2, centres - 1.0, centres + 2.0, 1e-11)
        assert found == pytest.approx(centres, abs=1e-10)

    def test_ends_below_floating_point_resolution(self):
        # 1e-30 is far below the spacing of doubles near 1e6: the step count is fixed, it still ends
        assert golden_section_min(lambda x: (x - 1e6) ** 2, 0.0, 2e6, 1e-30) == pytest.approx(1e6, rel=1e-12)
