"""Op-amp models with the figures a data sheet gives, in a few generic classes.

An :class:`OpAmp` holds the small-signal figures the nodal engine uses (open-loop
gain ``A0`` and gain-bandwidth product: a single-pole ``A(s) = A0 / (1 + s/w_p)``
with ``GBW = A0 * w_p``), the large-signal limits the level plan and the
non-linear render use (supply rails, output swing to each rail at a rated load,
slew rate) and the noise densities (input voltage noise ``e_n`` and input current
noise ``i_n``, each white above its 1/f corner: ``e_n(f)^2 = e_n^2 (1 + f_c/f)``).

The classes carry typical figures for a whole family, not any maker's part; they
are from memory of many data sheets and meant for planning, not for a guarantee:

=====================  =======  ======  ========  ===========  ==========  ==========  =======
class                  GBW      A0      slew      swing @ load  e_n (f_c)   i_n (f_c)   out
=====================  =======  ======  ========  ===========  ==========  ==========  =======
general-purpose        1 MHz    100 dB  0.5 V/us  1.5 V @ 10k   20 nV (200) 0.5 pA (200) 20 mA
low-noise-bipolar      10 MHz   100 dB  9 V/us    1.5 V @ 600   4 nV (20)   0.7 pA (200) 35 mA
jfet                   3 MHz    100 dB  13 V/us   1.5 V @ 10k   18 nV (100) 10 fA (-)    20 mA
rail-to-rail-cmos      3 MHz    100 dB  2 V/us    0.05 V @ 10k  20 nV (1k)  1 fA (-)     10 mA
=====================  =======  ======  ========  ===========  ==========  ==========  =======

"out" is the output current before the stage limits: into a load heavier than the
rated one the swing is at most that current times the load (``OpAmp.peak_into``).
The closed-loop output resistance of a follower (the open-loop output resistance,
typically 50-100 ohm, over 1 + A: a few ohms at 20 kHz for the 1 MHz class, far
less for the others) is left out of the small-signal model: into 600 ohm it
moves the response by under 0.05 dB.

The first three run from +-15 V rails, the CMOS class from +-2.5 V (one 5 V
supply split). ``OpAmp.parse("jfet,gbw=8M,rails=12")`` starts from a class and
overrides figures; ``OpAmp.parse("custom,gbw=5M,...")`` starts from the
general-purpose figures.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from emulate.analog.parts import parse_value
from emulate.errors import BadValueError
from emulate.validate import check_range

__all__ = ["CLASSES", "DEFAULT_CLASS", "OpAmp", "dbu_to_volts_rms", "volts_rms_to_dbu"]

DBU_REFERENCE_V = math.sqrt(0.6)  # 0 dBu: 0.7746 V rms (1 mW in 600 ohms)


def dbu_to_volts_rms(dbu) -> np.ndarray | float:
    """RMS volts of a level in dBu (0 dBu = sqrt(0.6) V = 0.7746 V rms).

    Example
    -------
    >>> round(dbu_to_volts_rms(4.0), 4)
    1.2277
    """
    value = DBU_REFERENCE_V * 10 ** (np.asarray(dbu, float) / 20)
    return value if np.ndim(value) else float(value)


def volts_rms_to_dbu(volts) -> np.ndarray | float:
    """Level in dBu of an RMS voltage (the inverse of :func:`dbu_to_volts_rms`).

    Example
    -------
    >>> round(volts_rms_to_dbu(1.2277), 2)
    4.0
    """
    value = 20 * np.log10(np.maximum(np.asarray(volts, float), 1e-300) / DBU_REFERENCE_V)
    return value if np.ndim(value) else float(value)


@dataclass(frozen=True)
class OpAmp:
    """One op-amp's data-sheet figures (SI units throughout).

    Parameters
    ----------
    name : str
        Class name shown in reports.
    gbw_hz : float
        Gain-bandwidth product, Hz.
    a0 : float
        Open-loop DC gain, V/V (100 dB = 1e5).
    slew_v_per_s : float
        Slew rate, V/s (0.5 V/us = 5e5).
    rail_v : float
        Symmetric supply rails +-rail_v, volts.
    swing_high_v, swing_low_v : float
        How far the output stays from the positive and the negative rail at
        ``swing_load_ohms``, volts.
    swing_load_ohms : float
        The load the swing figures are given at, ohms.
    en_v : float
        Input voltage noise density above its 1/f corner, V/sqrt(Hz).
    en_corner_hz : float
        1/f corner of ``en_v``, Hz (0 for none).
    in_a : float
        Input current noise density above its 1/f corner, A/sqrt(Hz).
    in_corner_hz : float
        1/f corner of ``in_a``, Hz (0 for none).
    max_current_a : float
        The most current the output delivers before it limits, A: into a load
        heavier than ``swing_load_ohms`` the swing is at most this times the load.

    Raises
    ------
    BadValueError
        If a figure is out of range (non-positive gain or slew, swing larger than
        the rails ...).

    Example
    -------
    >>> amp = OpAmp.parse("jfet")
    >>> round(amp.pole_hz, 1), amp.swing_v
    (30.0, (13.5, -13.5))
    """

    name: str
    gbw_hz: float
    a0: float
    slew_v_per_s: float
    rail_v: float
    swing_high_v: float
    swing_low_v: float
    swing_load_ohms: float
    en_v: float
    en_corner_hz: float
    in_a: float
    in_corner_hz: float
    max_current_a: float = 0.02

    def __post_init__(self):
        check_range(f"{self.name}: gain-bandwidth (Hz)", self.gbw_hz, 1e3, 1e10)
        check_range(f"{self.name}: open-loop gain", self.a0, 10.0, 1e9)
        check_range(f"{self.name}: slew rate (V/s)", self.slew_v_per_s, 1e3, 1e11)
        check_range(f"{self.name}: rails (V)", self.rail_v, 0.5, 60.0)
        for what, drop in (("to the positive rail", self.swing_high_v), ("to the negative rail", self.swing_low_v)):
            check_range(f"{self.name}: swing {what} (V)", drop, 0.0, self.rail_v, high_open=True)
        check_range(f"{self.name}: swing load (ohms)", self.swing_load_ohms, 0.0, math.inf, low_open=True)
        check_range(f"{self.name}: output current (A)", self.max_current_a, 1e-4, 1.0)
        for what, value, high in (("e_n (V/rtHz)", self.en_v, 1e-6), ("i_n (A/rtHz)", self.in_a, 1e-9),
                                  ("e_n corner (Hz)", self.en_corner_hz, 1e5),
                                  ("i_n corner (Hz)", self.in_corner_hz, 1e5)):
            check_range(f"{self.name}: {what}", value, 0.0, high)

    # --- derived figures ---------------------------------------------------------
    @property
    def pole_hz(self) -> float:
        """The open-loop pole, GBW / A0, Hz."""
        return self.gbw_hz / self.a0

    @property
    def swing_v(self) -> tuple[float, float]:
        """The output's (highest, lowest) voltage at the rated load."""
        return self.rail_v - self.swing_high_v, -(self.rail_v - self.swing_low_v)

    @property
    def peak_v(self) -> float:
        """The largest symmetric peak the output holds, volts."""
        return min(self.swing_v[0], -self.swing_v[1])

    def peak_into(self, load_ohms: float) -> float:
        """The largest symmetric peak the output holds into ``load_ohms``, volts: its swing,
        or less where the load would draw more than ``max_current_a``.

        Example
        -------
        >>> amp = OpAmp.parse("jfet")
        >>> amp.peak_into(10e3), round(amp.peak_into(300.0), 2)
        (13.5, 6.0)
        """
        return min(self.peak_v, self.max_current_a * float(load_ohms))

    def en_density(self, f_hz) -> np.ndarray:
        """Input voltage noise density at ``f_hz``, V/sqrt(Hz), with its 1/f rise."""
        return self.en_v * np.sqrt(1 + self.en_corner_hz / np.asarray(f_hz, float))

    def in_density(self, f_hz) -> np.ndarray:
        """Input current noise density at ``f_hz``, A/sqrt(Hz), with its 1/f rise."""
        return self.in_a * np.sqrt(1 + self.in_corner_hz / np.asarray(f_hz, float))

    def describe(self) -> str:
        """One line: class and its main figures."""
        high, low = self.swing_v
        return (f"{self.name}: GBW {self.gbw_hz / 1e6:g} MHz, A0 {20 * math.log10(self.a0):.0f} dB, "
                f"slew {self.slew_v_per_s / 1e6:g} V/us, rails +-{self.rail_v:g} V, swing {high:g}/{low:g} V "
                f"at {self.swing_load_ohms:g} ohm, {self.max_current_a * 1e3:g} mA out, e_n {self.en_v * 1e9:g} nV/rtHz, "
                f"i_n {self.in_a * 1e12:g} pA/rtHz")

    def as_dict(self) -> dict:
        return dataclasses.asdict(self)

    # --- parsing -------------------------------------------------------------------
    @classmethod
    def parse(cls, text: str) -> OpAmp:
        """A class name, optionally followed by ``,key=value`` overrides.

        Keys: ``gbw`` (Hz), ``a0`` (V/V, or dB with a ``dB`` suffix), ``slew``
        (V/us), ``rails`` (+-V), ``swing`` (V from either rail), ``load`` (ohms),
        ``en`` (V/rtHz, e.g. ``4n``), ``en-corner`` (Hz), ``in`` (A/rtHz, e.g.
        ``0.5p``), ``in-corner`` (Hz). Values take engineering suffixes.

        Raises
        ------
        BadValueError
            For an unknown class or key, or a value out of range.

        Example
        -------
        >>> OpAmp.parse("low-noise-bipolar,gbw=20M,a0=110dB").gbw_hz
        20000000.0
        """
        name, *overrides = [piece.strip() for piece in str(text).split(",")]
        base = CLASSES.get("general-purpose" if name.lower() == "custom" else name.lower())
        if base is None:
            raise BadValueError(f"op-amp class {name!r}: allowed {', '.join(CLASSES)} or custom "
                                "(each optionally followed by ,gbw=..,slew=.. overrides)")
        changes = {}
        for piece in overrides:
            if piece:
                changes.update(_override(piece))
        if name.lower() == "custom":
            changes.setdefault("name", "custom")
        return dataclasses.replace(base, **changes)


_KEYS = {  # key -> (field(s), scale to SI)
    "gbw": (("gbw_hz",), 1.0), "slew": (("slew_v_per_s",), 1e6), "rails": (("rail_v",), 1.0),
    "swing": (("swing_high_v", "swing_low_v"), 1.0), "load": (("swing_load_ohms",), 1.0),
    "en": (("en_v",), 1.0), "en-corner": (("en_corner_hz",), 1.0),
    "in": (("in_a",), 1.0), "in-corner": (("in_corner_hz",), 1.0), "imax": (("max_current_a",), 1.0),
}


def _override(piece: str) -> dict[str, float]:
    key, _, value = piece.partition("=")
    key = key.strip().lower()
    if key == "a0":
        text = value.strip()
        if text.lower().endswith("db"):
            return {"a0": 10 ** (_number(key, text[:-2]) / 20)}
        return {"a0": _number(key, text)}
    if key not in _KEYS or not value:
        raise BadValueError(f"op-amp figure {piece!r}: allowed key=value with key one of a0, {', '.join(_KEYS)}")
    fields, scale = _KEYS[key]
    number = _number(key, value) * scale
    return {field: number for field in fields}


def _number(key: str, text: str) -> float:
    try:
        return parse_value(text.strip())
    except BadValueError:
        raise BadValueError(f"op-amp figure {key}={text!r}: allowed a number with an optional "
                            "engineering suffix (e.g. 10M, 4n, 0.5p)") from None


def _class(name, gbw, a0_db, slew_v_us, rail, swing, load, en, en_fc, i_n, in_fc, i_max) -> OpAmp:
    return OpAmp(name, gbw, 10 ** (a0_db / 20), slew_v_us * 1e6, rail, swing, swing, load, en, en_fc, i_n, in_fc,
                 i_max)


# typical figures of each family, from memory of many data sheets (not any one part)
CLASSES = {
    "general-purpose": _class("general-purpose", 1e6, 100, 0.5, 15.0, 1.5, 10e3, 20e-9, 200.0, 0.5e-12, 200.0,
                              0.02),
    "low-noise-bipolar": _class("low-noise-bipolar", 10e6, 100, 9.0, 15.0, 1.5, 600.0, 4e-9, 20.0, 0.7e-12, 200.0,
                                0.035),
    "jfet": _class("jfet", 3e6, 100, 13.0, 15.0, 1.5, 10e3, 18e-9, 100.0, 10e-15, 0.0, 0.02),
    "rail-to-rail-cmos": _class("rail-to-rail-cmos", 3e6, 100, 2.0, 2.5, 0.05, 10e3, 20e-9, 1000.0, 1e-15, 0.0,
                                0.01),
}
DEFAULT_CLASS = "low-noise-bipolar"
