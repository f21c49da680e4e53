"""Tests for emulate.analog.tolerance: draws, the rational form, Monte Carlo, corners, builds, trim."""

import dataclasses
import math

import numpy as np
import pytest
import sympy as sp
from scipy import stats

from emulate.analog import tolerance as tol
from emulate.errors import BadValueError
from emulate.analog.networks import PART_NAMES, TwinT
from emulate.analog.response import measure_batch

NOMINAL = TwinT.balanced(1591.549430919, r_ohms=10e3)  # 10k / 10n, f0 = 1/(2 pi R C) (MT-225)
ONE_PERCENT = tol.Tolerances(0.01, 0.01)


@pytest.fixture(scope="module")
def mt225_run():
    """10,000 builds of the balanced network with 1 % R and C, uniform within tolerance."""
    return tol.monte_carlo(NOMINAL, ONE_PERCENT, draws=10_000, seed=2024)


def symbolic_notch_sensitivities():
    """d(ln f_notch)/d(ln part) at balance, from the passive twin-T's numerator (sympy).

    Nodal equations of the passive network (ideal source, open load) give the
    numerator N(s); at balance its zero is s = j w0.  Implicit differentiation of
    N(z, p) = 0 gives dz/dp = -(dN/dp)/(dN/ds); the notch frequency moves with
    Im z to first order (the slowly varying rest of |H| shifts the minimum only
    to second order).  Symbolic derivation, checked independently of the code.
    """
    s = sp.symbols("s")
    r1, r2, r3, c1, c2, c3, r, c = sp.symbols("R1 R2 R3 C1 C2 C3 R C", positive=True)
    va, vb, vo = sp.symbols("va vb vo")
    equations = [(va - 1) / r1 + (va - vo) / r2 + va * s * c3,
                 (vb - 1) * s * c1 + (vb - vo) * s * c2 + vb / r3,
                 (vo - va) / r2 + (vo - vb) * s * c2]
    numerator = sp.fraction(sp.together(sp.solve(equations, [va, vb, vo])[vo]))[0]
    balanced = {r1: r, r2: r, r3: r / 2, c1: c, c2: c, c3: 2 * c}
    w0 = 1 / (r * c)
    slope = sp.diff(numerator, s).subs(balanced).subs(s, sp.I * w0)
    found = []
    for part in (r1, r2, r3, c1, c2, c3):
        dz = -sp.diff(numerator, part).subs(balanced).subs(s, sp.I * w0) / slope
        found.append(float(sp.im(sp.expand_complex(dz * balanced[part] / w0))))
    return np.array(found)


class TestTolerances:
    def test_parse_letters_and_percentages(self):
        t = tol.Tolerances.parse("F", "5%", "Normal")
        assert (t.resistors, t.capacitors, t.distribution) == (0.01, 0.05, "normal")
        assert t.fractions().tolist() == [0.01, 0.01, 0.01, 0.05, 0.05, 0.05]

    @pytest.mark.parametrize("args, match", [
        ((0.6, 0.05), "resistor tolerance"),
        ((0.01, -0.1), "capacitor tolerance"),
        ((0.01, 0.05, "triangular"), "distribution"),
    ])
    def test_refuses_bad_values(self, args, match):
        with pytest.raises(BadValueError, match=match):
            tol.Tolerances(*args)


class TestUnitDraws:
    def test_draw_alone_equals_its_row_in_a_batch(self):
        batch = tol.unit_draws(7, np.arange(100))
        assert np.array_equal(tol.unit_draws(7, [37])[0], batch[37])

    def test_seeds_differ(self):
        assert not np.allclose(tol.unit_draws(1, range(10)), tol.unit_draws(2, range(10)))

    def test_uniform_by_kolmogorov_smirnov(self):
        # scipy.stats.kstest against U(0, 1) as the reference; p > 1e-3 fails by chance 0.1 % of the time
        u = tol.unit_draws(11, np.arange(5000)).ravel()
        assert stats.kstest(u, "uniform").pvalue > 1e-3
        assert 0 < u.min() and u.max() < 1

    @pytest.mark.parametrize("seed, which", [(-1, [0]), (1.5, [0]), (True, [0]), (0, [-3])])
    def test_refuses_bad_seed_or_number(self, seed, which):
        with pytest.raises(BadValueError, match="seed|draw numbers"):
            tol.unit_draws(seed, which)


class TestDeviations:
    def test_uniform_within_tolerance(self):
        d = tol.deviations(tol.Tolerances(0.01, 0.05), 3, np.arange(4000))
        assert np.all(np.abs(d[:, :3]) <= 0.01) and np.all(np.abs(d[:, 3:]) <= 0.05)
        assert np.abs(d[:, 3:]).max() > 0.049

    def test_normal_has_tolerance_as_three_sigma(self):
        # sample std of n = 6 x 20000 normals has relative standard error 1/sqrt(2n) = 0.15 %; allow 1 %
        d = tol.deviations(tol.Tolerances(0.03, 0.03, "normal"), 5, np.arange(20000))
        assert d.std() == pytest.approx(0.01, rel=0.01)


class TestRational:
    @pytest.mark.parametrize("options", [
        {}, {"source_ohms": 600.0, "load_ohms": 47e3}, {"bootstrap": 0.8},
        {"mix": 0.7}, {"depth_pot_ohms": 100e3, "mix": 0.9},
    ])
    def test_agrees_with_the_nodal_solution(self, options):
        # reference: the circuit's own nodal solve at each frequency (exact)
        net = tol.builds(NOMINAL.replace(**options), tol.deviations(ONE_PERCENT, 1, range(5)))
        f = np.geomspace(20, 20000, 50)
        exact = net.response(f)
        assert np.allclose(net.rational(1591.5).response(f), exact, rtol=1e-9, atol=1e-12)

    @pytest.mark.parametrize("options", [{}, {"bootstrap": 0.95, "source_ohms": 600.0}, {"mix": 0.5}])
    def test_evaluation_equals_a_complex_polynomial_evaluation(self, options):
        # reference: numpy.polynomial.polynomial.polyval in complex arithmetic at sigma = j f / f_ref
        # (what the earlier complex Horner loop computed); the real even/odd evaluation must agree to
        # round-off, 1e-12 relative to the sum of the terms' sizes (the bound of either evaluation)
        rational = tol.builds(NOMINAL.replace(**options), tol.deviations(ONE_PERCENT, 3, range(40))).rational(1591.5)
        f = np.geomspace(1.0, 1e6, 301)
        sigma = 1j * f / 1591.5
        num = np.polynomial.polynomial.polyval(sigma, rational.num.T)
        den = np.polynomial.polynomial.polyval(sigma, rational.den.T)
        size = np.polynomial.polynomial.polyval(np.abs(sigma), np.abs(rational.num).T) / np.abs(den)
        assert np.all(np.abs(rational.response(f) - num / den) <= 1e-12 * size)
        assert np.all(np.abs(rational.magnitude(f) - np.abs(num / den)) <= 1e-12 * size)
        per_build = f[None, :150] * np.linspace(0.9, 1.1, 40)[:, None]  # each build its own frequencies
        sigma = 1j * per_build / 1591.5
        reference = (np.polynomial.polynomial.polyval(sigma, rational.num.T[:, :, None], tensor=False)
                     / np.polynomial.polynomial.polyval(sigma, rational.den.T[:, :, None], tensor=False))
        assert np.allclose(rational.magnitude(per_build), np.abs(reference), rtol=1e-12, atol=1e-14)


class TestEnvelope:
    def test_equals_percentiles_of_every_build_at_every_point(self, monkeypatch):
        # reference: np.percentile over the nodal solve of each build (exact, no polynomial), floored
        # at the depth cap like the envelope; 1e-9 relative in |H| (the rational form's accuracy)
        run = tol.monte_carlo(NOMINAL, tol.Tolerances(0.01, 0.05), draws=300, seed=4)
        f = np.geomspace(200.0, 12000.0, 97)
        exact = np.abs(tol.builds(NOMINAL, run.deviation[:250]).response(f))
        level = 20 * np.log10(np.maximum(exact, 10 ** (-tol.DEPTH_CAP_DB / 20)))
        expected = np.percentile(level, tol.PERCENTILES, axis=0)
        monkeypatch.setattr(tol, "ENVELOPE_BLOCK_VALUES", 1000)  # several blocks of frequencies
        found = run.envelope(f, max_builds=250)
        assert np.allclose([found[f"p{p:g}"] for p in tol.PERCENTILES], expected, rtol=0, atol=1e-7)

    def test_kept_polynomials_equal_fresh_ones(self):
        # the first chunk's N(s)/D(s) kept by monte_carlo, against the builds formed again
        run = tol.monte_carlo(NOMINAL, ONE_PERCENT, draws=120, seed=8)
        f = np.geomspace(100.0, 25000.0, 64)
        kept = run.envelope(f, max_builds=100)
        fresh = dataclasses.replace(run, first_rational=None).envelope(f, max_builds=100)
        assert all(np.allclose(kept[k], fresh[k], rtol=0, atol=1e-12) for k in kept)
        assert run.first_rational.num.shape[0] == 120  # all the builds, never more than the first chunk


class TestMeasureBuilds:
    def test_matches_generic_measurement(self):
        # reference: emulate.analog.response.measure_batch on the nodal solve, full grid
        net = tol.builds(NOMINAL, tol.deviations(ONE_PERCENT, 9, range(20)))
        generic = measure_batch(net.response, search_hz=(1000, 2500))
        fast = tol.measure_builds(net, (1000, 2500), 1591.5)
        assert fast.notch_hz == pytest.approx([m.notch_hz for m in generic], rel=1e-8)
        assert fast.depth_db == pytest.approx([m.depth_below_passband_db for m in generic], abs=1e-6)

    def test_exact_null_is_capped(self):
        assert tol.measure_builds(NOMINAL, (1000, 2500), 1591.5).depth_db[0] == tol.DEPTH_CAP_DB


class TestMonteCarlo:
    def test_mt225_median_depth_near_60_db(self, mt225_run):
        # Analog Devices MT-225: "a 60 dB notch is as good as can be expected, with 40 to 50 dB
        # being more typical" with 1 % parts. Depth measured below the passband (0 dB here).
        # The median of builds uniform within 1 % lands near the 60 dB figure (measured 61 dB).
        assert 50.0 <= mt225_run.percentiles(mt225_run.depth_db)["p50"] <= 65.0

    def test_mt225_worst_corner_in_the_typical_region(self, mt225_run):
        # MT-225: 40 to 50 dB typical with 1 % parts. First order (derived here): |H| at the notch is
        # |m| / 8 for a null-condition miss m; the worst corner has |m| = 4 %, so 20 log10(200) = 46.0 dB.
        worst = mt225_run.corners.worst_depth_db
        assert 40.0 <= worst <= 50.0
        assert worst == pytest.approx(20 * math.log10(8 / 0.04), abs=0.5)  # second-order terms

    def test_notch_spread_follows_error_propagation(self, mt225_run):
        # Propagation of uncertainty: sigma_lnf^2 = sum (S_i sigma_i)^2 with S_i = dln f/dln part from
        # the symbolic numerator (-3/8 for R1, R2, C1, C2 and -1/4 for R3, C3), sigma_i = tol/sqrt(3)
        # (uniform). Six independent parts average: 0.586 sqrt(sigma_R^2 + sigma_C^2), not the single-R,
        # single-C figure. Sample std of 10,000 draws: relative standard error about 0.7 %; allow 3 %.
        s = symbolic_notch_sensitivities()
        assert s == pytest.approx([-3 / 8, -3 / 8, -1 / 4, -3 / 8, -3 / 8, -1 / 4])
        predicted = math.sqrt(np.sum((s * 0.01 / math.sqrt(3)) ** 2))
        measured = np.std(np.log(mt225_run.notch_hz / mt225_run.nominal_notch_hz))
        assert measured == pytest.approx(predicted, rel=0.03)

    def test_scaling_every_resistor_scales_the_notch(self):
        # f0 is proportional to 1/(R C) (MT-225): all resistors 2 % high move the notch by 1/1.02
        net = NOMINAL.replace(r1=NOMINAL.r1 * 1.02, r2=NOMINAL.r2 * 1.02, r3=NOMINAL.r3 * 1.02)
        f = tol.measure_builds(net, (1000, 2500), 1591.5).notch_hz[0]
        assert f == pytest.approx(1591.549430919 / 1.02, rel=1e-7)

    def test_corners_bound_every_draw(self, mt225_run):
        # The notch is monotonic in each part (all sensitivities negative), so its extremes lie on corners.
        # Depth is not monotonic in a part (it peaks where the null condition is met inside the box), but
        # the miss m is linear in the log deviations, so its largest |m|, the shallowest notch, is a corner.
        low, high = mt225_run.corners.notch_range_hz
        assert low <= mt225_run.notch_hz.min() and mt225_run.notch_hz.max() <= high
        assert mt225_run.corners.worst_depth_db <= mt225_run.depth_db.min()

    def test_sensitivity_names_the_shunt_parts_for_depth(self, mt225_run):
        # R3 and C3 enter the null condition with weight 1, the others with 1/2 (symbolic, above)
        ranking = mt225_run.sensitivity()
        assert {ranking[0].part, ranking[1].part} == {"R3", "C3"}
        assert all(item.notch_corr < 0 for item in ranking)

    def test_reproducible_and_json_ready(self):
        a = tol.monte_carlo(NOMINAL, ONE_PERCENT, draws=300, seed=5).as_dict()
        b = tol.monte_carlo(NOMINAL, ONE_PERCENT, draws=300, seed=5).as_dict()
        assert a == b
        assert {"notch_hz_p50", "depth_below_passband_db_p50", "yield", "worst_corner"} <= set(a)

    def test_yield_against_spec(self):
        loose = tol.monte_carlo(NOMINAL, tol.Tolerances(0.05, 0.1), draws=2000, seed=1, spec_db=45)
        assert 0.0 < loose.yield_fraction < 1.0
        assert loose.yield_fraction == pytest.approx(np.mean(loose.depth_db >= 45))

    @pytest.mark.parametrize("kwargs, match", [
        ({"draws": 0}, "draws"), ({"draws": 2.5}, "draws"), ({"seed": -1}, "seed"),
        ({"spec_db": 0}, "depth spec"),
    ])
    def test_refuses_bad_values(self, kwargs, match):
        with pytest.raises(BadValueError, match=match):
            tol.monte_carlo(NOMINAL, ONE_PERCENT, **kwargs)

    def test_refuses_batched_nominal(self):
        batch = tol.builds(NOMINAL, np.zeros((2, 6)))
        with pytest.raises(BadValueError, match="nominal"):
            tol.monte_carlo(batch, ONE_PERCENT, draws=10)


class TestWorstCorners:
    def test_sixty_four_corners_and_zero_tolerance(self):
        corners = tol.worst_corners(NOMINAL, tol.Tolerances(0.0, 0.0))
        assert corners.signs.shape == (64, 6)
        assert np.all(corners.depth_db == tol.DEPTH_CAP_DB)


class TestBuildAt:
    def test_draw_number_is_reproducible_alone(self, mt225_run):
        alone = tol.build_at(NOMINAL, ONE_PERCENT, 37, seed=2024)
        assert alone == mt225_run.draw(37)

    def test_worst_and_typical(self, mt225_run):
        worst = tol.build_at(NOMINAL, ONE_PERCENT, "worst")
        signs = np.sign([getattr(worst, n) / getattr(NOMINAL, n) - 1 for n in PART_NAMES])
        assert np.array_equal(signs, mt225_run.corners.signs[mt225_run.corners.worst_index])
        typical = tol.build_at(NOMINAL, ONE_PERCENT, "typical", seed=2024)
        assert typical == mt225_run.draw(mt225_run.typical_index)

    def test_typical_tie_goes_to_the_lower_draw_number(self):
        # an even count: the two middle depths lie equally far from their median (here 2.5 - 1e-9);
        # a difference of 2e-9 dB in their distances is round-off, so the lower number wins
        run = tol.monte_carlo(NOMINAL, ONE_PERCENT, draws=4, seed=1)
        run = dataclasses.replace(run, depth_db=np.array([0.0, 3.0, 2.0 - 2e-9, 10.0]),
                                  oscillation_hz=np.full(4, np.nan), in_range=np.ones(4, bool))
        assert run.typical_index == 1

    @pytest.mark.parametrize("which", ["best", "-2", "3.5"])
    def test_refuses_unknown(self, which):
        with pytest.raises(BadValueError, match="build"):
            tol.build_at(NOMINAL, ONE_PERCENT, which)


class TestToleranceCommand:
    BALANCED = ["--r1", "10k", "--r2", "10k", "--r3", "5k", "--c1", "10n", "--c2", "10n", "--c3", "20n"]

    def run(self, *args):
        from click.testing import CliRunner

        from emulate.cli import main
        return CliRunner().invoke(main, ["tolerance", *self.BALANCED, *map(str, args)])

    def test_json_has_the_figures(self, tmp_path):
        import json

        result = self.run("--r-tol", "F", "--c-tol", "1%", "--draws", "500", "--json", "--plot", tmp_path / "t.png")
        assert result.exit_code == 0, result.output
        payload = json.loads(result.output)
        assert {"notch_hz_p50", "depth_below_passband_db_p50", "yield", "worst_corner", "trim"} <= set(payload)
        assert payload["trim"]["part"] == "R3" and (tmp_path / "t.png").exists()

    @pytest.mark.parametrize("args, match", [(["--r-tol", "70%"], "tolerance"), (["--draws", "0"], "draws"),
                                             (["--trim-share", "2"], "trim share")])
    def test_bad_values_are_one_line(self, args, match):
        result = self.run(*args)
        assert result.exit_code != 0 and "Traceback" not in result.output
        assert match in result.output.strip().splitlines()[-1]


# --- issue 11: per-part tolerances, the divider, chunks ------------------------------------

ACTIVE = NOMINAL.replace(bootstrap=0.75)  # Q = 1/(4(1-K)) = 1 (MT-225)


class TestPerPartTolerances:
    def test_override_one_part(self):
        t = tol.Tolerances.parse("1%", "5%", per_part=["R3=0.1%", "r4=0.5%"])
        assert t.of("R3") == pytest.approx(0.001) and t.of("r4") == pytest.approx(0.005)
        assert t.of("r1") == 0.01 and t.of("c2") == 0.05 and "R3 0.1 %" in t.describe()

    @pytest.mark.parametrize("entry, match", [("R9=1%", "part 'R9'"), ("R3", "NAME=TOL"), ("R3=70%", "tolerance")])
    def test_refuses_bad_entries(self, entry, match):
        with pytest.raises(BadValueError, match=match):
            tol.Tolerances.parse("1%", "5%", per_part=[entry])

    def test_a_tight_part_varies_less(self):
        t = tol.Tolerances.parse("1%", "1%", per_part=["R3=0.1%"])
        run = tol.monte_carlo(NOMINAL, t, draws=500, seed=3)
        assert np.abs(run.deviation[:, 2]).max() <= 0.001 and np.abs(run.deviation[:, 0]).max() > 0.005


class TestDividerK:
    def test_formula(self):
        # K = Rb / (Rt + Rb) with Rt / Rb = (1 - K) / K nominally (voltage divider, textbook)
        rt, rb = 1e3, 3e3
        assert tol.divider_k(0.75, 0.02, -0.01) == pytest.approx(rb * 0.99 / (rt * 1.02 + rb * 0.99), rel=1e-12)


class TestDividerVaries:
    @pytest.fixture(scope="class")
    @classmethod
    def run(cls):
        return tol.monte_carlo(ACTIVE, tol.Tolerances.parse("1%", "0%", per_part=["R1=0", "R2=0", "R3=0"]),
                               draws=400, seed=5)

    def test_only_q_moves(self, run):
        # the divider moves K, so Q, never the null (the zero is independent of the foot drive):
        # with every twin-T part exact the notch stays put and stays an exact null
        assert run.deviation.shape[1] == 8
        assert np.ptp(run.notch_hz) / 1591.55 < 1e-6
        assert run.depth_db.min() > 150
        k = tol.builds(ACTIVE, run.deviation).bootstrap
        assert np.ptp(k) > 0  # 1 % divider parts: K spreads by about +-K(1-K) 2 % = +-0.4 %

    def test_corners_include_the_divider(self):
        corners = tol.worst_corners(ACTIVE, tol.Tolerances(0.01, 0.01))
        assert len(corners.signs) == 256 and corners.names[-2:] == ("r4", "r5")


class TestChunks:
    def test_chunked_draws_equal_one_batch(self, monkeypatch):
        # draw i depends on (seed, i) only, so chunk boundaries must not change any build
        whole = tol.monte_carlo(NOMINAL, ONE_PERCENT, draws=300, seed=9)
        monkeypatch.setattr(tol, "CHUNK_DRAWS", 64)
        seen = []
        chunked = tol.monte_carlo(NOMINAL, ONE_PERCENT, draws=300, seed=9, progress=seen.append)
        assert np.array_equal(whole.deviation, chunked.deviation)
        assert np.allclose(whole.notch_hz, chunked.notch_hz, rtol=1e-12)
        assert seen == [64, 64, 64, 64, 44]


class TestRankCorrelation:
    @pytest.mark.parametrize("seed, ties", [(0, False), (1, True), (2, True)])
    def test_equals_scipy_spearmanr(self, seed, ties):
        # Reference: scipy.stats.spearmanr (Pearson's correlation of average ranks); rounding only.
        from scipy import stats

        rng = np.random.default_rng(seed)
        a = rng.normal(size=500)
        b = 0.3 * a + rng.normal(size=500)
        if ties:
            a, b = np.round(a, 1), np.where(b > 1.0, 0.0, b)  # many equal values on both sides
        assert tol.rank_correlation(a, b) == pytest.approx(stats.spearmanr(a, b).statistic, abs=1e-12)

    def test_constant_side_gives_nan(self):
        assert np.isnan(tol.rank_correlation([1.0, 1.0, 1.0], [1.0, 2.0, 3.0]))
