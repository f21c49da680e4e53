"""Tests of emulate.analog.makeup: a position as one part or two in series/parallel.

References: series and parallel resistance and capacitance (any circuits textbook;
common practice, no source); IEC 60063 E-series values through emulate.analog.parts.
"""

from __future__ import annotations

import numpy as np
import pytest

from emulate.analog import parts
from emulate.errors import BadValueError
from emulate.analog.makeup import PARALLEL, SERIES, Makeup, combine, value_table


class TestCombine:
    @pytest.mark.parametrize("a, b, wiring, kind, expected", [
        (10e3, 10e3, SERIES, "resistance", 20e3), (10e3, 10e3, PARALLEL, "resistance", 5e3),
        (10e-9, 10e-9, PARALLEL, "capacitance", 20e-9), (10e-9, 10e-9, SERIES, "capacitance", 5e-9),
        (3e3, 6e3, PARALLEL, "resistance", 2e3)])
    def test_textbook(self, a, b, wiring, kind, expected):
        assert combine(a, b, wiring, kind) == pytest.approx(expected, rel=1e-12)


class TestMakeup:
    @pytest.mark.parametrize("made, text, count", [
        (Makeup.single(4700.0, "resistance"), "4k7", 1),
        (Makeup.pair(2.2e-9, 2.2e-9, "parallel", "capacitance"), "2 x 2n2 in parallel", 2),
        (Makeup.pair(10e3, 330.0, "series", "resistance"), "10k + 330R in series", 2)])
    def test_text_as_the_trade_writes_it(self, made, text, count):
        assert made.text() == text and made.count == count


class TestValueTable:
    def test_singles_are_the_series(self):
        table = value_table("E12", 1e3, 10e3, "resistance")
        assert table.value.tolist() == parts.series_values("E12", 1e3, 10e3)
        assert set(table.count.tolist()) == {1}

    @pytest.mark.parametrize("pairs", ["equal", "any"])
    def test_pairs_give_their_values_and_stay_in_range(self, pairs):
        table = value_table("E6", 1e3, 10e3, "resistance", pairs=pairs)
        assert np.all(np.diff(table.value) >= 0)
        assert table.value.min() >= 1e3 * (1 - 1e-9) and table.value.max() <= 10e3 * (1 + 1e-9)
        for i in range(0, len(table), 7):
            assert table.makeup(i).value == pytest.approx(table.value[i], rel=1e-12)
        assert len(table) > len(value_table("E6", 1e3, 10e3, "resistance"))

    def test_nearest_brackets(self):
        table = value_table("E6", 1e3, 10e3, "resistance")
        below, above = table.value[table.nearest(np.array([5000.0]))[0]]
        assert (below, above) == (4700.0, 6800.0)

    def test_bad_pairs(self):
        with pytest.raises(BadValueError, match="pairs 'some'"):
            value_table("E6", 1e3, 10e3, "resistance", pairs="some")
