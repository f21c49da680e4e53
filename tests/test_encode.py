"""Tests for emulate.audio.encode.Encoder (scaling, clip and over-scale counts, dither, peak)."""

import numpy as np
import pytest

from emulate.audio.encode import Encoder, container_bits
from emulate.errors import EmulateError


class TestContainerBits:
    @pytest.mark.parametrize("bits, wide", [(8, 16), (16, 16), (24, 32), (32, 32)])
    def test_int16_or_int32(self, bits, wide):
        assert container_bits(bits) == wide


class TestEncoder:
    @pytest.mark.parametrize("subtype, bits", [("PCM_16", 16), ("PCM_24", 24), ("PCM_32", 32)])
    def test_codes_left_aligned_and_clipped(self, subtype, bits):
        # libsndfile's convention: an N-bit code c is c / 2**(N-1), left-aligned in the container
        enc = Encoder(subtype, dither=False, seed=0)
        codes = enc.encode(np.array([[0.5, -1.0], [1.0, -1.5]]))
        shift = 2 ** (container_bits(bits) - bits)
        top = 2 ** (bits - 1)
        assert codes.tolist() == [[top // 2 * shift, -top * shift], [(top - 1) * shift, -top * shift]]
        assert enc.clipped == 2 and enc.peak == 1.5

    def test_new_array_per_block(self):
        enc = Encoder("PCM_16", dither=False, seed=0)
        a = enc.encode(np.zeros((4, 1)))
        assert enc.encode(np.ones((4, 1)) * 0.5) is not a and a.tolist() == [[0]] * 4

    @pytest.mark.parametrize("subtype", ["FLOAT", "DOUBLE"])
    def test_float_never_clipped_over_scale_counted(self, subtype):
        enc = Encoder(subtype, dither=True, seed=0)
        y = np.array([[2.0], [-1.0], [-1.0000001]])
        assert enc.encode(y) is y and enc.over == 2 and enc.clipped == 0 and not enc.dither

    @pytest.mark.parametrize("subtype, dithered", [("PCM_U8", True), ("PCM_16", True),
                                                   ("PCM_24", False), ("FLOAT", False)])
    def test_dither_only_up_to_16_bits(self, subtype, dithered):
        assert Encoder(subtype, dither=True, seed=0).dither is dithered

    @pytest.mark.parametrize("subtype", ["PCM_16", "FLOAT"])
    def test_non_finite_refused(self, subtype):
        with pytest.raises(EmulateError, match="NaN/Inf"):
            Encoder(subtype, dither=False, seed=0).encode(np.array([[np.nan]]))
