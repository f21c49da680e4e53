"""Tests of the steady-tone check (emulate.voice.resonance.steady): a tone between the words is
not a resonance.

References: the power of Gaussian noise in any band (its analytic signal's ``|z|^2``) is
exponentially distributed (a chi-square of two degrees of freedom), so ``E[P^2] = 2 E[P]^2``; a
steady tone's is constant, and a tone of ``r`` times the band's noise power gives
``E[P^2] / E[P]^2 = (r^2 + 4 r + 2) / (r + 1)^2`` (the moments of a noncentral chi-square of two
degrees of freedom, e.g. Papoulis, Probability, Random Variables and Stochastic Processes;
from memory). Tones and noise here are invented test signals.
"""

import math

import numpy as np
import pytest
from scipy import signal

from emulate.report.summary import resonance_text
from emulate.voice.resonance.finder import ResonanceReport, find_resonance
from emulate.voice.resonance.fit import ResonancePeak
from emulate.voice.resonance.steady import band_kappa, is_steady_tone

FS = 48000
PEAK = ResonancePeak(1000.0, 10.0, 10.0, 1.0)


def _whole(x):
    return x, np.array([x.size])


def _wobbling_tone(seconds, deviation, rms=0.01):
    t = np.arange(int(seconds * FS)) / FS
    return rms * math.sqrt(2.0) * np.sin(2 * np.pi * 1000 * t + deviation * 1000 / 0.3 * np.sin(2 * np.pi * 0.3 * t))


class TestBandKappa:
    def test_noise_through_a_resonance_is_two(self):
        noise = np.random.default_rng(0).standard_normal(20 * FS)
        coloured = signal.lfilter(*signal.iirpeak(1000.0, 10.0, fs=FS), noise) + 0.1 * noise
        kappa, n = band_kappa(*_whole(coloured), FS, PEAK)
        assert n > 1500 and kappa == pytest.approx(2.0, abs=3 * 2 / math.sqrt(n))

    @pytest.mark.parametrize("r", [1.0, 3.0, 10.0])
    def test_a_tone_in_noise_follows_the_noncentral_moments(self, r):
        # the band is 100 Hz of white noise: its power there is sigma^2 * 100 / (FS / 2)
        sigma = 1.0
        in_band = sigma**2 * 100.0 / (FS / 2)
        amplitude = math.sqrt(2.0 * r * in_band)
        t = np.arange(60 * FS) / FS
        x = amplitude * np.sin(2 * np.pi * 1000 * t) + sigma * np.random.default_rng(1).standard_normal(t.size)
        kappa, n = band_kappa(*_whole(x), FS, PEAK)
        # the Butterworth band's noise bandwidth is not exactly 100 Hz: r read within about 15 %
        want = [(rr**2 + 4 * rr + 2) / (rr + 1) ** 2 for rr in (0.85 * r, 1.15 * r)]
        assert min(want) - 0.05 <= kappa <= max(want) + 0.05

    def test_too_little_is_nan(self):
        kappa, n = band_kappa(*_whole(np.ones(100)), FS, PEAK)
        assert n == 0 and math.isnan(kappa)


class TestIsSteadyTone:
    def test_a_wobbling_tone_is_a_tone(self):
        x = _wobbling_tone(6, 0.03) + 0.01 * np.random.default_rng(4).standard_normal(6 * FS)
        assert is_steady_tone(*_whole(x), FS, ResonancePeak(1000.0, 33.0, 25.0, 1.0))

    def test_a_resonance_is_not(self):
        noise = np.random.default_rng(5).standard_normal(6 * FS)
        coloured = signal.lfilter(*signal.iirpeak(1000.0, 20.0, fs=FS), noise) + 0.1 * noise
        assert not is_steady_tone(*_whole(coloured), FS, ResonancePeak(1000.0, 20.0, 20.0, 1.0))


class TestInTheFinder:
    @pytest.mark.parametrize("seconds", [6, 8])
    def test_a_whine_is_not_reported_as_a_resonance(self, seconds):
        # room noise with a fan's whine wobbling +-3 % at 0.3 Hz: read as a peak of Q 17-33, +25-30 dB
        x = 0.01 * np.random.default_rng(4).standard_normal(seconds * FS) + _wobbling_tone(seconds, 0.03)
        r = find_resonance(x, FS)
        assert not r.found and len(r.steady_tones_hz) == 1
        assert r.steady_tones_hz[0] == pytest.approx(1000.0, rel=0.01)

    @pytest.mark.slow
    def test_a_resonance_with_a_whine_beside_it(self):
        # a grid case (tests/resonance_grid.py: 630 Hz, +10 dB, Q 10, R. Bristow-Johnson's cookbook
        # biquad) with a -75 dBFS whine wobbling +-3 % about 3 kHz: the resonance reported, the whine listed
        import resonance_grid as grid

        case = grid.Case(630.0, 10.0, 10.0, FS, 110.0, seed=5)
        x = grid.make_case(case)
        t = np.arange(x.size) / FS
        x = x + 10 ** (-75 / 20) * math.sqrt(2) * np.sin(2 * np.pi * 3000 * t + 0.03 * 3000 / 0.3 * np.sin(2 * np.pi * 0.3 * t))
        r = find_resonance(x, FS)
        assert r.found and grid.judge(r, case)[0]
        assert len(r.steady_tones_hz) == 1 and r.steady_tones_hz[0] == pytest.approx(3000.0, rel=0.03)

    def test_the_text_names_the_tones(self):
        report = ResonanceReport(False, "no narrow persistent peak over the neighbourhood", 10.0, None, (), None,
                                 steady_tones_hz=(1000.04,))
        assert "steady tones between the words, not resonances: 1000.0 Hz" in resonance_text("a.wav", report, [])
