"""The twin-T notch family, built as netlists on :mod:`emulate.analog.circuit`.

Topology (designators as on a schematic)::

    in --R1--+--R2-- out        the R-R-C T: series R1, R2; shunt C3 to the foot
             C3
            foot
    in --C1--+--C2-- out        the C-C-R T: series C1, C2; shunt R3 to the foot
             R3
            foot

* passive: the foot is ground and the load hangs on ``out``;
* bootstrapped (active): ``out`` feeds an ideal follower that drives the load,
  and a second follower drives the foot from a fraction K of the buffered output,
  raising Q to 1/(4(1-K)) for a balanced network (Analog Devices MT-225);
* depth control: an ideal wet/dry mix ``(1-mix) + mix*H`` (dry = the source
  voltage), or a real potentiometer wired from the network input to its
  buffered output with the wiper buffered (wiper at the output end = full
  notch); the passive network gets an output follower for it, since a pot
  straight across the bare network would bridge the null.

Every response runs from the source's open-circuit voltage to the voltage across
the load (or the mixer output). Nothing here measures; see :mod:`emulate.analog.response`.
"""

from __future__ import annotations

import dataclasses
import functools
import math
from dataclasses import dataclass

import numpy as np

from emulate.analog.circuit import GROUND, SOURCE, Circuit
from emulate.errors import BadValueError
from emulate.validate import check_range

__all__ = ["PART_NAMES", "part_kind", "TwinT"]

PART_NAMES = ("r1", "r2", "r3", "c1", "c2", "c3")


def part_kind(name: str) -> str:
    """``"resistance"`` for R1..R3, ``"capacitance"`` for C1..C3."""
    return "resistance" if name.lower().startswith("r") else "capacitance"


@dataclass(frozen=True)
class TwinT:
    """A twin-T notch network with its source, load and depth control.

    Parameters
    ----------
    r1, r2, r3 : float
        Series resistors and the shunt resistor of the C-C-R T, ohms.
    c1, c2, c3 : float
        Series capacitors and the shunt capacitor of the R-R-C T, farads.
    source_ohms : float
        Output resistance of whatever drives the network, ohms (0 = ideal).
    load_ohms : float
        Resistance the network (passive) or its output buffer (active) drives,
        ohms; ``math.inf`` for none.
    bootstrap : float or None
        None for the passive network; K in [0, 1) for the bootstrapped active one.
    mix : float
        Depth control, 0 (dry) to 1 (full notch).
    depth_pot_ohms : float or None
        None for an ideal wet/dry mix; else the track of a real depth
        potentiometer, ohms, with its wiper at position ``mix``.
    opamp : OpAmp or None
        None for ideal followers; else every follower is this op-amp with its
        finite gain-bandwidth (:class:`emulate.analog.opamp.OpAmp`). The ideal
        wet/dry mixer stays ideal.

    Does not check that the values are preferred values or that the network
    is balanced; :mod:`emulate.analog.response` reports that.

    Example
    -------
    >>> net = TwinT.balanced(1591.549, r_ohms=10e3)
    >>> round(net.c1 * 1e9, 3)
    10.0
    """

    r1: float
    r2: float
    r3: float
    c1: float
    c2: float
    c3: float
    source_ohms: float = 0.0
    load_ohms: float = math.inf
    bootstrap: float | None = None
    mix: float = 1.0
    depth_pot_ohms: float | None = None
    opamp: object = None

    def __post_init__(self):
        check_range("source resistance (ohms)", self.source_ohms, 0.0, math.inf, high_open=True)
        check_range("load resistance (ohms)", self.load_ohms, 0.0, math.inf, low_open=True)
        if self.bootstrap is not None:
            check_range("bootstrap K", self.bootstrap, 0.0, 1.0, high_open=True)
        check_range("mix", self.mix, 0.0, 1.0)
        if self.depth_pot_ohms is not None:
            check_range("depth pot (ohms)", self.depth_pot_ohms, 0.0, math.inf, low_open=True)

    # --- construction -------------------------------------------------------
    @classmethod
    def balanced(cls, notch_hz: float, *, r_ohms=None, c_farads=None, **options) -> "TwinT":
        """The balanced network R1 = R2 = R, R3 = R/2, C1 = C2 = C, C3 = 2C (MT-225).

        Give one of ``r_ohms`` or ``c_farads``; the other follows from
        f0 = 1/(2 pi R C). ``options`` are the remaining fields.
        """
        if (r_ohms is None) == (c_farads is None):
            raise BadValueError("give exactly one of r_ohms and c_farads for a balanced twin-T")
        check_range("notch frequency (Hz)", notch_hz, 0.0, math.inf, low_open=True, high_open=True)
        if r_ohms is None:
            r_ohms = 1.0 / (2 * math.pi * notch_hz * c_farads)
        else:
            c_farads = 1.0 / (2 * math.pi * notch_hz * r_ohms)
        return cls(r_ohms, r_ohms, r_ohms / 2, c_farads, c_farads, 2 * c_farads, **options)

    def replace(self, **changes) -> "TwinT":
        """A copy with some fields changed."""
        return dataclasses.replace(self, **changes)

    def parts(self) -> dict[str, float]:
        """The six part values by designator."""
        return {name: getattr(self, name) for name in PART_NAMES}

    def wet(self) -> "TwinT":
        """The same network at full notch with an ideal mixer (the processor's wet path)."""
        return self.replace(mix=1.0, depth_pot_ohms=None)

    @property
    def is_active(self) -> bool:
        return self.bootstrap is not None

    # --- the netlist --------------------------------------------------------
    def circuit(self) -> tuple[Circuit, str]:
        """The netlist and the name of its output node."""
        c = Circuit()
        c.drive("in", self.source_ohms)
        foot = "foot" if self.is_active else GROUND
        c.resistor("in", "rc", self.r1)
        c.resistor("rc", "net", self.r2)
        c.capacitor("rc", foot, self.c3)
        c.capacitor("in", "cr", self.c1)
        c.capacitor("cr", "net", self.c2)
        c.resistor("cr", foot, self.r3)
        wet = "net"
        if self.is_active:
            self._follower(c, "net", "buf")
            if self.opamp is None:
                c.follower("buf", "foot", self.bootstrap)
            else:  # an ideal divider K feeding a real follower
                c.follower("buf", "tap", self.bootstrap)
                self._follower(c, "tap", "foot")
            wet = "buf"
        if np.all(np.isfinite(self.load_ohms)):
            c.resistor(wet, GROUND, self.load_ohms)
        return c, self._depth_control(c, wet)

    def _depth_control(self, c: Circuit, wet: str) -> str:
        if self.depth_pot_ohms is not None:
            if not self.is_active:  # a pot across the bare network would bridge it
                self._follower(c, wet, "wetbuf")
                wet = "wetbuf"
            c.potentiometer("in", wet, "wiper", self.depth_pot_ohms, self.mix)
            self._follower(c, "wiper", "out")
            return "out"
        if self.mix == 1.0:
            return wet
        c.follower(SOURCE, "dry", 1.0 - self.mix)
        c.vcvs("out", "dry", wet, GROUND, self.mix)
        return "out"

    def _follower(self, c: Circuit, inp: str, out: str) -> None:
        """An ideal follower, or the op-amp's when one is given."""
        if self.opamp is None:
            c.follower(inp, out)
        else:
            c.opamp_follower(inp, out, self.opamp.a0, self.opamp.gbw_hz)

    def opamp_outputs(self) -> dict[str, str]:
        """The nodes an op-amp drives in the real box, with what each one does.

        ``"src"`` is the stage that drives the network (counted as an op-amp
        output of the same class; its own output resistance is ``source_ohms``).
        """
        nodes = {SOURCE: "driving stage"}
        if self.is_active:
            nodes |= {"buf": "output follower", "foot": "bootstrap follower"}
        if self.depth_pot_ohms is not None:
            nodes |= ({} if self.is_active else {"wetbuf": "wet buffer"}) | {"out": "wiper buffer"}
        elif self.mix != 1.0:
            nodes["out"] = "wet/dry mixer"
        return nodes

    # --- analysis -----------------------------------------------------------
    def zpk(self):
        """Zeros, poles (rad/s) and gain of the whole network, source to output."""
        circuit, output = self.circuit()
        return circuit.transfer_zpk(output)

    def response(self, f_hz) -> np.ndarray:
        """Exact complex response at ``f_hz`` (Hz); one row per build for batched parts."""
        return self._compiled.response(f_hz)

    def rational(self, f_ref_hz: float):
        """Each build's exact H(s) as polynomials (:class:`emulate.analog.circuit.Rational`)."""
        return self._compiled.rational(f_ref_hz)

    @functools.cached_property
    def _compiled(self):
        circuit, output = self.circuit()
        return circuit.compile(output)

    def null_mismatch(self) -> float:
        """Relative miss of the null condition R1 R2 C3 = R3 (R1+R2)(C1+C2); 0 when balanced.

        For the passive network with an ideal source the transfer numerator has
        j-axis zeros only when this holds; derived in tests/test_networks.py.
        """
        left = self.r1 * self.r2 * self.c3
        right = self.r3 * (self.r1 + self.r2) * (self.c1 + self.c2)
        return left / right - 1.0

    def null_hz(self) -> float:
        """Null frequency from w0^2 = 1/(R3 (R1+R2) C1 C2), exact when balanced."""
        w0 = 1.0 / np.sqrt(self.r3 * (self.r1 + self.r2) * self.c1 * self.c2)
        return w0 / (2 * np.pi)

