"""The whole circuit as designated parts, and its plain-text netlist.

:func:`whole_circuit` lists every part a builder solders for a :class:`TwinT`:
the twin-T (R1..R3, C1..C3; a position made of two parts becomes R3A and R3B),
an input buffer where the figures assume an ideal (0 ohm) source, the
bootstrap followers and divider (R4 top, R5 bottom) of an active network, an
output buffer where the figures assume no load (or a depth control follows a
passive network), the depth control (an op-amp mixer: inverting summer and
inverter, or a potentiometer RV1 with its wiper follower), the source
resistance and load the figures assume, and the supply decoupling.

Op-amps are drawn and listed generically (one designator per amplifier: U1A,
U1B, ... two to a dual package).  In the netlist an op-amp is a voltage-
controlled voltage source of open-loop gain ``OPEN_LOOP_GAIN`` from its
non-inverting and inverting inputs, wired as on the schematic, so the
netlist's nodal solution equals emulate's ideal-follower model to about
1 / ``OPEN_LOOP_GAIN``.

:func:`netlist_text` writes the usual exchange form between schematic and
simulation tools: a title line, one element a line (designator, nodes, value),
``0`` for ground, engineering suffixes (``4.7k``, ``2.2n``, ``1meg``), an AC
analysis line and ``.end``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from emulate.analog import parts
from emulate.analog.makeup import Makeup
from emulate.analog.networks import PART_NAMES, TwinT

__all__ = ["Element", "whole_circuit", "netlist_text", "spice_value", "OPEN_LOOP_GAIN", "DECOUPLING_FARADS",
           "MIXER_FEEDBACK_OHMS", "SUPPLY_VOLTS"]

OPEN_LOOP_GAIN = 1e9  # an ideal op-amp's stand-in in the netlist: followers within 1e-9 of unity
DECOUPLING_FARADS = 100e-9  # 100n ceramic at each supply pin of each package (common practice, no source)
SUPPLY_VOLTS = 15.0  # +-15 V rails (common practice for line-level op-amp stages)
MIXER_FEEDBACK_OHMS = 10e3
POT_END_FRACTION = 1e-6  # as the engine models a pot: 1 ppm of the track at each end
GROUND = "0"
_SUFFIXES = ((1e6, "meg"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "u"), (1e-9, "n"), (1e-12, "p"),
             (1e-15, "f"))


@dataclass(frozen=True)
class Element:
    """One part of the whole circuit.

    Attributes
    ----------
    designator : ``R1``, ``C3A``, ``U1B``, ``RV1A`` ...
    kind : ``"R"``, ``"C"``, ``"opamp"`` (nodes: output, non-inverting, inverting),
        ``"source"`` (nodes: +, -; value 1 V AC) or ``"supply"`` (nodes: +, -; value volts DC).
    nodes : node names, ``"0"`` for ground.
    value : ohms, farads, volts or (op-amp) None.
    role : what it does, in words for the sheet.
    assumed : True for what the figures assume rather than what is built (source, load).
    """

    designator: str
    kind: str
    nodes: tuple[str, ...]
    value: float | None
    role: str
    assumed: bool = False

    @property
    def written(self) -> str:
        """The value as the trade writes it (4k7, 2n2), or the part's kind."""
        if self.kind == "R":
            return parts.format_value(self.value, "resistance", 4)
        if self.kind == "C":
            return parts.format_value(self.value, "capacitance", 4)
        if self.kind == "opamp":
            return "op-amp"
        return f"{self.value:g} V"


def spice_value(value: float) -> str:
    """A value with the netlist's engineering suffix, 6 significant figures.

    Example
    -------
    >>> spice_value(4700.0), spice_value(2.2e-9), spice_value(1e6), spice_value(0.5)
    ('4.7k', '2.2n', '1meg', '500m')
    """
    for scale, suffix in _SUFFIXES:
        if abs(value) >= scale * (1 - 1e-12):
            return f"{value / scale:.6g}{suffix}"
    return f"{value:.6g}"


class _Builder:
    """Collects elements with running designators (R4.., C4.., U1A..)."""

    def __init__(self):
        self.elements: list[Element] = []
        self.next = {"R": 4, "C": 4}
        self.amplifiers = 0

    def add(self, designator, kind, nodes, value, role, assumed=False):
        self.elements.append(Element(designator, kind, tuple(nodes), value, role, assumed))

    def part(self, kind, a, b, value, role):
        designator = f"{kind}{self.next[kind]}"
        self.next[kind] += 1
        self.add(designator, kind, (a, b), value, role)
        return designator

    def position(self, name: str, made: Makeup, a: str, b: str):
        """A twin-T position: one part, or two (A, B) in series or parallel."""
        kind = name[0].upper()
        if made.count == 1:
            self.add(name.upper(), kind, (a, b), made.value, f"twin-T {name.upper()}")
            return
        role = f"twin-T {name.upper()} ({made.text()})"
        if made.wiring == "parallel":
            self.add(f"{name.upper()}A", kind, (a, b), made.parts[0], role)
            self.add(f"{name.upper()}B", kind, (a, b), made.parts[1], role)
        else:
            middle = f"{name}_mid"
            self.add(f"{name.upper()}A", kind, (a, middle), made.parts[0], role)
            self.add(f"{name.upper()}B", kind, (middle, b), made.parts[1], role)

    def opamp(self, out, plus, minus, role):
        n = self.amplifiers
        self.amplifiers += 1
        designator = f"U{n // 2 + 1}{'AB'[n % 2]}"
        self.add(designator, "opamp", (out, plus, minus), None, role)
        return designator

    def follower(self, inp, out, role):
        return self.opamp(out, inp, out, role)


def whole_circuit(network: TwinT, makeup: dict | None = None, divider: tuple[float, float] | None = None
                  ) -> list[Element]:
    """Every part of the built circuit, in signal order, with designators and nodes.

    Parameters
    ----------
    network : the network as built (one value per part).
    makeup : how each twin-T position is made (``Design.makeup``); default one part each.
    divider : (top, bottom) ohms of the bootstrap divider; default top 10k and the
        bottom that gives the network's K exactly.

    Example
    -------
    >>> names = [e.designator for e in whole_circuit(TwinT.balanced(1000.0, r_ohms=10e3))]
    >>> names[:4], "R1" in names, "U1A" in names
    (['V1', 'U1A', 'R1', 'R2'], True, True)
    """
    makeup = makeup or {name: Makeup.single(value, "resistance" if name[0] == "r" else "capacitance")
                        for name, value in network.parts().items()}
    b = _Builder()
    b.add("V1", "source", ("src", GROUND), 1.0, "signal source (1 V AC for the analysis)", assumed=True)
    if network.source_ohms:
        b.add("RS", "R", ("src", "in"), network.source_ohms, "source output resistance (assumed)", assumed=True)
    else:
        b.follower("src", "in", "input buffer: the figures assume a 0 ohm source")
    foot = "foot" if network.is_active else GROUND
    for name, (a, z) in zip(PART_NAMES, (("in", "rc"), ("rc", "net"), ("cr", foot),
                                        ("in", "cr"), ("cr", "net"), ("rc", foot))):
        b.position(name, makeup[name], a, z)
    wet = "net"
    if network.is_active:
        wet = "buf"
        b.follower("net", "buf", "output follower: drives the load and the bootstrap divider")
        top, bottom = divider or (10e3, 10e3 * network.bootstrap / (1 - network.bootstrap))
        b.add("R4", "R", ("buf", "kdiv"), top, f"bootstrap divider top (K = {_k_text(top, bottom)})")
        b.add("R5", "R", ("kdiv", GROUND), bottom, "bootstrap divider bottom")
        b.next["R"] = 6
        b.follower("kdiv", "foot", "bootstrap follower: drives the foot of R3/C3 at K x output")
    if math.isfinite(network.load_ohms):
        b.add("RL", "R", (wet, GROUND), network.load_ohms, "load the figures assume", assumed=True)
    needs_depth = network.depth_pot_ohms is not None or network.mix < 1.0
    if not network.is_active and (needs_depth or not math.isfinite(network.load_ohms)):
        b.follower(wet, "wetbuf", "output buffer: keeps the next stage off the passive network")
        wet = "wetbuf"
    if network.depth_pot_ohms is not None:
        _pot(b, network, wet)
    elif network.mix < 1.0:
        _mixer(b, network.mix, wet)
    _decoupling(b)
    return b.elements


def _k_text(top: float, bottom: float) -> str:
    return f"{bottom / (top + bottom):.4f}"


def _mixer(b: _Builder, mix: float, wet: str) -> None:
    """Inverting summer (dry Rf/(1-mix), wet Rf/mix, feedback Rf), then a unity inverter."""
    rf = MIXER_FEEDBACK_OHMS
    b.part("R", "src", "sum", rf / (1 - mix), f"mixer dry input, Rf/(1 - mix), mix {mix:.3f}")
    b.part("R", wet, "sum", rf / mix, "mixer wet input, Rf/mix")
    b.part("R", "sum", "mixinv", rf, "mixer feedback Rf")
    b.opamp("mixinv", GROUND, "sum", "mixer: inverting summer")
    b.part("R", "mixinv", "inv", rf, "inverter input")
    b.part("R", "inv", "out", rf, "inverter feedback")
    b.opamp("out", GROUND, "inv", "inverter: restores the polarity (output)")


def _pot(b: _Builder, network: TwinT, wet: str) -> None:
    """A linear pot from the network input to the wet signal, the wiper buffered (as the engine models it)."""
    ohms, position = network.depth_pot_ohms, network.mix
    end = POT_END_FRACTION * ohms
    track = f"depth pot RV1 {parts.format_value(ohms, 'resistance')} linear, wiper at {position:.3f}"
    b.add("RV1A", "R", ("in", "wiper"), end + ohms * position, f"{track}: input end to wiper")
    b.add("RV1B", "R", ("wiper", wet), end + ohms * (1 - position), f"{track}: wiper to notched end")
    b.follower("wiper", "out", "wiper buffer (output)")


def _decoupling(b: _Builder) -> None:
    """Each dual op-amp package: 100n from each rail to ground at its pins; the rails themselves."""
    packages = (b.amplifiers + 1) // 2
    for p in range(1, packages + 1):
        b.part("C", "vpos", GROUND, DECOUPLING_FARADS, f"decoupling, U{p} +V pin (ceramic, at the pin)")
        b.part("C", "vneg", GROUND, DECOUPLING_FARADS, f"decoupling, U{p} -V pin (ceramic, at the pin)")
    b.add("VPOS", "supply", ("vpos", GROUND), SUPPLY_VOLTS, "positive rail")
    b.add("VNEG", "supply", ("vneg", GROUND), -SUPPLY_VOLTS, "negative rail")


def output_node(elements: list[Element]) -> str:
    """The node the circuit's output is taken from (the last signal stage)."""
    nodes = {n for e in elements for n in e.nodes}
    for name in ("out", "wetbuf", "buf", "net"):
        if name in nodes:
            return name
    raise ValueError("no output node")


def netlist_text(elements: list[Element], title: str) -> str:
    """The netlist as text: title, one element a line, the AC analysis and ``.end``.

    Example
    -------
    >>> text = netlist_text(whole_circuit(TwinT.balanced(1000.0, r_ohms=10e3)), "test")
    >>> "R1 in rc 10k" in text, text.rstrip().endswith(".end")
    (True, True)
    """
    lines = [f"* {title}",
             "* written by emulate; op-amps are VCVS of open-loop gain "
             f"{OPEN_LOOP_GAIN:g} (E out 0 in+ in- gain); output node: {output_node(elements)}"]
    for e in elements:
        if e.kind in ("R", "C"):
            lines.append(f"{e.designator} {e.nodes[0]} {e.nodes[1]} {spice_value(e.value)}")
        elif e.kind == "opamp":
            out, plus, minus = e.nodes
            lines.append(f"E{e.designator} {out} 0 {plus} {minus} {OPEN_LOOP_GAIN:g}")
        elif e.kind == "source":
            lines.append(f"{e.designator} {e.nodes[0]} {e.nodes[1]} AC {e.value:g}")
        else:
            lines.append(f"{e.designator} {e.nodes[0]} {e.nodes[1]} DC {e.value:g}")
    lines += [".ac dec 100 10 100k", ".end"]
    return "\n".join(lines) + "\n"
