"""Design a twin-T from a target notch and build it from preferred values.

The pipeline, top to bottom:

1. ideal network: the balanced twin-T R1 = R2 = R, R3 = R/2, C1 = C2 = C, C3 = 2C
   with f0 = 1/(2 pi R C) (Analog Devices MT-225), at the middle of the impedance
   range (or around a given C);
2. the whole space the rules allow: R1 = R2 from the resistor series within the
   impedance range, C1 = C2 from the capacitor series, each one part (or any two
   parts in series or parallel with ``parts_per_position=2``); R3 and C3 one part,
   two equal parts in series or parallel (or any two parts);
3. search: every (R, C) pair is scored by its RC product (the notch of a balanced
   network), the best pairs get the R3 nearest R/2 and nearest the value that
   puts the null on the target, and the C3 values that balance them
   (R1 R2 C3 = R3 (R1 + R2)(C1 + C2)); the shortlist is measured exactly in one
   batch, source, load and bootstrap included;
4. rank: deep enough first (``DEEP_ENOUGH_DB`` below the passband, about the best a
   1 % build holds, MT-225), then the notch error (steps of ``ERROR_STEP``), then
   the balance (the nominal null depth), then the part count, then the nearest to
   the impedance level;
5. bootstrap: for a target Q, K = 1 - 1/(4Q) (MT-225), realised as the divider of
   two preferred resistors nearest K;
6. check: the attenuation *at the target* is reported for every design; a hum
   target (50/60 Hz or a harmonic) cut by less than ``HUM_MIN_CUT_DB`` gets the
   nearest fix: the two-part design, and trimmers with their settings.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from emulate.analog import parts
from emulate.analog.makeup import ValueTable, value_table
from emulate.analog.networks import PART_NAMES, TwinT
from emulate.analog.response import NotchMetrics, db, measure, measure_batch
from emulate.errors import BadValueError
from emulate.validate import check_range

__all__ = ["Design", "HumFix", "design_twin_t", "impedance_range", "cut_at_db", "is_hum_target",
           "divider_for", "DEFAULT_IMPEDANCE_OHMS", "Q_RANGE", "NOTCH_RANGE_HZ", "IMPEDANCE_RANGE_OHMS"]

DEFAULT_IMPEDANCE_OHMS = 10e3
IMPEDANCE_SPAN = math.sqrt(10.0)  # R1 = R2 within level / sqrt(10) .. level x sqrt(10): one decade
DEFAULT_CAP_SERIES = "E12"  # film capacitors are mostly sold in E6/E12 steps (common practice)
DEEP_ENOUGH_DB = 60.0  # about the best a 1 % build holds (MT-225)
ERROR_STEP = 1e-4  # notch errors within 0.01 % rank as equal
HUM_MIN_CUT_DB = 30.0  # a hum notch must cut the hum itself this much with nominal parts
HUM_HARMONICS = 20  # 50/60 Hz and harmonics up to the 20th count as hum (common practice, no source)
Q_RANGE = (0.25, 20.0)
NOTCH_RANGE_HZ = (1.0, 100e3)
IMPEDANCE_RANGE_OHMS = (10.0, 10e6)
DIVIDER_RANGE_OHMS = (1e3, 100e3)
SHUNT_SPAN = 1.25  # R3 and C3 within R/2 and 2C x/÷ this
_PAIRS_KEPT = 48  # best (R, C) pairs carried into the R3/C3 step
_SHORTLIST = 160  # candidates measured exactly
_TRIM_MARGIN = 0.03  # a trimmed position's fixed part sits at least 3 % under the need


@dataclass(frozen=True)
class HumFix:
    """The nearest fix when a hum target is cut less than ``HUM_MIN_CUT_DB``.

    Attributes
    ----------
    two_part : the design with ``parts_per_position=2`` (None when that was the design).
    trims : lines, one per trimmed position: fixed part, trimmer and its setting.
    """

    two_part: "Design | None"
    trims: tuple[str, ...]

    def lines(self) -> list[str]:
        out = []
        if self.two_part is not None:
            d = self.two_part
            made = ", ".join(f"{name.upper()} {m.text()}" for name, m in d.makeup.items())
            out.append(f"two parts a position (--parts-per-position 2): {made}; notch "
                       f"{d.built_metrics.notch_hz:.3f} Hz, cut at target {d.target_cut_db:.1f} dB")
        out += [f"or trim: {line}" for line in self.trims]
        return out


@dataclass(frozen=True)
class Design:
    """A designed network: the ideal values, the as-built set, how each part is made, both responses.

    ``target_cut_db`` is how far the response at the target frequency lies below
    the passband (dB of cut, positive), nominal parts.
    """

    target_hz: float
    target_q: float | None
    series: str
    cap_series: str
    ideal: TwinT
    built: TwinT
    makeup: dict
    divider: tuple[float, float] | None
    ideal_metrics: NotchMetrics
    built_metrics: NotchMetrics
    target_cut_db: float
    parts_per_position: int = 1
    impedance_ohms: tuple[float, float] = (0.0, 0.0)
    fix: HumFix | None = field(default=None, compare=False)

    @property
    def notch_error(self) -> float:
        """Relative error of the as-built notch frequency against the target."""
        return self.built_metrics.notch_hz / self.target_hz - 1.0

    @property
    def r3_build(self) -> str:
        return self.makeup["r3"].text()

    @property
    def c3_build(self) -> str:
        return self.makeup["c3"].text()

    @property
    def is_hum(self) -> bool:
        return is_hum_target(self.target_hz)

    @property
    def meets_hum_cut(self) -> bool:
        return not self.is_hum or self.target_cut_db >= HUM_MIN_CUT_DB

    @property
    def part_count(self) -> int:
        return sum(m.count for m in self.makeup.values())

    def parts_as_written(self) -> dict[str, str]:
        """Designator -> how it is built (``4k7``, ``2 x 9k09 in parallel = 4k545``), divider included.

        A position of two parts also gives the value they make, to six figures: every
        written value reads back as the built value exactly.
        """
        written = {name.upper(): m.text() if m.count == 1 else f"{m.text()} = {parts.format_value(m.value, m.kind, 6)}"
                   for name, m in self.makeup.items()}
        if self.divider is not None:
            written["RK_TOP"], written["RK_BOTTOM"] = (parts.format_value(v, "resistance")
                                                       for v in self.divider)
        return written


def impedance_range(impedance_ohms: float | None = None) -> tuple[float, float]:
    """The R1 = R2 range searched: level / sqrt(10) .. level x sqrt(10) (default level 10 kOhm).

    Example
    -------
    >>> [round(v) for v in impedance_range()]
    [3162, 31623]
    """
    level = DEFAULT_IMPEDANCE_OHMS if impedance_ohms is None else float(impedance_ohms)
    check_range("impedance level (ohms)", level, *IMPEDANCE_RANGE_OHMS)
    return level / IMPEDANCE_SPAN, level * IMPEDANCE_SPAN


def is_hum_target(notch_hz: float) -> bool:
    """True for 50 or 60 Hz or a harmonic up to the 20th (within 0.5 %).

    Example
    -------
    >>> is_hum_target(100.0), is_hum_target(120.0), is_hum_target(1000.0), is_hum_target(6300.0)
    (True, True, True, False)
    """
    for mains in (50.0, 60.0):
        n = round(notch_hz / mains)
        if 1 <= n <= HUM_HARMONICS and abs(notch_hz / (n * mains) - 1) < 5e-3:
            return True
    return False


def cut_at_db(network: TwinT, f_hz: float, metrics: NotchMetrics) -> float:
    """dB of cut at ``f_hz``: the lower passband gain minus the gain there (positive = quieter).

    Example
    -------
    >>> net = TwinT.balanced(1000.0, r_ohms=10e3)
    >>> round(cut_at_db(net, 2000.0, measure(net.response)), 2)
    9.09
    """
    gain = float(db(np.abs(network.response([f_hz]))[0]))
    return min(metrics.passband_low_db, metrics.passband_high_db) - gain


def design_twin_t(notch_hz: float, *, q: float | None = None, impedance_ohms: float | None = None,
                  capacitor_farads: float | None = None, series: str = "E24",
                  cap_series: str = DEFAULT_CAP_SERIES, source_ohms: float = 0.0,
                  load_ohms: float = math.inf, parts_per_position: int = 1) -> Design:
    """Design a balanced twin-T for ``notch_hz`` and build it from preferred values.

    Parameters
    ----------
    notch_hz : target notch frequency, Hz (1 Hz to 100 kHz).
    q : target Q (0.25 to 20); None or 0.25 for the passive network.
    impedance_ohms : the level of R1 = R2 (default 10 kOhm); R1 = R2 are searched
        within a decade around it (:func:`impedance_range`); ignored when
        ``capacitor_farads`` is given.
    capacitor_farads : a C1 = C2 to design around (taken as it is).
    series, cap_series : IEC 60063 series for resistors and capacitors.
    source_ohms, load_ohms : what drives and loads the built network.
    parts_per_position : 1 (one part a position; R3/C3 may be two equal parts)
        or 2 (any two parts in series or parallel at every position).

    Does not pick tolerances; see :mod:`emulate.analog.tolerance`.

    Raises
    ------
    BadValueError : any value out of range (the message gives the range).

    Example
    -------
    >>> d = design_twin_t(1000.0, series="E24")
    >>> abs(d.notch_error) < 0.027, d.target_cut_db > 40
    (True, True)
    """
    series, cap_series = parts.parse_series(series), parts.parse_series(cap_series)
    check_range("notch frequency (Hz)", notch_hz, *NOTCH_RANGE_HZ)
    if parts_per_position not in (1, 2):
        raise BadValueError(f"parts per position {parts_per_position!r}: allowed 1 or 2")
    if q is not None:
        check_range("Q", q, *Q_RANGE)
    active = q is not None and q > Q_RANGE[0]  # Q 0.25 is the passive network (K = 0)
    k_ideal = 1.0 - 1.0 / (4.0 * q) if active else None
    divider, k_built = (divider_for(k_ideal, series) if active else (None, None))
    surroundings = dict(source_ohms=source_ohms, load_ohms=load_ohms)
    r_range = impedance_range(impedance_ohms)
    c_ideal = (capacitor_farads if capacitor_farads is not None
               else 1.0 / (2 * math.pi * notch_hz * math.sqrt(r_range[0] * r_range[1])))
    ideal = TwinT.balanced(notch_hz, c_farads=c_ideal, bootstrap=k_ideal, **surroundings)
    tables = _tables(notch_hz, r_range, capacitor_farads, series, cap_series, parts_per_position)
    built, makeup, metrics = _search(notch_hz, tables, surroundings | {"bootstrap": k_built},
                                     math.sqrt(r_range[0] * r_range[1]))
    design = Design(notch_hz, q, series, cap_series, ideal, built, makeup, divider, measure(ideal.response),
                    metrics, cut_at_db(built, notch_hz, metrics), parts_per_position, r_range)
    if design.meets_hum_cut:
        return design
    two_part = None
    if parts_per_position == 1:
        two_part = design_twin_t(notch_hz, q=q, impedance_ohms=impedance_ohms,
                                 capacitor_farads=capacitor_farads, series=series, cap_series=cap_series,
                                 source_ohms=source_ohms, load_ohms=load_ohms, parts_per_position=2)
    return _with_fix(design, HumFix(two_part, _trims(design)))


def _with_fix(design: Design, fix: HumFix) -> Design:
    import dataclasses

    return dataclasses.replace(design, fix=fix)


# --- 2. the space the rules allow ------------------------------------------------------

def _tables(notch_hz, r_range, capacitor_farads, series, cap_series, per_position):
    """Value tables for R (R1 = R2), C (C1 = C2), R3 and C3."""
    main_pairs = "any" if per_position == 2 else "none"
    shunt_pairs = "any" if per_position == 2 else "equal"
    r = value_table(series, *r_range, "resistance", pairs=main_pairs)
    if capacitor_farads is not None:
        c = ValueTable(np.array([float(capacitor_farads)]), np.array([float(capacitor_farads)]),
                       np.array([float(capacitor_farads)]), np.array([0]), np.array([1]), "capacitance")
    else:
        w = 2 * math.pi * notch_hz
        c_lo, c_hi = 1.0 / (w * r_range[1]), 1.0 / (w * r_range[0])
        c = value_table(cap_series, c_lo / 1.5, c_hi * 1.5, "capacitance", pairs=main_pairs)
    r3 = value_table(series, r.value[0] / 2 / SHUNT_SPAN, r.value[-1] / 2 * SHUNT_SPAN, "resistance",
                     pairs=shunt_pairs)
    c3 = value_table(cap_series, 2 * c.value[0] / SHUNT_SPAN, 2 * c.value[-1] * SHUNT_SPAN, "capacitance",
                     pairs=shunt_pairs)
    return r, c, r3, c3


# --- 3. search --------------------------------------------------------------------------

def _search(notch_hz, tables, options, level_ohms):
    """The best network, how each position is made, and its measured metrics."""
    r_table, c_table, r3_table, c3_table = tables
    w = 2 * math.pi * notch_hz
    ri, ci = _best_products(r_table, c_table, w)
    r, c = r_table.value[ri], c_table.value[ci]
    # R3: nearest R/2, and nearest the value that puts a balanced null on the target
    r3_wanted = np.stack([r / 2, 1.0 / (w * w * 2 * r * c * c)], axis=1)
    r3i = r3_table.nearest(r3_wanted.reshape(-1), 2).reshape(len(r), -1)  # (pairs, 4)
    # C3: nearest the balance value R C3 = 4 R3 C, and nearest 2C
    rows = np.repeat(np.arange(len(r)), r3i.shape[1])
    r3i = r3i.reshape(-1)
    r3 = r3_table.value[r3i]
    c3_wanted = np.stack([4 * r3 * c[rows] / r[rows], 2 * c[rows]], axis=1)
    c3i = c3_table.nearest(c3_wanted.reshape(-1), 2).reshape(len(rows), -1)
    rows, r3i = np.repeat(rows, c3i.shape[1]), np.repeat(r3i, c3i.shape[1])
    c3i = c3i.reshape(-1)
    cand = np.unique(np.stack([ri[rows], ci[rows], r3i, c3i], axis=1), axis=0)
    r, c = r_table.value[cand[:, 0]], c_table.value[cand[:, 1]]
    r3, c3 = r3_table.value[cand[:, 2]], c3_table.value[cand[:, 3]]
    within = (np.abs(np.log(r3 / (r / 2))) <= math.log(SHUNT_SPAN)) & (np.abs(np.log(c3 / (2 * c))) <= math.log(SHUNT_SPAN))
    cand, r, c, r3, c3 = cand[within], r[within], c[within], r3[within], c3[within]
    count = 2 * r_table.count[cand[:, 0]] + 2 * c_table.count[cand[:, 1]] + r3_table.count[cand[:, 2]] \
        + c3_table.count[cand[:, 3]]
    # estimate: the geometric mean of the two null conditions' frequencies, and the mismatch
    w_est = ((1 / (r3 * 2 * r * c * c)) * (2 / (c * c3 * r * r))) ** 0.25
    mismatch = np.abs(r * c3 / (4 * r3 * c) - 1)
    order = np.lexsort((count, np.round(mismatch / ERROR_STEP), np.round(np.abs(np.log(w_est / w)) / ERROR_STEP)))
    keep = order[:_SHORTLIST]
    batch = TwinT(r[keep], r[keep], r3[keep], c[keep], c[keep], c3[keep], **options)
    metrics = measure_batch(batch.rational(notch_hz).response, search_hz=(notch_hz / 2, notch_hz * 2), points=240)
    error = np.array([abs(math.log(m.notch_hz / notch_hz)) for m in metrics])
    depth = np.array([m.depth_below_passband_db for m in metrics])
    best = min(range(len(keep)), key=lambda i: (
        depth[i] < DEEP_ENOUGH_DB, round(error[i] / ERROR_STEP), -round(min(depth[i], 120.0)),
        count[keep[i]], abs(math.log(r[keep[i]] / level_ohms))))
    row = cand[keep[best]]
    makeup = {"r1": r_table.makeup(row[0]), "r2": r_table.makeup(row[0]), "r3": r3_table.makeup(row[2]),
              "c1": c_table.makeup(row[1]), "c2": c_table.makeup(row[1]), "c3": c3_table.makeup(row[3])}
    built = TwinT(*(makeup[name].value for name in PART_NAMES), **options)
    return built, makeup, measure(built.response, search_hz=(notch_hz / 2, notch_hz * 2))


def _best_products(r_table, c_table, w):
    """Indices (r, c) of the ``_PAIRS_KEPT`` pairs whose RC product is nearest 1/w."""
    ci = c_table.nearest(1.0 / (w * r_table.value), 2)
    ri = np.repeat(np.arange(len(r_table)), ci.shape[1])
    ci = ci.reshape(-1)
    rj = r_table.nearest(1.0 / (w * c_table.value), 2)
    cj = np.repeat(np.arange(len(c_table)), rj.shape[1])
    ri, ci = np.concatenate([ri, rj.reshape(-1)]), np.concatenate([ci, cj])
    error = np.abs(np.log(w * r_table.value[ri] * c_table.value[ci]))
    count = r_table.count[ri] + c_table.count[ci]
    order = np.lexsort((count, np.round(error / ERROR_STEP)))
    pairs = np.unique(np.stack([ri[order], ci[order]], axis=1)[: 4 * _PAIRS_KEPT], axis=0)
    error = np.abs(np.log(w * r_table.value[pairs[:, 0]] * c_table.value[pairs[:, 1]]))
    pairs = pairs[np.argsort(error, kind="stable")[:_PAIRS_KEPT]]
    return pairs[:, 0], pairs[:, 1]


# --- 5. bootstrap divider -----------------------------------------------------------------

def divider_for(k: float, series: str) -> tuple[tuple[float, float], float]:
    """Two preferred resistors (top, bottom) whose ratio bottom / (top + bottom) is nearest K.

    Both within 1 kOhm .. 100 kOhm (a load any op-amp follower drives).

    Example
    -------
    >>> (top, bottom), k = divider_for(0.8, "E24")
    >>> round(k, 4), bottom / top
    (0.8, 4.0)
    """
    check_range("bootstrap K", k, 0.0, 1.0, low_open=True, high_open=True)
    values = np.array(parts.series_values(series, *DIVIDER_RANGE_OHMS))
    top, bottom = np.meshgrid(values, values, indexing="ij")
    ratio = bottom / (top + bottom)
    i = np.unravel_index(np.argmin(np.abs(ratio - k) + 1e-12 * np.abs(np.log(bottom / 10e3))), ratio.shape)
    return (float(top[i]), float(bottom[i])), float(ratio[i])


# --- 6. the nearest fix for a hum target ------------------------------------------------

def _trims(design: Design) -> tuple[str, ...]:
    """R1/R2 and R3 as fixed part + trimmer, set so the built capacitors null on the target."""
    from emulate.analog.trim import fixed_and_trimmer

    built, w = design.built, 2 * math.pi * design.target_hz
    c = (built.c1 + built.c2) / 2
    r_need = math.sqrt(2.0 / (w * w * built.c3 * c))  # R1 = R2: w^2 = 1/(R3 2R C^2), R C3 = 4 R3 C
    r3_need = r_need * built.c3 / (4 * c)
    lines = []
    for label, need in (("R1 and R2 (each, set alike)", r_need), ("R3", r3_need)):
        fixed, trimmer = fixed_and_trimmer(need * (1 - _TRIM_MARGIN), need * 1.0, design.series)
        lines.append(f"{label} = {parts.format_value(fixed, 'resistance')} + "
                     f"{parts.format_value(trimmer, 'resistance')} trimmer set to "
                     f"{need - fixed:.1f} ohms (total {need:.1f} ohms)")
    return tuple(lines)
