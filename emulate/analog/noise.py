"""Output noise of the real box: every resistor's thermal noise and every op-amp's e_n and i_n.

Each noise source is an independent generator inside the network; its power
density at the output is its own density times ``|T(f)|^2``, the transfer from
where it sits to the output, and the densities add:

* a resistor R is a current source of density ``4kT/R`` (A^2/Hz) across its
  ends (Johnson, Nyquist 1928: open-circuit ``4kTR`` V^2/Hz);
* an op-amp's input voltage noise ``e_n(f)`` adds to its differential input,
  its current noise ``i_n(f)`` flows into each input node; both rise below their
  1/f corners (see :mod:`emulate.analog.opamp`);
* the stage that drives the network (counted as an op-amp of the same class)
  adds its ``e_n`` at the source, so it reaches the output as the signal does.

All transfers come from one adjoint solve per frequency,
``(G + sC)^T y = l`` (:meth:`emulate.analog.circuit.Compiled.adjoint`): ``y`` at
a node is the output per ampere injected there.

The band is integrated 20 Hz-20 kHz unweighted and A-weighted (IEC 61672-1, the
analytic form with pole frequencies 20.6, 107.7, 737.9 and 12194 Hz, normalised
to 0 dB at 1 kHz), and reported in dBu and as a signal-to-noise ratio at a level.
The temperature is 25 C unless stated.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from emulate.analog.circuit import SOURCE
from emulate.analog.opamp import OpAmp, volts_rms_to_dbu
from emulate.analog.response import AUDIO_BAND_HZ

__all__ = [
    "BOLTZMANN",
    "ROOM_KELVIN",
    "NoiseReport",
    "a_weighting",
    "circuit_noise_power",
    "output_noise",
    "resistor_names",
]

BOLTZMANN = 1.380649e-23  # J/K, exact in the 2019 SI
ROOM_KELVIN = 298.15  # 25 C
_POINTS = 1200
_A_POLES_HZ = (20.6, 107.7, 737.9, 12194.0)  # IEC 61672-1


def a_weighting(f_hz) -> np.ndarray:
    """A-weighting as a power ratio (not dB) at ``f_hz``, 1 at 1 kHz (IEC 61672-1 analytic form).

    Example
    -------
    >>> round(float(10 * np.log10(a_weighting(100.0))), 1)
    -19.1
    """
    f2 = np.asarray(f_hz, float) ** 2
    p1, p2, p3, p4 = (p ** 2 for p in _A_POLES_HZ)
    r = p4 * f2 ** 2 / ((f2 + p1) * np.sqrt((f2 + p2) * (f2 + p3)) * (f2 + p4))
    r1k = p4 * 1e12 / ((1e6 + p1) * math.sqrt((1e6 + p2) * (1e6 + p3)) * (1e6 + p4))
    return (r / r1k) ** 2


@dataclass(frozen=True)
class NoiseReport:
    """Output noise densities by contributor and their integrals over the band.

    Attributes
    ----------
    f_hz : frequencies, Hz.
    density : dict name -> output noise density, V/sqrt(Hz), at ``f_hz``.
    total : total output density, V/sqrt(Hz).
    rms_v, rms_a_v : integrated 20 Hz-20 kHz noise, unweighted and A-weighted, V rms.
    shares_a : dict name -> share of the A-weighted noise power (0..1).
    """

    f_hz: np.ndarray
    density: dict
    total: np.ndarray
    rms_v: float
    rms_a_v: float
    shares_a: dict

    @property
    def dbu(self) -> float:
        """Unweighted noise, dBu."""
        return volts_rms_to_dbu(self.rms_v)

    @property
    def dbu_a(self) -> float:
        """A-weighted noise, dBu."""
        return volts_rms_to_dbu(self.rms_a_v)

    def largest(self, count: int = 3) -> list[tuple[str, float]]:
        """The ``count`` largest contributors to the A-weighted noise with their shares."""
        return sorted(self.shares_a.items(), key=lambda item: -item[1])[:count]

    def snr_db(self, level_dbu: float, weighted: bool = True) -> float:
        """Signal-to-noise ratio of a sine at ``level_dbu`` against this noise, dB."""
        return float(level_dbu) - (self.dbu_a if weighted else self.dbu)

    def text(self, level_dbu: float | None = None) -> str:
        lines = [f"noise 20 Hz-20 kHz: {self.dbu:.1f} dBu unweighted, {self.dbu_a:.1f} dBu(A)"]
        if level_dbu is not None:
            lines.append(f"  SNR at {level_dbu:+.1f} dBu: {self.snr_db(level_dbu, False):.1f} dB unweighted, "
                         f"{self.snr_db(level_dbu):.1f} dB(A)")
        lines.append("  largest: " + ", ".join(f"{name} {share:.0%}" for name, share in self.largest()))
        return "\n".join(lines)

    def as_dict(self, level_dbu: float | None = None) -> dict:
        out = {"noise_dbu": self.dbu, "noise_dbu_a": self.dbu_a,
               "largest": [{"source": n, "share_a": s} for n, s in self.largest()]}
        if level_dbu is not None:
            out |= {"snr_db": self.snr_db(level_dbu, False), "snr_db_a": self.snr_db(level_dbu)}
        return out


def resistor_names(network) -> dict:
    """The designator of each resistor of a twin-T's netlist by its pair of nodes, and each op-amp's role by its output."""
    foot = "foot" if network.is_active else "gnd"
    wet = "buf" if network.is_active else "net"
    return {frozenset(("in", "rc")): "R1", frozenset(("rc", "net")): "R2", frozenset(("cr", foot)): "R3",
            frozenset((SOURCE, "in")): "source resistance", frozenset((wet, "gnd")): "load",
            frozenset(("in", "wiper")): "depth pot", frozenset(("wiper", wet)): "depth pot",
            frozenset(("wiper", "wetbuf")): "depth pot"} | network.opamp_outputs()


def output_noise(network, opamp: OpAmp | None, *, kelvin: float = ROOM_KELVIN,
                 band_hz=AUDIO_BAND_HZ, points: int = _POINTS) -> NoiseReport:
    """Output noise density of ``network`` from every resistor and op-amp, and its band integrals.

    Parameters
    ----------
    network : TwinT
        The circuit; its followers become ``opamp`` (ideal and noiseless if None).
    opamp : OpAmp or None
        The op-amp class of every stage, driving stage included; None: resistors only.
    kelvin : float
        Temperature of the resistors, K.
    band_hz : (float, float)
        Integration band, Hz.
    points : int
        Log-spaced frequencies over the band.

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> report = output_noise(TwinT.balanced(1000.0, r_ohms=10e3), None)
    >>> round(report.dbu_a, 1)
    -122.1
    """
    network = network.replace(opamp=opamp)
    circuit, output = network.circuit()
    f_hz = np.geomspace(band_hz[0], band_hz[1], points)
    power = circuit_noise_power(circuit, output, f_hz, opamp=opamp, names=resistor_names(network), kelvin=kelvin)
    if opamp is not None:
        _add(power, "driving stage e_n", opamp.en_density(f_hz) ** 2 * np.abs(network.response(f_hz)) ** 2)
    return _report(f_hz, power)


def circuit_noise_power(circuit, output: str, f_hz, *, opamp: OpAmp | None = None, names=None,
                        kelvin: float = ROOM_KELVIN) -> dict[str, np.ndarray]:
    """Output noise power density (V^2/Hz) at ``f_hz`` of each resistor and op-amp of any circuit.

    ``names`` maps a resistor's pair of nodes to its name (default ``"R a-b"``)
    and an op-amp's output node to its name (default ``"op-amp NODE"``).
    The op-amp elements get ``opamp``'s e_n and i_n (none if ``opamp`` is None).

    Example
    -------
    >>> from emulate.analog.circuit import Circuit
    >>> c = Circuit(); c.drive("a"); c.resistor("a", "out", 1e3); c.capacitor("out", "gnd", 1e-9)
    >>> p = circuit_noise_power(c, "out", [10.0], kelvin=300.0)["R a-out"]
    >>> bool(abs(p[0] / (4 * BOLTZMANN * 300.0 * 1e3) - 1) < 1e-6)
    True
    """
    f_hz = np.asarray(f_hz, float)
    rows = circuit.node_rows()
    y = circuit.compile(output).adjoint(f_hz)
    power: dict[str, np.ndarray] = {}
    names = names or {}
    for element in circuit.elements:
        if element.kind == "R":
            a, b = element.nodes
            t = _at(y, rows, a) - _at(y, rows, b)
            name = names.get(frozenset(element.nodes), f"R {a}-{b}")
            _add(power, name, 4 * BOLTZMANN * kelvin / float(element.value) * np.abs(t) ** 2)
        elif element.kind == "A" and opamp is not None:
            plus, minus, out, pole = element.nodes
            label = names.get(out, f"op-amp {out}")
            _add(power, f"{label} e_n", opamp.en_density(f_hz) ** 2 * np.abs(y[:, rows[pole]]) ** 2)
            current = np.abs(_at(y, rows, plus)) ** 2 + np.abs(_at(y, rows, minus)) ** 2
            _add(power, f"{label} i_n", opamp.in_density(f_hz) ** 2 * current)
    return power


def _at(y, rows, node) -> np.ndarray:
    return y[:, rows[node]] if node in rows else np.zeros(len(y))


def _add(power: dict, name: str, density2: np.ndarray) -> None:
    power[name] = power.get(name, 0.0) + density2


def _report(f_hz, power: dict) -> NoiseReport:
    weights = a_weighting(f_hz)
    totals = {name: _integrate(f_hz, p) for name, p in power.items()}
    totals_a = {name: _integrate(f_hz, p * weights) for name, p in power.items()}
    total = sum(power.values())
    all_a = sum(totals_a.values())
    return NoiseReport(f_hz, {n: np.sqrt(p) for n, p in power.items()}, np.sqrt(total),
                       math.sqrt(sum(totals.values())), math.sqrt(all_a),
                       {n: v / all_a if all_a > 0 else 0.0 for n, v in totals_a.items()})


def _integrate(f_hz, density2) -> float:
    """Trapezoidal integral over frequency (log-spaced points, linear measure)."""
    return float(np.sum((density2[1:] + density2[:-1]) / 2 * np.diff(f_hz)))
