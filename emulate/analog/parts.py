"""Part values: engineering notation, IEC 60062 letter code, IEC 60063 E-series, tolerances.

Everything a user types as a part value passes through :func:`parse_value`, and
everything shown on a schematic or build sheet through :func:`format_value`, so
the two round-trip. Values are plain floats in ohms, farads or (kind ``None``)
any unit such as Hz.

Written forms accepted by :func:`parse_value`:

- decimal with an optional SI prefix and unit: ``47``, ``1e-8``, ``4.7k``,
  ``10 kOhm``, ``10kΩ``, ``100 ohm``, ``470R``, ``2.2uF``, ``10nF``, ``1µ``;
- the IEC 60062 letter code, the prefix letter standing for the decimal point:
  ``4k7``, ``1M2``, ``2n2``, ``4u7``, ``4R7``, ``R47``, ``1k02``.

Prefix letters: ``p n u µ m k M G T`` (``K``, ``U``, ``N``, ``P`` are read as
``k``, ``u``, ``n``, ``p``; ``m`` is milli and ``M`` is mega). ``R`` marks ohms
(and the decimal point in ``4R7``). The letter ``E`` is never a decimal mark
here: ``4E7`` is 4e7, as in Python.
"""

from __future__ import annotations

import functools
import math
import numbers
import re
import unicodedata
import warnings
from bisect import bisect_left
from types import MappingProxyType

from emulate.errors import BadValueError, EmulateWarning

__all__ = [
    "E_SERIES", "KINDS", "TOLERANCE_LETTERS", "format_tolerance", "format_value",
    "nearest_preferred", "neighbours", "parse_series", "parse_tolerance", "parse_value",
    "series_values", "tolerance_letter",
]

# ---------------------------------------------------------------------------
# IEC 60063:2015 "Preferred number series for resistors and capacitors":
# the series E3..E192 written out in full (from memory of the standard's tables).
# E3..E24 differ from round(10**(i/n), 1) at 2.7 3.0 3.3 3.6 3.9 4.3 4.7 8.2
# and E192 has 9.20 where the formula gives 9.19, so nothing here is computed.
# ---------------------------------------------------------------------------
_E3 = (1.0, 2.2, 4.7)
_E6 = (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)
_E12 = (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2)
_E24 = (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
        3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1)
_E48 = (1.00, 1.05, 1.10, 1.15, 1.21, 1.27, 1.33, 1.40, 1.47, 1.54, 1.62, 1.69,
        1.78, 1.87, 1.96, 2.05, 2.15, 2.26, 2.37, 2.49, 2.61, 2.74, 2.87, 3.01,
        3.16, 3.32, 3.48, 3.65, 3.83, 4.02, 4.22, 4.42, 4.64, 4.87, 5.11, 5.36,
        5.62, 5.90, 6.19, 6.49, 6.81, 7.15, 7.50, 7.87, 8.25, 8.66, 9.09, 9.53)
_E96 = (1.00, 1.02, 1.05, 1.07, 1.10, 1.13, 1.15, 1.18, 1.21, 1.24, 1.27, 1.30,
        1.33, 1.37, 1.40, 1.43, 1.47, 1.50, 1.54, 1.58, 1.62, 1.65, 1.69, 1.74,
        1.78, 1.82, 1.87, 1.91, 1.96, 2.00, 2.05, 2.10, 2.15, 2.21, 2.26, 2.32,
        2.37, 2.43, 2.49, 2.55, 2.61, 2.67, 2.74, 2.80, 2.87, 2.94, 3.01, 3.09,
        3.16, 3.24, 3.32, 3.40, 3.48, 3.57, 3.65, 3.74, 3.83, 3.92, 4.02, 4.12,
        4.22, 4.32, 4.42, 4.53, 4.64, 4.75, 4.87, 4.99, 5.11, 5.23, 5.36, 5.49,
        5.62, 5.76, 5.90, 6.04, 6.19, 6.34, 6.49, 6.65, 6.81, 6.98, 7.15, 7.32,
        7.50, 7.68, 7.87, 8.06, 8.25, 8.45, 8.66, 8.87, 9.09, 9.31, 9.53, 9.76)
_E192 = (1.00, 1.01, 1.02, 1.04, 1.05, 1.06, 1.07, 1.09, 1.10, 1.11, 1.13, 1.14,
         1.15, 1.17, 1.18, 1.20, 1.21, 1.23, 1.24, 1.26, 1.27, 1.29, 1.30, 1.32,
         1.33, 1.35, 1.37, 1.38, 1.40, 1.42, 1.43, 1.45, 1.47, 1.49, 1.50, 1.52,
         1.54, 1.56, 1.58, 1.60, 1.62, 1.64, 1.65, 1.67, 1.69, 1.72, 1.74, 1.76,
         1.78, 1.80, 1.82, 1.84, 1.87, 1.89, 1.91, 1.93, 1.96, 1.98, 2.00, 2.03,
         2.05, 2.08, 2.10, 2.13, 2.15, 2.18, 2.21, 2.23, 2.26, 2.29, 2.32, 2.34,
         2.37, 2.40, 2.43, 2.46, 2.49, 2.52, 2.55, 2.58, 2.61, 2.64, 2.67, 2.71,
         2.74, 2.77, 2.80, 2.84, 2.87, 2.91, 2.94, 2.98, 3.01, 3.05, 3.09, 3.12,
         3.16, 3.20, 3.24, 3.28, 3.32, 3.36, 3.40, 3.44, 3.48, 3.52, 3.57, 3.61,
         3.65, 3.70, 3.74, 3.79, 3.83, 3.88, 3.92, 3.97, 4.02, 4.07, 4.12, 4.17,
         4.22, 4.27, 4.32, 4.37, 4.42, 4.48, 4.53, 4.59, 4.64, 4.70, 4.75, 4.81,
         4.87, 4.93, 4.99, 5.05, 5.11, 5.17, 5.23, 5.30, 5.36, 5.42, 5.49, 5.56,
         5.62, 5.69, 5.76, 5.83, 5.90, 5.97, 6.04, 6.12, 6.19, 6.26, 6.34, 6.42,
         6.49, 6.57, 6.65, 6.73, 6.81, 6.90, 6.98, 7.06, 7.15, 7.23, 7.32, 7.41,
         7.50, 7.59, 7.68, 7.77, 7.87, 7.96, 8.06, 8.16, 8.25, 8.35, 8.45, 8.56,
         8.66, 8.76, 8.87, 8.98, 9.09, 9.20, 9.31, 9.42, 9.53, 9.65, 9.76, 9.88)

#: IEC 60063:2015 series name -> mantissas (1.0 <= m < 10), ascending.
E_SERIES = MappingProxyType({
    "E3": _E3, "E6": _E6, "E12": _E12, "E24": _E24,
    "E48": _E48, "E96": _E96, "E192": _E192,
})

#: IEC 60062 tolerance letters -> symmetric tolerance as a fraction.
TOLERANCE_LETTERS = MappingProxyType({
    "B": 0.001, "C": 0.0025, "D": 0.005, "F": 0.01,
    "G": 0.02, "J": 0.05, "K": 0.10, "M": 0.20,
})

#: Kinds of value: name -> (lowest, highest) allowed, inclusive, and unit words.
KINDS = MappingProxyType({
    "resistance": (0.1, 1e9),
    "capacitance": (1e-12, 1.0),
})

_RANGE_TEXT = {"resistance": "0.1 ohm..1 Gohm", "capacitance": "1 pF..1 F",
               None: "any finite positive number"}
_EXAMPLES = {"resistance": "4k7, 10k, 1M2, 470 (ohms)",
             "capacitance": "2n2, 100n, 4u7, 470p (farads)",
             None: "4k7, 2n2, 6.3k, 1e-8, 0.5"}
_UNIT_WORD = {"resistance": "ohms", "capacitance": "F"}
_LABEL = {"resistance": "resistance", "capacitance": "capacitance", None: "value"}

# Prefix letter -> power of ten. Text is NFKC-normalised first, which maps the
# micro sign U+00B5 to Greek mu U+03BC and the ohm sign U+2126 to omega U+03A9.
_PREFIX_EXP = {"p": -12, "P": -12, "n": -9, "N": -9, "u": -6, "U": -6, "\u03bc": -6,
               "m": -3, "": 0, "R": 0, "k": 3, "K": 3, "M": 6, "G": 9, "T": 12}
_PREFIXES = "pPnNuU\u03bcmkKMGT"
_UNIT = r"(?P<unit>(?i:ohms?)|\u03a9|R|F)?"
_DECIMAL_RE = re.compile(
    r"(?P<num>[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*"
    rf"(?P<prefix>[{_PREFIXES}]?)\s*{_UNIT}")
_LETTER_RE = re.compile(
    rf"(?P<sign>[+-]?)(?P<int>\d*)(?P<mark>[{_PREFIXES}R])(?P<frac>\d+)\s*{_UNIT}")

# Output letters used by format_value: engineering exponent -> letter.
_MARKS = {
    "resistance": {0: "R", 3: "k", 6: "M", 9: "G"},
    "capacitance": {-12: "p", -9: "n", -6: "u", -3: "m", 0: "F"},
    None: {-12: "p", -9: "n", -6: "u", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T"},
}


def _check_kind(kind: str | None) -> None:
    if kind is not None and kind not in KINDS:
        raise BadValueError(f"kind {kind!r}: allowed 'resistance', 'capacitance' or None")


def _fail(kind: str | None, text: object, why: str) -> BadValueError:
    shown = repr(text) if isinstance(text, str) else str(text)
    return BadValueError(f"{_LABEL[kind]} {shown}: {why}")


def _unit_kind(unit: str | None) -> str | None:
    """The kind a written unit (ohm, Ω, R or F) implies, or None without one."""
    if not unit:
        return None
    return "capacitance" if unit == "F" else "resistance"


def _from_text(text: str, kind: str | None) -> float:
    """Read a written value to a float; no range check."""
    # NFKC reads full-width digits and the micro sign as typed, but would also read
    # superscripts and vulgar fractions as digits ('10²' as 102): those are refused
    if any(unicodedata.category(ch) == "No" for ch in text):
        raise _fail(kind, text, f"not a value (superscripts and fractions are not digits); write e.g. "
                                f"{_EXAMPLES[kind]}")
    cleaned = unicodedata.normalize("NFKC", text).strip()
    if match := _DECIMAL_RE.fullmatch(cleaned):
        number, exp, unit = match["num"], _PREFIX_EXP[match["prefix"]], match["unit"]
    elif match := _LETTER_RE.fullmatch(cleaned):
        if match["mark"] == "R" and match["unit"]:
            raise _fail(kind, text, f"the letter code already names ohms with R; write e.g. {_EXAMPLES[kind]}")
        number = f"{match['sign']}{match['int'] or '0'}.{match['frac']}"
        exp = _PREFIX_EXP[match["mark"]]
        unit = "R" if match["mark"] == "R" else match["unit"]
    else:
        raise _fail(kind, text, f"not a value; write e.g. {_EXAMPLES[kind]}")
    implied = _unit_kind(unit)
    if kind is not None and implied is not None and implied != kind:
        raise _fail(kind, text, f"unit {unit!r} is for {implied}; write e.g. {_EXAMPLES[kind]}")
    # float() of the decimal string is correctly rounded: "4k7" -> float("4.7e3") == 4700.0
    return float(f"{number}e{exp}") if exp else float(number)


def parse_value(text: str | float, kind: str | None = None) -> float:
    """Read a part value written in engineering notation or the IEC 60062 letter code.

    Parameters
    ----------
    text : str, float or int
        The written value (see the module docstring for the forms), or a number
        in ohms / farads / the caller's unit, which is range-checked only.
    kind : {"resistance", "capacitance", None}
        ``"resistance"`` (ohms, 0.1 ohm..1 Gohm inclusive), ``"capacitance"``
        (farads, 1 pF..1 F inclusive) or ``None`` (any finite positive number,
        e.g. a frequency in Hz). A unit written in ``text`` must fit the kind.
        Does not round to a preferred value.

    Returns
    -------
    float
        The value in ohms, farads or the caller's unit.

    Raises
    ------
    BadValueError
        If the text is not a value, its unit does not fit ``kind``, or the value
        is not finite, not positive or outside the kind's range; also for an
        unknown ``kind``.

    Examples
    --------
    >>> parse_value("4k7", "resistance"), parse_value("2n2", "capacitance")
    (4700.0, 2.2e-09)
    >>> parse_value("10 kOhm", "resistance"), parse_value("6.3k")
    (10000.0, 6300.0)
    """
    _check_kind(kind)
    if isinstance(text, str):
        value = _from_text(text, kind)
    elif isinstance(text, numbers.Real) and not isinstance(text, bool):
        value = float(text)
    else:
        raise _fail(kind, text, f"not a value; write e.g. {_EXAMPLES[kind]}")
    return _check_range(value, kind, text)


def _check_range(value: float, kind: str | None, text: object) -> float:
    """The one range check for part values; endpoints included, as documented."""
    if not math.isfinite(value):
        raise _fail(kind, text, f"not finite; allowed {_RANGE_TEXT[kind]}")
    if value <= 0:
        raise _fail(kind, text, f"must be positive; allowed {_RANGE_TEXT[kind]}")
    if kind is not None:
        lo, hi = KINDS[kind]
        if not lo <= value <= hi:
            raise _fail(kind, text, f"{value:g} {_UNIT_WORD[kind]} is outside the allowed "
                                    f"{_RANGE_TEXT[kind]}")
    return value


def format_value(value: float, kind: str | None, digits: int = 3) -> str:
    """Write a value the way the trade writes it on a schematic.

    Resistance uses the IEC 60062 letter code with the prefix letter as the
    decimal point (``R47``, ``4R7``, ``470R``, ``4k7``, ``10k``, ``1M``);
    capacitance likewise (``470p``, ``2n2``, ``100n``, ``4u7``); kind ``None``
    writes a decimal point and an SI prefix (``6.3k``, ``470``, ``2.2n``), and
    values from 0.001 up to 1 without a prefix (``0.5``).

    Parameters
    ----------
    value : float
        Ohms, farads or (kind ``None``) any unit; checked as in :func:`parse_value`.
    kind : {"resistance", "capacitance", None}
        Which notation and range to use.
    digits : int, optional
        Significant figures kept (1..6), default 3 (enough for every E192 value:
        ``1k02``). Trailing zeros are dropped. Rounds to ``digits``; does not
        round to a preferred value.

    Returns
    -------
    str
        The written value; ``parse_value(format_value(v, kind), kind)`` gives
        back ``v`` whenever ``v`` has at most ``digits`` significant figures.

    Raises
    ------
    BadValueError
        If ``value`` fails the :func:`parse_value` check for ``kind``, or
        ``digits`` is not an integer in 1..6.

    Examples
    --------
    >>> format_value(4700, "resistance"), format_value(1.02e3, "resistance")
    ('4k7', '1k02')
    >>> format_value(2.2e-9, "capacitance"), format_value(6300, None)
    ('2n2', '6.3k')
    """
    value = parse_value(value, kind)
    if not isinstance(digits, int) or isinstance(digits, bool) or not 1 <= digits <= 6:
        raise BadValueError(f"digits {digits!r}: allowed an integer 1..6")
    mantissa, exp10 = f"{value:.{digits - 1}e}".split("e")
    figures, exp10 = mantissa.replace(".", ""), int(exp10)
    marks = _MARKS[kind]
    eng = min(max(3 * (exp10 // 3), min(marks)), max(marks))  # clamp to the letters we have
    if kind is None and -3 <= exp10 < 0:
        eng = 0  # kind None writes 0.001..1 plainly: "0.5", not "500m"
    whole_len = exp10 - eng + 1
    padded = "0" * max(0, -whole_len) + figures + "0" * max(0, whole_len - len(figures))
    split = max(whole_len, 0)
    whole, frac = padded[:split], padded[split:].rstrip("0")
    if kind is None:
        return f"{whole or '0'}{'.' + frac if frac else ''}{marks[eng]}"
    return f"{whole}{marks[eng]}{frac}"


def parse_series(text: str) -> str:
    """Name an IEC 60063 series in its canonical spelling.

    Parameters
    ----------
    text : str
        ``"E24"``, ``"e96"``, ``" E12 "``: case and surrounding spaces are ignored.

    Returns
    -------
    str
        One of ``E3 E6 E12 E24 E48 E96 E192``.

    Raises
    ------
    BadValueError
        If ``text`` names no series; the message lists the allowed names.

    Examples
    --------
    >>> parse_series("e96")
    'E96'
    """
    name = text.strip().upper() if isinstance(text, str) else None
    if name not in E_SERIES:
        raise BadValueError(f"series {text!r}: allowed {', '.join(E_SERIES)}")
    return name


@functools.lru_cache(maxsize=512)
def _decade(series: str, exp10: int) -> tuple[float, ...]:
    # decimal string -> correctly rounded float, so 4.7 in decade 3 is exactly 4700.0
    return tuple(float(f"{m!r}e{exp10}") for m in E_SERIES[series])


def series_values(series: str, lo: float, hi: float) -> list[float]:
    """All preferred values of a series between two bounds, ascending.

    Parameters
    ----------
    series : str
        Series name, read by :func:`parse_series`.
    lo, hi : float or str
        Bounds, inclusive (with 1e-9 relative slack, so ``4.7 * 1e3`` still
        includes 4k7), in any one unit (ohms, farads); read by
        :func:`parse_value` with kind ``None``. Does not check part ranges.

    Returns
    -------
    list of float
        ``m * 10**d`` for every mantissa ``m`` and decade ``d`` within the bounds.

    Raises
    ------
    BadValueError
        If the series is unknown, a bound is not finite positive, or ``lo > hi``.

    Examples
    --------
    >>> series_values("E6", 1000, 4700)
    [1000.0, 1500.0, 2200.0, 3300.0, 4700.0]
    """
    name, low, high = parse_series(series), parse_value(lo), parse_value(hi)
    if low > high:
        raise BadValueError(f"range {lo!r}..{hi!r}: the low end must not be above the high end")
    low, high = low * (1 - 1e-9), high * (1 + 1e-9)
    decades = range(math.floor(math.log10(low)), math.floor(math.log10(high)) + 1)
    return [v for d in decades for v in _decade(name, d) if low <= v <= high]


def neighbours(value: float, series: str) -> tuple[float, float]:
    """The preferred values on either side of a value.

    Parameters
    ----------
    value : float or str
        Any positive value in any unit, read by :func:`parse_value` (kind ``None``).
    series : str
        Series name, read by :func:`parse_series`.

    Returns
    -------
    (below, above) : tuple of float
        The largest preferred value <= ``value`` and the smallest >= ``value``;
        both equal ``value``'s preferred twin when it is one (1e-9 relative).

    Raises
    ------
    BadValueError
        If the value is not finite positive or the series is unknown.

    Examples
    --------
    >>> neighbours(5000, "E24")
    (4700.0, 5100.0)
    >>> neighbours("4k7", "E12")
    (4700.0, 4700.0)
    """
    v, name = parse_value(value), parse_series(series)
    d = math.floor(math.log10(v))
    grid = _decade(name, d - 1) + _decade(name, d) + _decade(name, d + 1)
    i = bisect_left(grid, v)
    for near in grid[max(i - 1, 0):i + 1]:
        if math.isclose(near, v, rel_tol=1e-9):
            return near, near
    return grid[i - 1], grid[i]


def nearest_preferred(value: float, series: str) -> float:
    """The preferred value nearest to a value in log terms (ratio), ties to the lower.

    Parameters
    ----------
    value : float or str
        Any positive value in any unit, read by :func:`parse_value` (kind ``None``).
    series : str
        Series name, read by :func:`parse_series`.

    Returns
    -------
    float
        ``below`` if ``value / below <= above / value``, else ``above`` (see
        :func:`neighbours`).

    Raises
    ------
    BadValueError
        If the value is not finite positive or the series is unknown.

    Examples
    --------
    >>> nearest_preferred(4800, "E24"), nearest_preferred("4.92k", "E24")
    (4700.0, 5100.0)
    """
    v = parse_value(value)
    below, above = neighbours(v, series)
    return below if v * v <= below * above else above


# ---------------------------------------------------------------------------
# Tolerances
# ---------------------------------------------------------------------------
_TOL_RE = re.compile(r"(?:\+/?-|±)?\s*(?P<num>\d+\.?\d*|\.\d+)\s*(?P<pct>%)?")
_TOL_MAX = 0.5
_TOL_HELP = ("write e.g. F, J, 1%, 0.5 %, 5 (percent) or 0.01 (fraction); "
             f"allowed 0..{_TOL_MAX:.0%}")


def _check_tolerance(fraction: float, shown: object) -> float:
    """The one tolerance range check: 0 <= fraction <= 0.5, endpoints included."""
    if not (math.isfinite(fraction) and 0 <= fraction <= _TOL_MAX):
        raise BadValueError(f"tolerance {shown!r}: outside 0..{_TOL_MAX:.0%}; {_TOL_HELP}")
    return fraction


def parse_tolerance(text: str | float) -> float:
    """Read a symmetric part tolerance as a fraction (0.01 for 1 %).

    Rule that tells a percentage from a fraction: an IEC 60062 letter
    (B 0.1 %, C 0.25 %, D 0.5 %, F 1 %, G 2 %, J 5 %, K 10 %, M 20 %, either
    case) is itself; a number with a ``%`` sign is a percentage; a bare number
    of 1 or more is a percentage (``5`` is 5 %); a bare number below 1 is a
    fraction (``0.01`` is 1 %). So half a percent must be written ``0.5 %`` or
    ``D``; a bare number read as more than 20 % gives an :class:`EmulateWarning`.
    A leading ``±`` or ``+-`` is allowed.

    Parameters
    ----------
    text : str or float
        The written tolerance, or a number read by the same rule.

    Returns
    -------
    float
        The tolerance as a fraction, 0..0.5 inclusive.

    Raises
    ------
    BadValueError
        If the text is not a tolerance or the result is outside 0..50 %.

    Examples
    --------
    >>> parse_tolerance("F"), parse_tolerance("0.5 %"), parse_tolerance("5"), parse_tolerance(0.01)
    (0.01, 0.005, 0.05, 0.01)
    """
    if isinstance(text, str):
        cleaned = text.strip()
        if cleaned.upper() in TOLERANCE_LETTERS:
            return TOLERANCE_LETTERS[cleaned.upper()]
        match = _TOL_RE.fullmatch(cleaned)
        if match is None:
            raise BadValueError(f"tolerance {text!r}: not a tolerance; {_TOL_HELP}")
        number, percent = float(match["num"]), bool(match["pct"])
    elif isinstance(text, numbers.Real) and not isinstance(text, bool):
        number, percent = float(text), False
    else:
        raise BadValueError(f"tolerance {text!r}: not a tolerance; {_TOL_HELP}")
    if percent or number >= 1:
        return _check_tolerance(number / 100, text)
    if number > TOLERANCE_LETTERS["M"]:
        warnings.warn(f"tolerance {text!r} read as a fraction, {number:.0%}; "
                      "write it with a % sign if you meant a percentage", EmulateWarning,
                      stacklevel=2)
    return _check_tolerance(number, text)


def format_tolerance(fraction: float) -> str:
    """Write a tolerance fraction as a percentage with up to 3 significant figures.

    Parameters
    ----------
    fraction : float
        0..0.5 inclusive (0.01 is 1 %). Not read by the percentage rule of
        :func:`parse_tolerance`: 1 here is 100 % and out of range.

    Returns
    -------
    str
        e.g. ``"1 %"``, ``"0.25 %"``, ``"10 %"``.

    Raises
    ------
    BadValueError
        If ``fraction`` is not a number in 0..0.5.

    Examples
    --------
    >>> format_tolerance(0.01), format_tolerance(0.0025)
    ('1 %', '0.25 %')
    """
    return f"{_tolerance_fraction(fraction) * 100:.3g} %"


def _tolerance_fraction(fraction: object) -> float:
    if not isinstance(fraction, numbers.Real) or isinstance(fraction, bool):
        raise BadValueError(f"tolerance {fraction!r}: not a number; allowed 0..{_TOL_MAX}")
    return _check_tolerance(float(fraction), fraction)


def tolerance_letter(fraction: float) -> str | None:
    """The IEC 60062 letter for a tolerance, if it has one.

    Parameters
    ----------
    fraction : float
        Tolerance as a fraction, 0..0.5 inclusive.

    Returns
    -------
    str or None
        ``"F"`` for 0.01, ``"J"`` for 0.05 and so on (1e-9 relative match);
        ``None`` for a valid tolerance with no letter (such as 3 %).

    Raises
    ------
    BadValueError
        If ``fraction`` is not a number in 0..0.5.

    Examples
    --------
    >>> tolerance_letter(0.01), tolerance_letter(0.03)
    ('F', None)
    """
    value = _tolerance_fraction(fraction)
    return next((letter for letter, f in TOLERANCE_LETTERS.items()
                 if math.isclose(f, value, rel_tol=1e-9)), None)
