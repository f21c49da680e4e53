"""Tests of band levels and the ANSI S3.5 weighting (emulate.voice.bands).

Outside references, named beside each check: ANSI S3.5-1997 Table 3 (band importance), AES17
(dBFS: a full-scale sine reads 0 dBFS), Parseval's theorem, scipy.signal as a reference library.
"""

import numpy as np
import pytest
from scipy import signal

from emulate.errors import BadValueError
from emulate.voice.bands import (
    ANSI_S35_BANDS_HZ,
    ANSI_S35_IMPORTANCE,
    band_gains_db,
    band_level_db,
    intelligibility_cost,
    intelligibility_cost_of_takes,
    sibilance_reduction_db,
)


def _sine(freq_hz, fs, seconds=2.0, amplitude=1.0):
    t = np.arange(round(seconds * fs)) / fs
    return amplitude * np.sin(2 * np.pi * freq_hz * t)


def _noise(fs, seconds=1.0, sigma=0.1, seed=0):
    return np.random.default_rng(seed).standard_normal(int(fs * seconds)) * sigma


class TestAnsiTables:
    def test_weights_sum_to_one(self):
        # ANSI S3.5-1997 Table 3: the band-importance function sums to 1 (values from memory)
        assert ANSI_S35_IMPORTANCE.sum() == pytest.approx(1.0, abs=1e-9)

    @pytest.mark.parametrize(
        "band_hz, weight",
        [(160, 0.0083), (1000, 0.0818), (2000, 0.0898), (4000, 0.0771), (8000, 0.0185)],
    )
    def test_published_values(self, band_hz, weight):
        # ANSI S3.5-1997 Table 3, average speech, one-third-octave procedure (from memory)
        assert ANSI_S35_IMPORTANCE[list(ANSI_S35_BANDS_HZ).index(band_hz)] == weight

    def test_bands_are_nominal_third_octaves(self):
        # 18 bands, 160-8000 Hz, nominal one-third-octave centres: ratio 2**(1/3) within the
        # 2 % rounding of preferred numbers (IEC 61260 nominal mid-band frequencies)
        assert ANSI_S35_BANDS_HZ.size == 18 and ANSI_S35_BANDS_HZ[[0, -1]].tolist() == [160, 8000]
        np.testing.assert_allclose(ANSI_S35_BANDS_HZ[1:] / ANSI_S35_BANDS_HZ[:-1], 2 ** (1 / 3), rtol=0.02)

    def test_peak_importance_is_at_2khz(self):
        # ANSI S3.5-1997 Table 3: average speech weighs 2000 Hz most (from memory)
        assert ANSI_S35_BANDS_HZ[np.argmax(ANSI_S35_IMPORTANCE)] == 2000

class TestBandLevelDb:
    @pytest.mark.parametrize("fs", [16000, 44100, 96000])
    def test_full_scale_sine_reads_zero_dbfs(self, fs):
        # AES17: a full-scale sine reads 0 dBFS; 0.01 dB covers leakage out of a one-octave band
        assert band_level_db(_sine(1000, fs), fs, (700, 1400)) == pytest.approx(0.0, abs=0.01)

    def test_white_noise_band_level_follows_parseval(self):
        fs, sigma = 48000, 0.1
        x = _noise(fs, 4.0, sigma)
        # flat PSD: band power = sigma**2 * bandwidth / (fs/2) (Parseval); 0.2 dB covers the
        # estimate's spread over ~16000 bins (about 1/sqrt(16000) = 0.8 % in power)
        expected = 10 * np.log10(2 * sigma**2 * 4000 / 24000)
        assert band_level_db(x, fs, (4000, 8000)) == pytest.approx(expected, abs=0.2)

    def test_opposite_phase_channels_do_not_cancel(self):
        x = _sine(1000, 48000)
        assert band_level_db(np.column_stack([x, -x]), 48000, (500, 2000)) == pytest.approx(0.0, abs=0.01)

    def test_silence_is_minus_inf_and_band_is_checked(self):
        assert band_level_db(np.zeros(1000), 48000, (1000, 2000)) == -np.inf
        with pytest.raises(BadValueError, match=r"band_hz = \(2000, 1000\)"):
            band_level_db(np.zeros(1000), 48000, (2000, 1000))


class TestSibilanceReductionDb:
    def test_half_amplitude_is_six_db(self):
        x = _noise(48000)
        # 20*log10(2) = 6.0206 dB (definition of the decibel)
        assert sibilance_reduction_db(x, 0.5 * x, 48000, (4000, 8000)) == pytest.approx(6.0206, abs=1e-3)

    def test_lowpass_matches_its_band_average_power_gain(self):
        x = _noise(48000, 2.0)
        # scipy.signal as the reference: on white noise the reduction is the band average of
        # 1/|H|**2 by sosfreqz. 0.3 dB: wet and dry share the noise, so only end effects remain
        sos = signal.butter(4, 3000, fs=48000, output="sos")
        _, h = signal.sosfreqz(sos, worN=np.linspace(5000, 8000, 3001), fs=48000)
        expected = -10 * np.log10(np.mean(np.abs(h) ** 2))
        got = sibilance_reduction_db(x, signal.sosfilt(sos, x), 48000, (5000, 8000))
        assert got == pytest.approx(expected, abs=0.3)

    @pytest.mark.parametrize(
        "dry, wet, match",
        [(np.zeros(4800), np.zeros(4800), "no energy"), (np.ones((4800, 2)), np.ones((4800, 1)), "channels")],
    )
    def test_rejects(self, dry, wet, match):
        with pytest.raises(BadValueError, match=match):
            sibilance_reduction_db(dry, wet, 48000, (4000, 8000))


class TestBandGainsDb:
    def test_notch_shows_in_its_band_only(self):
        x = _noise(48000, 4.0)
        # scipy.signal.iirnotch as reference: a Q = 2 notch at 4 kHz cuts the 4 kHz band,
        # leaves 250 Hz alone (|H| there > 0.999, i.e. within 0.01 dB... 0.1 dB allowed for noise)
        wet = signal.lfilter(*signal.iirnotch(4000, 2.0, fs=48000), x)
        gains = band_gains_db(x, wet, 48000)
        assert gains.shape == (18,)
        assert gains[list(ANSI_S35_BANDS_HZ).index(4000)] < -6
        assert gains[list(ANSI_S35_BANDS_HZ).index(250)] == pytest.approx(0.0, abs=0.1)

    def test_band_without_energy_counts_as_no_change(self):
        dry = _sine(1000, 48000)
        assert band_gains_db(dry, 0 * dry, 48000)[list(ANSI_S35_BANDS_HZ).index(1000)] == -np.inf
        # bands with only leakage still have energy; a take of zeros gives 0 dB everywhere
        assert np.all(band_gains_db(np.zeros(4800), np.zeros(4800), 48000) == 0.0)


class TestIntelligibilityCost:
    @pytest.mark.parametrize(
        "gains, cost",
        [
            (np.zeros(18), 0.0),
            (np.full(18, 6.0), 0.0),  # a boost restores nothing
            (np.full(18, -15.0), 0.5),  # half the SII's 30 dB range (ANSI S3.5-1997 sec. 4)
            (np.full(18, -30.0), 1.0),
            (np.full(18, -np.inf), 1.0),
            (np.where(ANSI_S35_BANDS_HZ == 2000, -30.0, 0.0), 0.0898),  # Table 3 weight at 2 kHz
        ],
        ids=["flat", "boost", "half", "full", "removed", "one-band"],
    )
    def test_weighted_audibility_loss(self, gains, cost):
        assert intelligibility_cost(gains) == pytest.approx(cost, abs=1e-12)

    @pytest.mark.parametrize("gains, match", [(np.zeros(17), "shape"), (np.full(18, np.nan), "NaN")])
    def test_rejects(self, gains, match):
        with pytest.raises(BadValueError, match=match):
            intelligibility_cost(gains)


class TestIntelligibilityCostOfTakes:
    def test_uniform_cut_matches_gain_form(self):
        x = _noise(48000, 2.0)
        # uniform 15 dB cut -> half of the 30 dB range in every band (ANSI S3.5-1997 sec. 4)
        assert intelligibility_cost_of_takes(x, x * 10 ** (-15 / 20), 48000) == pytest.approx(0.5, abs=1e-6)
        assert intelligibility_cost_of_takes(x, x, 48000) == 0.0
