"""Tolerance analysis of a twin-T: Monte Carlo builds and worst-case corners (the trim: :mod:`emulate.analog.trim`).

The pipeline, top to bottom:

1. tolerances  one per part class (R1..R5, C1..C3; R4/R5 the bootstrap divider),
               with per-part overrides, as a fraction, and a
               distribution: ``"uniform"`` within +-tolerance, or ``"normal"`` with
               the tolerance as 3 sigma (untruncated but for a cut at 5.9 sigma that
               keeps every value positive up to a 50 % tolerance, so about 0.27 % of
               normal draws lie outside the marked tolerance, as unscreened parts can).
2. draws       draw i of seed s is a pure function of (s, i): six numbers from the
               SplitMix64 stream (Steele, Lea & Flood, "Fast splittable pseudorandom
               number generators", OOPSLA 2014) at counter 6 i .. 6 i + 5 under a
               key mixed from s, and two (the divider) from a second key.  So
               ``build_at(..., which=37)`` rebuilds build 37 alone, and the draws
               are measured in chunks of ``CHUNK_DRAWS`` (bounded memory, linear time).
3. rational    every build's exact H(s) = N(s) / D(s) as polynomials
               (:class:`emulate.analog.circuit.Rational`, ``TwinT.rational``): evaluating a
               cubic is ~100x cheaper than solving the nodal equations at each
               frequency.
4. measure     :func:`emulate.analog.response.notch_depth_batch` on that rational
               form's ``|H|`` (notch, depth, in range; no -3 dB edges), in a narrow
               band around the nominal notch (the notch of a build moves by no more
               than a few times the tolerances) with a coarse grid and the usual
               golden-section refinement.  Depths below the passband are
               capped at ``DEPTH_CAP_DB`` (deeper is an exact null in floating point).
   stability   every build's poles (the roots of its D(s),
               :func:`emulate.analog.stability.batch_stability`): a build with a pole
               in the right half-plane oscillates; it has no depth (NaN) and fails
               the yield.  A build whose deepest point lies on the edge of the
               search band has no notch in range; it fails the yield too, and both
               kinds are counted apart and left out of the percentiles.
5. report      percentiles, yield against a depth spec, a sensitivity ranking
               (Spearman rank correlation of each part's deviation with the notch
               shift, and of its size |deviation| with the depth), the 2^6 worst-case
               corners (2^8 with the divider of an active network).

Why the depth depends on the null condition only: for every member of the
family (passive, loaded, driven from a resistance, bootstrapped) the null is a
zero of the transfer from the network's input node to its output node; at a
j-axis zero the output is 0 V, so neither the load, the source nor the
bootstrap follower (driven from K x 0 V) carries signal.  The j-axis zeros exist
exactly when R1 R2 C3 = R3 (R1 + R2)(C1 + C2) (derived symbolically in
tests/test_networks.py); the divider moves K, so Q, never the null.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field

import numpy as np

from emulate.analog import parts
from emulate.errors import BadValueError
from emulate.analog.networks import PART_NAMES, TwinT
from emulate.analog.stability import batch_stability
from emulate.analog.response import EXACT_NULL_DB, notch_depth_batch
from emulate.validate import check_range, check_seed

__all__ = ["Tolerances", "ToleranceResult", "Corners", "PartSensitivity", "BatchMetrics", "monte_carlo",
           "worst_corners", "build_at", "builds", "deviations", "unit_draws", "divider_k", "varied_parts",
           "measure_builds", "measure_rational", "search_band_hz", "check_seed", "rank_correlation", "TOL_PARTS", "DISTRIBUTIONS",
           "CHUNK_DRAWS"]

DISTRIBUTIONS = ("uniform", "normal")
DEFAULT_DRAWS = 10_000
DEFAULT_SPEC_DB = 30.0
DEPTH_CAP_DB = EXACT_NULL_DB  # deeper than this below the passband is an exact null in float64
PERCENTILES = (5.0, 50.0, 95.0)
NORMAL_SIGMAS = 3.0  # the tolerance is 3 sigma for "normal"
_NORMAL_CUT = 5.9  # sigmas: keeps 1 - 0.5 * 5.9 / 3 > 0 at the 50 % tolerance limit
_MAX_DRAWS = 1_000_000
CHUNK_DRAWS = 2048  # draws measured at once: bounds the nodal and search arrays (about 30 MB)
ENVELOPE_BUILDS = 2000  # builds drawn in the envelope picture (the first ones; kept from the first chunk)
ENVELOPE_BLOCK_VALUES = 2**17  # builds x frequencies evaluated at once (1 MB an array)
_SEARCH_POINTS = 48
_TIE_DB = 1e-6  # depths this close to equal are a tie (they are measured to about 1e-8 dB)
_SEARCH_SPAN = 4.0  # the band is nominal notch x exp(+-(SPAN x (r_tol + c_tol) + 2 %))


# --- 1. tolerances ------------------------------------------------------------

TOL_PARTS = PART_NAMES + ("r4", "r5")  # R4, R5: the bootstrap divider, top and bottom
PART_LABELS = {"r4": "R4 (bootstrap divider top)", "r5": "R5 (bootstrap divider bottom)"}


@dataclass(frozen=True)
class Tolerances:
    """Part tolerances (per class, with per-part overrides) and the distribution of a build's deviations.

    Parameters
    ----------
    resistors, capacitors : float
        Tolerance of every resistor (R1..R3 and the bootstrap divider R4, R5) and
        of C1..C3 as a fraction (0.01 = 1 %), 0 to 0.5.
    distribution : {"uniform", "normal"}
        ``"uniform"``: each part uniform within +-tolerance; ``"normal"``: the
        tolerance is 3 sigma (cut at 5.9 sigma).
    overrides : tuple of (designator, fraction)
        Per-part tolerances, e.g. ``(("r3", 0.001),)``; designators R1..R5, C1..C3.

    Does not model drift, temperature or ageing.

    Raises
    ------
    BadValueError : a tolerance outside 0..50 %, an unknown designator or distribution.

    Example
    -------
    >>> Tolerances.parse("F", "5%").fractions().tolist()
    [0.01, 0.01, 0.01, 0.05, 0.05, 0.05]
    >>> Tolerances.parse("1%", "5%", per_part=["R3=0.1%"]).of("r3")
    0.001
    """

    resistors: float
    capacitors: float
    distribution: str = "uniform"
    overrides: tuple = ()

    def __post_init__(self):
        check_range("resistor tolerance (fraction)", self.resistors, 0.0, 0.5)
        check_range("capacitor tolerance (fraction)", self.capacitors, 0.0, 0.5)
        if self.distribution not in DISTRIBUTIONS:
            raise BadValueError(f"distribution {self.distribution!r}: allowed {', '.join(DISTRIBUTIONS)}")
        for name, fraction in self.overrides:
            if name not in TOL_PARTS:
                raise BadValueError(f"part {name.upper()!r}: allowed {', '.join(n.upper() for n in TOL_PARTS)} "
                                    "(R4, R5: the bootstrap divider)")
            check_range(f"{name.upper()} tolerance (fraction)", fraction, 0.0, 0.5)

    @classmethod
    def parse(cls, resistors="1%", capacitors="5%", distribution: str = "uniform", per_part=()) -> "Tolerances":
        """Read tolerances as written ("1%", "F", 0.01) and per-part ones ("R3=0.1%").

        Raises
        ------
        BadValueError : a bad tolerance, or a per-part entry not written NAME=TOL.
        """
        overrides = []
        for item in per_part:
            name, sep, text = str(item).partition("=")
            if not sep:
                raise BadValueError(f"per-part tolerance {item!r}: write NAME=TOL, e.g. R3=0.1%")
            overrides.append((name.strip().lower(), parts.parse_tolerance(text)))
        return cls(parts.parse_tolerance(resistors), parts.parse_tolerance(capacitors),
                   str(distribution).strip().lower(), tuple(overrides))

    def of(self, name: str) -> float:
        """The tolerance of one part (designator, any case), fraction."""
        name = name.lower()
        found = dict(self.overrides)
        if name in found:
            return found[name]
        return self.resistors if name.startswith("r") else self.capacitors

    def fractions(self, names=PART_NAMES) -> np.ndarray:
        """The tolerance of each part in ``names`` order (default R1..C3), fractions."""
        return np.array([self.of(name) for name in names])

    def describe(self) -> str:
        """e.g. ``"R 1 %, C 5 %, R3 0.1 %, uniform"``."""
        how = "uniform" if self.distribution == "uniform" else "normal, tolerance = 3 sigma"
        extra = "".join(f", {name.upper()} {parts.format_tolerance(f)}" for name, f in self.overrides)
        return f"R {parts.format_tolerance(self.resistors)}, C {parts.format_tolerance(self.capacitors)}{extra}, {how}"


def varied_parts(nominal: TwinT) -> tuple[str, ...]:
    """The parts a build varies: R1..C3, and the divider R4, R5 of an active network."""
    return TOL_PARTS if nominal.is_active else PART_NAMES


# --- 2. reproducible draws ------------------------------------------------------

_GAMMA = np.uint64(0x9E3779B97F4A7C15)
_MIX1 = np.uint64(0xBF58476D1CE4E5B9)
_MIX2 = np.uint64(0x94D049BB133111EB)
_DIVIDER_STREAM = np.uint64(0xD1B54A32D192ED03)  # a second key for the divider's two numbers


def _mix64(x: np.ndarray) -> np.ndarray:
    """The SplitMix64 output function (Steele, Lea & Flood 2014), wrapping uint64 arithmetic."""
    x = (x ^ (x >> np.uint64(30))) * _MIX1
    x = (x ^ (x >> np.uint64(27))) * _MIX2
    return x ^ (x >> np.uint64(31))


def _fill_unmeasured_defaults(measured) -> None:
    """No oscillation (NaN Hz) and every notch in range, where a frozen result was given none."""
    if measured.oscillation_hz is None:
        object.__setattr__(measured, "oscillation_hz", np.full(len(measured.depth_db), np.nan))
    if measured.in_range is None:
        object.__setattr__(measured, "in_range", np.ones(len(measured.depth_db), bool))


def rank_correlation(a, b) -> float:
    """Spearman's rank correlation of ``a`` and ``b``: Pearson's on their ranks, ties averaged.

    numpy only (scipy.stats, the reference in the tests, takes about 0.4 s to import).
    NaN where either has a single distinct value.

    Example
    -------
    >>> rank_correlation([1.0, 2.0, 3.0, 4.0], [10.0, 30.0, 20.0, 40.0])
    0.8
    """
    ra, rb = _average_ranks(a), _average_ranks(b)
    ra, rb = ra - ra.mean(), rb - rb.mean()
    scale = math.sqrt(float(np.dot(ra, ra)) * float(np.dot(rb, rb)))
    return float(np.dot(ra, rb) / scale) if scale > 0 else math.nan


def _average_ranks(x) -> np.ndarray:
    """Ranks 1..n of ``x``; equal values share the mean of their ranks."""
    x = np.asarray(x, float)
    order = np.argsort(x, kind="mergesort")
    ordered = x[order]
    starts = np.flatnonzero(np.r_[True, ordered[1:] != ordered[:-1]])
    counts = np.diff(np.r_[starts, len(x)])
    ranks = np.empty(len(x))
    ranks[order] = np.repeat(starts + (counts + 1) / 2.0, counts)
    return ranks


def unit_draws(seed: int, which) -> np.ndarray:
    """Uniform numbers in (0, 1), shape (len(which), 8), for draw numbers ``which``.

    Row j depends only on ``seed`` and ``which[j]``; columns 0-5 (R1..C3) are the
    SplitMix64 stream at counters 6 i + 1 .. 6 i + 6, columns 6-7 (the divider)
    a second stream under another key, so adding the divider left every
    R1..C3 draw as it was.

    Example
    -------
    >>> bool(np.all(unit_draws(1, [37])[0] == unit_draws(1, range(40))[37]))
    True
    """
    which = np.asarray(which, dtype=np.int64).reshape(-1)
    if np.any(which < 0):
        raise BadValueError(f"draw numbers {which[which < 0][:3].tolist()}: allowed integers >= 0")
    with np.errstate(over="ignore"):
        key = _mix64(np.array([check_seed(seed)], dtype=np.uint64) * _GAMMA + _GAMMA)
        columns = []
        for stream_key, width in ((key, len(PART_NAMES)), (_mix64(key ^ _DIVIDER_STREAM), 2)):
            counter = which.astype(np.uint64)[:, None] * np.uint64(width) + np.arange(1, width + 1, dtype=np.uint64)
            columns.append(_mix64(stream_key + counter * _GAMMA))
        bits = np.concatenate(columns, axis=1)
    return ((bits >> np.uint64(11)).astype(np.float64) + 0.5) * 2.0**-53


def deviations(tolerances: Tolerances, seed: int, which) -> np.ndarray:
    """Relative deviation of each part, shape (len(which), 8) in ``TOL_PARTS`` order."""
    u = unit_draws(seed, which)
    if tolerances.distribution == "uniform":
        unit = 2.0 * u - 1.0
    else:
        from scipy import special  # about 0.25 s of import: only for normal draws

        unit = np.clip(special.ndtri(u), -_NORMAL_CUT, _NORMAL_CUT) / NORMAL_SIGMAS
    return unit * tolerances.fractions(TOL_PARTS)


def _check_nominal(nominal: TwinT) -> None:
    if any(np.ndim(v) for v in nominal.parts().values()):
        raise BadValueError("the nominal network must have one value per part, not a batch")


def divider_k(k, top_deviation, bottom_deviation):
    """K of a divider whose nominal ratio is ``k`` with its parts off by the deviations.

    K = Rb / (Rt + Rb) and Rt / Rb = (1 - K) / K nominally, so only the ratio matters.

    Example
    -------
    >>> round(float(divider_k(0.75, 0.01, -0.01)), 5)
    0.74623
    """
    bottom = k * (1.0 + bottom_deviation)
    return bottom / (bottom + (1.0 - k) * (1.0 + top_deviation))


def builds(nominal: TwinT, deviation: np.ndarray) -> TwinT:
    """The batch of networks ``nominal`` x (1 + deviation), one row of ``deviation`` a build.

    Columns in ``TOL_PARTS`` order; columns 6-7 (the divider) move K of an active network.
    """
    deviation = np.atleast_2d(deviation)
    changes = {name: value * (1.0 + deviation[:, i]) for i, (name, value) in enumerate(nominal.parts().items())}
    if nominal.is_active and deviation.shape[1] > len(PART_NAMES):
        changes["bootstrap"] = divider_k(nominal.bootstrap, deviation[:, 6], deviation[:, 7])
    return nominal.replace(**changes)


# --- 3. the exact rational form of a batch ----------------------------------------

# --- 4. measuring many builds -----------------------------------------------------

@dataclass(frozen=True)
class BatchMetrics:
    """Notch frequency (Hz) and depth below the passband (dB, capped; NaN if it oscillates) per build.

    ``oscillation_hz`` is NaN for a stable build; ``in_range`` is False where no
    dip lies inside the search band.
    """

    notch_hz: np.ndarray
    depth_db: np.ndarray
    oscillation_hz: np.ndarray
    in_range: np.ndarray

    @property
    def oscillating(self) -> np.ndarray:
        return np.isfinite(self.oscillation_hz)


def search_band_hz(notch_hz: float, tolerances: Tolerances) -> tuple[float, float]:
    """The band searched for the notch of every build, Hz (module note 4)."""
    reach = 1.0 if tolerances.distribution == "uniform" else _NORMAL_CUT / NORMAL_SIGMAS
    widest = tolerances.fractions(TOL_PARTS)
    span = _SEARCH_SPAN * reach * (widest[:3].max() + widest[3:6].max()) + 0.02
    return notch_hz * math.exp(-span), notch_hz * math.exp(span)


def measure_builds(network: TwinT, band_hz, f_ref_hz: float) -> BatchMetrics:
    """Notch and depth of each build of a batch, searched within ``band_hz`` (Hz)."""
    return measure_rational(network.rational(f_ref_hz), band_hz)


def measure_rational(rational, band_hz) -> BatchMetrics:
    """:func:`measure_builds` on a batch's N(s)/D(s) (:class:`emulate.analog.circuit.Rational`).

    Only what the runs report: the notch, its depth below the passband and
    whether it lies inside the band (:func:`emulate.analog.response.notch_depth_batch`;
    no -3 dB edges), and which builds oscillate.
    """
    notch, depth, in_range = notch_depth_batch(rational.magnitude, search_hz=band_hz, points=_SEARCH_POINTS)
    unstable, oscillation_hz = batch_stability(rational)
    depth = np.where(unstable, np.nan, np.minimum(depth, DEPTH_CAP_DB))
    return BatchMetrics(notch, depth, oscillation_hz, in_range)


def _nominal_notch_hz(nominal: TwinT) -> float:
    """The nominal network's notch, searched over the whole audio range and beyond."""
    return measure_builds(nominal, (1.0, 200e3), float(nominal.null_hz())).notch_hz[0]


# --- 5. results -------------------------------------------------------------------

@dataclass(frozen=True)
class PartSensitivity:
    """How much one part matters (Spearman rank correlations over the draws).

    ``notch_corr``: of its deviation with the log notch shift (sign = direction);
    ``depth_corr``: of its |deviation| with the depth (negative: a bigger error,
    a shallower notch).
    """

    part: str
    notch_corr: float
    depth_corr: float


@dataclass(frozen=True)
class Corners:
    """All worst-case corners (2^6, or 2^8 with a divider): each part at +-tolerance, measured exactly."""

    signs: np.ndarray
    notch_hz: np.ndarray
    depth_db: np.ndarray
    oscillation_hz: np.ndarray = None
    in_range: np.ndarray = None
    names: tuple = PART_NAMES

    def __post_init__(self):
        _fill_unmeasured_defaults(self)

    @property
    def oscillating(self) -> int:
        """How many corners oscillate."""
        return int(np.sum(np.isfinite(self.oscillation_hz)))

    @property
    def worst_index(self) -> int:
        """An oscillating corner if any (the one at the highest frequency), else the shallowest."""
        if self.oscillating:
            return int(np.nanargmax(self.oscillation_hz))
        return int(np.argmin(self.depth_db))

    @property
    def worst_depth_db(self) -> float:
        return float(self.depth_db[self.worst_index])

    @property
    def notch_range_hz(self) -> tuple[float, float]:
        found = self.notch_hz[self.in_range & ~np.isfinite(self.oscillation_hz)]
        return (float(found.min()), float(found.max())) if len(found) else (math.nan, math.nan)

    def as_dict(self) -> dict:
        worst = self.signs[self.worst_index]
        return {"worst_depth_below_passband_db": self.worst_depth_db,
                "corners": len(self.signs),
                "worst_signs": {name.upper(): "+" if s > 0 else "-" for name, s in zip(self.names, worst)},
                "notch_low_hz": self.notch_range_hz[0], "notch_high_hz": self.notch_range_hz[1],
                "oscillating_corners": self.oscillating,
                "worst_oscillation_hz": float(self.oscillation_hz[self.worst_index]) if self.oscillating else None,
                "no_notch_corners": int(np.sum(~self.in_range))}


@dataclass(frozen=True)
class ToleranceResult:
    """A Monte Carlo run and the worst-case corners of one nominal network.

    Attributes
    ----------
    nominal : the network analysed; tolerances, seed, spec_db as given.
    deviation : (draws, 6) relative part deviations (draw i is row i).
    notch_hz, depth_db : (draws,) notch frequency, Hz, and depth below the
        passband, dB (positive, capped at ``DEPTH_CAP_DB``).
    nominal_notch_hz, nominal_depth_db : the nominal network's.
    corners : the worst-case corners.
    oscillation_hz, in_range : per draw, as :class:`BatchMetrics`.
    first_rational : the first chunk's N(s)/D(s) (:class:`emulate.analog.circuit.Rational`,
        at most ``CHUNK_DRAWS`` builds), kept for :meth:`envelope`.
    """

    nominal: TwinT
    tolerances: Tolerances
    seed: int
    spec_db: float
    deviation: np.ndarray = field(repr=False)
    notch_hz: np.ndarray = field(repr=False)
    depth_db: np.ndarray = field(repr=False)
    nominal_notch_hz: float
    nominal_depth_db: float
    corners: Corners = field(repr=False)
    oscillation_hz: np.ndarray = field(default=None, repr=False)
    in_range: np.ndarray = field(default=None, repr=False)
    first_rational: object = field(default=None, repr=False, compare=False)

    def __post_init__(self):
        _fill_unmeasured_defaults(self)

    @property
    def draws(self) -> int:
        return len(self.notch_hz)

    @property
    def oscillating(self) -> np.ndarray:
        """Per draw: the build oscillates (a pole in the right half-plane)."""
        return np.isfinite(self.oscillation_hz)

    @property
    def measured(self) -> np.ndarray:
        """Per draw: a stable build with a notch inside the search band."""
        return ~self.oscillating & self.in_range

    @property
    def yield_fraction(self) -> float:
        """Share of draws at least ``spec_db`` below the passband (oscillating or notch-less builds fail)."""
        return float(np.mean(self.measured & (np.nan_to_num(self.depth_db, nan=-np.inf) >= self.spec_db)))

    @property
    def typical_index(self) -> int:
        """The measured draw whose depth is nearest their median depth (the lowest such number).

        With an even count the two middle draws lie equally far from the median;
        distances within ``_TIE_DB`` of the nearest count as equal, so round-off in
        the last digits of a depth never decides which draw is named.
        """
        depth = np.where(self.measured, self.depth_db, np.nan)
        if not np.any(self.measured):
            return 0
        distance = np.abs(depth - np.nanmedian(depth))
        return int(np.flatnonzero(distance <= np.nanmin(distance) + _TIE_DB)[0])

    def percentiles(self, values: np.ndarray, at=PERCENTILES, where=None) -> dict[str, float]:
        """Percentiles over the measured draws (or the draws ``where`` is True; NaN if none)."""
        values = np.asarray(values)[self.measured if where is None else where]
        return {f"p{p:g}": float(np.percentile(values, p)) if len(values) else math.nan for p in at}

    def sensitivity(self) -> list[PartSensitivity]:
        """Every part, the one that matters most for the depth first."""
        shift = np.log(self.notch_hz / self.nominal_notch_hz)
        found = []
        for i, name in enumerate(varied_parts(self.nominal)):
            d = self.deviation[:, i]
            flat = np.ptp(d) == 0
            found.append(PartSensitivity(
                name.upper(),
                0.0 if flat else rank_correlation(d, shift),
                0.0 if flat else rank_correlation(np.abs(d), np.nan_to_num(self.depth_db, nan=0.0))))
        return sorted(found, key=lambda s: (-abs(np.nan_to_num(s.depth_corr)), -abs(s.notch_corr)))

    def draw(self, which: int) -> TwinT:
        """Build ``which`` as a network with one value per part."""
        return _single(builds(self.nominal, self.deviation[which]))

    def envelope(self, f_hz, at=PERCENTILES, max_builds: int = ENVELOPE_BUILDS) -> dict[str, np.ndarray]:
        """Percentiles of |H| in dB over the builds (the first ``max_builds``) at ``f_hz``.

        Every build's N(s)/D(s) is evaluated at every frequency at once, a block of
        ``ENVELOPE_BLOCK_VALUES`` (builds x frequencies) at a time, so memory stays
        bounded for any count of points. The first chunk's polynomials, kept by
        :func:`monte_carlo`, are reused: nothing is measured twice.
        """
        rational = self._rational_of_first(max_builds)
        f_hz = np.asarray(f_hz, float)
        found = np.empty((len(at), len(f_hz)))
        step = max(1, ENVELOPE_BLOCK_VALUES // len(rational.num))
        floor = 10 ** (-DEPTH_CAP_DB / 20)
        for start in range(0, len(f_hz), step):
            block = slice(start, start + step)
            level = 20 * np.log10(np.maximum(rational.magnitude(f_hz[block]), floor))
            found[:, block] = np.percentile(level, at, axis=0)
        return {f"p{p:g}": row for p, row in zip(at, found)}

    def _rational_of_first(self, count: int):
        """N(s)/D(s) of the first ``count`` builds: the kept ones when they cover them."""
        count = min(int(count), self.draws)
        if self.first_rational is not None and len(self.first_rational.num) >= count:
            return self.first_rational.head(count)
        return builds(self.nominal, self.deviation[:count]).rational(self.nominal_notch_hz)

    def as_dict(self) -> dict:
        ranking = self.sensitivity()
        return {
            "draws": self.draws, "seed": self.seed, "tolerances": self.tolerances.describe(),
            "distribution": self.tolerances.distribution,
            "nominal_notch_hz": self.nominal_notch_hz, "nominal_depth_below_passband_db": self.nominal_depth_db,
            **{f"notch_hz_{k}": v for k, v in self.percentiles(self.notch_hz).items()},
            **{f"depth_below_passband_db_{k}": v for k, v in self.percentiles(self.depth_db).items()},
            "spec_db": self.spec_db, "yield": self.yield_fraction,
            "oscillating_share": float(np.mean(self.oscillating)),
            "oscillation_hz_range": ([float(np.nanmin(self.oscillation_hz)), float(np.nanmax(self.oscillation_hz))]
                                     if np.any(self.oscillating) else None),
            "no_notch_share": float(np.mean(~self.in_range & ~self.oscillating)),
            "typical_build": self.typical_index,
            "matters_most": ranking[0].part,
            "sensitivity": [s.__dict__ for s in ranking],
            "worst_corner": self.corners.as_dict(),
        }


def monte_carlo(nominal: TwinT, tolerances: Tolerances, *, draws: int = DEFAULT_DRAWS, seed: int = 0,
                spec_db: float = DEFAULT_SPEC_DB, progress=None) -> ToleranceResult:
    """Measure ``draws`` builds of ``nominal`` and its worst-case corners.

    The draws are measured ``CHUNK_DRAWS`` at a time, so the working memory stays
    bounded for any count and the time grows linearly with it; only the
    deviations (8 bytes a part a draw) and the two results a draw are kept.

    Parameters
    ----------
    nominal : TwinT
        The network as designed (one value per part); source, load, bootstrap
        and depth control are kept for every build.
    tolerances : Tolerances
        Per part class, with the distribution.
    draws : int
        Number of builds, 1 to 1,000,000 (default 10,000).
    seed : int
        0 <= seed < 2**63; build i of a seed is always the same network.
    spec_db : float
        Depth spec below the passband, dB (> 0), for the yield.
    progress : callable, optional
        Called with the number of draws just measured after each chunk (a progress bar's update).

    Does not model the trim; see :func:`emulate.analog.trim.suggest_trim`.

    Raises
    ------
    BadValueError : a bad count, seed, spec or a batched nominal.

    Example
    -------
    >>> r = monte_carlo(TwinT.balanced(1000.0, r_ohms=10e3), Tolerances(0.01, 0.01), draws=200)
    >>> 0.9 < r.percentiles(r.notch_hz)["p50"] / 1000.0 < 1.1
    True
    """
    _check_nominal(nominal)
    check_range("draws", draws, 1, _MAX_DRAWS)
    if int(draws) != draws:
        raise BadValueError(f"draws {draws!r}: allowed a whole number 1 .. {_MAX_DRAWS}")
    check_range("depth spec (dB)", spec_db, 0.0, DEPTH_CAP_DB, low_open=True)
    seed = check_seed(seed)
    f_nominal = _nominal_notch_hz(nominal)
    band = search_band_hz(f_nominal, tolerances)
    draws = int(draws)
    columns = len(varied_parts(nominal))
    deviation = np.empty((draws, columns))
    notch, depth, oscillation = np.empty(draws), np.empty(draws), np.empty(draws)
    in_range = np.empty(draws, bool)
    first = None
    for start in range(0, draws, CHUNK_DRAWS):
        chunk = np.arange(start, min(start + CHUNK_DRAWS, draws))
        deviation[chunk] = deviations(tolerances, seed, chunk)[:, :columns]
        rational = builds(nominal, deviation[chunk]).rational(f_nominal)
        if first is None:
            first = rational.head(ENVELOPE_BUILDS)
        measured = measure_rational(rational, band)
        notch[chunk], depth[chunk] = measured.notch_hz, measured.depth_db
        oscillation[chunk], in_range[chunk] = measured.oscillation_hz, measured.in_range
        if progress is not None:
            progress(len(chunk))
    corners = worst_corners(nominal, tolerances, f_nominal)
    nominal_depth = measure_builds(nominal, band, f_nominal).depth_db[0]
    return ToleranceResult(nominal, tolerances, seed, float(spec_db), deviation, notch, depth,
                           f_nominal, float(nominal_depth), corners, oscillation, in_range, first)


def worst_corners(nominal: TwinT, tolerances: Tolerances, notch_hz: float | None = None) -> Corners:
    """Every combination of each part at -tolerance or +tolerance (64 networks), measured.

    Example
    -------
    >>> c = worst_corners(TwinT.balanced(1000.0, r_ohms=10e3), Tolerances(0.01, 0.01))
    >>> len(c.depth_db), 35 < c.worst_depth_db < 50
    (64, True)
    """
    _check_nominal(nominal)
    f_nominal = _nominal_notch_hz(nominal) if notch_hz is None else notch_hz
    band = search_band_hz(f_nominal, Tolerances(tolerances.resistors, tolerances.capacitors))
    names = varied_parts(nominal)
    signs = np.array(list(itertools.product((-1.0, 1.0), repeat=len(names))))
    measured = measure_builds(builds(nominal, signs * tolerances.fractions(names)), band, f_nominal)
    return Corners(signs, measured.notch_hz, measured.depth_db, measured.oscillation_hz,
                   measured.in_range, names)


MAX_DRAW_NUMBER = 2**62  # draw numbers index a 64-bit counter stream


def build_at(nominal: TwinT, tolerances: Tolerances, which, seed: int = 0, *,
             draws: int = DEFAULT_DRAWS) -> TwinT:
    """One build as a network: ``"typical"``, ``"worst"``, ``"nominal"`` or a draw number.

    ``"typical"`` is the draw nearest the median depth of ``draws`` draws;
    ``"worst"`` the worst-depth corner; an integer (or its text) is draw number
    ``which`` of ``seed``, independent of ``draws``.

    Raises
    ------
    BadValueError : an unknown ``which``, a negative draw number, a bad seed.

    Example
    -------
    >>> net = TwinT.balanced(1000.0, r_ohms=10e3)
    >>> build_at(net, Tolerances(0.01, 0.05), 37, seed=3) == build_at(net, Tolerances(0.01, 0.05), "37", seed=3)
    True
    """
    _check_nominal(nominal)
    choice = str(which).strip().lower()
    if choice == "nominal":
        return nominal
    if choice == "typical":
        result = monte_carlo(nominal, tolerances, draws=draws, seed=seed)
        return result.draw(result.typical_index)
    if choice == "worst":
        corners = worst_corners(nominal, tolerances)
        return _single(builds(nominal, corners.signs[corners.worst_index] * tolerances.fractions(corners.names)))
    if not choice.isdigit() or int(choice) > MAX_DRAW_NUMBER:
        raise BadValueError(f"build {which!r}: allowed typical, worst, nominal or a draw number "
                            f"0 to {MAX_DRAW_NUMBER}")
    return _single(builds(nominal, deviations(tolerances, check_seed(seed), [int(choice)])))


def _single(batch: TwinT) -> TwinT:
    single = {name: float(np.asarray(v).reshape(-1)[0]) for name, v in batch.parts().items()}
    if batch.is_active:
        single["bootstrap"] = float(np.asarray(batch.bootstrap).reshape(-1)[0])
    return batch.replace(**single)
