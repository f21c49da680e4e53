"""Tests for emulate.report.sheet: contents, self-contained HTML, atomic publishing, refusals."""

import re

import pytest

from emulate.report import sheet
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
        for designator in ("R1", "R2", "R3a", "R3b", "C1", "C2", "C3"):
            assert designator in text
        assert "9k1" in text and "metal film" in text and "polypropylene" in text
        assert "never high-k ceramics" in text.lower() or "not high-k ceramic" in text
        for caution in ("Line-level signals only", "Protect your hearing", "Never connect it to mains",
                        "local codes and licensed practice"):
            assert caution in text
        assert "Depth control" in text and "Tolerances" in text and "Trim" in text

    def test_html_is_self_contained(self, full_sheet):
        page = (full_sheet / "sheet.html").read_text()
        sources = re.findall(r'src="([^"]*)"', page)
        assert len(sources) == 2 and all(s.startswith("data:image/png;base64,") for s in sources)
        assert not re.search(r'(href|src)="(https?:|//|[^"d])', page)  # no external references
        assert "<style>" in page

    def test_markdown_links_its_pictures(self, full_sheet):
        md = (full_sheet / "sheet.md").read_text()
        for name in ("response.png", "tolerance.png"):
            assert f"]({name})" in md and (full_sheet / name).stat().st_size > 20_000

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
        monkeypatch.setattr(sheet.plots, "plot_response", broken)
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
        assert "40k2" in lines[1] and "13k3" in lines[1] and "12.0 dB" in lines[1]


class TestSheetCommand:
    def run(self, *args):
        from click.testing import CliRunner

        from emulate.cli import main
        return CliRunner().invoke(main, ["sheet", *map(str, args)])

    def test_design_target_writes_a_sheet(self, tmp_path):
        result = self.run("--out", tmp_path / "s", "--notch", "6.3k", "--draws", "300")
        assert result.exit_code == 0, result.output
        assert "cautions:" in result.output and (tmp_path / "s" / "sheet.html").exists()
        again = self.run("--out", tmp_path / "s", "--notch", "6.3k", "--draws", "300")
        assert again.exit_code != 0 and "--force" in again.output
        assert self.run("--out", tmp_path / "s", "--notch", "6.3k", "--draws", "300", "--force").exit_code == 0
