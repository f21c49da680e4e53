"""Trim design: a fixed resistor plus a trimmer that restores the null of real builds.

Why R3 alone restores the null: for every member of the twin-T family the null
is a j-axis zero of the transfer from the network's input node to its output
node, and such zeros exist exactly when R1 R2 C3 = R3 (R1 + R2)(C1 + C2)
(derived symbolically in tests/test_networks.py); R3 can meet that for any build,
while the C mismatch still moves the null frequency, w0^2 = 1 / (R3 (R1 + R2) C1 C2).

:func:`suggest_trim` sizes the R3 trim over a Monte Carlo run
(:mod:`emulate.analog.tolerance`); :func:`fixed_and_trimmer` splits any one needed
resistance into a preferred fixed part and a standard trimmer.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from emulate.analog import parts
from emulate.analog.networks import PART_NAMES
from emulate.analog.tolerance import (CHUNK_DRAWS, BatchMetrics, ToleranceResult, builds, measure_builds,
                                      search_band_hz)
from emulate.validate import check_range

__all__ = ["TrimSuggestion", "suggest_trim", "r3_for_null", "fixed_and_trimmer", "TRIMMER_OHMS",
           "DEFAULT_TRIM_SHARE", "TRIMMER_TRACK_TOLERANCE", "TRIMMER_RESOLUTION"]

DEFAULT_TRIM_SHARE = 0.95
# Standard single-turn and multi-turn trimmer values (common practice, no source).
TRIMMER_OHMS = (100.0, 200.0, 500.0, 1e3, 2e3, 5e3, 10e3, 20e3, 50e3, 100e3, 200e3, 500e3, 1e6)
TRIMMER_TRACK_TOLERANCE = 0.20  # cermet trimmer track, +-20 % (common practice, no source)
TRIMMER_RESOLUTION = 0.001  # settable to 0.1 % of the track, a multi-turn cermet (common practice)


def fixed_and_trimmer(low_ohms: float, high_ohms: float, series: str = "E24") -> tuple[float, float]:
    """A preferred fixed part at or under ``low_ohms`` and the smallest trimmer reaching ``high_ohms``.

    The trimmer's guaranteed range is its track x (1 - 20 %).

    Example
    -------
    >>> fixed_and_trimmer(9.7e3, 10e3)
    (9100.0, 2000.0)
    """
    check_range("trim range low end (ohms)", low_ohms, 0.0, high_ohms, low_open=True)
    fixed = parts.neighbours(low_ohms, series)[0]
    for trimmer in TRIMMER_OHMS:
        if fixed + trimmer * (1 - TRIMMER_TRACK_TOLERANCE) >= high_ohms:
            return fixed, trimmer
    return fixed, TRIMMER_OHMS[-1]

@dataclass(frozen=True)
class TrimSuggestion:
    """R3 as a fixed resistor in series with a trimmer, and what it achieves (measured).

    Attributes
    ----------
    fixed_ohms, trimmer_ohms : the fixed part (preferred value) and the trimmer track.
    share : share of the draws whose null the trimmer can reach (measured);
        ``target_share`` as asked.
    setting_range_ohms : (lo, hi) trimmer settings needed by the middle
        ``target_share`` of the draws.
    depth_db : percentiles of the depth after trimming each build to its best
        setting within ``resolution`` of the track (unreachable builds at the end stop).
    notch_hz : percentiles of the notch after trimming (R3 cannot restore the
        frequency: the C mismatch still moves it).
    """

    fixed_ohms: float
    trimmer_ohms: float
    target_share: float
    share: float
    setting_range_ohms: tuple[float, float]
    resolution: float
    depth_db: dict
    notch_hz: dict
    where: str = "R3 = fixed resistor in series with the trimmer (wiper tied to one end: a variable resistor)"

    def as_dict(self) -> dict:
        return {"part": "R3", "fixed_ohms": self.fixed_ohms, "trimmer_ohms": self.trimmer_ohms,
                "fixed": parts.format_value(self.fixed_ohms, "resistance"),
                "trimmer": parts.format_value(self.trimmer_ohms, "resistance"),
                "target_share": self.target_share, "share": self.share,
                "setting_range_ohms": list(self.setting_range_ohms), "resolution": self.resolution,
                **{f"depth_below_passband_db_{k}": v for k, v in self.depth_db.items()},
                **{f"notch_hz_{k}": v for k, v in self.notch_hz.items()}, "where": self.where}

    def describe(self) -> str:
        return (f"R3 = {parts.format_value(self.fixed_ohms, 'resistance')} + "
                f"{parts.format_value(self.trimmer_ohms, 'resistance')} trimmer: reaches the null in "
                f"{self.share:.1%} of builds; trimmed depth {self.depth_db['p5']:.0f}-{self.depth_db['p95']:.0f} dB "
                f"(p5-p95, set to {self.resolution:.1%} of the track)")


def r3_for_null(r1, r2, c1, c2, c3):
    """R3 (ohms) meeting the null condition R1 R2 C3 = R3 (R1 + R2)(C1 + C2)."""
    return r1 * r2 * c3 / ((r1 + r2) * (c1 + c2))


def suggest_trim(result: ToleranceResult, *, share: float = DEFAULT_TRIM_SHARE, series: str = "E24",
                 resolution: float = TRIMMER_RESOLUTION) -> TrimSuggestion:
    """Size a fixed resistor plus trimmer for R3 that restores the null in ``share`` of the builds.

    The needed R3 of each build follows from its own R1, R2, C1..C3
    (:func:`r3_for_null`); the fixed part carries that build's R3 deviation;
    the trimmer's guaranteed range is its track x (1 - 20 %).  The smallest
    standard trimmer (finest setting) for which some preferred fixed value
    covers ``share`` of the builds wins; if none does, the best coverage found.
    Each build is then set to its needed R3 plus half a resolution step of the
    track (clamped to the trimmer's range) and measured.

    Parameters
    ----------
    result : a Monte Carlo run.
    share : 0.5 to 1, share of builds to cover.
    series : IEC 60063 series of the fixed part.
    resolution : fraction of the track a setting can be trusted to (0 < r <= 0.1).

    Raises
    ------
    BadValueError : ``share`` or ``resolution`` out of range, unknown series.

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> from emulate.analog.tolerance import Tolerances, monte_carlo
    >>> r = monte_carlo(TwinT.balanced(1000.0, r_ohms=10e3), Tolerances(0.01, 0.05), draws=500)
    >>> suggest_trim(r).share >= 0.95
    True
    """
    check_range("trim share", share, 0.5, 1.0)
    check_range("trimmer resolution (fraction of track)", resolution, 0.0, 0.1, low_open=True)
    batch = builds(result.nominal, result.deviation)
    needed = r3_for_null(batch.r1, batch.r2, batch.c1, batch.c2, batch.c3)
    r3_scale = 1.0 + result.deviation[:, PART_NAMES.index("r3")]
    fixed, trimmer, covered = _size_trim(needed, r3_scale, share, series)
    setting = np.clip(needed - fixed * r3_scale, 0.0, trimmer * (1 - TRIMMER_TRACK_TOLERANCE))
    measured = _measure_trimmed(result, fixed * r3_scale + setting + 0.5 * resolution * trimmer)
    kept = measured.in_range & ~measured.oscillating
    tail = (1 - share) / 2
    need = needed - fixed * r3_scale
    return TrimSuggestion(fixed, trimmer, float(share), covered,
                          (float(np.quantile(need, tail)), float(np.quantile(need, 1 - tail))), float(resolution),
                          result.percentiles(measured.depth_db, where=kept),
                          result.percentiles(measured.notch_hz, where=kept))


def _measure_trimmed(result: ToleranceResult, r3_ohms: np.ndarray) -> BatchMetrics:
    """Every build with its trimmed R3, measured ``CHUNK_DRAWS`` at a time (memory flat in the draws)."""
    band = search_band_hz(result.nominal_notch_hz, result.tolerances)
    found = []
    for start in range(0, len(r3_ohms), CHUNK_DRAWS):
        chunk = slice(start, start + CHUNK_DRAWS)
        trimmed = builds(result.nominal, result.deviation[chunk]).replace(r3=r3_ohms[chunk])
        found.append(measure_builds(trimmed, band, result.nominal_notch_hz))
    return BatchMetrics(*(np.concatenate([getattr(m, name) for m in found])
                          for name in ("notch_hz", "depth_db", "oscillation_hz", "in_range")))


def _share_within(setting: np.ndarray, reach: float) -> float:
    """Share of the builds whose trimmer setting lies on its track, 0..reach (one fixed value at a time:
    a (fixed values x builds) array would grow with the draws)."""
    return float(np.count_nonzero((setting >= 0) & (setting <= reach))) / len(setting)


def _size_trim(needed, r3_scale, share, series):
    """(fixed ohms, trimmer ohms, covered share): the smallest trimmer that covers ``share``."""
    fixed_values = np.array(parts.series_values(series, needed.min() / 4, needed.max()))
    best = None
    for trimmer in TRIMMER_OHMS:
        reach = trimmer * (1 - TRIMMER_TRACK_TOLERANCE)
        coverage = np.array([_share_within(needed - fixed * r3_scale, reach) for fixed in fixed_values])
        i = int(np.argmax(coverage))
        if best is None or coverage[i] > best[2] + 1e-12:
            best = (float(fixed_values[i]), trimmer, float(coverage[i]))
        if coverage[i] >= share:
            return float(fixed_values[i]), trimmer, float(coverage[i])
    return best
