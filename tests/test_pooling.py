"""Tests of the pooling rules the finders share (emulate.voice.pooling).

The rules are our own (common practice, no source): an exact repeat adds nothing; with
three or more takes, one lying further than the limit from the median of the others, while
they agree within half of it, is set aside, and the reason says which and why.
"""

import pytest

from emulate.voice.pooling import distinct, outlying


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
