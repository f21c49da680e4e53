"""Tests for emulate.report.sheet: contents, self-contained HTML, atomic publishing, refusals."""

import re

import pytest

from emulate.report import plots, sheet
from emulate.analog import tolerance
from emulate.analog import trim as trim_module
from emulate.analog.design import design_twin_t
from emulate.errors import BadValueError
from emulate.analog.networks import TwinT

TOL = tolerance.Tolerances(0.01, 0.05)
NET = TwinT.balanced(6000.0, r_ohms=10e3)


@pytest.fixture(scope="module")
def full_sheet(tmp_path_factory):
    design = design_twin_t(6300.0)
    result = tolerance.monte_carlo(design.built, TOL, draws=500, seed=3)
    trim = trim_module.suggest_trim(result)
    out = tmp_path_factory.mktemp("sheets") / "build"
    return sheet.write_sheet(out, design.built, tolerances=TOL, design=design, tolerance_result=result, trim=trim)


class TestWriteSheet:
    @pytest.mark.parametrize("name", ["sheet.md", "sheet.html"])
    def test_lists_parts_and_cautions(self, full_sheet, name):
        text = (full_sheet / name).read_text()
        for designator in ("R1", "R2", "R3", "C1", "C2", "C3", "R3 (fixed)", "R3 (trimmer)", "U1A"):
            assert designator in text
        assert "metal film" in text and "polypropylene" in text
        assert "never high-k ceramics" in text.lower() or "not high-k ceramic" in text
        for caution in ("Line-level signals only", "Protect your hearing", "Never connect it to mains",
                        "local codes and licensed practice"):
            assert caution in text
        assert "Depth control" in text and "Tolerances" in text and "Trim" in text
        assert text.count("Protect your hearing") == 1  # cautions once

    def test_html_is_self_contained(self, full_sheet):
        page = (full_sheet / "sheet.html").read_text()
        sources = re.findall(r'src="([^"]*)"', page)
        assert len(sources) == 2 and all(s.startswith("data:image/png;base64,") for s in sources)
        assert not re.search(r'(href|src)="(https?:|//|[^"d#])', page)  # no external references
        assert page.count("<svg") == 1 and ">R1<" in page  # the schematic inline, text as text
        assert "<style>" in page

    def test_markdown_links_its_pictures(self, full_sheet):
        md = (full_sheet / "sheet.md").read_text()
        for name in ("response.png", "tolerance.png", "schematic.png"):
            assert f"]({name})" in md and (full_sheet / name).stat().st_size > 20_000
        assert (full_sheet / "circuit.cir").read_text().rstrip().endswith(".end")

    @pytest.mark.slow  # a cheaper check of the same path runs by default (issue 8: the CPU budget)
    def test_refuses_non_empty_folder_unless_forced(self, tmp_path):
        out = tmp_path / "s"
        out.mkdir()
        (out / "keep.txt").write_text("mine")
        with pytest.raises(BadValueError, match="not empty"):
            sheet.write_sheet(out, NET, tolerances=TOL)
        assert (out / "keep.txt").exists()
        sheet.write_sheet(out, NET, tolerances=TOL, force=True)
        assert not (out / "keep.txt").exists() and (out / "sheet.md").exists()
        assert sorted(p.name for p in tmp_path.iterdir()) == ["s"]  # no temporary or old folder left

    def test_error_leaves_nothing_behind(self, tmp_path, monkeypatch):
        def broken(*args, **kwargs):
            raise BadValueError("drawing failed")
        monkeypatch.setattr(plots, "plot_response", broken)
        with pytest.raises(BadValueError, match="drawing failed"):
            sheet.write_sheet(tmp_path / "s", NET, tolerances=TOL)
        assert list(tmp_path.iterdir()) == []

    def test_refuses_missing_parent(self, tmp_path):
        with pytest.raises(BadValueError, match="does not exist"):
            sheet.write_sheet(tmp_path / "a" / "b", NET, tolerances=TOL)


class TestPartType:
    @pytest.mark.parametrize("name, value, expected", [
        ("r1", 10e3, "metal film"), ("c1", 470e-12, "C0G/NP0"), ("c3", 22e-9, "polypropylene"),
    ])
    def test_advice(self, name, value, expected):
        # common practice, no source: film for audio capacitors, C0G only for small values
        assert expected in sheet.part_type(name, value, 0.01)


class TestPreferredSeries:
    @pytest.mark.parametrize("value, series", [(4700.0, "E6"), (9100.0, "E24"), (10.5e3, "E48"),
                                               (1.02e3, "E96"), (9.2e3, "E192"), (1234.0, "not preferred")])
    def test_coarsest_series(self, value, series):
        # IEC 60063: 4.7 is in E3, but E6 is the coarsest series stocked (common practice); 9.1 first in E24, 1.05 in E48, 1.02 first in E96 (E48 goes 1.00, 1.05), 9.20 E192
        assert sheet.preferred_series(value) == series


class TestDepthControlText:
    def test_mixer_values_at_a_mix(self):
        # inverting summer: gains Rf/Rdry = 1 - mix, Rf/Rwet = mix (op-amp summing amplifier, textbook)
        lines = sheet.depth_control_text(NET.replace(mix=0.75))
        assert "40k" in lines[0] and "13k33" in lines[0] and "12.0 dB" in lines[0]
        assert "40k2" in lines[1] and "13k3" in lines[1]  # the nearest E96 values


class TestSheetCommand:
    def run(self, *args):
        from click.testing import CliRunner

        from emulate.cli import main
        return CliRunner().invoke(main, ["sheet", *map(str, args)])

    @pytest.mark.slow
    def test_design_target_writes_a_sheet(self, tmp_path):
        result = self.run("--out", tmp_path / "s", "--notch", "6.3k", "--draws", "300")
        assert result.exit_code == 0, result.output
        assert "cautions:" in result.output and (tmp_path / "s" / "sheet.html").exists()
        again = self.run("--out", tmp_path / "s", "--notch", "6.3k", "--draws", "300")
        assert again.exit_code != 0 and "--force" in again.output
        assert self.run("--out", tmp_path / "s", "--notch", "6.3k", "--draws", "300", "--force").exit_code == 0


# --- issue 11: the sheet names every part the circuit contains --------------------------------

def parts_table(markdown: str) -> list[list[str]]:
    """The rows of the sheet's parts table (the first table headed 'part | value | ...')."""
    lines = markdown.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith("| part | value |"))
    rows = []
    for line in lines[start + 2:]:
        if not line.startswith("|"):
            break
        rows.append([cell.strip() for cell in line.strip("|").split("|")])
    return rows


def shipped_presets():
    from pathlib import Path

    from emulate.work.presets import PresetStore

    store = PresetStore(Path(__file__).resolve().parents[1] / "presets")
    return [store.load(p.stem) for p in sorted(store.root.glob("*.toml"))]


class TestEveryShippedPreset:
    @pytest.mark.slow
    @pytest.mark.parametrize("preset", shipped_presets(), ids=lambda p: p.name)
    def test_sheet_names_every_part(self, preset, tmp_path):
        from emulate.analog.makeup import buyable
        from emulate.analog.spec import network_from_preset
        from emulate.report.netlist import whole_circuit

        network = network_from_preset(preset)
        out = sheet.write_sheet(tmp_path / "s", network, tolerances=TOL,
                                title_block={"circuit": preset.name, "speaker": preset.speaker})
        md = (out / "sheet.md").read_text()
        listed = {row[0] for row in parts_table(md)}
        makeup = {n: buyable(v, "resistance" if n[0] == "r" else "capacitance") for n, v in network.parts().items()}
        contains = {e.designator for e in whole_circuit(network, makeup, sheet.divider_of(network))
                    if not e.assumed and e.kind not in ("supply", "source")}
        contains = {"RV1" if d.startswith("RV1") else d for d in contains}
        assert listed == contains
        # and the network engine's own parts: six twin-T positions, a divider when active
        assert {d.rstrip("AB") for d in listed if re.fullmatch(r"[RC][123][AB]?", d)} == {"R1", "R2", "R3", "C1", "C2", "C3"}
        dividers = [row[0] for row in parts_table(md) if row[4].startswith("bootstrap divider")]
        assert dividers == (["R4", "R5"] if network.is_active else [])
        # the engine's own netlist: every R and C of the network (source and load aside) is on the sheet
        circuit, _ = network.circuit()
        engine_parts = [e for e in circuit.elements if e.kind in ("R", "C")]
        engine_parts = [e for e in engine_parts if "src" not in e.nodes and not (e.kind == "R" and "gnd" in e.nodes
                        and e.nodes[0] in ("net", "buf"))]
        twin_t_rows = [row for row in parts_table(md) if row[4].startswith(("twin-T", "depth pot"))]
        positions = {row[0].rstrip("AB") for row in twin_t_rows}
        assert len(positions) == len(engine_parts)
        assert preset.speaker in md and preset.name in md


class TestDividerOnTheSheet:
    @pytest.mark.slow
    def test_k_and_its_tolerance_effect(self, tmp_path):
        network = NET.replace(bootstrap=0.75)
        md = (sheet.write_sheet(tmp_path / "s", network, tolerances=TOL) / "sheet.md").read_text()
        # K = Rb/(Rt + Rb) = 0.75 exactly with E24 parts; Q = 1/(4(1-K)) = 1 (MT-225)
        assert "K = 0.7500" in md and "Q = 1/(4(1-K)) = 1.000" in md and "K lies in" in md

    def test_active_load_is_said_to_do_nothing(self, tmp_path):
        network = NET.replace(bootstrap=0.75, load_ohms=2e3)
        md = (sheet.write_sheet(tmp_path / "s", network, tolerances=TOL) / "sheet.md").read_text()
        assert "the load does not change the response" in md


class TestSheetJson:
    @pytest.mark.slow
    def test_parts_and_trim(self, tmp_path):
        import json

        from click.testing import CliRunner

        from emulate.cli import main
        result = CliRunner().invoke(main, ["sheet", "--out", str(tmp_path / "s"), "--r1", "10k", "--r2", "10k",
                                           "--r3", "5k", "--c1", "10n", "--c2", "10n", "--c3", "20n",
                                           "--draws", "300", "--json"])
        assert result.exit_code == 0, result.output
        payload = json.loads(result.output)
        assert {row["part"] for row in payload["parts"]} >= {"R1", "R3A", "R3B", "C3", "U1A"}  # 5k = 2 x 10k; 20n is E24
        assert payload["trim"]["part"] == "R3" and "schematic.svg" in payload["files"]


class TestHumSheet:
    @pytest.mark.slow
    def test_a_missed_hum_target_is_a_design_note_and_cautions_stay_once(self, tmp_path):
        design = design_twin_t(50.0, q=20.0)
        assert not design.meets_hum_cut  # one part a position cannot reach 30 dB at 50 Hz, Q 20
        md = (sheet.write_sheet(tmp_path / "s", design.built, tolerances=TOL, design=design) / "sheet.md").read_text()
        assert md.count("**Caution.**") == 1 and "**Design note.**" in md and "trimmer set to" in md
        assert "dB of cut at the target" in md
