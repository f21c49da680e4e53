"""The real-box options and the measure commands as a user meets them (CliRunner).

References: the level plan's peak of a sine is sqrt(2) V_rms (by definition); the
sweep layout of emulate.measuring.stimulus; the issue's cautions (hearing).
"""

import json

import numpy as np
import pytest
import soundfile as sf
from click.testing import CliRunner

from emulate.analog.networks import TwinT
from emulate.cli import main
from emulate.measuring.stimulus import SweepPlan
from emulate.measuring.synthetic import synthetic_recording

BALANCED = ["--r1", "10k", "--r2", "10k", "--r3", "5k", "--c1", "10n", "--c2", "10n", "--c3", "20n"]
ACTIVE = BALANCED + ["--bootstrap", "0.75"]


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def assert_one_line_error(result, match):
    assert result.exit_code != 0
    assert "Traceback" not in result.output
    assert any(match in line for line in result.output.splitlines()), result.output


class TestResponseLevels:
    def test_level_plan_and_noise(self):
        payload = json.loads(run("response", *ACTIVE, "--level", "4", "--opamp", "jfet", "--json").output)
        assert payload["level_plan"]["opamp"] == "jfet"
        assert payload["level_plan"]["headroom_db"] > 10
        assert payload["noise"]["noise_dbu_a"] < -90 and payload["noise"]["snr_db_a"] > 90

    def test_clipping_level_warns(self):
        result = run("response", *ACTIVE, "--full-scale", "22", "--opamp", "rail-to-rail-cmos")
        assert result.exit_code == 0 and "warning:" in result.output and "clips" in result.output

    def test_opamp_alone_changes_the_response_only(self):
        payload = json.loads(run("response", *ACTIVE, "--opamp", "general-purpose", "--json").output)
        assert "level_plan" not in payload and payload["q"] == pytest.approx(1.0, rel=0.02)

    def test_bad_class(self):
        assert_one_line_error(run("response", *ACTIVE, "--opamp", "tl0x"), "op-amp class")


class TestRenderLevels:
    @pytest.fixture
    def take(self, tmp_path):
        path = tmp_path / "take.wav"
        t = np.arange(24000) / 48000
        sf.write(path, np.c_[0.9 * np.sin(2 * np.pi * 200 * t)] * np.ones((1, 2)), 48000, subtype="PCM_24")
        return path

    def test_linear_by_default(self, take, tmp_path):
        payload = json.loads(run("render", take, tmp_path / "o.wav", *BALANCED, "--json").output)
        assert "real_box" not in payload

    def test_rails_counted(self, take, tmp_path):
        result = run("render", take, tmp_path / "o.wav", *BALANCED, "--level", "4", "--opamp",
                     "rail-to-rail-cmos", "--json")
        payload = json.loads(result.output)
        assert payload["real_box"]["rail_hits"] > 0 and payload["real_box"]["full_scale_dbu"] == 22.0

    def test_with_noise_needs_a_level(self, take, tmp_path):
        assert_one_line_error(run("render", take, tmp_path / "o.wav", *BALANCED, "--with-noise"), "--level")

    def test_with_noise_text_has_the_caution(self, take, tmp_path):
        result = run("render", take, tmp_path / "o.wav", *BALANCED, "--level", "4", "--with-noise")
        assert result.exit_code == 0 and "protect your hearing" in result.output


class TestToleranceTemperature:
    def test_drift_reported(self):
        payload = json.loads(run("tolerance", *BALANCED, "--draws", "200", "--temperature", "0..50",
                                 "--capacitor-type", "polyester", "--json").output)
        assert payload["drift"]["nominal_notch_hz"][1] < payload["drift"]["notch_hz"]  # +400 ppm/K C

    def test_bad_range(self):
        assert_one_line_error(run("tolerance", *BALANCED, "--draws", "200", "--temperature", "0-50"),
                              "temperature range")


class TestSheetLevels:
    @pytest.mark.slow
    def test_sections(self, tmp_path):
        result = run("sheet", *ACTIVE, "--draws", "200", "--out", tmp_path / "s", "--level", "4")
        assert result.exit_code == 0, result.output
        text = (tmp_path / "s" / "sheet.md").read_text()
        assert "## Dielectrics" in text and "## Level and noise" in text


class TestMeasure:
    @pytest.mark.slow
    def test_stimulus_then_analyse(self, tmp_path):
        stimulus = tmp_path / "stim.wav"
        result = run("measure", "stimulus", stimulus, "--length", "1", "--rate", "48000")
        assert result.exit_code == 0 and "protect your hearing" in result.output
        assert sf.info(stimulus).frames == SweepPlan(48000.0, seconds=1.0).total_frames
        assert_one_line_error(run("measure", "stimulus", stimulus, "--length", "1"), "--force")
        built = TwinT(10e3, 10e3, 5e3, 10e-9, 10e-9, 21e-9)
        sf.write(tmp_path / "rec.wav", synthetic_recording(SweepPlan(48000.0, seconds=1.0), built,
                                                           latency_samples=300), 48000, subtype="FLOAT")
        result = run("measure", "analyse", tmp_path / "rec.wav", *BALANCED, "--length", "1", "--max-parts", "1",
                     "--plot", tmp_path / "m.png", "--json")
        payload = json.loads(result.output)
        assert payload["diagnosis"]["parts_off"].keys() == {"C3"}
        assert payload["latency_samples"] == pytest.approx(300, abs=2)
        assert (tmp_path / "m.png").stat().st_size > 10000

    @pytest.mark.slow
    def test_csv(self, tmp_path):
        f = np.geomspace(50, 15000, 200)
        net = TwinT(10e3, 10e3, 5e3, 10e-9, 10e-9, 20e-9)
        rows = "".join(f"{fi},{g}\n" for fi, g in zip(f, 20 * np.log10(np.abs(net.response(f)) + 1e-6)))
        (tmp_path / "m.csv").write_text("Hz,dB\n" + rows)
        payload = json.loads(run("measure", "analyse", tmp_path / "m.csv", *BALANCED, "--json").output)
        assert payload["diagnosis"]["parts_off"] == {}

    def test_no_marker(self, tmp_path):
        sf.write(tmp_path / "noise.wav", 0.01 * np.random.default_rng(0).standard_normal(200000), 48000)
        assert_one_line_error(run("measure", "analyse", tmp_path / "noise.wav", *BALANCED, "--length", "1"),
                              "no sync marker")
