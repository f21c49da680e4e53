"""Drift with temperature (and, for high-k ceramics, with voltage) by part type.

Each part type has a typical temperature coefficient and a spread about it, in
ppm/K. These are typical figures from memory of many data sheets, not a
guarantee for any part:

==================  ===============  ==================================================
type                tempco (ppm/K)   note
==================  ===============  ==================================================
metal-film          0 +- 50          resistors
thick-film          0 +- 200         resistors (100..200 ppm/K typical)
c0g                 0 +- 30          C0G/NP0 ceramic
polypropylene       -200 +- 50       PP film
polyester           +400 +- 200      PET film
x7r                 0 +- 1500        +-15 % over -55..125 C, linearised; large voltage coefficient
==================  ===============  ==================================================

A part's value at ``T`` is ``value (1 + tc (T - 25 C))``. Drift of the notch
follows the nominal coefficients (every part of a type moving together moves
the notch, not the null); loss of depth follows the spread (parts of one type
moving apart unbalance the network). :func:`temperature_drift` measures both at
the ends of a range (a linear coefficient makes the ends the extremes): the
nominal network, and every corner of the spread (64 builds at each end).

X7R capacitance also falls with the voltage across it (typically 10-50 % at the
rated DC voltage, from memory; modelled here as ``loss (V / V_rated)^2``), so
the notch moves with the signal itself: distortion. Keep it out of the signal path.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass

import numpy as np

from emulate.analog.networks import PART_NAMES, part_kind
from emulate.analog.response import is_exact_null, measure_batch
from emulate.errors import BadValueError

__all__ = [
    "CAPACITOR_TYPES",
    "REFERENCE_C",
    "RESISTOR_TYPES",
    "TEMPCOS",
    "DriftResult",
    "Tempco",
    "dielectric_warnings",
    "parse_temperature_range",
    "temperature_drift",
    "x7r_voltage_shift",
]

REFERENCE_C = 25.0
X7R_LOSS_AT_RATED = 0.3  # typical capacitance loss at rated DC voltage (from memory: 10-50 %)


@dataclass(frozen=True)
class Tempco:
    """A part type's temperature coefficient: ``nominal`` +- ``spread``, ppm/K."""

    nominal_ppm: float
    spread_ppm: float


TEMPCOS = {  # typical, from memory (see the module docstring)
    "metal-film": Tempco(0.0, 50.0), "thick-film": Tempco(0.0, 200.0),
    "c0g": Tempco(0.0, 30.0), "polypropylene": Tempco(-200.0, 50.0),
    "polyester": Tempco(400.0, 200.0), "x7r": Tempco(0.0, 1500.0),
}
RESISTOR_TYPES = ("metal-film", "thick-film")
CAPACITOR_TYPES = ("c0g", "polypropylene", "polyester", "x7r")


def parse_temperature_range(text: str) -> tuple[float, float]:
    """``"0..50"`` -> (0.0, 50.0), degrees C, low < high, within -55..125.

    Raises
    ------
    BadValueError
        If the text is not ``LOW..HIGH`` in range.

    Example
    -------
    >>> parse_temperature_range("-10..40")
    (-10.0, 40.0)
    """
    low, sep, high = str(text).partition("..")
    try:
        low, high = float(low), float(high)
    except ValueError:
        low = high = math.nan
    if not sep or not -55.0 <= low < high <= 125.0:
        raise BadValueError(f"temperature range {text!r}: allowed LOW..HIGH in degrees C, "
                            "-55 <= LOW < HIGH <= 125 (e.g. 0..50)")
    return low, high


@dataclass(frozen=True)
class DriftResult:
    """Notch drift and depth loss over a temperature range.

    Attributes
    ----------
    range_c : (low, high) degrees C.
    types : resistor and capacitor types.
    notch_hz : notch at 25 C.
    nominal_notch_hz : notch at the range's ends with the nominal coefficients.
    worst_notch_hz : (lowest, highest) notch over every spread corner at both ends.
    width_hz : the -3 dB width at 25 C (nan if the notch is not 3 dB deep).
    depth_db : depth below the passband at 25 C.
    worst_depth_db : the shallowest depth over every corner at both ends.
    """

    range_c: tuple[float, float]
    types: tuple[str, str]
    notch_hz: float
    nominal_notch_hz: tuple[float, float]
    worst_notch_hz: tuple[float, float]
    width_hz: float
    depth_db: float
    worst_depth_db: float

    @property
    def drift_pct(self) -> float:
        """Largest notch move from 25 C over the corners, percent."""
        return 100 * max(abs(f / self.notch_hz - 1) for f in self.worst_notch_hz)

    @property
    def depth_loss_db(self) -> float:
        """Depth lost at the worst corner (from at most 120 dB: deeper is no real null)."""
        return max(min(self.depth_db, 120.0) - self.worst_depth_db, 0.0)

    @property
    def moves_more_than_width(self) -> bool:
        """True when the notch can move further than its -3 dB width."""
        low, high = self.worst_notch_hz
        return bool(math.isfinite(self.width_hz) and high - low > self.width_hz)

    def as_dict(self) -> dict:
        return {"range_c": list(self.range_c), "resistor_type": self.types[0], "capacitor_type": self.types[1],
                "notch_hz": self.notch_hz, "nominal_notch_hz": list(self.nominal_notch_hz),
                "worst_notch_hz": list(self.worst_notch_hz), "drift_pct": self.drift_pct,
                "width_hz": self.width_hz, "depth_db": self.depth_db, "worst_depth_db": self.worst_depth_db,
                "depth_loss_db": self.depth_loss_db}

    def text(self) -> str:
        (lo, hi), (r, c) = self.range_c, self.types
        nl, nh = self.nominal_notch_hz
        wl, wh = self.worst_notch_hz
        lines = [f"temperature {lo:g}..{hi:g} C, {r} resistors, {c} capacitors (typical tempcos, from memory)",
                 f"  notch   {self.notch_hz:.1f} Hz at 25 C; {nl:.1f} / {nh:.1f} Hz at {lo:g} / {hi:g} C "
                 f"(nominal tempcos); {wl:.1f}-{wh:.1f} Hz over the tempco spread ({self.drift_pct:.2f} %)",
                 f"  depth   {_depth(self.depth_db)} at 25 C; worst {self.worst_depth_db:.1f} dB of cut "
                 f"(loss {self.depth_loss_db:.1f} dB)"]
        if self.moves_more_than_width:
            lines.append(f"  ! the notch moves {wh - wl:.0f} Hz, more than its {self.width_hz:.0f} Hz width")
        if c == "x7r":
            lines.append(f"  ! X7R: {x7r_voltage_note()}")
        return "\n".join(lines)


def _depth(depth_db: float) -> str:
    return "an exact null" if is_exact_null(depth_db) else f"{depth_db:.1f} dB of cut"


def temperature_drift(network, range_c=(0.0, 50.0), *, resistor_type: str = "metal-film",
                      capacitor_type: str = "polypropylene") -> DriftResult:
    """Notch drift and depth loss of ``network`` (at full notch) over ``range_c``.

    Raises
    ------
    BadValueError
        For an unknown part type or a bad range.

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> d = temperature_drift(TwinT.balanced(1000.0, r_ohms=10e3), (0, 50), capacitor_type="polyester")
    >>> round(d.nominal_notch_hz[1] / d.notch_hz, 4)  # 1 / (1 + 400e-6 * 25)
    0.9901
    """
    types = {"resistor": (resistor_type, RESISTOR_TYPES), "capacitor": (capacitor_type, CAPACITOR_TYPES)}
    for what, (name, allowed) in types.items():
        if name not in allowed:
            raise BadValueError(f"{what} type {name!r}: allowed {', '.join(allowed)}")
    low, high = parse_temperature_range(f"{range_c[0]}..{range_c[1]}")
    network = network.wet()
    tempco = [TEMPCOS[resistor_type if part_kind(n) == "resistance" else capacitor_type] for n in PART_NAMES]
    nominal = np.array([t.nominal_ppm for t in tempco]) * 1e-6
    spread = np.array([t.spread_ppm for t in tempco]) * 1e-6
    signs = np.array(list(itertools.product((-1.0, 1.0), repeat=len(PART_NAMES))))
    rows = [np.zeros(len(PART_NAMES))]  # 25 C
    rows += [nominal * (t - REFERENCE_C) for t in (low, high)]
    rows += [((nominal + s * spread) * (t - REFERENCE_C)) for t in (low, high) for s in signs]
    metrics = _measure(network, np.array(rows))
    ref, ends, corners = metrics[0], metrics[1:3], metrics[3:]
    notch = np.array([m.notch_hz for m in corners])
    return DriftResult((low, high), (resistor_type, capacitor_type), ref.notch_hz,
                       (ends[0].notch_hz, ends[1].notch_hz), (float(notch.min()), float(notch.max())),
                       ref.upper_hz - ref.lower_hz, ref.depth_below_passband_db,
                       float(min(m.depth_below_passband_db for m in corners)))


def _measure(network, relative: np.ndarray):
    """Measure the network with each part scaled by ``1 + relative[:, i]`` (one build a row).

    Each build's exact H(s) as polynomials (as the Monte Carlo measures its builds): the
    same metrics as solving the nodal equations at every point, to 1e-9, about 30x sooner.
    """
    values = {name: getattr(network, name) * (1 + relative[:, i]) for i, name in enumerate(PART_NAMES)}
    batch = network.replace(**values)
    return measure_batch(batch.rational(float(network.null_hz())).response)


def dielectric_warnings(network, range_c=(0.0, 50.0), resistor_type: str = "metal-film") -> list[str]:
    """One line for each capacitor type that moves this notch more than its width over ``range_c``.

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> dielectric_warnings(TwinT.balanced(1000.0, r_ohms=10e3, bootstrap=0.99))[0][:18]
    'avoid x7r capacito'
    """
    found = []
    for capacitor_type in CAPACITOR_TYPES:
        d = temperature_drift(network, range_c, resistor_type=resistor_type, capacitor_type=capacitor_type)
        if d.moves_more_than_width:
            low, high = d.worst_notch_hz
            found.append(f"avoid {capacitor_type} capacitors: over {range_c[0]:g}..{range_c[1]:g} C the notch "
                         f"can move {high - low:.0f} Hz, more than its {d.width_hz:.0f} Hz -3 dB width")
    return found


def x7r_voltage_shift(volts: float, rated_v: float = 50.0) -> float:
    """Relative capacitance change of X7R at ``volts`` across a part rated ``rated_v`` (negative).

    ``-loss (V / V_rated)^2`` with a typical loss of 30 % at the rated voltage
    (from memory; real parts lose 10-50 %, small cases more).

    Example
    -------
    >>> x7r_voltage_shift(25.0)
    -0.075
    """
    return -X7R_LOSS_AT_RATED * (min(abs(volts), rated_v) / rated_v) ** 2


def x7r_voltage_note(peak_v: float = 10.0, rated_v: float = 50.0) -> str:
    shift = x7r_voltage_shift(peak_v, rated_v)
    return (f"its capacitance falls with voltage ({100 * shift:.1f} % at {peak_v:g} V on a {rated_v:g} V part, "
            "typical, from memory), so the notch moves with the signal: distortion; keep it out of the "
            "signal path")
