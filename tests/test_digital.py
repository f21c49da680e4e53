"""Tests for emulate.dsp.digital: the bilinear stage and the fidelity target (mix and depth: test_depth.py)."""

import math

import numpy as np
import pytest
from scipy import signal

from emulate.dsp import digital
from emulate.dsp.digital import (
    DigitalNotch,
    analog_null_hz,
    bilinear_prewarped_zpk,
    check_sample_rate_hz,
    design_sections,
    fidelity_band_hz,
    fidelity_error_db,
)
from emulate.errors import BadValueError, CircuitError


def notch_zpk(f0_hz, q=0.25, *, load=False, zero_offset=0.0):
    """Analog notch (s^2 + w0^2) / (s^2 + (w0/q) s + w0^2), optionally 3rd order and shallow.

    q = 0.25 is the balanced passive twin-T, q = 1/(4(1-K)) the bootstrapped one
    (Analog Devices MT-225).  ``load`` multiplies by 0.7 (s + 0.5 w0) / (s + 0.8 w0):
    a 3rd-order network with DC gain 0.4375 and HF gain 0.7, as a source and load
    resistance give.  ``zero_offset`` moves the zeros to -offset*w0 +/- j w0 (off the
    j-axis: a shallow notch; negative offsets put them in the right half-plane).
    """
    w0 = 2.0 * np.pi * f0_hz
    z = np.array([-zero_offset * w0 + 1j * w0, -zero_offset * w0 - 1j * w0])
    p = np.roots([1.0, w0 / q, w0**2])
    k = 1.0
    if load:
        z, p, k = np.append(z, -0.5 * w0), np.append(p, -0.8 * w0), 0.7
    return z, p, k


def independent_error_db(z, p, k, sos, fs, hi_hz):
    """Worst |dB| error on a plain 6000-point linear grid (a second opinion on fidelity_error_db)."""
    f = np.linspace(20.0, hi_hz, 6000)
    _, h_a = signal.freqs_zpk(z, p, k, worN=2 * np.pi * f)
    _, h_d = signal.sosfreqz(sos, worN=f, fs=fs)
    db_a, db_d = 20 * np.log10(np.abs(h_a)), 20 * np.log10(np.abs(h_d))
    mask = db_a > -30.0
    return float(np.max(np.abs(db_a[mask] - db_d[mask])))


VARIANTS = {
    "plain": {},
    "load": {"load": True},
    "shallow": {"zero_offset": 0.02},
    "rhp-load": {"zero_offset": -0.02, "load": True},
}


class TestBilinearPrewarpedZpk:
    @pytest.mark.parametrize("variant", sorted(VARIANTS))
    @pytest.mark.parametrize("fs, f0", [(44100, 1000.0), (48000, 10000.0), (96000, 3000.0), (16000, 5000.0)])
    def test_matches_scipy_bilinear_zpk(self, variant, fs, f0):
        # Reference: scipy.signal.bilinear_zpk uses s = 2 fs' (z-1)/(z+1); the prewarped map
        # s = c (z-1)/(z+1), c = w/tan(w/(2 fs)) (Oppenheim & Schafer sec. 7.2) is that with fs' = c/2.
        z, p, k = notch_zpk(f0, 2.0, **VARIANTS[variant])
        w = 2 * np.pi * f0
        zr, pr, kr = signal.bilinear_zpk(z, p, k, w / math.tan(w / (2 * fs)) / 2)
        zd, pd, kd = bilinear_prewarped_zpk(z, p, k, fs, f0)
        # Coefficient for coefficient; 1e-12 is a few hundred ulps of roots near |z| = 1.
        np.testing.assert_allclose(np.sort_complex(zd), np.sort_complex(zr), rtol=0, atol=1e-12)
        np.testing.assert_allclose(np.sort_complex(pd), np.sort_complex(pr), rtol=0, atol=1e-12)
        assert kd == pytest.approx(kr, rel=1e-12)

    @pytest.mark.parametrize("fs, f0", [(44100, 12000.0), (32000, 15000.0), (96000, 50.0)])
    def test_notch_lands_on_warp_frequency(self, fs, f0):
        # Prewarping maps the analog j*w0 exactly to exp(j 2 pi f0 / fs) (O&S sec. 7.2).
        zd, _, _ = bilinear_prewarped_zpk(*notch_zpk(f0), fs, f0)
        assert np.max(np.abs(zd)) == pytest.approx(1.0, abs=1e-12)
        assert np.abs(np.angle(zd[0])) * fs / (2 * np.pi) == pytest.approx(f0, rel=1e-12)

    def test_zeros_at_infinity_map_to_minus_one(self):
        # O&S sec. 7.2: s -> infinity is z = -1; a 2-pole, 0-zero low-pass gets a double zero there.
        w0 = 2 * np.pi * 1000
        zd, _, _ = bilinear_prewarped_zpk([], np.roots([1, w0, w0**2]), w0**2, 48000, 1000)
        np.testing.assert_allclose(zd, [-1.0, -1.0])

    @pytest.mark.parametrize(
        "fs, warp, match",
        [(0.0, 100.0, r"sample rate \(Hz\) 0.0"), (-1.0, 100.0, r"sample rate \(Hz\) -1.0"), (48000, 24000.0, "notch 24000.0"),
         (48000, 0.0, "notch 0.0"), (48000, float("nan"), "notch nan")],
    )
    def test_rejects_bad_rate_and_warp(self, fs, warp, match):
        with pytest.raises(BadValueError, match=match):
            bilinear_prewarped_zpk(*notch_zpk(1000.0), fs, warp)

    def test_rejects_unstable_and_improper(self):
        with pytest.raises(CircuitError, match="left half-plane"):
            bilinear_prewarped_zpk([], [1.0 + 0j], 1.0, 48000, 1000)
        with pytest.raises(CircuitError, match="3 zeros but 2 poles"):
            bilinear_prewarped_zpk([1, 2, 3], [-1, -2], 1.0, 48000, 1000)


# Fidelity target (from the task): within 0.1 dB from 20 Hz to 20 kHz where the analog is
# above -30 dB, notch within 0.1 %, notches 50 Hz - 12 kHz, Q 0.25 - 5, 44.1/48/96 kHz.
FAST_GRID = [
    (fs, f0, q, v)
    for fs in (44100, 48000, 96000)
    for f0 in (50.0, 1000.0, 5000.0, 12000.0)
    for q in (0.25, 5.0)
    for v in ("plain", "rhp-load")
]
FULL_GRID = [
    (fs, f0, q, v)
    for fs in (44100, 48000, 96000)
    for f0 in (50.0, 100.0, 300.0, 1000.0, 2000.0, 3000.0, 5000.0, 8000.0, 10000.0, 12000.0)
    for q in (0.25, 0.5, 1.0, 2.0, 5.0)
    for v in sorted(VARIANTS)
]
# Below 44.1 kHz: band to 0.9 Nyquist, notches up to 0.75 of the band top.
LOW_RATE_GRID = [
    (fs, f0, q, v)
    for fs in (16000, 22050, 32000)
    for f0 in (50.0, 1000.0, 0.35 * fs)
    for q in (0.25, 5.0)
    for v in ("plain", "rhp-load")
]


def check_design(fs, f0, q, variant):
    z, p, k = notch_zpk(f0, q, **VARIANTS[variant])
    design = design_sections(z, p, k, fs, notch_hz=f0)
    band = fidelity_band_hz(fs)
    assert design.band_hz == band
    assert design.fidelity_db <= 0.1
    assert independent_error_db(z, p, k, design.sos, fs, band[1]) <= 0.1
    # Notch within 0.1 %; the analog null found independently of the design.
    assert design.notch_hz == pytest.approx(analog_null_hz(z, p, k, f0), rel=1e-3)
    # Stability: every pole strictly inside the unit circle.
    _, p_d, _ = signal.sos2zpk(design.sos)
    assert np.max(np.abs(p_d)) < 1.0
    return design


class TestDesignSections:
    @pytest.mark.parametrize("fs, f0, q, variant", FAST_GRID)
    def test_fidelity_target(self, fs, f0, q, variant):
        check_design(fs, f0, q, variant)

    @pytest.mark.slow
    @pytest.mark.parametrize("fs, f0, q, variant", FULL_GRID)
    def test_fidelity_target_full_grid(self, fs, f0, q, variant):
        check_design(fs, f0, q, variant)

    @pytest.mark.parametrize("fs, f0, q, variant", LOW_RATE_GRID)
    def test_low_rates_to_nine_tenths_nyquist(self, fs, f0, q, variant):
        # No published target below 44.1 kHz; measured here (see bench_fidelity.py) within 0.1 dB.
        design = check_design(fs, f0, q, variant)
        assert design.band_hz[1] == pytest.approx(0.45 * fs)

    def test_bilinear_kept_where_it_is_good_enough(self):
        # Planning measurement: plain bilinear within 0.02 dB up to a 300 Hz notch at 44.1 kHz.
        design = design_sections(*notch_zpk(300.0), 44100, notch_hz=300.0)
        assert design.method == "bilinear"
        assert design.sos.shape == (1, 6)

    def test_correction_takes_over_near_nyquist(self):
        # Planning measurement: plain bilinear is about 8 dB off for a 10 kHz passive notch at 44.1 kHz.
        z, p, k = notch_zpk(10000.0)
        plain = signal.zpk2sos(*bilinear_prewarped_zpk(z, p, k, 44100, 10000.0))
        assert fidelity_error_db(z, p, k, plain, 44100, (20, 20000)) == pytest.approx(8.0, abs=0.2)
        design = design_sections(z, p, k, 44100, notch_hz=10000.0)
        assert design.method.startswith("matched+fit")
        # a few biquads at the base rate; the phase all-pass adds up to 2 more
        assert design.sos.shape[0] <= 5
        assert design.phase_error_deg <= 5.0

    def test_high_q_active_notch_against_iirnotch(self):
        # Reference: scipy.signal.iirnotch (Orfanidis, Introduction to Signal Processing, 1996),
        # a bilinear design warped at the notch bandwidth, so only approximately the same as ours
        # (warped at the notch frequency).  Near the null |H| ~ |f - f0| / (bw / 2), so a
        # relative bandwidth difference d shows as 20 log10(1 + d) dB; the two warps differ by
        # a few tenths of a percent at 1 kHz / 48 kHz (0.025 dB measured), hence 0.05 dB.
        fs, f0, q = 48000, 1000.0, 5.0
        design = design_sections(*notch_zpk(f0, q), fs, notch_hz=f0)
        b, a = signal.iirnotch(f0, q, fs)
        f = np.linspace(20, 20000, 4000)
        _, h_ref = signal.freqz(b, a, worN=f, fs=fs)
        _, h = signal.sosfreqz(design.sos, worN=f, fs=fs)
        mask = np.abs(h_ref) > 10 ** (-30 / 20)
        assert np.max(np.abs(20 * np.log10(np.abs(h[mask]) / np.abs(h_ref[mask])))) < 0.05
        assert design.notch_hz == pytest.approx(f0, rel=1e-6)

    def test_returns_frozen_dataclass(self):
        design = design_sections(*notch_zpk(2000.0), 48000, notch_hz=2000.0)
        assert isinstance(design, DigitalNotch)
        assert design.sos.dtype == np.float64 and design.sos.shape[1] == 6
        assert design.latency_samples in range(5)  # the phase all-pass order, 0 to 4
        np.testing.assert_allclose(design.sos[:, 3], 1.0)
        with pytest.raises(AttributeError):
            design.fs = 1.0

    def test_real_network_from_circuit_engine(self):
        # Integration with emulate.analog.networks (balanced twin-T, 600 ohm source, 10 kohm load).
        networks = pytest.importorskip("emulate.analog.networks")
        twin = networks.TwinT.balanced(8000.0, r_ohms=10e3, source_ohms=600.0, load_ohms=10e3)
        z, p, k = twin.zpk()
        design = design_sections(z, p, k, 44100, notch_hz=8000.0)
        assert design.fidelity_db <= 0.1
        assert design.notch_hz == pytest.approx(analog_null_hz(z, p, k, 8000.0), rel=1e-3)

    @pytest.mark.parametrize(
        "kwargs, match",
        [({"fs": 0}, r"sample rate \(Hz\) 0: allowed \(0, inf\)"), ({"notch_hz": -5.0}, "notch -5.0"),
         ({"tolerance_db": 0.0}, r"tolerance \(dB\) 0.0: allowed \(0, inf\)"),
         ({"tolerance_db": -1}, r"tolerance \(dB\) -1"), ({"tolerance_db": "tight"}, r"tolerance \(dB\) 'tight'")],
    )
    def test_rejects_bad_values(self, kwargs, match):
        args = {"fs": 48000, "notch_hz": 1000.0, "tolerance_db": 0.1} | kwargs
        with pytest.raises(BadValueError, match=match):
            design_sections(*notch_zpk(1000.0), **args)


class TestDesignNeverThrows:
    def test_svd_did_not_converge(self):
        # Regression (issue 10, defect 2): a bootstrapped network with a mix ended in
        # "LinAlgError: SVD did not converge" in the correction fit.  The design must come back,
        # meeting the target (0.1 dB, 5 degrees: the fidelity target of this module).
        from emulate.analog.networks import TwinT
        net = TwinT(87947.18, 192.873, 19634.7, 3.311e-10, 1.244e-9, 1.948e-10, bootstrap=0.20786, mix=0.34354)
        z, p, k = net.zpk()
        design = design_sections(z, p, k, 44100, notch_hz=analog_null_hz(z, p, k, 5000.0))
        assert np.all(np.isfinite(design.sos)) and design.fidelity_db <= 0.1

    @pytest.mark.parametrize("fs, f0", [(32000, 16300.0), (8000, 6500.0), (44100, 19000.0), (44100, 0.49 * 44100),
                                       (32000, 16000.0), (16000, 8000.0)])  # at Nyquist exactly too
    def test_notch_at_or_above_nyquist_refused(self, fs, f0):
        # Regression (issue 10, defect 3): "notch 16300 Hz is not allowed at 32000 Hz"; the part of
        # the response below Nyquist is emulated instead, within the 0.1 dB / 5 degree target.
        z, p, k = notch_zpk(f0)
        design = design_sections(z, p, k, fs, notch_hz=f0)
        assert design.fidelity_db <= 0.1 and design.phase_error_deg <= 5.0 and design.meets_target

    @pytest.mark.parametrize("fs, f0, q", [(44100, 10000.0, 0.25), (48000, 5000.0, 0.25), (96000, 3000.0, 5.0),
                                           (16000, 3000.0, 1.0)])
    def test_phase_44_degrees_off(self, fs, f0, q):
        # Regression (issue 10, defect 4): the digital phase was up to 44 degrees off the analog near
        # the top of the band.  Target: 5 degrees up to 0.35 fs (checked independently here on a
        # 6000-point grid with scipy.signal.freqs_zpk and sosfreqz as references).
        z, p, k = notch_zpk(f0, q)
        design = design_sections(z, p, k, fs, notch_hz=f0)
        f = np.linspace(20, min(20000, 0.35 * fs), 6000)
        _, h_a = signal.freqs_zpk(z, p, k, worN=2 * np.pi * f)
        _, h_d = signal.sosfreqz(design.sos, worN=f, fs=fs)
        h_d = h_d * np.exp(2j * np.pi * f * design.latency_samples / fs)  # latency compensated
        keep = 20 * np.log10(np.abs(h_a)) > -30
        assert np.max(np.degrees(np.abs(np.angle(h_d[keep] / h_a[keep])))) <= 5.0

    def test_shortfall_line_when_target_missed(self):
        design = design_sections(*notch_zpk(1000.0), 48000, notch_hz=1000.0)
        assert design.shortfall() is None
        missed = DigitalNotch(design.sos, 48000.0, 0, "bilinear", 0.7, (20.0, 20000.0), 1000.0, 3.0, (20.0, 16800.0))
        assert "reaches only 0.70 dB" in missed.shortfall() and "rendered anyway" in missed.shortfall()


class TestFidelityErrorDb:
    def test_gain_mismatch_is_exact(self):
        # Arithmetic: 20 log10(2) = 6.0206 dB for a pure gain of 2 against 1.
        sos = np.array([[1.0, 0, 0, 1.0, 0, 0]])
        assert fidelity_error_db([], [], 2.0, sos, 48000, (20, 20000)) == pytest.approx(20 * math.log10(2))

    def test_identical_gain_is_zero(self):
        sos = np.array([[0.5, 0, 0, 1.0, 0, 0]])
        assert fidelity_error_db([], [], 0.5, sos, 48000, (20, 20000)) == pytest.approx(0.0, abs=1e-12)

    def test_below_floor_is_ignored(self):
        # The target applies only where the analog is above -30 dB: a -40 dB gain checks nothing.
        sos = np.array([[1.0, 0, 0, 1.0, 0, 0]])
        assert fidelity_error_db([], [], 0.01, sos, 48000, (20, 20000)) == 0.0

    @pytest.mark.parametrize("band", [(0, 1000), (2000, 1000), (20, 30000)])
    def test_rejects_bad_band(self, band):
        with pytest.raises(BadValueError, match="band"):
            fidelity_error_db([], [], 1.0, np.array([[1.0, 0, 0, 1, 0, 0]]), 48000, band)


class TestFidelityBandHz:
    @pytest.mark.parametrize("fs, hi", [(44100, 19845.0), (96000, 20000.0), (32000, 14400.0), (16000, 7200.0)])
    def test_band(self, fs, hi):
        assert fidelity_band_hz(fs) == (20.0, hi)


class TestAnalogNullHz:
    @pytest.mark.parametrize("f0", [50.0, 1000.0, 12000.0])
    def test_balanced_null_at_w0(self, f0):
        # MT-225: the balanced twin-T nulls at f0 = 1/(2 pi R C), the zeros +/- j w0.
        assert analog_null_hz(*notch_zpk(f0), 0.95 * f0) == pytest.approx(f0, rel=1e-7)


class TestCheckSampleRateHz:
    @pytest.mark.parametrize("good", [8000, 44100.0, "48000"])
    def test_accepts(self, good):
        assert check_sample_rate_hz(good) == float(good)

    @pytest.mark.parametrize("bad", [0, -44100, float("inf"), float("nan"), "fast", None])
    def test_rejects(self, bad):
        # One line showing the value and the allowed open interval.
        with pytest.raises(BadValueError, match=r"sample rate \(Hz\) .*: allowed \(0, inf\)"):
            check_sample_rate_hz(bad)


# --- the numpy replacements for scipy.signal / scipy.optimize (scipy is the reference) ---

# Relative agreement required with scipy: both evaluate the same products in the same
# order, so they agree to a few ulp; 1e-12 leaves room for summation order only.
SAME_RESPONSE_REL = 1e-12


def digital_candidates():
    """(name, z, p, k) of every digital design the pipeline proposes, across rates and variants."""
    cases = []
    for fs, f0, q in [(44100, 300.0, 0.25), (44100, 10000.0, 0.25), (48000, 6000.0, 2.5), (96000, 3000.0, 5.0),
                      (32000, 11000.0, 0.25)]:
        for variant in sorted(VARIANTS):
            z, p, k = notch_zpk(f0, q, **VARIANTS[variant])
            band = fidelity_band_hz(fs)
            for method, z_d, p_d, k_d in digital._candidates(z, p, k, fs, f0, band):
                cases.append((f"{fs}-{f0:g}-{q:g}-{variant}-{method}", z_d, p_d, k_d))
    return cases


CANDIDATES = digital_candidates()
# scipy.signal.zpk2sos documentation example: 3 zeros and 3 poles, mixed real and complex.
DOC_EXAMPLE = (np.array([-1, -0.5 - 0.5j, -0.5 + 0.5j]), np.array([0.75, 0.8 + 0.1j, 0.8 - 0.1j]), 1.0)


def grid_hz(fs):
    # a grid that avoids landing exactly on a null (relative error is undefined there)
    return np.linspace(7.3, 0.4999 * fs, 3001)


def relative_difference(h, h_ref):
    return float(np.max(np.abs(h - h_ref) / np.abs(h_ref)))


class TestZpkToSos:
    @pytest.mark.parametrize("name, z, p, k", CANDIDATES, ids=[c[0] for c in CANDIDATES])
    def test_same_sections_as_scipy(self, name, z, p, k):
        # Reference: scipy.signal.zpk2sos (default pairing "nearest"); the same pairing rule
        # gives the same sections in the same order, so the responses agree to rounding.
        sos, ref = digital._zpk_to_sos(z, p, k), signal.zpk2sos(z, p, k)
        np.testing.assert_allclose(sos, ref, rtol=SAME_RESPONSE_REL, atol=1e-15)
        fs = 48000.0
        _, h_ref = signal.sosfreqz(ref, worN=grid_hz(fs), fs=fs)
        assert relative_difference(digital._sos_response_z(sos, grid_hz(fs), fs), h_ref) <= SAME_RESPONSE_REL

    @pytest.mark.parametrize("z, p, k", [DOC_EXAMPLE, ([], [], 0.5), ([0.5], [0.1, -0.2], 2.0),
                                         ([-1, -1], [0.9j, -0.9j], 1.0)])
    def test_odd_counts_and_padding_as_scipy(self, z, p, k):
        # Reference: scipy.signal.zpk2sos pads roots at z = 0 to equal, even counts.
        np.testing.assert_allclose(digital._zpk_to_sos(z, p, k), signal.zpk2sos(z, p, k),
                                   rtol=SAME_RESPONSE_REL, atol=1e-15)

    def test_rejects_unpaired_complex_root(self):
        with pytest.raises(BadValueError, match=r"root .* has no complex conjugate"):
            digital._zpk_to_sos([0.5 + 0.5j, 0.5 - 0.4j], [0.1, 0.2], 1.0)


class TestZpkResponseS:
    @pytest.mark.parametrize("variant", sorted(VARIANTS))
    @pytest.mark.parametrize("f0, q", [(50.0, 0.25), (6000.0, 5.0)])
    def test_matches_scipy_freqs_zpk(self, variant, f0, q):
        # Reference: scipy.signal.freqs_zpk.
        z, p, k = notch_zpk(f0, q, **VARIANTS[variant])
        w = 2 * np.pi * grid_hz(96000)
        _, h_ref = signal.freqs_zpk(z, p, k, worN=w)
        assert relative_difference(digital._zpk_response_s(z, p, k, w), h_ref) <= SAME_RESPONSE_REL

    def test_pure_gain(self):
        np.testing.assert_array_equal(digital._zpk_response_s([], [], 0.5, [1.0, 10.0]), [0.5, 0.5])


class TestSosResponseZ:
    @pytest.mark.parametrize("seed", range(4))
    def test_matches_scipy_sosfreqz(self, seed):
        # Reference: scipy.signal.sosfreqz, on random stable cascades of 1 to 4 sections.
        rng = np.random.default_rng(seed)
        n = 1 + seed
        radius, angle = rng.uniform(0.1, 0.99, n), rng.uniform(0, np.pi, n)
        sos = np.column_stack([rng.normal(size=(n, 3)), np.ones(n), -2 * radius * np.cos(angle), radius**2])
        fs = 44100.0
        _, h_ref = signal.sosfreqz(sos, worN=grid_hz(fs), fs=fs)
        assert relative_difference(digital._sos_response_z(sos, grid_hz(fs), fs), h_ref) <= SAME_RESPONSE_REL


class TestAnalogNull:
    @pytest.mark.parametrize("f0, q, variant", [(1000.0, 0.25, "shallow"), (8000.0, 2.0, "rhp-load")])
    def test_null_agrees_with_scipy_bounded_minimiser(self, f0, q, variant):
        # Reference: scipy.optimize.minimize_scalar(method="bounded") on the same bracket;
        # both stop within 1e-9 of the notch (the tolerance analog_null_hz asks for).
        from scipy import optimize

        z, p, k = notch_zpk(f0, q, **VARIANTS[variant])

        def mag(f):
            return float(np.abs(signal.freqs_zpk(z, p, k, worN=[2 * np.pi * f])[1][0]))

        ref = optimize.minimize_scalar(mag, bounds=(0.8 * f0, 1.25 * f0), method="bounded",
                                       options={"xatol": 1e-10 * f0}).x
        assert analog_null_hz(z, p, k, f0) == pytest.approx(ref, rel=5e-9)
