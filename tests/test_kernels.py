"""Tests for emulate.dsp.kernels against scipy.signal (reference library) and closed forms."""

import numpy as np
import pytest
from scipy import signal

from emulate.dsp.kernels import delay_line, ramp_blend, sos_filter


def noise(frames, channels, seed=1):
    return np.random.default_rng(seed).standard_normal((frames, channels))


def split_points(frames, block):
    return list(range(0, frames, block)) + [frames]


# A 3-section cascade (6th-order elliptic band-stop) and a single notch biquad.
SOS_CASES = {
    "ellip": signal.ellip(3, 0.5, 40, [0.1, 0.3], btype="bandstop", output="sos"),
    "notch": signal.tf2sos(*signal.iirnotch(3000, 2.0, 48000)),
}


class TestSosFilter:
    @pytest.mark.parametrize("name", sorted(SOS_CASES))
    @pytest.mark.parametrize("channels", [1, 2, 5])
    def test_matches_scipy_sosfilt(self, name, channels):
        # Reference: scipy.signal.sosfilt (also DF-II-T); both are float64 recurrences, so
        # agreement to 1e-12 only allows for a different order of additions.
        sos = SOS_CASES[name]
        x = noise(3000, channels)
        out = np.empty_like(x)
        sos_filter(sos, x, np.zeros((len(sos), channels, 2)), out)
        np.testing.assert_allclose(out, signal.sosfilt(sos, x, axis=0), rtol=0, atol=1e-12)

    @pytest.mark.parametrize("block", [1, 7, 512])
    def test_state_carries_across_blocks(self, block):
        sos, x = SOS_CASES["ellip"], noise(2000, 2)
        state, out = np.zeros((len(sos), 2, 2)), np.empty_like(x)
        edges = split_points(len(x), block)
        for a, b in zip(edges[:-1], edges[1:]):
            sos_filter(sos, x[a:b], state, out[a:b])
        np.testing.assert_allclose(out, signal.sosfilt(sos, x, axis=0), rtol=0, atol=1e-12)

    def test_state_matches_scipy_zi(self):
        # scipy's zf has shape (n_sections, 2) per channel, the same DF-II-T state.
        sos, x = SOS_CASES["notch"], noise(100, 1)
        state = np.zeros((len(sos), 1, 2))
        sos_filter(sos, x, state, np.empty_like(x))
        _, zf = signal.sosfilt(sos, x[:, 0], zi=np.zeros((len(sos), 2)))
        np.testing.assert_allclose(state[:, 0, :], zf, rtol=0, atol=1e-12)

    def test_in_place_and_empty(self):
        sos, x = SOS_CASES["ellip"], noise(256, 2)
        expected = signal.sosfilt(sos, x, axis=0)
        sos_filter(sos, x, np.zeros((len(sos), 2, 2)), x)
        np.testing.assert_allclose(x, expected, rtol=0, atol=1e-12)
        empty = np.empty((0, 2))
        sos_filter(sos, empty, np.zeros((len(sos), 2, 2)), empty)


class TestRampBlend:
    def test_linear_ramp_then_holds(self):
        a, b = np.zeros((6, 1)), np.ones((6, 1))
        ramp = np.array([0.0, 0.25, 1.0])
        out = np.empty_like(a)
        ramp_blend(a, b, ramp, out)
        # g after each sample: 0.25, 0.5, 0.75, 1, then holds at the target exactly.
        np.testing.assert_array_equal(out[:, 0], [0.25, 0.5, 0.75, 1.0, 1.0, 1.0])
        assert ramp[0] == 1.0

    def test_ramp_down_and_mixing(self):
        a, b = np.full((3, 2), 2.0), np.full((3, 2), -2.0)
        ramp = np.array([1.0, 0.5, 0.0])
        out = np.empty_like(a)
        ramp_blend(a, b, ramp, out)
        # (1 - g) a + g b with g = 0.5, 0, 0.
        np.testing.assert_array_equal(out, [[0.0, 0.0], [2.0, 2.0], [2.0, 2.0]])

    def test_endpoints_are_exact(self):
        # g = 1 must return b bit for bit (so a full notch is exactly the filter output).
        a, b = noise(50, 2, seed=2), noise(50, 2, seed=3)
        out = np.empty_like(a)
        ramp_blend(a, b, np.array([1.0, 0.1, 1.0]), out)
        np.testing.assert_array_equal(out, b)

    @pytest.mark.parametrize("block", [1, 7, 64])
    def test_state_carries_across_blocks(self, block):
        a, b = noise(500, 2, seed=4), noise(500, 2, seed=5)
        whole = np.empty_like(a)
        ramp_blend(a, b, np.array([0.2, 1.0 / 300, 0.9]), whole)
        ramp, out = np.array([0.2, 1.0 / 300, 0.9]), np.empty_like(a)
        edges = split_points(len(a), block)
        for s, e in zip(edges[:-1], edges[1:]):
            ramp_blend(a[s:e], b[s:e], ramp, out[s:e])
        np.testing.assert_array_equal(out, whole)


class TestDelayLine:
    @pytest.mark.parametrize("delay", [1, 3, 100])
    @pytest.mark.parametrize("block", [1, 7, 1000])
    def test_is_a_pure_delay(self, delay, block):
        x = noise(1000, 2, seed=6)
        buffer, position, out = np.zeros((delay, 2)), np.zeros(1, np.int64), np.empty_like(x)
        edges = split_points(len(x), block)
        for s, e in zip(edges[:-1], edges[1:]):
            delay_line(x[s:e], buffer, position, out[s:e])
        expected = np.vstack([np.zeros((delay, 2)), x[:-delay]])
        np.testing.assert_array_equal(out, expected)
