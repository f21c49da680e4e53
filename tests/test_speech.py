"""Tests of the speech analysis (emulate.voice.speech).

Outside references, named beside each check: ANSI S3.5-1997 Table 3 (band importance),
ITU-R BS.1770-4 Annex 1 (K-weighting coefficients, the -3.01 LKFS sine), AES17 (dBFS: a
full-scale sine reads 0 dBFS), Parseval's theorem, scipy.signal as a reference library, and
Jongman, Wayland & Wong (JASA 108, 2000) for where /s/ lies.
"""

import shutil
import subprocess

import numpy as np
import pytest
import soundfile as sf
from scipy import signal

from emulate.errors import BadValueError
from emulate.voice.speech import (
    ANSI_S35_BANDS_HZ,
    ANSI_S35_IMPORTANCE,
    band_gains_db,
    band_level_db,
    combine_reports,
    find_sibilance,
    intelligibility_cost,
    intelligibility_cost_of_takes,
    loudness_change_db,
    loudness_lufs,
    most_sibilant_excerpt,
    sibilance_reduction_db,
)
from emulate.voice import speech
from emulate.voice.synth import bursts_over_tone, take_schedule, voice_like_take

RATES_HZ = [16000, 44100, 48000, 96000]
CENTRES_HZ = [3000, 4500, 6000, 8000]
# (rate, centre) pairs whose default sibilant band (centre +- 25 %) fits under 0.45 * rate
FITTING = [(fs, fc) for fs in RATES_HZ for fc in CENTRES_HZ if 1.25 * fc < 0.45 * fs]


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


class TestFindSibilance:
    @pytest.mark.parametrize("fs, centre_hz", FITTING)
    def test_finds_known_band_across_rates(self, fs, centre_hz):
        x = voice_like_take(fs, 4.0, pitch_hz=120, sibilance_hz=centre_hz, seed=1)
        r = find_sibilance(x, fs)
        assert r.usable and r.reason == ""
        # peak within 8 %: 1/24-octave grid (2.9 % steps) plus the jitter of a noise spectrum
        # averaged over ~0.6 s of bursts
        assert r.peak_hz == pytest.approx(centre_hz, rel=0.08)
        # bursts are a raised-cosine bump over centre +- 25 %; the central-80 % band lies inside
        # it (5 % slack for the grid interpolation)
        assert 0.70 * centre_hz < r.band_hz[0] < centre_hz < r.band_hz[1] < 1.30 * centre_hz
        assert r.confidence > 0.5

    def test_sibilant_fraction_matches_schedule(self):
        x = voice_like_take(48000, 6.0, pitch_hz=180, sibilance_hz=7000, seed=3)
        schedule = take_schedule(6.0, seed=3)
        r = find_sibilance(x, 48000)
        # each burst edge can gain or lose up to one 25 ms frame: tolerance 2 frames per burst
        tolerance = 2 * 0.025 * len(schedule.bursts_s) / 6.0
        assert r.sibilant_fraction == pytest.approx(schedule.burst_seconds / 6.0, abs=tolerance)

    @pytest.mark.parametrize(
        "fs, band", [(16000, (3000, 5000)), (48000, (6000, 9000)), (96000, (2200, 3800))]
    )
    def test_flat_bursts_over_tone(self, fs, band):
        r = find_sibilance(bursts_over_tone(fs, 3.0, band_hz=band), fs)
        # flat band: peak and 80 % band inside it, 3 % for the grid step
        assert band[0] * 0.97 <= r.peak_hz <= band[1] * 1.03
        assert band[0] * 0.97 <= r.band_hz[0] < r.band_hz[1] <= band[1] * 1.03

    def test_sh_like_band_is_inside_default_search(self):
        # /sh/ about 2-4 kHz (Jongman, Wayland & Wong, JASA 108, 2000)
        r = find_sibilance(voice_like_take(44100, 4.0, pitch_hz=100, sibilance_hz=2800, seed=5), 44100)
        assert r.usable and r.peak_hz == pytest.approx(2800, rel=0.08)

    @pytest.mark.parametrize(
        "x, reason",
        [
            (voice_like_take(48000, 3.0, pitch_hz=120, sibilance_hz=None), "no sibilant frames"),
            (np.zeros((48000, 2)), "silence"),
            (np.full(48000, 1e-5), "silence"),  # -97 dBFS DC: below the -70 dBFS gate
            (_noise(48000, 0.3), "too short"),
        ],
        ids=["vowel", "digital-silence", "near-silence", "short"],
    )
    def test_not_usable_reasons(self, x, reason):
        r = find_sibilance(x, 48000)
        assert not r.usable and r.reason.startswith(reason)
        assert np.isnan(r.peak_hz)

    @pytest.mark.parametrize("fs", RATES_HZ)
    @pytest.mark.parametrize("pitch_hz", [90, 220, 400])
    def test_vowel_only_takes_have_no_sibilance(self, fs, pitch_hz):
        # harmonics stop at 5 kHz with a -6 dB/octave slope: no frame is search-band dominated
        r = find_sibilance(voice_like_take(fs, 3.0, pitch_hz=pitch_hz, sibilance_hz=None, seed=1), fs)
        assert not r.usable and r.sibilant_seconds == 0.0

    def test_stereo_copy_reads_like_mono(self):
        mono = voice_like_take(48000, 3.0, pitch_hz=120, sibilance_hz=6000, seed=2)
        a, b = find_sibilance(mono, 48000), find_sibilance(np.repeat(mono, 2, axis=1), 48000)
        assert a.peak_hz == b.peak_hz and a.band_hz == pytest.approx(b.band_hz)

    def test_search_band_is_clipped_to_nyquist(self):
        r = find_sibilance(voice_like_take(16000, 2.0, pitch_hz=120, sibilance_hz=4000), 16000)
        assert r.search_band_hz == (2000.0, 8000.0)

    def test_suggestions_follow_their_definitions(self):
        r = find_sibilance(voice_like_take(48000, 3.0, pitch_hz=120, sibilance_hz=6000), 48000)
        lo, hi = r.band_hz
        assert r.suggested_notch_hz == pytest.approx(np.sqrt(lo * hi))
        # narrow band (matching Q ~ 4): active network at the matching Q, capped at 5 (MT-225 range)
        assert r.suggested_q == pytest.approx(min(r.suggested_notch_hz / (hi - lo), 5.0))
        # wet/dry with a full null in wet: gain at the notch is 1 - mix (definition)
        assert -20 * np.log10(1 - r.suggested_mix) == pytest.approx(r.suggested_depth_db)
        assert 3.0 <= r.suggested_depth_db <= 12.0

    def test_broad_band_gets_passive_network(self):
        # band 2-9 kHz: matching Q = 4.2 kHz / 5.6 kHz < 1 -> passive Q 0.25
        r = find_sibilance(bursts_over_tone(48000, 3.0, band_hz=(2000, 9000)), 48000)
        assert r.suggested_q == 0.25

    @pytest.mark.parametrize(
        "x, fs, band, match",
        [
            (np.zeros(0), 48000, (2000, 12000), "shape"),
            (np.array([0.0, np.nan] * 20000), 48000, (2000, 12000), "NaN"),
            (np.zeros((10, 2, 2)), 48000, (2000, 12000), "shape"),
            (np.zeros(16000), 8000, (2000, 12000), r"sample rate \(Hz\) 8000: allowed \[16000, 384000\]"),
            (np.zeros(48000), 48000, (5000, 3000), r"search_band_hz = \(5000, 3000\)"),
            (np.zeros(48000), 48000, (30000, 40000), "Nyquist"),
        ],
        ids=["empty", "nan", "3d", "rate", "inverted-band", "band-above-nyquist"],
    )
    def test_rejects_bad_input(self, x, fs, band, match):
        with pytest.raises(BadValueError, match=match):
            find_sibilance(x, fs, search_band_hz=band)

    @pytest.mark.skipif(
        shutil.which("espeak-ng") is None, reason="espeak-ng speech synthesiser not installed"
    )
    def test_synthesised_speech_is_sibilant(self, tmp_path):
        path = tmp_path / "phrase.wav"
        subprocess.run(["espeak-ng", "-w", str(path), "six sisters sell sea shells"], check=True, timeout=60)
        x, fs = sf.read(path, always_2d=True)
        r = find_sibilance(x, fs)
        assert r.usable and r.sibilant_fraction > 0.1
        # /s/ spectral peaks roughly 3.5-8 kHz (Jongman, Wayland & Wong, JASA 108, 2000)
        assert 3500 <= r.peak_hz <= 8000


class TestCombineReports:
    def test_pools_durations_and_spectra(self):
        reports = [
            find_sibilance(voice_like_take(48000, 2.0, pitch_hz=120, sibilance_hz=6000, seed=s), 48000)
            for s in (1, 2, 3)
        ]
        r = combine_reports(reports)
        assert r.usable and r.seconds == pytest.approx(6.0)
        assert r.sibilant_fraction == pytest.approx(sum(x.sibilant_seconds for x in reports) / 6.0)
        assert r.peak_hz == pytest.approx(6000, rel=0.08)  # same tolerance as a single take

    def test_longer_sibilance_weighs_more(self):
        low = find_sibilance(bursts_over_tone(48000, 2.0, band_hz=(2500, 3500), period_s=1.0), 48000)
        high = find_sibilance(bursts_over_tone(48000, 6.0, band_hz=(6500, 7500), period_s=0.3), 48000)
        r = combine_reports([low, high])
        assert 6500 * 0.97 <= r.peak_hz <= 7500 * 1.03

    def test_unusable_reports_add_only_duration(self):
        good = find_sibilance(voice_like_take(48000, 2.0, pitch_hz=120, sibilance_hz=6000), 48000)
        bad = find_sibilance(np.zeros(48000), 48000)
        r = combine_reports([good, bad])
        assert r.seconds == pytest.approx(3.0) and r.peak_hz == pytest.approx(good.peak_hz, rel=0.03)
        assert combine_reports([bad, bad]).reason == "no usable takes"

    def test_rejects_empty(self):
        with pytest.raises(BadValueError, match="one or more SibilanceReport"):
            combine_reports([])


class TestMostSibilantExcerpt:
    def test_finds_the_sibilant_stretch(self):
        fs = 48000
        vowels = voice_like_take(fs, 6.0, pitch_hz=120, sibilance_hz=None, seed=4)
        hissy = bursts_over_tone(fs, 1.0, band_hz=(5000, 8000), period_s=0.25, burst_s=0.1)
        x = np.concatenate([vowels[: 4 * fs], hissy, vowels[4 * fs :]])
        start, stop = most_sibilant_excerpt(x, fs, seconds=1.5)
        assert stop - start == int(1.5 * fs)
        assert start <= 4.1 * fs and stop >= 4.9 * fs  # the hiss (4-5 s) lies inside

    def test_short_take_is_returned_whole(self):
        assert most_sibilant_excerpt(_noise(48000, 1.0), 48000, seconds=3.0) == (0, 48000)

    def test_rejects_nonpositive_length(self):
        with pytest.raises(BadValueError, match="seconds = 0"):
            most_sibilant_excerpt(_noise(48000), 48000, seconds=0)


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
        measured = speech.compare_levels(speech.take_levels(dry, 48000, band), speech.take_levels(wet, 48000, band))
        assert measured["sibilance_reduction_db"] == pytest.approx(
            speech.sibilance_reduction_db(dry, wet, 48000, band), abs=1e-12)
        assert measured["loudness_change_db"] == pytest.approx(speech.loudness_change_db(dry, wet, 48000), abs=1e-12)
        assert measured["intelligibility_cost"] == pytest.approx(
            speech.intelligibility_cost_of_takes(dry, wet, 48000), abs=1e-12)


class TestSibilanceRanges:
    """Common practice, no source: sibilance sits roughly at 2-5 kHz for male voices and
    5-10 kHz for female voices; the finder's default search band must hold both."""

    def test_default_band_covers_both_ranges(self):
        lo, hi = speech.DEFAULT_SEARCH_BAND_HZ
        assert lo <= 2000 and hi >= 10000

    @pytest.mark.parametrize("pitch_hz, sibilance_hz", [(110.0, 3500.0), (115.0, 4500.0),
                                                        (205.0, 6500.0), (215.0, 8500.0)])
    def test_lower_and_higher_voices(self, pitch_hz, sibilance_hz):
        x = voice_like_take(48000, 4.0, pitch_hz=pitch_hz, sibilance_hz=sibilance_hz, seed=5)
        report = find_sibilance(x, 48000)
        # 5 %: a little over the 1/24-octave analysis grid (2.9 %) plus the burst spectrum's asymmetry
        assert report.usable and report.peak_hz == pytest.approx(sibilance_hz, rel=0.05)
