"""Tests of loudness (emulate.voice.loudness) and the dry/wet comparison (emulate.voice.compare).

Outside references, named beside each check: ITU-R BS.1770-4 Annex 1 (K-weighting coefficients,
the -3.01 LKFS sine), scipy.signal as a reference library.
"""

import numpy as np
import pytest
from scipy import signal

from emulate.errors import BadValueError
from emulate.voice import bands, compare, loudness
from emulate.voice.loudness import loudness_change_db, loudness_lufs


def _sine(freq_hz, fs, seconds=2.0, amplitude=1.0):
    t = np.arange(round(seconds * fs)) / fs
    return amplitude * np.sin(2 * np.pi * freq_hz * t)


def _noise(fs, seconds=1.0, sigma=0.1, seed=0):
    return np.random.default_rng(seed).standard_normal(int(fs * seconds)) * sigma


# ITU-R BS.1770-4 Annex 1, Tables 1 and 2: K-weighting pre-filter (shelf) and RLB high-pass at 48 kHz
_BS1770_SHELF = (
    [1.53512485958697, -2.69169618940638, 1.19839281085285],
    [1.0, -1.69065929318241, 0.73248077421585],
)
_BS1770_RLB = ([1.0, -2.0, 1.0], [1.0, -1.99004745483398, 0.99007225036621])


def _k_weighting_db(freq_hz):
    """K-weighting gain in dB at 48 kHz from the published coefficients, by scipy.signal.freqz."""
    h = [signal.freqz(b, a, [freq_hz], fs=48000)[1][0] for b, a in (_BS1770_SHELF, _BS1770_RLB)]
    return 20 * np.log10(abs(h[0] * h[1]))


class TestLoudnessLufs:
    @pytest.mark.parametrize("fs", [44100, 48000, 96000])
    def test_full_scale_997_hz_sine_reads_minus_3_01(self, fs):
        # ITU-R BS.1770-4 Annex 1: a 0 dBFS 997 Hz sine in one front channel reads -3.01 LKFS.
        # 0.03 dB: the K-weighting redesigned away from 48 kHz moves ~0.02 dB at 1 kHz
        assert loudness_lufs(_sine(997, fs), fs) == pytest.approx(-3.01, abs=0.03)

    @pytest.mark.parametrize("freq_hz", [100, 500, 2000, 4000, 10000])
    def test_k_weighting_response(self, freq_hz):
        # the meter's reading of a full-scale sine is -0.691 + 10*log10(1/2) + K(f) dB
        # (BS.1770-4 eq. 2); K(f) from the published Table 1/2 coefficients by scipy.signal.freqz.
        # 0.02 dB: block edges and filter start-up over a 2 s sine
        measured = loudness_lufs(_sine(freq_hz, 48000), 48000) + 0.691 - 10 * np.log10(0.5)
        assert measured == pytest.approx(_k_weighting_db(freq_hz), abs=0.02)

    def test_published_shelf_shape(self):
        # BS.1770-4 Annex 1 Fig. 1: pre-filter shelf about +4 dB at high frequencies, ~0 dB at
        # 100 Hz; tolerance 0.1 dB (reading the figure)
        shelf = lambda f: 20 * np.log10(abs(signal.freqz(*_BS1770_SHELF, [f], fs=48000)[1][0]))
        assert shelf(10000) == pytest.approx(4.0, abs=0.1) and shelf(100) == pytest.approx(0.0, abs=0.1)

    def test_two_channels_add_three_db(self):
        x = _sine(997, 48000)
        # BS.1770-4 eq. 2: channel powers add; two full-scale channels read 0.0 LKFS (+-0.03 as above)
        assert loudness_lufs(np.column_stack([x, x]), 48000) == pytest.approx(0.0, abs=0.03)

    def test_silence_is_minus_inf(self):
        assert loudness_lufs(np.zeros(48000), 48000) == -np.inf

    @pytest.mark.parametrize(
        "x, match",
        [(np.zeros(19000), "0.4 s"), (np.zeros((48000, 6)), "6 channels")],
        ids=["short", "channels"],
    )
    def test_rejects(self, x, match):
        with pytest.raises(BadValueError, match=match):
            loudness_lufs(x, 48000)


class TestLoudnessChangeDb:
    def test_half_amplitude_is_minus_six(self):
        x = _noise(48000, 2.0)
        # 20*log10(1/2) = -6.0206 dB; the relative gate scales with the signal, so the same blocks pass
        assert loudness_change_db(x, 0.5 * x, 48000) == pytest.approx(-6.0206, abs=1e-6)

    def test_silent_dry_is_refused(self):
        with pytest.raises(BadValueError, match="-70 LUFS gate"):
            loudness_change_db(np.zeros(48000), _noise(48000), 48000)


class TestCompareLevels:
    def test_same_figures_as_the_three_functions(self):
        # the measure-once path must agree with the pairwise functions it replaces in a sweep
        rng = np.random.default_rng(4)
        dry = rng.standard_normal((48000, 2)) * 0.1
        wet = dry * np.linspace(1.0, 0.3, 48000)[:, None]
        band = (4000.0, 8000.0)
        measured = compare.compare_levels(compare.take_levels(dry, 48000, band), compare.take_levels(wet, 48000, band))
        assert measured["sibilance_reduction_db"] == pytest.approx(
            bands.sibilance_reduction_db(dry, wet, 48000, band), abs=1e-12)
        assert measured["loudness_change_db"] == pytest.approx(loudness.loudness_change_db(dry, wet, 48000), abs=1e-12)
        assert measured["intelligibility_cost"] == pytest.approx(
            bands.intelligibility_cost_of_takes(dry, wet, 48000), abs=1e-12)
