"""Tests for emulate.dsp.kernels against scipy.signal (reference library) and closed forms."""

import numpy as np
import pytest
from scipy import signal

from emulate.dsp.kernels import codes_to_float, delay_line, encode_codes, filter_codes, ramp_blend, sos_filter


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


def textbook_cascade(sos, x):
    """Section by section, channel by channel, sample by sample: DF-II-T as printed
    (Oppenheim & Schafer sec. 6.5), the loop the kernel replaced."""
    y = x.copy()
    for b0, b1, b2, _, a1, a2 in sos:
        for c in range(y.shape[1]):
            s1 = s2 = 0.0
            for t in range(len(y)):
                v = y[t, c]
                out = b0 * v + s1
                s1 = b1 * v - a1 * out + s2
                s2 = b2 * v - a2 * out
                y[t, c] = out
    return y


class TestSosFilterIdenticalSamples:
    @pytest.mark.parametrize("sections", [1, 2, 3, 5])
    @pytest.mark.parametrize("channels", [1, 2, 3])
    def test_equals_the_textbook_loop_bit_for_bit(self, sections, channels):
        # registers, channel pairs and section pairs/triples change the schedule, not the
        # arithmetic: exact equality
        sos = np.vstack([SOS_CASES["ellip"]] * 2)[:sections]
        x = noise(700, channels)
        out, state = np.empty_like(x), np.zeros((sections, channels, 2))
        sos_filter(sos, x[:300], state, out[:300])
        sos_filter(sos, x[300:], state, out[300:])
        np.testing.assert_array_equal(out, textbook_cascade(sos, x))


class TestCodesToFloat:
    @pytest.mark.parametrize("dtype, bits", [(np.int16, 16), (np.int32, 32)])
    def test_full_scale_code_reads_one(self, dtype, bits):
        # libsndfile's read convention: code c of a b-bit container reads c / 2**(b-1)
        info = np.iinfo(dtype)
        codes = np.array([[info.min], [info.max], [0]], dtype)
        out = np.empty(codes.shape)
        codes_to_float(codes, 2.0 ** -(bits - 1), out)
        np.testing.assert_array_equal(out[:, 0], [-1.0, info.max / 2.0 ** (bits - 1), 0.0])


class TestEncodeCodes:
    def test_rounds_clips_and_counts_at_the_boundaries(self):
        # 16-bit: nearest code of s outside [lo, hi] clips; rint is round-half-even
        # (IEEE 754 default rounding), so hi + 0.5 clips and lo - 0.5 does not
        scale = 32768.0
        s = np.array([32766.5, 32767.49, 32767.5, -32768.5, -32768.51, 0.5, 1.5])
        tally, codes = np.array([-np.inf, np.inf, 0.0, 0.0]), np.empty((len(s), 1), np.int16)
        encode_codes((s / scale)[:, None], scale, -32768.0, 32767.0, 1.0, False,
                     np.zeros(1, np.uint64), tally, codes)
        assert codes[:, 0].tolist() == [32766, 32767, 32767, -32768, -32768, 0, 2]
        assert tally.tolist() == [32767.5, -32768.51, 2.0, 0.0]

    def test_counts_non_finite(self):
        tally, codes = np.array([-np.inf, np.inf, 0.0, 0.0]), np.empty((2, 1), np.int32)
        encode_codes(np.array([[np.nan], [np.inf]]), 8388608.0, -8388608.0, 8388607.0, 256.0,
                     False, np.zeros(1, np.uint64), tally, codes)
        assert tally[3] == 2

    def test_dither_is_tpdf_and_block_invariant(self):
        # TPDF on (-1, 1) LSB: mean 0, variance 1/6 (Lipshitz, Wannamaker & Vanderkooy,
        # JAES 40(5), 1992); at 0.25 LSB the rounded result has the same mean (the
        # dither makes the quantiser's mean error zero); tolerances: 5 standard errors
        y = np.full((200000, 2), 0.25 / 32768.0)
        whole = np.empty(y.shape, np.int16)
        tally = np.array([-np.inf, np.inf, 0.0, 0.0])
        encode_codes(y, 32768.0, -32768.0, 32767.0, 1.0, True, np.array([7], np.uint64), tally, whole)
        assert abs(whole.mean() - 0.25) < 5 * np.sqrt(0.25 / whole.size)
        parts, rng = np.empty(y.shape, np.int16), np.array([7], np.uint64)
        for a, b in [(0, 1), (1, 5000), (5000, len(y))]:
            encode_codes(y[a:b], 32768.0, -32768.0, 32767.0, 1.0, True, rng, tally, parts[a:b])
        np.testing.assert_array_equal(parts, whole)


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


class TestFilterCodes:
    """The one-pass kernel gives, bit for bit, the kernels above run one after the other
    (the reference here is this module's own kernels, each checked against scipy or a
    closed form above): codes to float, the sections, the delayed dry blended in, encoded."""

    @staticmethod
    def in_steps(codes, in_scale, sos, blend, ramp, delay, skip, enc):
        x = np.empty(codes.shape)
        codes_to_float(codes, in_scale, x)
        wet = np.empty_like(x)
        sos_filter(sos, x, np.zeros((len(sos), x.shape[1], 2)), wet)
        if blend:
            dry = x
            if delay:
                dry = np.empty_like(x)
                delay_line(x, np.zeros((delay, x.shape[1])), np.zeros(1, np.int64), dry)
            ramp_blend(dry, wet, ramp, wet)
        out = np.empty((len(x) - skip, x.shape[1]), enc[-1])
        encode_codes(np.ascontiguousarray(wet[skip:]), *enc[:-1], out)
        return out

    @pytest.mark.parametrize("channels", [1, 2, 3])
    @pytest.mark.parametrize("blend, delay", [(False, 0), (True, 0), (True, 3)])
    @pytest.mark.parametrize("bits, dither", [(16, True), (24, False)])
    def test_equals_the_kernels_in_steps(self, channels, blend, delay, bits, dither):
        rng = np.random.default_rng(channels)
        wide, dtype = (16, np.int16) if bits == 16 else (32, np.int32)
        codes = (rng.integers(-2 ** (bits - 1), 2 ** (bits - 1), (1000, channels)) << (wide - bits)).astype(dtype)
        sos, in_scale, skip = SOS_CASES["ellip"], 2.0 ** -(wide - 1), 5
        scale = 2.0 ** (bits - 1)

        def encoder():
            return [scale, -scale, scale - 1, 2.0 ** (wide - bits), dither, np.array([9], np.uint64),
                    np.array([-np.inf, np.inf, 0.0, 0.0]), dtype]

        ramp = [0.1, 1.0 / 400, 0.8]
        expected_enc = encoder()
        expected = self.in_steps(codes, in_scale, sos, blend, np.array(ramp), delay, skip, expected_enc)
        enc, state, ramp_state = encoder(), np.zeros((len(sos), channels, 2)), np.array(ramp)
        dry, position = np.zeros((delay, channels)), np.zeros(1, np.int64)
        out, scratch = np.empty((len(codes) - skip, channels), dtype), np.empty((3, 64, channels))
        done = 0
        for first, stop in [(0, 3), (3, 500), (500, 1000)]:  # blocks across the skip and the chunks
            dropped = max(0, min(skip - first, stop - first))
            filter_codes(codes[first:stop], in_scale, sos, state, blend, ramp_state, dry, position,
                         dropped, *enc[:-1], scratch, out[done:done + stop - first - dropped])
            done += stop - first - dropped
        np.testing.assert_array_equal(out, expected)
        np.testing.assert_array_equal(enc[6], expected_enc[6])  # peak, clip and non-finite tally
