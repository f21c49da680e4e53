"""Tests of emulate.report.schematic: every network the tool models is drawn with every part.

The check is structural (common practice, no source): the SVG keeps its text as text, so
each designator of the whole circuit (emulate.report.netlist) and each twin-T value as the
trade writes it must appear in it; the PNG is a real PNG.
"""

from __future__ import annotations

import pytest

from emulate.analog.design import design_twin_t
from emulate.analog.networks import TwinT
from emulate.errors import BadValueError
from emulate.report import netlist, schematic
from helpers_lean import slow_except

BALANCED = TwinT.balanced(1000.0, r_ohms=10e3)
NETWORKS = {
    "passive": BALANCED,
    "passive, source, load, mix": BALANCED.replace(source_ohms=600.0, load_ohms=47e3, mix=0.7),
    "active": BALANCED.replace(bootstrap=0.9),
    "active, mix": BALANCED.replace(bootstrap=0.75, mix=0.5),
    "passive, pot": BALANCED.replace(depth_pot_ohms=10e3, mix=0.6),
    "active, pot, load": BALANCED.replace(bootstrap=0.8, depth_pot_ohms=10e3, mix=0.6, load_ohms=10e3),
}


class TestDrawSchematic:
    # by default the two drawings that hold every kind of part between them (passive with source,
    # load and mix; active with pot and load); the other four slow (about 0.4 s each)
    @pytest.mark.parametrize("name", slow_except(NETWORKS, keep=(1, 5), one_name=True, ids=lambda name: name))
    def test_every_drawn_part_is_labelled(self, name, tmp_path):
        network = NETWORKS[name]
        svg, png = schematic.draw_schematic(network, tmp_path, title=name)
        text = svg.read_text()
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
        for element in netlist.whole_circuit(network):
            if element.kind in ("supply", "source") or element.role.startswith("decoupling"):
                continue  # the note under the drawing names the decoupling; the source is the IN terminal
            label = "RV1" if element.designator.startswith("RV1") else element.designator
            assert label in text, (name, label)
        for value in ("10k", "15n92", "31n83"):
            assert value in text

    def test_pairs_are_labelled_as_pairs(self, tmp_path):
        d = design_twin_t(50.0, q=20.0, parts_per_position=2)
        svg, _ = schematic.draw_schematic(d.built, tmp_path, makeup=d.makeup, divider=d.divider)
        assert "R1A/B" in svg.read_text() and "||" in svg.read_text()


class TestWriteSchematic:
    def test_refuses_other_formats(self, tmp_path):
        with pytest.raises(BadValueError, match=r"\.svg or \.png"):
            schematic.write_schematic(schematic.schematic_figure(BALANCED), tmp_path / "s.jpg")


class TestSvgText:
    def test_embeddable(self):
        text = schematic.svg_text(BALANCED)
        assert text.startswith("<svg") and text.rstrip().endswith("</svg>")
