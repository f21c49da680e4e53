"""Tests of emulate.audio.rawpcm: PCM data moved as bytes equals libsndfile's own int16/int32 I/O.

The reference is libsndfile itself (through soundfile): its int16/int32 reading of the
same file, and the bytes of the file ``SoundFile.write`` makes from the same codes.
"""

from __future__ import annotations

import numpy as np
import pytest
import soundfile as sf

from emulate.audio import rawpcm
from emulate.audio.stream import render_file
from emulate.errors import AudioFileError
from helpers_audio import PCM_BITS, random_codes, snapshot, write_codes

RATE = 48000
RAW_CASES = [(ext, subtype) for ext in ("wav", "w64", "rf64") for subtype in ("PCM_16", "PCM_24", "PCM_32")]


def dtype_of(subtype):
    return np.int16 if subtype == "PCM_16" else np.int32


def read_raw(path, subtype, block_frames):
    """Every frame of ``path`` through RawPCM, in blocks of ``block_frames``."""
    blocks = []
    with sf.SoundFile(path) as snd:
        raw = rawpcm.raw_pcm(snd)
        assert raw is not None
        block = np.empty((block_frames, snd.channels), dtype_of(subtype))
        while n := raw.read(block):
            blocks.append(block[:n].copy())
    return np.vstack(blocks)


class TestRead:
    @pytest.mark.parametrize("ext, subtype", RAW_CASES)
    def test_codes_equal_libsndfiles_int_reading(self, tmp_path, ext, subtype):
        path = tmp_path / f"in.{ext}"
        write_codes(path, random_codes(np.random.default_rng(1), 5001, 2, PCM_BITS[subtype]), RATE, subtype)
        expected = sf.read(path, dtype=np.dtype(dtype_of(subtype)).name, always_2d=True)[0]
        np.testing.assert_array_equal(read_raw(path, subtype, 1000), expected)  # last block partial

    def test_full_scale_ends_of_24_bit(self, tmp_path):
        path = tmp_path / "ends.wav"
        write_codes(path, np.array([[-2 ** 23, 2 ** 23 - 1], [-1, 1], [0, 0]]), RATE, "PCM_24")
        assert read_raw(path, "PCM_24", 8).tolist() == [[-2 ** 31, 2 ** 31 - 256], [-256, 256], [0, 0]]


class TestWrite:
    @pytest.mark.parametrize("ext, subtype", RAW_CASES)
    def test_file_equals_soundfile_writes(self, tmp_path, ext, subtype):
        bits = PCM_BITS[subtype]
        codes = random_codes(np.random.default_rng(2), 3001, 2, bits)
        data = (codes << ((16 if bits == 16 else 32) - bits)).astype(dtype_of(subtype))
        sf.write(tmp_path / f"plain.{ext}", data, RATE, subtype=subtype)
        with sf.SoundFile(tmp_path / f"raw.{ext}", "w", RATE, 2, subtype) as snd:
            raw = rawpcm.raw_pcm(snd)
            for first in range(0, len(data), 1000):
                raw.write(np.ascontiguousarray(data[first:first + 1000]))
        assert (tmp_path / f"raw.{ext}").read_bytes() == (tmp_path / f"plain.{ext}").read_bytes()

    def test_a_short_write_is_an_error(self, tmp_path):
        class ShortWrites:
            def __init__(self, lib):
                self.lib = lib

            def sf_write_raw(self, *_args):
                return 0

            def sf_error(self, _file):
                return 0

        with sf.SoundFile(tmp_path / "o.wav", "w", RATE, 1, "PCM_16") as snd:
            raw = rawpcm.raw_pcm(snd)
            raw._lib = ShortWrites(raw._lib)
            with pytest.raises(sf.LibsndfileError):
                raw.write(np.zeros((4, 1), np.int16))


class TestOnlyWhereExact:
    @pytest.mark.parametrize("ext, subtype", [("aiff", "PCM_24"), ("flac", "PCM_16"), ("wav", "PCM_U8"),
                                              ("wav", "FLOAT"), ("caf", "PCM_16")])
    def test_other_files_go_through_libsndfile(self, tmp_path, ext, subtype):
        # AIFF and libsndfile's CAF hold big-endian samples, FLAC is coded, 8-bit WAV unsigned
        path = tmp_path / f"in.{ext}"
        sf.write(path, np.zeros((10, 2)), RATE, subtype=subtype)
        with sf.SoundFile(path) as snd:
            assert rawpcm.raw_pcm(snd) is None


class TestRender:
    def test_failed_raw_write_leaves_nothing(self, tmp_path, monkeypatch):
        from test_audio import notch_processor

        path = tmp_path / "in.wav"
        write_codes(path, random_codes(np.random.default_rng(3), 20000, 2, 24), RATE, "PCM_24")
        before = snapshot(tmp_path)

        def no_space(*_args):
            raise sf.LibsndfileError(2, "Error : ")
        monkeypatch.setattr(rawpcm.RawPCM, "write", no_space)
        with pytest.raises(AudioFileError, match="writing failed"):
            render_file(path, tmp_path / "o.wav", notch_processor(), block_frames=1000)
        assert snapshot(tmp_path) == before

    @pytest.mark.parametrize("cut_bytes", [0, 1, 5])
    @pytest.mark.parametrize("float_path", [False, True])
    def test_a_wav_cut_mid_data_renders_as_through_libsndfile(self, tmp_path, monkeypatch, cut_bytes, float_path):
        # a copy stopped short: the header promises more frames than the file holds
        from test_audio import FloatOnly, notch_processor

        path = tmp_path / "cut.wav"
        write_codes(path, random_codes(np.random.default_rng(4), 3000, 2, 24), RATE, "PCM_24")
        data = path.read_bytes()
        path.write_bytes(data[:len(data) - 6 * 700 - cut_bytes])
        wrap = FloatOnly if float_path else (lambda processor: processor)
        for name in ("raw.wav", "plain.wav"):
            if name == "plain.wav":
                monkeypatch.setattr(rawpcm, "raw_pcm", lambda snd: None)  # libsndfile's int and float I/O
            with pytest.warns(Warning, match="cut short"):
                render_file(path, tmp_path / name, wrap(notch_processor()), subtype="DOUBLE" if float_path else None)
        raw, plain = tmp_path / "raw.wav", tmp_path / "plain.wav"
        if float_path:  # a float WAV's PEAK chunk holds the second it was written (libsndfile): compare the samples
            assert raw.stat().st_size == plain.stat().st_size
            assert np.array_equal(sf.read(raw, dtype="float64")[0], sf.read(plain, dtype="float64")[0])
        else:
            assert raw.read_bytes() == plain.read_bytes()
