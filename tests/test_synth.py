"""Tests of the invented voice-like signals (emulate.voice.synth).

Reference tools: scipy.signal.welch (a general-purpose spectral estimator) for where the
energy of the bursts lies; the AES17 dBFS convention (a full-scale sine reads 0 dBFS) for
levels.
"""

import itertools

import numpy as np
import pytest
from scipy import signal

from emulate.errors import BadValueError
from emulate.voice.synth import bursts_over_tone, sine_series, take_schedule, voice_like_take


def _dbfs_rms(x):
    """RMS level in dBFS by AES17 (full-scale sine = 0 dBFS)."""
    return 20 * np.log10(np.sqrt(2 * np.mean(x**2)))


def _band_share(x, fs, lo, hi):
    """Share of a signal's power inside [lo, hi] Hz, by scipy's Welch estimate."""
    f, p = signal.welch(x, fs, nperseg=4096)
    return p[(f >= lo) & (f <= hi)].sum() / p.sum()


def _burst_samples(x, fs, intervals):
    """Concatenate the samples inside the given (start, stop) second intervals."""
    return np.concatenate([x[int(a * fs) : int(b * fs)] for a, b in intervals])


class TestTakeSchedule:
    @pytest.mark.parametrize("seed", [0, 1, 7])
    def test_events_stay_inside_and_do_not_overlap(self, seed):
        s = take_schedule(10.0, seed=seed)
        events = sorted(s.syllables_s + s.bursts_s)
        assert events[0][0] >= 0.1 and events[-1][1] <= 9.9
        # each event ends before the next begins (a burst may touch its syllable)
        assert all(a[1] <= b[0] + 1e-9 for a, b in itertools.pairwise(events))

    def test_first_event_is_a_burst_and_layout_is_deterministic(self):
        a, b = take_schedule(5.0, seed=3), take_schedule(5.0, seed=3)
        assert a == b
        assert a.bursts_s[0][0] == 0.1
        assert a.burst_seconds == pytest.approx(sum(y - x for x, y in a.bursts_s))

    def test_rejects_nonpositive_length(self):
        with pytest.raises(BadValueError, match=r"seconds -1.0: allowed \(0, 3600\]"):
            take_schedule(-1.0)


class TestVoiceLikeTake:
    @pytest.mark.parametrize("channels", [1, 2])
    def test_shape_dtype_and_level(self, channels):
        x = voice_like_take(48000, 2.0, pitch_hz=110, sibilance_hz=6000, channels=channels, level_dbfs=-20)
        assert x.shape == (96000, channels) and x.dtype == np.float64
        # AES17 RMS level; 0.01 dB covers the noise floor added after scaling (-50 dB, +0.00004 dB)
        assert _dbfs_rms(x[:, 0]) == pytest.approx(-20.0, abs=0.01)

    def test_same_seed_same_samples_other_seed_differs(self):
        kw = {"pitch_hz": 200, "sibilance_hz": 5000}
        a, b = voice_like_take(16000, 1.0, **kw, seed=4), voice_like_take(16000, 1.0, **kw, seed=4)
        assert np.array_equal(a, b)
        assert not np.array_equal(a, voice_like_take(16000, 1.0, **kw, seed=5))

    @pytest.mark.parametrize("fs, centre_hz", [(44100, 3000), (48000, 6000), (96000, 8000)])
    def test_bursts_hold_their_energy_in_the_sibilant_band(self, fs, centre_hz):
        x = voice_like_take(fs, 3.0, pitch_hz=120, sibilance_hz=centre_hz, seed=2)[:, 0]
        bursts = _burst_samples(x, fs, take_schedule(3.0, seed=2).bursts_s)
        # default width is half the centre; bursts are 6 dB over the voice, so >= 75 % of their
        # power sits in the band (the rest: voice harmonics overlapping the ramps, noise floor)
        assert _band_share(bursts, fs, 0.75 * centre_hz, 1.25 * centre_hz) > 0.75

    def test_vowel_only_take_has_no_energy_high_up(self):
        x = voice_like_take(48000, 2.0, pitch_hz=120, sibilance_hz=None)[:, 0]
        # harmonics stop at 5 kHz; above 6 kHz only the -50 dB white floor remains (its share
        # of 6-24 kHz is 0.75 * 1e-5)
        assert _band_share(x, 48000, 6000, 24000) < 1e-4

    @pytest.mark.parametrize(
        "kwargs, match",
        [
            ({"fs": 4000}, r"sample rate \(Hz\) 4000: allowed \[8000, 384000\]"),
            ({"sibilance_hz": 7000, "fs": 16000}, "sibilant band"),
            ({"level_dbfs": 0.0}, "would clip"),
            ({"pitch_hz": 20}, r"pitch_hz 20: allowed \(40, 500\]"),
            ({"channels": 0}, "channels 0: allowed a whole number from 1 to 8"),
        ],
    )
    def test_rejects_bad_values(self, kwargs, match):
        args = {"fs": 48000, "pitch_hz": 120, "sibilance_hz": 6000} | kwargs
        with pytest.raises(BadValueError, match=match):
            voice_like_take(args.pop("fs"), 1.0, **args)


class TestSineSeries:
    def test_equals_the_sum_of_sines(self):
        # reference: the definition, sum_k amp_k sin(k phase) with numpy's sine, over a phase that
        # runs 60 s into a 300 Hz tone (the sine's own rounding of k * phase is about 1e-11 there)
        rng = np.random.default_rng(4)
        phase = 2 * np.pi * np.cumsum(np.full(3000, 300.0 / 48000)) + 2 * np.pi * 300.0 * 60.0
        k = np.arange(1, 41)[:, None]
        amp = rng.uniform(0.0, 1.0, (40, phase.size)) / k
        expected = np.sum(amp * np.sin(k * phase), axis=0)
        np.testing.assert_allclose(sine_series(amp, phase), expected, rtol=0, atol=1e-10)

    def test_one_amplitude_column_for_every_sample(self):
        phase = np.linspace(0.0, 20.0, 2500)
        amp = np.array([[1.0], [0.0], [0.25]])
        expected = np.sin(phase) + 0.25 * np.sin(3 * phase)
        np.testing.assert_allclose(sine_series(amp, phase), expected, rtol=0, atol=1e-12)

    def test_no_harmonics_is_silence(self):
        assert not sine_series(np.zeros((0, 1)), np.linspace(0.0, 1.0, 10)).any()


class TestBurstsOverTone:
    @pytest.mark.parametrize("fs, band", [(16000, (4000, 6000)), (48000, (6000, 9000))])
    def test_burst_band_is_flat_and_known(self, fs, band):
        x = bursts_over_tone(fs, 2.0, band_hz=band, period_s=0.5, burst_s=0.12)[:, 0]
        starts = np.arange(0.1, 2.0 - 0.12, 0.5)
        bursts = _burst_samples(x, fs, [(s + 0.01, s + 0.11) for s in starts])
        # bursts are 6 dB over the tone: share in band about 0.8 (4/5) less ramp leakage
        assert _band_share(bursts, fs, *band) > 0.75

    def test_rejects_band_above_limit(self):
        with pytest.raises(BadValueError, match=r"band_hz = \(6000, 9000\) Hz is not allowed at 16000"):
            bursts_over_tone(16000, 1.0, band_hz=(6000, 9000))
