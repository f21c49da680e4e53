"""Tests of emulate.report.netlist: the whole circuit and its netlist, read back and solved.

The netlist is parsed here by its own small reader and solved by an independent
modified nodal analysis (textbook MNA: conductance stamps, one current unknown per
voltage source; e.g. Ho, Ruehli & Brennan, IEEE Trans. Circuits Syst. 22(6), 1975,
from memory), so the check does not reuse emulate's engine.
"""

from __future__ import annotations

import math
import re

import numpy as np
import pytest

from emulate.analog.design import design_twin_t
from emulate.analog.networks import TwinT
from emulate.report import netlist

SUFFIX = {"meg": 1e6, "k": 1e3, "": 1.0, "m": 1e-3, "u": 1e-6, "n": 1e-9, "p": 1e-12, "f": 1e-15}
BALANCED = TwinT.balanced(1000.0, r_ohms=10e3)


def parse_value(text: str) -> float:
    number, suffix = re.fullmatch(r"([-+0-9.eE]+?)(meg|[kmunpf]?)", text.lower()).groups()
    return float(number) * SUFFIX[suffix]


def solve(text: str, f_hz: np.ndarray) -> np.ndarray:
    """V(output) / V(AC source) of the netlist at each frequency (independent MNA)."""
    lines = [ln.split() for ln in text.splitlines() if ln.strip() and not ln.startswith(("*", "."))]
    output = re.search(r"output node: (\w+)", text).group(1)
    nodes = sorted({n for ln in lines for n in (ln[1:3] if ln[0][0] in "RCV" else ln[1:5])} - {"0"})
    index = {n: i for i, n in enumerate(nodes)}
    sources = [ln for ln in lines if ln[0][0] in "VE"]
    size = len(nodes) + len(sources)
    result = []
    for f in f_hz:
        s = 2j * math.pi * f
        a = np.zeros((size, size), complex)
        rhs = np.zeros(size, complex)
        for ln in lines:
            kind = ln[0][0]
            if kind in "RC":
                y = 1 / parse_value(ln[3]) if kind == "R" else s * parse_value(ln[3])
                i, j = index.get(ln[1]), index.get(ln[2])
                for p, q, sign in ((i, i, 1), (j, j, 1), (i, j, -1), (j, i, -1)):
                    if p is not None and q is not None:
                        a[p, q] += sign * y
        for k, ln in enumerate(sources, start=len(nodes)):
            plus, minus = index.get(ln[1]), index.get(ln[2])
            for node, sign in ((plus, 1), (minus, -1)):
                if node is not None:
                    a[node, k] += sign
                    a[k, node] += sign
            if ln[0][0] == "E":
                gain = parse_value(ln[5])
                for node, sign in ((index.get(ln[3]), -gain), (index.get(ln[4]), gain)):
                    if node is not None:
                        a[k, node] += sign
            elif ln[3] == "AC":
                rhs[k] = parse_value(ln[4])
        result.append(np.linalg.solve(a, rhs)[index[output]])
    return np.array(result)


NETWORKS = {
    "passive": BALANCED,
    "passive, source and load": BALANCED.replace(source_ohms=600.0, load_ohms=47e3),
    "active": BALANCED.replace(bootstrap=0.9),
    "active, load": BALANCED.replace(bootstrap=0.9, load_ohms=2e3),
    "passive, mix": BALANCED.replace(mix=0.7),
    "active, mix": BALANCED.replace(bootstrap=0.75, mix=0.5),
    "passive, pot": BALANCED.replace(depth_pot_ohms=10e3, mix=0.6),
    "active, pot": BALANCED.replace(bootstrap=0.8, depth_pot_ohms=10e3, mix=0.6, source_ohms=100.0),
}


class TestWholeCircuit:
    @pytest.mark.parametrize("name", NETWORKS)
    def test_has_every_twin_t_part_and_unique_designators(self, name):
        elements = netlist.whole_circuit(NETWORKS[name])
        designators = [e.designator for e in elements]
        assert len(designators) == len(set(designators))
        assert {"R1", "R2", "R3", "C1", "C2", "C3"} <= set(designators)
        dividers = [e.designator for e in elements if e.role.startswith("bootstrap divider")]
        assert dividers == (["R4", "R5"] if NETWORKS[name].is_active else [])

    def test_pairs_become_two_parts(self):
        d = design_twin_t(6300.0, parts_per_position=2)
        designators = {e.designator for e in netlist.whole_circuit(d.built, d.makeup, d.divider)}
        assert {"R1A", "R1B", "C3A", "C3B"} <= designators


class TestNetlistText:
    @pytest.mark.parametrize("name", NETWORKS)
    def test_round_trip_equals_emulate(self, name):
        network = NETWORKS[name]
        text = netlist.netlist_text(netlist.whole_circuit(network), name)
        f = np.geomspace(20.0, 20e3, 61)
        expected = network.response(f)
        got = solve(text, f)
        # op-amps of open-loop gain 1e9 against ideal followers: 1e-9 a stage (x Q^2 in a bootstrap loop);
        # values written to 6 figures: 1e-6 relative each. 2e-5 of the passband covers both.
        assert np.max(np.abs(got - expected)) < 2e-5

    def test_designed_network_round_trip(self):
        d = design_twin_t(50.0, q=20.0, parts_per_position=2)
        elements = netlist.whole_circuit(d.built, d.makeup, d.divider)
        f = np.geomspace(40.0, 60.0, 41)
        # the divider's own resistors give K; the design's built network uses the same K
        assert np.max(np.abs(solve(netlist.netlist_text(elements, "hum"), f) - d.built.response(f))) < 2e-5

    @pytest.mark.parametrize("value, text", [(4700.0, "4.7k"), (2.2e-9, "2.2n"), (1e6, "1meg"), (100e-9, "100n"),
                                             (47.0, "47")])
    def test_spice_values(self, value, text):
        # engineering suffixes of the netlist exchange form (common practice, no source)
        assert netlist.spice_value(value) == text and parse_value(text) == pytest.approx(value)
