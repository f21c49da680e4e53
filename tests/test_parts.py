"""Tests for emulate.analog.parts: notation, IEC 60062 letter code, IEC 60063 series, tolerances."""

import itertools
import math
import warnings

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from emulate.analog import parts
from emulate.errors import BadValueError, EmulateWarning

# ---------------------------------------------------------------------------
# IEC 60063:2015 tables, written out again here from the standard (from memory
# of its tables, independently of emulate/analog/parts.py) and compared element by
# element. TestESeries also cross-checks them against the rounded formula
# 10**(i/n) with the deviations the standard itself lists, so a slip in either
# copy would show.
# ---------------------------------------------------------------------------
IEC_E3 = [1.0, 2.2, 4.7]
IEC_E6 = [1.0, 1.5, 2.2, 3.3, 4.7, 6.8]
IEC_E12 = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2]
IEC_E24 = [1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
           3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1]
IEC_E48 = [1.00, 1.05, 1.10, 1.15, 1.21, 1.27, 1.33, 1.40, 1.47, 1.54, 1.62, 1.69,
           1.78, 1.87, 1.96, 2.05, 2.15, 2.26, 2.37, 2.49, 2.61, 2.74, 2.87, 3.01,
           3.16, 3.32, 3.48, 3.65, 3.83, 4.02, 4.22, 4.42, 4.64, 4.87, 5.11, 5.36,
           5.62, 5.90, 6.19, 6.49, 6.81, 7.15, 7.50, 7.87, 8.25, 8.66, 9.09, 9.53]
IEC_E96 = [1.00, 1.02, 1.05, 1.07, 1.10, 1.13, 1.15, 1.18, 1.21, 1.24, 1.27, 1.30,
           1.33, 1.37, 1.40, 1.43, 1.47, 1.50, 1.54, 1.58, 1.62, 1.65, 1.69, 1.74,
           1.78, 1.82, 1.87, 1.91, 1.96, 2.00, 2.05, 2.10, 2.15, 2.21, 2.26, 2.32,
           2.37, 2.43, 2.49, 2.55, 2.61, 2.67, 2.74, 2.80, 2.87, 2.94, 3.01, 3.09,
           3.16, 3.24, 3.32, 3.40, 3.48, 3.57, 3.65, 3.74, 3.83, 3.92, 4.02, 4.12,
           4.22, 4.32, 4.42, 4.53, 4.64, 4.75, 4.87, 4.99, 5.11, 5.23, 5.36, 5.49,
           5.62, 5.76, 5.90, 6.04, 6.19, 6.34, 6.49, 6.65, 6.81, 6.98, 7.15, 7.32,
           7.50, 7.68, 7.87, 8.06, 8.25, 8.45, 8.66, 8.87, 9.09, 9.31, 9.53, 9.76]
IEC_TABLES = {"E3": IEC_E3, "E6": IEC_E6, "E12": IEC_E12, "E24": IEC_E24,
              "E48": IEC_E48, "E96": IEC_E96}
# IEC 60063:2015: E3..E24 depart from round(10**(i/n), 1) at these values.
IEC_E24_DEPARTURES = {2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2}

RES, CAP = "resistance", "capacitance"
# Decades that fit inside the allowed ranges (0.1 ohm..1 Gohm, 1 pF..1 F).
DECADES = {RES: range(-1, 9), CAP: range(-12, 0)}


def _close(a, b):
    # Decimal-to-binary conversion differs by at most an ulp or two (~2e-16
    # relative) between m * 10**d and float("me d"); 1e-12 is far above that
    # and far below any change of written value (1e-3 at 3 figures).
    return math.isclose(a, b, rel_tol=1e-12)


class TestESeries:
    @pytest.mark.parametrize("name", list(IEC_TABLES))
    def test_matches_iec_60063_element_by_element(self, name):
        # IEC 60063:2015 tables, written out above.
        table = parts.E_SERIES[name]
        assert len(table) == len(IEC_TABLES[name])
        for i, (mine, iec) in enumerate(zip(table, IEC_TABLES[name])):
            assert mine == iec, f"{name}[{i}]"

    @pytest.mark.parametrize("name,n,places", [("E48", 48, 2), ("E96", 96, 2), ("E192", 192, 2)])
    def test_e48_up_follow_the_rounded_formula(self, name, n, places):
        # IEC 60063:2015: E48..E192 are round(10**(i/n), 2), except E192's 9.20
        # (the formula gives 9.19), which the standard keeps.
        for i, m in enumerate(parts.E_SERIES[name]):
            expected = 9.20 if (name, i) == ("E192", 185) else round(10 ** (i / n), places)
            assert m == expected, f"{name}[{i}]"

    @pytest.mark.parametrize("name,n", [("E3", 3), ("E6", 6), ("E12", 12), ("E24", 24)])
    def test_e24_down_depart_from_formula_only_where_iec_says(self, name, n):
        # IEC 60063:2015: the historic values 2.7 3.0 3.3 3.6 3.9 4.3 4.7 8.2.
        off = {m for i, m in enumerate(parts.E_SERIES[name]) if m != round(10 ** (i / n), 1)}
        assert off == IEC_E24_DEPARTURES & set(parts.E_SERIES[name])

    @pytest.mark.parametrize("coarse,fine", [("E3", "E6"), ("E6", "E12"), ("E12", "E24"),
                                             ("E48", "E96"), ("E96", "E192")])
    def test_each_series_is_every_other_value_of_the_next(self, coarse, fine):
        # IEC 60063:2015: each series is every second member of the next finer one.
        assert parts.E_SERIES[coarse] == parts.E_SERIES[fine][::2]

    def test_mantissas_ascend_within_one_decade(self):
        for table in parts.E_SERIES.values():
            assert all(1.0 <= a < b < 10 for a, b in itertools.pairwise(table))


class TestParseValue:
    @pytest.mark.parametrize("text,kind,expected", [
        # IEC 60062 letter code: the multiplier letter stands for the decimal
        # point (from memory of IEC 60062; also common practice on schematics).
        ("4k7", RES, 4700.0), ("1M2", RES, 1.2e6), ("4R7", RES, 4.7), ("R47", RES, 0.47),
        ("1k02", RES, 1020.0), ("2n2", CAP, 2.2e-9), ("4u7", CAP, 4.7e-6),
        ("4K7", RES, 4700.0), ("4N7", CAP, 4.7e-9), ("4k7Ω", RES, 4700.0),
        # SI prefixes and units (SI Brochure, 9th ed., prefix table).
        ("10k", RES, 1e4), ("1M", RES, 1e6), ("470R", RES, 470.0), ("470p", CAP, 4.7e-10),
        ("0.01u", CAP, 1e-8), ("10nF", CAP, 1e-8), ("2.2uF", CAP, 2.2e-6),
        ("10 kOhm", RES, 1e4), ("10kΩ", RES, 1e4), ("10k\u2126", RES, 1e4),
        ("100 ohm", RES, 100.0), ("100 Ohms", RES, 100.0), ("1µ", CAP, 1e-6), ("1\u03bcF", CAP, 1e-6),
        ("100m", RES, 0.1), ("1F", CAP, 1.0),
        # Plain numbers, as Python's float() reads them.
        ("47", None, 47.0), ("1e-8", None, 1e-8), ("4E7", None, 4e7), (" 6.3k ", None, 6300.0),
        (47, None, 47.0), (2.2e-9, CAP, 2.2e-9), (600, RES, 600.0),
    ])
    def test_reads_written_values(self, text, kind, expected):
        assert _close(parts.parse_value(text, kind), expected)

    @pytest.mark.parametrize("text,kind,expected", [
        # The check's endpoints are included, as documented.
        ("R1", RES, 0.1), ("1G", RES, 1e9), ("1p", CAP, 1e-12), ("1", CAP, 1.0),
    ])
    def test_range_endpoints_are_allowed(self, text, kind, expected):
        assert _close(parts.parse_value(text, kind), expected)

    @pytest.mark.parametrize("text,kind,match", [
        ("4x7", RES, r"resistance '4x7': not a value; write e.g. 4k7"),
        ("", None, r"value '': not a value"),
        ("4,7k", RES, r"'4,7k': not a value"),
        ("4.7k7", RES, r"'4.7k7': not a value"),
        ("nan", None, r"'nan': not a value"),
        ([1], None, r"value \[1\]: not a value"),
        (True, None, r"value True: not a value"),
        ("10nF", RES, r"resistance '10nF': unit 'F' is for capacitance"),
        ("4R7", CAP, r"capacitance '4R7': unit 'R' is for resistance"),
        ("10kΩ", CAP, r"unit 'Ω' is for resistance"),
        ("-10k", RES, r"resistance '-10k': must be positive; allowed 0.1 ohm..1 Gohm"),
        ("0", CAP, r"capacitance '0': must be positive; allowed 1 pF..1 F"),
        (0.0, None, r"value 0.0: must be positive"),
        (float("inf"), None, r"value inf: not finite"),
        (float("nan"), RES, r"resistance nan: not finite"),
        ("1e999", None, r"'1e999': not finite"),
        ("0.01", RES, r"'0.01': 0.01 ohms is outside the allowed 0.1 ohm..1 Gohm"),
        ("2G", RES, r"'2G': 2e\+09 ohms is outside"),
        ("0.1p", CAP, r"'0.1p': 1e-13 F is outside the allowed 1 pF..1 F"),
        ("10", CAP, r"capacitance '10': 10 F is outside"),
    ])
    def test_bad_values_name_the_text_and_what_is_allowed(self, text, kind, match):
        with pytest.raises(BadValueError, match=match):
            parts.parse_value(text, kind)

    def test_unknown_kind_is_refused(self):
        with pytest.raises(BadValueError, match=r"kind 'inductance': allowed 'resistance'"):
            parts.parse_value("1m", "inductance")


class TestParseValueRefusesLookalikes:
    """Regression: NFKC read '10²' as 102."""

    @pytest.mark.parametrize("text", ["10²", "4k⁷", "½k", "1₀k"])
    def test_superscripts_subscripts_and_fractions_are_refused(self, text):
        with pytest.raises(BadValueError, match="superscripts and fractions"):
            parts.parse_value(text, "resistance")

    @pytest.mark.parametrize("text,value", [("１０k", 10e3), ("4µ7", 4.7e-6)])
    def test_full_width_digits_and_the_micro_sign_still_read(self, text, value):
        # NFKC compatibility forms a keyboard may type (common practice, no source)
        kind = "capacitance" if "µ" in text else "resistance"
        assert parts.parse_value(text, kind) == pytest.approx(value, rel=1e-12)


class TestFormatValue:
    @pytest.mark.parametrize("value,kind,expected", [
        # How the trade writes values on a schematic (IEC 60062 letter code;
        # common practice for the 3-figure E96/E192 forms).
        (4700, RES, "4k7"), (1e4, RES, "10k"), (1e6, RES, "1M"), (470, RES, "470R"),
        (4.7, RES, "4R7"), (0.47, RES, "R47"), (1020, RES, "1k02"), (1.2e6, RES, "1M2"),
        (2.2e-9, CAP, "2n2"), (1e-8, CAP, "10n"), (1e-7, CAP, "100n"), (4.7e-10, CAP, "470p"),
        (1e-6, CAP, "1u"), (4.7e-6, CAP, "4u7"), (1.0, CAP, "1F"),
        (6300, None, "6.3k"), (470, None, "470"), (0.5, None, "0.5"), (2.2e-9, None, "2.2n"),
    ])
    def test_writes_as_on_a_schematic(self, value, kind, expected):
        assert parts.format_value(value, kind) == expected

    @pytest.mark.parametrize("value,digits,expected", [
        (4712.0, 3, "4k71"), (4712.0, 2, "4k7"), (4712.0, 4, "4k712"), (999.96, 3, "1k"),
    ])
    def test_rounds_to_the_significant_figures_asked(self, value, digits, expected):
        assert parts.format_value(value, RES, digits=digits) == expected

    @pytest.mark.parametrize("kind", [RES, CAP])
    def test_round_trips_every_e192_value_in_every_decade(self, kind):
        for d in DECADES[kind]:
            for m in parts.E_SERIES["E192"]:
                value = m * 10.0 ** d
                written = parts.format_value(value, kind)
                assert _close(parts.parse_value(written, kind), value), written

    @given(st.floats(min_value=0.1, max_value=1e9))
    @settings(max_examples=200, deadline=None)
    def test_round_trip_within_three_figures(self, value):
        # Three significant figures lose at most half a unit of the third
        # figure: 0.5 / 100 relative at a mantissa of 1.00.
        written = parts.format_value(value, RES)
        assert math.isclose(parts.parse_value(written, RES), value, rel_tol=5e-3)
        assert parts.format_value(parts.parse_value(written, RES), RES) == written

    @given(st.integers(100, 999), st.integers(-12, -3), st.sampled_from([CAP, None]))
    @settings(max_examples=200, deadline=None)
    def test_three_figure_values_round_trip_exactly(self, figures, exp10, kind):
        value = figures * 10.0 ** exp10
        assert _close(parts.parse_value(parts.format_value(value, kind), kind), value)

    @pytest.mark.parametrize("value,kind,digits,match", [
        (-1.0, RES, 3, r"resistance -1.0: must be positive"),
        (2e9, RES, 3, r"outside the allowed 0.1 ohm..1 Gohm"),
        (1e-3, RES, 3, r"outside"),
        (4700, RES, 0, r"digits 0: allowed an integer 1..6"),
        (4700, RES, 2.5, r"digits 2.5: allowed"),
        (4700, "ohms", 3, r"kind 'ohms': allowed"),
    ])
    def test_bad_input(self, value, kind, digits, match):
        with pytest.raises(BadValueError, match=match):
            parts.format_value(value, kind, digits=digits)


class TestParseSeries:
    @pytest.mark.parametrize("text,expected", [("E24", "E24"), ("e96", "E96"), (" E192 ", "E192")])
    def test_canonical_names(self, text, expected):
        assert parts.parse_series(text) == expected

    @pytest.mark.parametrize("text", ["E25", "24", "", None])
    def test_unknown_lists_allowed_names(self, text):
        with pytest.raises(BadValueError, match=r"series .*: allowed E3, E6, E12, E24, E48, E96, E192"):
            parts.parse_series(text)


class TestSeriesValues:
    def test_range_in_ohms(self):
        # IEC 60063:2015 E6 (1.0 1.5 2.2 3.3 4.7 6.8) in the kilo-ohm decade.
        assert parts.series_values("E6", 1000, 4700) == [1000.0, 1500.0, 2200.0, 3300.0, 4700.0]

    @pytest.mark.parametrize("name", list(parts.E_SERIES))
    def test_one_decade_holds_the_whole_series(self, name):
        values = parts.series_values(name, "1n", "9.99n")
        assert [v * 1e9 for v in values] == pytest.approx(parts.E_SERIES[name], rel=1e-12)

    def test_endpoints_are_inclusive_despite_float_noise(self):
        # 4.7 * 1e3 is 4700.000000000001 in binary floating point.
        assert parts.series_values("E12", 4.7 * 1e3, 4.7 * 1e3) == [4700.0]

    @pytest.mark.parametrize("lo,hi,match", [
        (10, 1, r"range 10..1: the low end must not be above the high end"),
        (0, 1, r"value 0: must be positive"),
    ])
    def test_bad_range(self, lo, hi, match):
        with pytest.raises(BadValueError, match=match):
            parts.series_values("E12", lo, hi)


class TestNeighbours:
    @pytest.mark.parametrize("value,series,expected", [
        (5000, "E24", (4700.0, 5100.0)),    # IEC 60063 E24 ... 4.7 5.1 ...
        ("4k7", "E12", (4700.0, 4700.0)),   # a preferred value is its own neighbour
        (9.99, "E12", (8.2, 10.0)),         # across a decade boundary
        (0.99999, "E3", (0.47, 1.0)),
        (1.005e3, "E192", (1000.0, 1010.0)),
    ])
    def test_bracket(self, value, series, expected):
        assert parts.neighbours(value, series) == pytest.approx(expected, rel=1e-12)

    def test_bad_series(self):
        with pytest.raises(BadValueError, match=r"series 'E7'"):
            parts.neighbours(1.0, "E7")


class TestNearestPreferred:
    @pytest.mark.parametrize("value,series,expected", [
        # Geometric mean of 4k7 and 5k1 is 4896 ohms.
        (4800, "E24", 4700.0), (4900, "E24", 5100.0), ("4.92k", "E24", 5100.0),
        (6.2e-9, "E12", 6.8e-9), (9.5, "E6", 10.0),
    ])
    def test_nearest_in_log_terms(self, value, series, expected):
        assert _close(parts.nearest_preferred(value, series), expected)

    def test_tie_goes_to_the_lower(self):
        tie = math.sqrt(1000.0 * 1100.0)
        assert tie * tie == 1000.0 * 1100.0  # an exact tie in floating point
        assert parts.nearest_preferred(tie, "E24") == 1000.0

    def test_bad_value(self):
        with pytest.raises(BadValueError, match=r"value -5: must be positive"):
            parts.nearest_preferred(-5, "E24")


class TestParseTolerance:
    @pytest.mark.parametrize("text,expected", [
        # IEC 60062 tolerance letters (from memory of IEC 60062).
        ("B", 0.001), ("C", 0.0025), ("D", 0.005), ("F", 0.01), ("G", 0.02),
        ("J", 0.05), ("K", 0.10), ("M", 0.20), ("f", 0.01),
        # Percent sign, bare numbers >= 1 as percent, bare numbers < 1 as fractions.
        ("1%", 0.01), ("0.5 %", 0.005), ("±1 %", 0.01), ("+/-5%", 0.05), ("5", 0.05),
        ("0.01", 0.01), (0.01, 0.01), (1, 0.01), ("0", 0.0), ("50%", 0.5),
    ])
    def test_reads_tolerances(self, text, expected):
        assert parts.parse_tolerance(text) == pytest.approx(expected, rel=1e-12)

    def test_bare_fraction_above_twenty_percent_warns(self):
        with pytest.warns(EmulateWarning, match=r"'0.3' read as a fraction, 30%"):
            assert parts.parse_tolerance("0.3") == 0.3

    def test_usual_values_do_not_warn(self):
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            parts.parse_tolerance("0.05")

    @pytest.mark.parametrize("text,match", [
        ("X", r"tolerance 'X': not a tolerance; write e.g. F, J, 1%"),
        ("-1%", r"tolerance '-1%': not a tolerance"),
        ("60", r"tolerance '60': outside 0..50%"),
        (float("nan"), r"tolerance nan: outside"),
        (None, r"tolerance None: not a tolerance"),
    ])
    def test_bad_tolerances(self, text, match):
        with pytest.raises(BadValueError, match=match):
            parts.parse_tolerance(text)


class TestFormatTolerance:
    @pytest.mark.parametrize("fraction,expected", [
        (0.01, "1 %"), (0.0025, "0.25 %"), (0.1, "10 %"), (0.001, "0.1 %"), (0.0, "0 %"),
    ])
    def test_percent_text(self, fraction, expected):
        assert parts.format_tolerance(fraction) == expected

    @pytest.mark.parametrize("letter", list(parts.TOLERANCE_LETTERS))
    def test_round_trips_through_parse(self, letter):
        fraction = parts.TOLERANCE_LETTERS[letter]
        assert parts.parse_tolerance(parts.format_tolerance(fraction)) == pytest.approx(fraction)

    @pytest.mark.parametrize("fraction,match", [(1.0, r"tolerance 1.0: outside 0..50%"),
                                                ("1%", r"tolerance '1%': not a number")])
    def test_bad_fraction(self, fraction, match):
        with pytest.raises(BadValueError, match=match):
            parts.format_tolerance(fraction)


class TestToleranceLetter:
    @pytest.mark.parametrize("fraction,expected", [
        # IEC 60062 tolerance letters (from memory of IEC 60062).
        (0.001, "B"), (0.0025, "C"), (0.005, "D"), (0.01, "F"), (0.02, "G"),
        (0.05, "J"), (0.1, "K"), (0.2, "M"), (0.03, None), (0.0, None),
    ])
    def test_letters(self, fraction, expected):
        assert parts.tolerance_letter(fraction) == expected

    def test_bad_fraction(self):
        with pytest.raises(BadValueError, match=r"tolerance -0.01: outside"):
            parts.tolerance_letter(-0.01)


class TestLetterCodeTwice:
    @pytest.mark.parametrize("text", ["4R7R", "4R7 ohm", "R47R"])
    def test_4r7r_accepted(self, text):
        # Regression (issue 10, defect 9): "4R7R" was read as 4.7 ohms; IEC 60062 (from memory)
        # writes the R once, as the decimal mark.
        with pytest.raises(BadValueError, match="already names ohms with R"):
            parts.parse_value(text, "resistance")


class TestBuiltValueExact:
    def test_r3_4k54_for_2_x_9k09(self):
        # Regression (issue 10, defect 8): 2 x 9k09 in parallel is 4545 ohms exactly; written with
        # three figures it read "4k54" and a build from the text missed the Q 20 null.
        assert parts.format_value(9090.0 / 2, "resistance", 6) == "4k545"
        assert parts.parse_value(parts.format_value(9090.0 / 2, "resistance", 6), "resistance") == 4545.0
