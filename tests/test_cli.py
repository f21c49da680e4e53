"""The command line as a user meets it: click's CliRunner, one class per command."""

import json

import numpy as np
import pytest
import soundfile as sf
from click.testing import CliRunner

from emulate.cli import main

BALANCED = ["--r1", "10k", "--r2", "10k", "--r3", "5k", "--c1", "10n", "--c2", "10n", "--c3", "20n"]


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def assert_one_line_error(result, match):
    """Bad input: non-zero exit, one line naming the problem, no traceback."""
    assert result.exit_code != 0
    assert result.exception is None or isinstance(result.exception, SystemExit)
    lines = [line for line in result.output.splitlines() if line.strip()]
    assert any(match in line for line in lines), result.output
    assert "Traceback" not in result.output


class TestResponse:
    def test_balanced_notch_matches_mt225(self):
        # f0 = 1/(2 pi R C) = 1591.549 Hz for 10k/10n (Analog Devices MT-225); the issue asks 0.01 %
        payload = json.loads(run("response", *BALANCED, "--json").output)
        assert payload["notch_hz"] == pytest.approx(1591.549430919, rel=1e-4)
        assert payload["notch_gain_db"] < -80 and payload["depth_below_passband_db"] > 80
        assert "depth_db" not in payload  # a depth is positive dB of cut; the signed figure is a gain
        assert payload["q"] == pytest.approx(0.25, rel=1e-6)

    def test_all_equal_parts_give_a_shallow_dip(self):
        # common practice, no source: all parts 10k/10n give only about -12 dB near 1.6 kHz
        args = ["--r1", "10k", "--r2", "10k", "--r3", "10k", "--c1", "10n", "--c2", "10n", "--c3", "10n"]
        payload = json.loads(run("response", *args, "--json").output)
        assert payload["depth_below_passband_db"] == pytest.approx(12.0, abs=0.5)
        assert 1400 < payload["notch_hz"] < 1800
        assert any("unbalanced" in w for w in payload["warnings"])

    def test_human_output_has_summary_and_table(self):
        result = run("response", *BALANCED, "--load", "20k")
        assert result.exit_code == 0
        assert "notch      1591.55 Hz" in result.output
        assert "16000.0" in result.output
        assert "warning" in result.output and "heavy" in result.output

    def test_circuit_file_and_override(self, tmp_path):
        path = tmp_path / "proposal.toml"
        path.write_text('[circuit]\nr1 = "10k"\nr2 = "10k"\nr3 = "5k"\nc1 = "10n"\nc2 = "10n"\nc3 = "20n"\n')
        base = json.loads(run("response", "--circuit", path, "--json").output)
        changed = json.loads(run("response", "--circuit", path, "--r3", "10k", "--json").output)
        assert base["depth_below_passband_db"] > 80 and changed["depth_below_passband_db"] < 20

    @pytest.mark.parametrize("args, match", [
        (["--r1", "-10k"], "r1"),
        (["--r1", "banana"], "r1"),
        (["--r3", "0"], "r3"),
        (["--c1", "10nF", "--r1", "10nF"], "r1"),
        (["--mix", "1.5"], "mix"),
        (["--bootstrap", "1.0"], "bootstrap"),
        (["--load", "0"], "load"),
    ])
    def test_bad_values_give_one_line(self, args, match):
        full = dict(zip(BALANCED[::2], BALANCED[1::2]))
        full.update(dict(zip(args[::2], args[1::2])))
        result = run("response", *[x for kv in full.items() for x in kv])
        assert_one_line_error(result, match)

    def test_missing_parts(self):
        assert_one_line_error(run("response", "--r1", "10k"), "missing")

    def test_missing_circuit_file(self, tmp_path):
        assert_one_line_error(run("response", "--circuit", tmp_path / "none.toml"), "no such")

    def test_malformed_circuit_file(self, tmp_path):
        path = tmp_path / "bad.toml"
        path.write_text("[circuit\nr1 = ")
        assert_one_line_error(run("response", "--circuit", path), "TOML")


class TestDesign:
    def test_design_call_shape_from_the_issue(self):
        payload = json.loads(run("design", "--notch", "6.3k", "--series", "E24", "--json").output)
        assert set(payload["parts"]) >= {"R1", "R2", "R3", "C1", "C2", "C3"}
        # E24 steps are about 10 % apart, E12 capacitors 20 %: the best pair lands within a few %
        assert payload["notch_hz"] == pytest.approx(6300, rel=0.03)
        assert payload["depth_below_passband_db"] >= 60

    def test_active_design_reaches_q(self):
        payload = json.loads(run("design", "--notch", "4.5k", "--q", "2", "--json").output)
        assert payload["q"] == pytest.approx(2.0, rel=0.03)
        assert "RK_TOP" in payload["parts"]

    @pytest.mark.parametrize("args, match", [
        (["--notch", "0"], "notch"),
        (["--notch", "6k", "--q", "0.1"], "q 0.1"),
        (["--notch", "6k", "--series", "E7"], "E7"),
    ])
    def test_bad_targets(self, args, match):
        assert_one_line_error(run("design", *args), match)


class TestRender:
    def write_take(self, path, frames=4800, rate=48000):
        x = np.random.default_rng(1).normal(0, 0.1, (frames, 2))
        sf.write(path, x, rate, subtype="PCM_24")
        return path

    def test_renders_and_keeps_format(self, tmp_path):
        take = self.write_take(tmp_path / "take.wav")
        result = run("render", take, tmp_path / "out.wav", *BALANCED, "--json")
        assert result.exit_code == 0, result.output
        payload = json.loads(result.output)
        assert payload["subtype"] == "PCM_24" and payload["frames"] == 4800
        assert payload["fidelity_db"] <= 0.1

    def test_refuses_to_overwrite_input(self, tmp_path):
        take = self.write_take(tmp_path / "take.wav")
        before = take.read_bytes()
        assert_one_line_error(run("render", take, take, *BALANCED), "same file")
        assert take.read_bytes() == before

    def test_notch_16300_hz_is_not_allowed_at_32000_hz(self, tmp_path):
        # Regression (issue 10, defect 3): a notch above Nyquist was refused; the part of the
        # response below Nyquist is what the listener hears, so it is rendered (15.9 kHz notch at 16 kHz).
        take = self.write_take(tmp_path / "take.wav", rate=16000)
        args = ["--r1", "1k", "--r2", "1k", "--r3", "500", "--c1", "10n", "--c2", "10n", "--c3", "20n"]
        result = run("render", take, tmp_path / "o.wav", *args, "--json")
        assert result.exit_code == 0, result.output
        payload = json.loads(result.output)
        assert payload["fidelity_db"] <= 0.1 and payload["fidelity_met"] is True
        assert sorted(p.name for p in tmp_path.iterdir()) == ["o.wav", "take.wav"]


class TestPlots:
    """--plot writes a PNG wherever a picture helps (PNG signature per ISO/IEC 15948)."""

    @pytest.mark.slow
    def test_response_plot(self, tmp_path):
        result = run("response", *BALANCED, "--plot", tmp_path / "r.png")
        assert result.exit_code == 0, result.output
        assert (tmp_path / "r.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"

    def test_render_plot(self, tmp_path):
        take = TestRender().write_take(tmp_path / "take.wav")
        result = run("render", take, tmp_path / "o.wav", *BALANCED, "--plot", tmp_path / "s.png")
        assert result.exit_code == 0, result.output
        assert (tmp_path / "s.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


class TestDepthOption:
    @pytest.mark.parametrize("extra", [[], ["--depth-pot", "10k"]])
    def test_depth_sets_the_control(self, extra):
        # an exact null mixed with dry: gain at the notch = 20 log10(1 - mix), so 12 dB of cut needs
        # mix 0.749 (common practice)
        payload = json.loads(run("response", *BALANCED, "--depth", "12", *extra, "--json").output)
        assert payload["notch_gain_db"] == pytest.approx(-12.0, abs=0.01)
        assert payload["mix"] == pytest.approx(1 - 10 ** (-12 / 20), abs=1e-3)

    @pytest.mark.slow
    def test_depth_beyond_reach(self):
        args = ["--r1", "10k", "--r2", "10k", "--r3", "10k", "--c1", "10n", "--c2", "10n", "--c3", "10n"]
        assert_one_line_error(run("response", *args, "--depth", "20"), "20 dB of cut is deeper than this network")

    def test_mix_and_depth_together(self):
        assert_one_line_error(run("response", *BALANCED, "--depth", "6", "--mix", "0.5"), "not both")

    @pytest.mark.parametrize("value", ["-12", "0", "nan"])
    def test_regression_depth_is_positive_db_of_cut(self, value):
        # issue 11: one sign convention; a depth is positive dB of cut, never a negative gain
        assert_one_line_error(run("response", *BALANCED, "--depth", value), "allowed a positive number of dB of cut")


class TestFileSystemRefusals:
    def test_unforeseen_os_error_is_one_line(self, tmp_path):
        # regression: `emulate demo --out` under a path that cannot be created printed a traceback
        blocker = tmp_path / "file"
        blocker.write_text("x")
        result = run("demo", "--out", blocker / "inside", "--seconds", "1")
        assert_one_line_error(result, "inside")

    def test_huge_build_number(self, tmp_path):
        # regression: a draw number beyond 64 bits overflowed with a traceback
        take = TestRender().write_take(tmp_path / "take.wav")
        result = run("render", take, tmp_path / "o.wav", *BALANCED, "--build", "9" * 20)
        assert_one_line_error(result, "draw number")


class TestPrintable:
    """Regression: `preset show` printed terminal escape sequences from notes raw."""

    @pytest.mark.parametrize("text,shown", [("a\x1b[2Jb", "a?[2Jb"), ("bell\x07", "bell?"),
                                            ("two\nlines\tok", "two\nlines\tok"), ("c\x9bd", "c?d")])
    def test_control_characters_are_shown_as_question_marks(self, text, shown):
        from emulate.cli.options import printable

        assert printable(text) == shown

    def test_file_names_that_are_not_utf8_are_shown_escaped(self):
        from emulate.cli.options import printable

        assert printable("o" + b"\xff".decode("utf-8", "surrogateescape") + ".wav") == "o\\xff.wav"


class TestInterruptedLine:
    def test_nothing_kept(self):
        from emulate import files
        from emulate.cli.options import interrupted_line

        line = interrupted_line(KeyboardInterrupt(), len(files.kept_files()))
        assert line.startswith("interrupted; nothing was written")

    def test_names_the_signal_and_what_was_kept(self, tmp_path):
        from emulate import files, lifetime
        from emulate.cli.options import interrupted_line

        mark = len(files.kept_files())
        files.write_text(tmp_path / "done.txt", "x")
        line = interrupted_line(lifetime.Stopped("SIGTERM"), mark)
        assert line.startswith("stopped by SIGTERM; kept (complete): ") and "done.txt" in line


class TestRegressionRenderRefusesExistingOut:
    def test_existing_out_is_kept_without_force(self, tmp_path):
        take = TestRender().write_take(tmp_path / "take.wav")
        (tmp_path / "o.wav").write_bytes(b"earlier render")
        result = run("render", take, tmp_path / "o.wav", *BALANCED)
        assert_one_line_error(result, "already exists")
        assert (tmp_path / "o.wav").read_bytes() == b"earlier render"
        assert run("render", take, tmp_path / "o.wav", *BALANCED, "--force").exit_code == 0


class TestResponseJsonTable:
    def test_holds_the_table_and_the_parts(self):
        import json

        from click.testing import CliRunner

        from emulate.cli import main
        result = CliRunner().invoke(main, ["response", "--r1", "10k", "--r2", "10k", "--r3", "5k", "--c1", "10n",
                                           "--c2", "10n", "--c3", "20n", "--json"])
        payload = json.loads(result.output)
        assert payload["parts"]["R3"] == "5k" and payload["parts"]["C3"] == "20n"
        assert len(payload["table"]) == 13 and sum(row["notch"] for row in payload["table"]) == 1
        assert payload["exact_null"] is True

    def test_unknown_plot_suffix_is_one_line(self, tmp_path):
        from click.testing import CliRunner

        from emulate.cli import main
        result = CliRunner().invoke(main, ["response", "--r1", "10k", "--r2", "10k", "--r3", "5k", "--c1", "10n",
                                           "--c2", "10n", "--c3", "20n", "--plot", str(tmp_path / "r.jpg")])
        assert result.exit_code != 0 and ".png or .svg" in result.output and "Traceback" not in result.output


class TestDesignHum:
    def test_narrow_hum_miss_is_said_with_the_fix(self):
        # regression: design --notch 50 --q 20 built at 49.12 Hz, cut 50 Hz by about 5 dB, said nothing
        from click.testing import CliRunner

        from emulate.cli import main
        result = CliRunner().invoke(main, ["design", "--notch", "50", "--q", "20"])
        assert result.exit_code == 0, result.output
        assert "dB of cut at 50.00 Hz" in result.output
        assert "nearest fix" in result.output or "hum        cut at the hum frequency" in result.output

    def test_passive_quarter_q_designs(self):
        # regression: design --notch 1k --q 0.25 failed with "resistance 0.0"
        from click.testing import CliRunner

        from emulate.cli import main
        result = CliRunner().invoke(main, ["design", "--notch", "1k", "--q", "0.25"])
        assert result.exit_code == 0 and "passive (Q 0.25)" in result.output
