"""Tests of the pooling rules the finders share (emulate.voice.pooling).

The rules are our own (common practice, no source): an exact repeat adds nothing; with
three or more takes, one lying further than the limit from the median of the others, while
they agree within half of it, is set aside, and the reason says which and why.
"""

import numpy as np
import pytest

from emulate.voice.hum import combine_hum, find_hum
from emulate.voice.pooling import distinct, outlying
from emulate.voice.resonance.finder import combine_resonance, find_resonance
from emulate.voice.sibilance import combine_reports, find_sibilance
from emulate.voice.takes import TakeSource


class TestDistinct:
    def test_first_occurrences_are_kept(self):
        assert distinct([("a",), ("b",), ("a",), ("b",), ("c",)]) == ([0, 1, 4], [2, 3])

    def test_near_copies_are_not_repeats(self):
        assert distinct([(1.0,), (1.0 + 1e-12,)]) == ([0, 1], [])


class TestOutlying:
    def test_one_far_take_is_named_with_its_reason(self):
        index, why = outlying([6000, 6100, 5900, 3000], 0.25)
        assert index == 3
        assert why == "its peak 3000 Hz lies 1.00 octave from the other takes (median 6000 Hz)"

    @pytest.mark.parametrize("frequencies", [[6000, 3000], [6000, 6200, 6100], [6000, 4000, 8000, 3000]],
                             ids=["two-takes", "all-agree", "no-agreement"])
    def test_none_when_no_take_is_clearly_apart(self, frequencies):
        assert outlying(frequencies, 0.25) == (None, "")

    def test_limit_is_exclusive(self):
        # 2**0.25 * 6000 lies exactly a quarter octave away: not beyond the limit
        assert outlying([6000, 6000, 6000, 6000 * 2**0.25], 0.25)[0] is None
        assert outlying([6000, 6000, 6000, 6000 * 2**0.26], 0.25)[0] == 3


@pytest.fixture(scope="module")
def noise():
    """Two different half-second noise takes of one length."""
    rng = np.random.default_rng(5)
    return [0.05 * rng.standard_normal(24000) for _ in range(2)]


class TestRepeatsByTheirAudio:
    """An exact repeat is the same samples (TakeSource.digest), not the same figures: two
    different takes that found nothing, of one length, report the same figures (here: too
    short for every finder, which keeps the check cheap)."""

    @pytest.mark.parametrize("find, combine", [(find_hum, combine_hum), (find_resonance, combine_resonance),
                                               (find_sibilance, combine_reports)],
                             ids=["hum", "resonance", "sibilance"])
    def test_different_takes_that_found_nothing_are_both_pooled(self, noise, find, combine):
        reports = [find(x, 48000) for x in (*noise, noise[0])]
        assert combine(reports, labels=["a", "b", "c"]).set_aside == ("c: an exact repeat of an earlier take",)

    def test_the_same_audio_in_two_files_is_one_take(self, noise, tmp_path):
        from emulate.audio import stream

        for name, subtype in (("a.wav", "PCM_24"), ("a.flac", "PCM_24")):
            stream.write_array(tmp_path / name, noise[0][:, None], 48000, subtype=subtype)
        sources = [TakeSource.from_file(tmp_path / name) for name in ("a.wav", "a.flac")]
        assert sources[0].digest() == sources[1].digest()
