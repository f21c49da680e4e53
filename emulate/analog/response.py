"""Notch metrics measured on any response, and rule checks on a twin-T.

The metrics are measured, not taken from textbook formulas: the notch is the
true minimum of ``|H|`` (grid search, then golden-section refinement in log
frequency), the band edges are where ``|H|`` falls 3 dB below the passband on
each side (bisection), and Q = notch / (upper - lower), the usual definition for a
band-stop (Analog Devices MT-225 uses it for the twin-T).

Every search is vectorised over builds so that :mod:`emulate.analog.tolerance` measures
thousands of Monte Carlo draws at once with the same code.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from typing import Callable, NamedTuple

import numpy as np

from emulate.errors import EmulateWarning
from emulate.search import golden_section_min

__all__ = ["AUDIO_BAND_HZ", "EXACT_NULL_DB", "NotchMetrics", "is_exact_null", "db", "measure",
           "measure_network", "measure_batch", "measure_notch", "NotchReading", "notch_depth_batch", "notch_in_range", "find_notch", "UNBALANCE_LIMIT",
           "SHALLOW_DB", "LOAD_FACTOR", "SOURCE_FACTOR", "check_twin_t", "warn_all"]

AUDIO_BAND_HZ = (20.0, 20000.0)
EXACT_NULL_DB = 200.0  # a notch deeper than this below the passband is an exact null in float64 (the one threshold)
_LOG_F_TOL = 1e-13  # the notch search stops within 1e-13 of log f
_EDGE_RATIO = 1 / math.sqrt(2)  # -3.01 dB
_PASSBAND_SPAN = 1e6  # passband read this far below and above the notch


_JSON_NAMES = {"depth_db": "notch_gain_db"}


@dataclass(frozen=True)
class NotchMetrics:
    """What a notch does, source voltage to load voltage.

    Attributes
    ----------
    notch_hz : the frequency of the deepest point, Hz.
    depth_db : the response there, dB (e.g. -92.7).
    depth_below_passband_db : how far that lies below the passband, dB (positive),
        against the lower of the two passband gains.
    lower_hz, upper_hz : the -3 dB edges relative to the passband on each side,
        Hz (nan where the notch is not 3 dB deep).
    q : notch_hz / (upper_hz - lower_hz) (nan where the edges do not exist).
    passband_low_db, passband_high_db : the gain far below and far above the
        notch, dB (insertion loss from source and load).
    in_range : False where the deepest point lies at an edge of the search band
        (no dip inside it: "no notch in range"); the other fields then describe
        that edge, not a notch.
    """

    notch_hz: float
    depth_db: float
    depth_below_passband_db: float
    lower_hz: float
    upper_hz: float
    q: float
    passband_low_db: float
    passband_high_db: float
    in_range: bool = True

    def as_dict(self) -> dict[str, float]:
        """Every figure for JSON; ``depth_db`` goes out as ``notch_gain_db`` (a signed gain: in text,
        JSON, CSV and plots a *depth* is always positive dB of cut, ``depth_below_passband_db``)."""
        return {_JSON_NAMES.get(name, name): (bool if name == "in_range" else float)(getattr(self, name))
                for name in self.__dataclass_fields__}


def is_exact_null(depth_below_passband_db) -> bool:
    """True where the notch is deeper than ``EXACT_NULL_DB`` below the passband (text, sheet, plots).

    Example
    -------
    >>> is_exact_null(250.0), is_exact_null(80.0)
    (True, False)
    """
    return bool(depth_below_passband_db >= EXACT_NULL_DB)


def db(magnitude):
    """20 log10 of a magnitude, with -inf below 1e-300 rather than a warning."""
    return 20 * np.log10(np.maximum(np.abs(magnitude), 1e-300))


def measure(response: Callable, *, search_hz=(1.0, 200e3), points: int = 600,
            passband: str = "far") -> NotchMetrics:
    """Measure the notch of ``response(f_hz) -> complex`` between ``search_hz``.

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> m = measure(TwinT.balanced(1000.0, r_ohms=10e3).response)
    >>> round(m.notch_hz, 3), round(m.q, 4)
    (1000.0, 0.25)
    """
    return measure_batch(lambda f: np.atleast_2d(response(f)), search_hz=search_hz, points=points,
                         passband=passband)[0]


def measure_network(network) -> NotchMetrics:
    """:func:`measure` of a :class:`~emulate.analog.networks.TwinT`; with real op-amps the
    passband is the peak each side (the response falls again beyond their gain-bandwidth)."""
    return measure(network.response, passband="far" if network.opamp is None else "peak")


def measure_batch(response: Callable, *, search_hz=(1.0, 200e3), points: int = 600,
                  passband: str = "far") -> list[NotchMetrics]:
    """Measure many builds at once; ``response(f_hz)`` maps (builds, m) Hz to complex.

    ``passband="far"`` reads the passband 1e6 times below and above the notch
    (ideal networks); ``"peak"`` takes the largest gain on a grid out to there
    (networks whose response falls again far from the notch, as with real op-amps).
    """
    notch, depth, low, high, far_low, far_high = _notch_and_passband(response, search_hz, points, passband)
    lower, upper = _edges(response, notch, np.stack([far_low, far_high], axis=1),
                          np.stack([low, high], axis=1)).T
    with np.errstate(invalid="ignore", divide="ignore"):
        q = notch / (upper - lower)
    below = np.minimum(db(low), db(high)) - depth
    fields = (notch, depth, below, lower, upper, q, db(low), db(high))
    inside = notch_in_range(notch, search_hz, points)
    return [NotchMetrics(*(float(v[i]) for v in fields), bool(inside[i])) for i in range(len(notch))]


def notch_depth_batch(magnitude: Callable, *, search_hz, points: int):
    """Notch (Hz), depth below the passband (dB) and in-range flag of each build, as arrays.

    What :func:`measure_batch` measures first, without the -3 dB edges and Q and
    without one object per build: the Monte Carlo's whole need, at about half the
    cost. ``magnitude(f_hz)`` maps (builds, m) Hz to ``|H|`` (a complex response
    works too); the passband is read as ``passband="far"``.
    """
    notch, depth, low, high, _, _ = _notch_and_passband(magnitude, search_hz, points, "far")
    return notch, np.minimum(db(low), db(high)) - depth, notch_in_range(notch, search_hz, points)


class NotchReading(NamedTuple):
    """What :func:`measure_notch` reads: the figures of :class:`NotchMetrics` that need no -3 dB edges."""

    notch_hz: float
    depth_db: float
    depth_below_passband_db: float
    in_range: bool


def measure_notch(response: Callable, *, search_hz=(1.0, 200e3), points: int = 600) -> NotchReading:
    """The notch, its depth and whether it lies inside the search band, of ``response(f_hz) -> complex``.

    The figures :func:`measure` finds first, the same values, without the -3 dB edges and Q
    (about half the nodal solves): for whoever needs only the notch or its depth, e.g. a
    solver that measures many settings of one network. The passband is read as
    ``passband="far"``.

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> net = TwinT.balanced(1000.0, r_ohms=10e3, mix=0.9)
    >>> notch_hz, depth_db, below_db, in_range = measure_notch(net.response)
    >>> round(notch_hz, 3), round(below_db, 3), in_range
    (1000.0, 20.0, True)
    """
    batch = lambda f: np.atleast_2d(response(f))  # noqa: E731 (as measure wraps it)
    notch, depth, low, high, _, _ = _notch_and_passband(batch, search_hz, points, "far")
    below = np.minimum(db(low), db(high)) - depth
    return NotchReading(float(notch[0]), float(depth[0]), float(below[0]), bool(notch_in_range(notch, search_hz, points)[0]))


def _notch_and_passband(response, search_hz, points: int, passband: str):
    """Notch (Hz) and depth (dB) of each build, the passband gains each side and where they were read."""
    notch, depth = find_notch(response, search_hz, points)
    return (notch, depth, *_passband(response, notch, passband))


def notch_in_range(notch_hz, search_hz, points: int = 600) -> np.ndarray:
    """True where a found minimum lies inside the search band, not on its edge.

    The search refines the deepest grid point between its two neighbours, so a
    minimum within one grid step (log spacing) of either edge is the edge
    itself: the response is still falling there and the true notch (if any)
    lies outside the band.

    Example
    -------
    >>> notch_in_range([1.0, 1000.0, 199999.0], (1.0, 200e3)).tolist()
    [False, True, False]
    """
    lo, hi = search_hz
    step = (hi / lo) ** (1.0 / (points - 1))
    notch = np.asarray(notch_hz, float)
    return (notch > lo * step * (1 + 1e-9)) & (notch < hi / step / (1 + 1e-9))


def _passband(response, notch, how: str):
    """Passband gain below and above the notch, and where it was read (Hz)."""
    far_low, far_high = notch / _PASSBAND_SPAN, notch * _PASSBAND_SPAN
    if how == "far":  # both sides in one call
        low, high = np.abs(response(np.stack([far_low, far_high], axis=1))).T
        return low, high, far_low, far_high
    steps = np.geomspace(1.05, _PASSBAND_SPAN, 96)
    below = np.abs(response(notch[:, None] / steps[None, :]))
    above = np.abs(response(notch[:, None] * steps[None, :]))
    i, j = np.argmax(below, axis=1), np.argmax(above, axis=1)
    rows = np.arange(len(notch))
    return below[rows, i], above[rows, j], notch / steps[i], notch * steps[j]


def find_notch(response: Callable, search_hz, points: int):
    """Frequency (Hz) and depth (dB) of the minimum of ``|H|`` for each build."""
    grid = np.geomspace(search_hz[0], search_hz[1], points)
    magnitude = np.abs(response(grid[None, :]))
    best = np.clip(np.argmin(magnitude, axis=1), 1, points - 2)
    lo, hi = np.log(grid[best - 1]), np.log(grid[best + 1])
    # on log f; 1e-13 of log f is 1e-13 relative in f
    centre = golden_section_min(lambda log_f: _magnitude_at(response, log_f), lo, hi, _LOG_F_TOL)
    return np.exp(centre), db(_magnitude_at(response, centre))


def _magnitude_at(response, log_f):
    return np.abs(_column(response, np.exp(log_f)))


def _column(response, f_hz):
    return response(np.asarray(f_hz)[:, None])[:, 0]


def _edges(response, notch, far, passband):
    """Where |H| crosses passband/sqrt(2) between ``notch`` and each column of ``far`` (bisection
    on log f); both sides step together, one call a step (columns: below, above the notch)."""
    target = passband * _EDGE_RATIO
    far_side = np.log(far)
    near_side = np.log(notch)[:, None] + np.zeros_like(far_side)
    exists = _magnitude_at(response, near_side[:, 0])[:, None] < target
    for _ in range(60):
        middle = (near_side + far_side) / 2
        inside = np.abs(response(np.exp(middle))) < target
        near_side = np.where(inside, middle, near_side)
        far_side = np.where(inside, far_side, middle)
    return np.where(exists, np.exp((near_side + far_side) / 2), np.nan)


# --- rule checks ------------------------------------------------------------

UNBALANCE_LIMIT = 1e-3
SHALLOW_DB = 60.0  # about the best depth 1 % parts hold anyway (Analog Devices MT-225)
LOAD_FACTOR = 10.0
SOURCE_FACTOR = 0.05


def check_twin_t(network, metrics: NotchMetrics) -> list[EmulateWarning]:
    """Rule checks with the fix; returns warnings (does not issue them).

    * unbalanced ratios (the null condition R1 R2 C3 = R3 (R1+R2)(C1+C2) missed
      by more than 0.1 %) that leave the notch under 60 dB below the passband
      (a deeper nominal notch is more than 1 % parts hold anyway, MT-225):
      states the nearest balanced set;
    * a passive network driving a load under 10 x (R1 + R2);
    * an active network given a load: its output follower drives the load, so
      the load does not change the response (said, so it is not silently ignored);
    * a source resistance over 5 % of R3: it does not move the null (the null is
      between the network's input node and its output) but reshapes Q and the
      passband;
    * the notch outside 20 Hz - 20 kHz.
    These thresholds are rules of thumb (common practice, no source).
    """
    found = []
    mismatch = network.null_mismatch()
    if not metrics.in_range:
        found.append(EmulateWarning(
            f"no notch in range 1 Hz - 200 kHz: the response is lowest at the edge ({metrics.notch_hz:.4g} Hz); "
            "check the part values and their units"))
    elif abs(mismatch) > UNBALANCE_LIMIT and metrics.depth_below_passband_db < SHALLOW_DB:
        found.append(EmulateWarning(_unbalanced_message(network, mismatch, metrics)))
    series = network.r1 + network.r2
    if not network.is_active and network.load_ohms < LOAD_FACTOR * series:
        found.append(EmulateWarning(
            f"load {_ohms(network.load_ohms)} is heavy for a network of R1+R2 = {_ohms(series)}: "
            f"passband {metrics.passband_low_db:.1f} dB low / {metrics.passband_high_db:.1f} dB high; "
            f"buffer the output or keep the load above {_ohms(LOAD_FACTOR * series)}"))
    if network.is_active and np.all(np.isfinite(network.load_ohms)):
        found.append(EmulateWarning(
            f"load {_ohms(network.load_ohms)} is driven by the active network's output follower: it does not "
            "change the response (the follower's output resistance is tiny); what it costs is swing, the "
            "op-amp's output current limit: see the level plan (--level DBU [--opamp CLASS])"))
    if network.source_ohms > SOURCE_FACTOR * network.r3:
        found.append(EmulateWarning(
            f"source {_ohms(network.source_ohms)} is over {SOURCE_FACTOR:.0%} of R3 = {_ohms(network.r3)}: "
            f"the null stays but Q and the passband change (Q {metrics.q:.3f}); drive the network "
            "from a buffer or scale the impedance up"))
    low, high = AUDIO_BAND_HZ
    if metrics.in_range and not low <= metrics.notch_hz <= high:
        found.append(EmulateWarning(
            f"notch at {metrics.notch_hz:.4g} Hz is outside the audio band {low:g}-{high:g} Hz"))
    return found


def _ohms(value: float) -> str:
    from emulate.analog.parts import format_value

    return format_value(value, "resistance")


def warn_all(found: list[EmulateWarning]) -> None:
    """Issue each warning through :mod:`warnings` (library callers' route)."""
    for item in found:
        warnings.warn(item, stacklevel=2)


def _unbalanced_message(network, mismatch, metrics) -> str:
    from emulate.analog.parts import format_value

    from emulate.errors import BadValueError

    r = (network.r1 + network.r2) / 2
    c = (network.c1 + network.c2) / 2
    found = (f"unbalanced network: R1*R2*C3 misses R3*(R1+R2)*(C1+C2) by {mismatch:+.1%}, so the "
             f"notch is only {metrics.depth_below_passband_db:.1f} dB deep")
    # the same R*C (so the same notch), moved into the part ranges when C3 = 2C or R3 = R/2 falls outside;
    # a suggestion that still cannot be written is left out: it must never fail the analysis
    for scale in (1.0, max(2 * c, 1.0), min(r / 2 / 0.1, 1.0)):
        try:
            balanced = (f"R1 = R2 = {format_value(r * scale, 'resistance')}, "
                        f"R3 = {format_value(r * scale / 2, 'resistance')}, "
                        f"C1 = C2 = {format_value(c / scale, 'capacitance')}, "
                        f"C3 = {format_value(2 * c / scale, 'capacitance')}")
        except BadValueError:
            continue
        return f"{found}; the nearest balanced set is {balanced}"
    return f"{found}; balance it as R1 = R2 = R, R3 = R/2, C1 = C2 = C, C3 = 2C"
