"""Design a twin-T from a target notch and snap it to preferred values.

The pipeline, top to bottom:

1. ideal network: the balanced twin-T R1 = R2 = R, R3 = R/2, C1 = C2 = C, C3 = 2C
   with f0 = 1/(2 pi R C) (Analog Devices MT-225); C from the impedance level
   (or given), R from C;
2. candidates: C and R each at the preferred value just below and just above the
   ideal; R3 as one preferred part or two R in parallel (exactly R/2); C3 as one
   preferred part or two C in parallel (exactly 2C);
3. measure every candidate as built (source and load included) in one batch;
4. pick: among the candidates at least ``SINGLE_PART_DEPTH_DB`` deep (about what
   1 % parts can hold anyway), the smallest notch-frequency error, then single
   parts before pairs; the pairs are exactly balanced, so such a candidate exists;
5. bootstrap: for a target Q, K = 1 - 1/(4Q) (MT-225), realised as a divider of
   two preferred resistors.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from emulate.analog import parts
from emulate.analog.networks import TwinT, part_kind
from emulate.analog.response import NotchMetrics, measure, measure_batch
from emulate.validate import check_range

DEFAULT_IMPEDANCE_OHMS = 10e3
DEFAULT_CAP_SERIES = "E12"  # film capacitors are mostly sold in E6/E12 steps (common practice)
SINGLE_PART_DEPTH_DB = 60.0  # about the best a 1 % build holds (MT-225)
Q_RANGE = (0.25, 20.0)
NOTCH_RANGE_HZ = (1.0, 100e3)
IMPEDANCE_RANGE_OHMS = (10.0, 10e6)
DIVIDER_TOTAL_OHMS = 10e3


@dataclass(frozen=True)
class Design:
    """A designed network: the ideal values, the as-built set and both responses."""

    target_hz: float
    target_q: float | None
    series: str
    cap_series: str
    ideal: TwinT
    built: TwinT
    r3_build: str
    c3_build: str
    divider: tuple[float, float] | None
    ideal_metrics: NotchMetrics
    built_metrics: NotchMetrics

    @property
    def notch_error(self) -> float:
        """Relative error of the as-built notch frequency against the target."""
        return self.built_metrics.notch_hz / self.target_hz - 1.0

    def parts_as_written(self) -> dict[str, str]:
        """Designator -> value as the trade writes it (R3/C3 as one value; see ``*_build``)."""
        # six figures: the built value exactly (2 x 9k09 in parallel is 4k545, not 4k54)
        written = {name.upper(): parts.format_value(value, part_kind(name), 6)
                   for name, value in self.built.parts().items()}
        if self.divider is not None:
            written["RK_TOP"], written["RK_BOTTOM"] = (parts.format_value(v, "resistance")
                                                       for v in self.divider)
        return written


def design_twin_t(notch_hz: float, *, q: float | None = None, impedance_ohms: float | None = None,
                  capacitor_farads: float | None = None, series: str = "E24",
                  cap_series: str = DEFAULT_CAP_SERIES, source_ohms: float = 0.0,
                  load_ohms: float = math.inf) -> Design:
    """Design a balanced twin-T for ``notch_hz`` and snap it to preferred values.

    Parameters
    ----------
    notch_hz : target notch frequency, Hz (1 Hz to 100 kHz).
    q : target Q (0.25 to 20); None for the passive network (Q = 0.25).
    impedance_ohms : the level of R1 = R2 (default 10 kOhm); ignored when
        ``capacitor_farads`` is given.
    capacitor_farads : a preferred C1 = C2 to design around.
    series, cap_series : IEC 60063 series for resistors and capacitors.
    source_ohms, load_ohms : what drives and loads the built network.

    Does not pick tolerances; see :mod:`emulate.analog.tolerance`.

    Raises
    ------
    BadValueError : any value out of range (the message gives the range).

    Example
    -------
    >>> d = design_twin_t(1000.0, series="E24")
    >>> abs(d.notch_error) < 0.03
    True
    """
    series, cap_series = parts.parse_series(series), parts.parse_series(cap_series)
    check_range("notch frequency (Hz)", notch_hz, *NOTCH_RANGE_HZ)
    if q is not None:
        check_range("Q", q, *Q_RANGE)
    bootstrap = None if q is None else 1.0 - 1.0 / (4.0 * q)
    options = dict(source_ohms=source_ohms, load_ohms=load_ohms, bootstrap=bootstrap)
    c_ideal = _ideal_capacitor(notch_hz, impedance_ohms, capacitor_farads)
    ideal = TwinT.balanced(notch_hz, c_farads=c_ideal, **options)
    divider, built_k = (None, None) if q is None else _divider(bootstrap, series)
    candidates = _candidates(notch_hz, c_ideal, series, cap_series, options | {"bootstrap": built_k})
    built, r3_build, c3_build, built_metrics = _pick(candidates, notch_hz)
    return Design(notch_hz, q, series, cap_series, ideal, built, r3_build, c3_build, divider,
                  measure(ideal.response), built_metrics)


def _ideal_capacitor(notch_hz, impedance_ohms, capacitor_farads) -> float:
    if capacitor_farads is not None:
        return float(capacitor_farads)
    r = DEFAULT_IMPEDANCE_OHMS if impedance_ohms is None else float(impedance_ohms)
    check_range("impedance level (ohms)", r, *IMPEDANCE_RANGE_OHMS)
    return 1.0 / (2 * math.pi * notch_hz * r)


def _candidates(notch_hz, c_ideal, series, cap_series, options):
    """Every (network, R3 text, C3 text) worth measuring."""
    found = []
    for c in set(parts.neighbours(c_ideal, cap_series)):
        r_ideal = 1.0 / (2 * math.pi * notch_hz * c)
        for r in set(parts.neighbours(r_ideal, series)):
            for r3, r3_text in _shunt_options(r / 2, r, series, "resistance", "parallel"):
                for c3, c3_text in _shunt_options(2 * c, c, cap_series, "capacitance", "parallel"):
                    network = TwinT(r, r, r3, c, c, c3, **options)
                    found.append((network, r3_text, c3_text))
    return found


def _shunt_options(ideal, base, series, kind, how):
    """The shunt part as single preferred values near ``ideal``, or two ``base`` parts."""
    pair = f"2 x {parts.format_value(base, kind)} in {how}"
    singles = [(v, parts.format_value(v, kind)) for v in sorted(set(parts.neighbours(ideal, series)))]
    return singles + [(ideal, pair)]


def _pick(candidates, notch_hz):
    """Deep enough first, then the smallest frequency error, then the fewest pairs."""
    batch = TwinT(*(np.array([getattr(n, name) for n, _, _ in candidates]) for name in
                    ("r1", "r2", "r3", "c1", "c2", "c3")),
                  **{k: getattr(candidates[0][0], k) for k in ("source_ohms", "load_ohms", "bootstrap")})
    metrics = measure_batch(batch.response, search_hz=(notch_hz / 10, notch_hz * 10))
    error = np.array([abs(math.log(m.notch_hz / notch_hz)) for m in metrics])
    depth = np.array([m.depth_below_passband_db for m in metrics])
    uses_pair = np.array([("2 x" in r3) + ("2 x" in c3) for _, r3, c3 in candidates])
    rounded_error = np.round(error, 3)  # frequency errors within 0.1 % count as equal
    good_enough = depth >= SINGLE_PART_DEPTH_DB
    order = sorted(range(len(candidates)),
                   key=lambda i: (not good_enough[i], rounded_error[i], uses_pair[i], -depth[i]))
    best = order[0]
    network, r3_text, c3_text = candidates[best]
    return network, r3_text, c3_text, metrics[best]


def _divider(k: float, series: str):
    """Two preferred resistors (top, bottom) whose ratio bottom/(top+bottom) is nearest K."""
    if k == 0:
        return (0.0, math.inf), 0.0
    bottoms = parts.series_values(series, DIVIDER_TOTAL_OHMS / 10, DIVIDER_TOTAL_OHMS * 10)
    best = min(((parts.nearest_preferred(b * (1 - k) / k, series), b) for b in bottoms),
               key=lambda tb: abs(tb[1] / (tb[0] + tb[1]) - k))
    return best, best[1] / (best[0] + best[1])


