"""How one circuit position is made of preferred parts: one part, or two in series or parallel.

A position (R1, C3, ...) is one part of an IEC 60063 series, or two parts wired
in series or in parallel.  Two *equal* parts in parallel are the usual way to make
R3 = R/2 and C3 = 2C of a balanced twin-T exactly; two *different* parts reach
values between the preferred ones (``parts_per_position=2``).

:func:`value_table` lists every value a position can take within a range, as
parallel arrays (value, first part, second part, wiring, part count) sorted by
value, so a design search can look values up with ``numpy.searchsorted``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from emulate.analog import parts
from emulate.errors import BadValueError
from emulate.validate import check_range

SINGLE, SERIES, PARALLEL = 0, 1, 2
WIRING = {SINGLE: "single", SERIES: "series", PARALLEL: "parallel"}
_PAIR_REACH = 10.0  # two-part sums and parallels use parts up to a decade beyond the range

__all__ = ["Makeup", "ValueTable", "value_table", "combine", "coarsest_series", "buyable", "STOCKED_SERIES",
           "SINGLE", "SERIES", "PARALLEL", "WIRING"]


def combine(a, b, wiring: int, kind: str):
    """The value of two parts wired ``SERIES`` or ``PARALLEL`` (resistors or capacitors).

    Example
    -------
    >>> combine(10e3, 10e3, PARALLEL, "resistance"), combine(10e-9, 10e-9, PARALLEL, "capacitance")
    (5000.0, 2e-08)
    """
    adds = (wiring == SERIES) == (kind == "resistance")
    return a + b if adds else a * b / (a + b)


@dataclass(frozen=True)
class Makeup:
    """One position as bought: its value and the one or two parts that make it.

    Attributes
    ----------
    value : ohms or farads, the position's value.
    parts : the part values (one or two).
    wiring : ``"single"``, ``"series"`` or ``"parallel"``.
    kind : ``"resistance"`` or ``"capacitance"``.

    Example
    -------
    >>> Makeup.pair(10e3, 10e3, "parallel", "resistance").text()
    '2 x 10k in parallel'
    >>> Makeup.pair(10e3, 330.0, "series", "resistance").text()
    '10k + 330R in series'
    """

    value: float
    parts: tuple[float, ...]
    wiring: str
    kind: str

    @classmethod
    def single(cls, value: float, kind: str) -> "Makeup":
        return cls(float(value), (float(value),), "single", kind)

    @classmethod
    def pair(cls, a: float, b: float, wiring: str, kind: str) -> "Makeup":
        code = SERIES if wiring == "series" else PARALLEL
        return cls(float(combine(a, b, code, kind)), (float(a), float(b)), wiring, kind)

    @property
    def count(self) -> int:
        return len(self.parts)

    def text(self) -> str:
        """As the trade writes it: ``4k7``, ``2 x 10k in parallel``, ``10k + 330R in series``."""
        written = [parts.format_value(p, self.kind) for p in self.parts]
        if self.count == 1:
            return written[0]
        if written[0] == written[1]:
            return f"2 x {written[0]} in {self.wiring}"
        return f"{written[0]} + {written[1]} in {self.wiring}"


@dataclass(frozen=True)
class ValueTable:
    """Every value a position can take, sorted: value, part a, part b, wiring code, count."""

    value: np.ndarray
    a: np.ndarray
    b: np.ndarray
    wiring: np.ndarray
    count: np.ndarray
    kind: str

    def __len__(self) -> int:
        return len(self.value)

    def makeup(self, i: int) -> Makeup:
        if self.wiring[i] == SINGLE:
            return Makeup.single(self.value[i], self.kind)
        return Makeup.pair(self.a[i], self.b[i], WIRING[int(self.wiring[i])], self.kind)

    def nearest(self, wanted: np.ndarray, how_many: int = 2) -> np.ndarray:
        """Indices of the ``how_many`` entries around each wanted value, shape (len(wanted), how_many)."""
        right = np.searchsorted(self.value, wanted)
        offsets = np.arange(how_many) - how_many // 2
        return np.clip(right[:, None] + offsets[None, :], 0, len(self.value) - 1)


def value_table(series: str, lo: float, hi: float, kind: str, *, pairs: str = "none") -> ValueTable:
    """Values within ``lo``..``hi`` made of preferred parts of ``series``.

    Parameters
    ----------
    series : IEC 60063 series name.
    lo, hi : the range (ohms or farads), inclusive.
    kind : ``"resistance"`` or ``"capacitance"``.
    pairs : ``"none"`` (single parts), ``"equal"`` (also two equal parts in
        series or parallel) or ``"any"`` (also any two parts of the series, from a
        decade beyond the range, in series or parallel).

    Raises
    ------
    BadValueError : an unknown series, a bad range or an unknown ``pairs``.

    Example
    -------
    >>> t = value_table("E6", 1e3, 10e3, "resistance", pairs="equal")
    >>> float(t.value[0]), t.makeup(0).text()
    (1000.0, '1k')
    """
    check_range("range low end", lo, 0.0, hi, low_open=True)
    if pairs not in ("none", "equal", "any"):
        raise BadValueError(f"pairs {pairs!r}: allowed none, equal, any")
    singles = np.array(parts.series_values(series, lo, hi))
    rows = [(singles, singles, np.full(len(singles), SINGLE))]
    if pairs != "none":
        wide = np.array(parts.series_values(series, lo / _PAIR_REACH, hi * _PAIR_REACH))
        if pairs == "equal":
            a = b = wide
        else:
            i, j = np.triu_indices(len(wide))
            a, b = wide[i], wide[j]
        for code in (SERIES, PARALLEL):
            rows.append((a, b, np.full(len(a), code)))
    a = np.concatenate([r[0] for r in rows])
    b = np.concatenate([r[1] for r in rows])
    wiring = np.concatenate([r[2] for r in rows])
    value = np.where(wiring == SINGLE, a, combine(a, b, SERIES, kind) * (wiring == SERIES)
                     + combine(a, b, PARALLEL, kind) * (wiring == PARALLEL))
    keep = (value >= lo * (1 - 1e-9)) & (value <= hi * (1 + 1e-9))
    order = np.lexsort((wiring[keep] != SINGLE, value[keep]))  # by value, singles first
    value, a, b, wiring = value[keep][order], a[keep][order], b[keep][order], wiring[keep][order]
    count = np.where(wiring == SINGLE, 1, 2)
    return ValueTable(value, a, b, wiring, count, kind)


STOCKED_SERIES = ("E6", "E12", "E24", "E48", "E96", "E192")  # E3 is rarely stocked (common practice)


def coarsest_series(value: float) -> str | None:
    """The coarsest stocked IEC 60063 series holding ``value`` (E6 .. E192), or None.

    Example
    -------
    >>> coarsest_series(4700.0), coarsest_series(9100.0), coarsest_series(1234.0)
    ('E6', 'E24', None)
    """
    for series in STOCKED_SERIES:
        if any(abs(v / value - 1) < 1e-6 for v in parts.series_values(series, value * 0.99, value * 1.01)):
            return series
    return None


def buyable(value: float, kind: str) -> Makeup:
    """How to buy a value: one preferred part; else two equal preferred parts in parallel or
    series (the usual way to make R/2 and 2C); else the one part, not a preferred value.

    Example
    -------
    >>> buyable(5000.0, "resistance").text(), buyable(4.4e-9, "capacitance").text()
    ('2 x 10k in parallel', '2 x 2n2 in parallel')
    """
    if coarsest_series(value) is not None:
        return Makeup.single(value, kind)
    halves = (2 * value, "parallel"), (value / 2, "series")
    if kind == "capacitance":
        halves = (value / 2, "parallel"), (2 * value, "series")
    for part, wiring in halves:
        if coarsest_series(part) is not None:
            return Makeup.pair(part, part, wiring, kind)
    return Makeup.single(value, kind)
