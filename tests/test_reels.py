"""Tests of the listening reels (emulate.work.reels): loudness matching, headroom, cue lists.

The loudness reference is ITU-R BS.1770 integrated loudness as pyloudnorm computes it
(DeMan filters, :func:`emulate.voice.loudness.loudness_lufs`); K-weighting and the gating
are linear in level, so a gain of g dB moves the integrated loudness by g LU (BS.1770-4,
sec. 2: the gate thresholds move with the level, the -70 LUFS absolute gate aside).
"""

from __future__ import annotations

import csv
import io
import math

import numpy as np
import pyloudnorm
import pytest

from emulate.audio import stream as audio
from emulate.errors import BadValueError
from emulate.work import reels

from helpers_lean import shared_voice_take

FS = 48000


def speech(seconds=2.0, scale=1.0, seed=1, channels=1):
    """An invented voice-like excerpt, ``(frames, channels)`` (a new array: the scaled shared take)."""
    return scale * shared_voice_take(FS, seconds, pitch_hz=140.0, sibilance_hz=6000.0, seed=seed,
                                     channels=channels)


def bs1770(x):
    # pyloudnorm with the DeMan K-weighting: the published BS.1770-4 coefficients at 48 kHz
    return pyloudnorm.Meter(FS, filter_class="DeMan").integrated_loudness(x)


class TestMatchedGainsDb:
    def test_quieter_segments_are_raised_to_the_dry_loudness(self):
        dry = speech(scale=0.3)
        segments = [reels.Segment("dry", dry), reels.Segment("a", dry / 2), reels.Segment("b", dry / 10)]
        gains, loudness, lowered = reels.matched_gains_db(segments, FS)
        # 20 log10(2) = 6.02 dB and 20 log10(10) = 20 dB: loudness is linear in level (module doc)
        assert gains == pytest.approx([0.0, 20 * math.log10(2), 20.0], abs=1e-6)
        assert lowered == 0.0
        assert loudness[0] == pytest.approx(bs1770(dry), abs=1e-9)

    def test_matching_never_pushes_a_segment_over_full_scale(self):
        dry = speech(scale=1.0)
        dry *= 0.5 / np.max(np.abs(dry))  # dry peaks at -6 dBFS
        quiet = dry / 4
        quiet[1000] = 0.5  # one click: matching (+12 dB) would put it at 2.0, +6 dBFS
        gains, _, lowered = reels.matched_gains_db([reels.Segment("dry", dry), reels.Segment("q", quiet)], FS)
        peaks = [np.max(np.abs(x)) * 10 ** (g / 20) for x, g in zip((dry, quiet), gains)]
        assert max(peaks) == pytest.approx(1.0, abs=1e-9)  # the highest sits exactly at 0 dBFS
        raised = 20 * math.log10(4)  # the click barely changes the loudness (0.02 LU here)
        assert lowered == pytest.approx(raised - 20 * math.log10(2), abs=0.05)
        # lowered together: the two still match each other
        assert gains[1] - gains[0] == pytest.approx(raised, abs=0.05)

    def test_no_match_keeps_raw_levels(self):
        dry = speech(scale=0.3)
        gains, _, lowered = reels.matched_gains_db([reels.Segment("dry", dry), reels.Segment("a", dry / 3)],
                                                   FS, match=False)
        assert gains == [0.0, 0.0] and lowered == 0.0

    def test_a_segment_shorter_than_a_gating_block_is_not_matched(self):
        dry = speech(scale=0.3)
        gains, loudness, _ = reels.matched_gains_db([reels.Segment("dry", dry),
                                                     reels.Segment("short", dry[:FS // 10] / 2)], FS)
        assert loudness[1] is None and gains[1] == 0.0

    def test_no_segments(self):
        with pytest.raises(BadValueError, match="at least one segment"):
            reels.matched_gains_db([], FS)


class TestWriteReel:
    def test_segments_match_the_dry_loudness_in_the_file(self, tmp_path):
        dry = speech(scale=0.3, channels=2)
        wets = [dry * 0.5, dry * 0.2]
        segments = [reels.Segment("dry", dry)] + [reels.Segment(f"w{i}", w) for i, w in enumerate(wets)]
        reel = reels.write_reel(tmp_path / "r.wav", segments, FS, "FLOAT")
        x, _ = audio.read_all(reel.path)
        for cue in reel.cues:
            piece = x[round(cue.start_s * FS):round(cue.end_s * FS)]
            # BS.1770 (pyloudnorm) of each piece as written equals the dry's within 0.01 LU (float32 file)
            assert bs1770(piece) == pytest.approx(bs1770(dry), abs=0.01)

    def test_length_gaps_and_cues(self, tmp_path):
        dry, wets = np.full((100, 2), 0.5), [np.full((100, 2), 0.25), np.full((100, 2), -0.25)]
        segments = [reels.Segment("dry", dry)] + [reels.Segment(f"s{i}", w) for i, w in enumerate(wets)]
        reel = reels.write_reel(tmp_path / "r.wav", segments, FS, "FLOAT", match=False)
        x, fs = audio.read_all(reel.path)
        gap = int(reels.REEL_GAP_S * FS)
        assert fs == FS and x.shape == (300 + 2 * gap, 2)
        np.testing.assert_array_equal(x[100:100 + gap], 0.0)
        np.testing.assert_array_equal(x[-100:], -0.25)
        assert [(c.segment, c.setting) for c in reel.cues] == [(1, "dry"), (2, "s0"), (3, "s1")]
        assert [c.start_s for c in reel.cues] == pytest.approx([0, (100 + gap) / FS, (200 + 2 * gap) / FS])

    def test_cue_list_beside_the_reel_reads_as_csv(self, tmp_path):
        dry = speech(scale=0.3)
        odd = 'notch, "odd" label'  # a comma and quotes: quoted as RFC 4180 asks
        reel = reels.write_reel(tmp_path / "reel--t.wav", [reels.Segment("dry", dry), reels.Segment(odd, dry / 2)],
                                FS, "PCM_24")
        assert reel.cues_path == str(tmp_path / "reel--t.cues.csv")
        rows = list(csv.DictReader(io.StringIO((tmp_path / "reel--t.cues.csv").read_text())))
        assert [r["setting"] for r in rows] == ["dry", odd]
        assert float(rows[1]["gain_db"]) == pytest.approx(6.02, abs=0.01)  # 20 log10(2)
        assert float(rows[0]["start_s"]) == 0.0 and float(rows[1]["start_s"]) == pytest.approx(2 + reels.REEL_GAP_S)

    def test_lowering_is_stated(self, tmp_path):
        dry = speech(scale=1.0)
        dry *= 0.5 / np.max(np.abs(dry))
        quiet = dry / 8
        quiet[1000] = 0.5  # a click that matching would push over full scale
        reel = reels.write_reel(tmp_path / "r.wav", [reels.Segment("dry", dry), reels.Segment("q", quiet)],
                                FS, "PCM_24")
        assert reel.lowered_db > 0 and "lowered" in reel.note() and "0 dBFS" in reel.note()
        assert reel.cues[0].gain_db == pytest.approx(-reel.lowered_db)

    def test_an_unmatched_segment_is_named(self, tmp_path):
        dry = speech(scale=0.3)
        reel = reels.write_reel(tmp_path / "r.wav", [reels.Segment("dry", dry), reels.Segment("hush", dry * 0)],
                                FS, "PCM_24")
        assert "not matched" in reel.note() and "hush" in reel.note() and reel.cues[1].gain_db == 0.0

    def test_channel_counts_must_agree(self, tmp_path):
        with pytest.raises(BadValueError, match="same channel count"):
            reels.write_reel(tmp_path / "r.wav", [reels.Segment("dry", np.zeros((10, 1))),
                                                  reels.Segment("w", np.zeros((10, 2)))], FS, "PCM_24")
        assert not list(tmp_path.iterdir())
