"""The finders' commands through click's CliRunner: sibilance, hum, resonance.

Takes are invented (:func:`emulate.voice.synth.voice_like_take`), with hum or a resonance
(R. Bristow-Johnson's cookbook peaking biquad, ``tests/resonance_grid.py``) planted at a
known frequency, written into ``tmp_path``. Checks: text and ``--json``, pooled takes,
``--plot`` (and its refusal to replace a picture without ``--force``), and bad input as one
line with a non-zero exit.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from click.testing import CliRunner
from scipy.signal import lfilter

from emulate.audio import stream as audio
from emulate.cli import main
from emulate.voice import synth
from resonance_grid import peaking_ba
from helpers_cli import assert_one_line_error

FS = 48000


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])



def _voice(seconds, seed):
    return synth.voice_like_take(FS, seconds, pitch_hz=150, sibilance_hz=6000, seed=seed)[:, 0]


def _hummed_take(folder, seed):
    """A 6-second take with 3 mV of 50.02 Hz hum, written as ``hum<seed>.wav`` in ``folder``."""
    path = folder / f"hum{seed}.wav"
    hum = 0.003 * np.sin(2 * np.pi * 50.02 * np.arange(6 * FS) / FS)
    audio.write_array(path, (_voice(6.0, seed) + hum)[:, None], FS, subtype="PCM_24")
    return path


@pytest.fixture(scope="module")
def takes(tmp_path_factory):
    # a second hummed take (hum2) only for the slow pooling check, which makes its own
    folder = tmp_path_factory.mktemp("takes")
    ringing = lfilter(*peaking_ba(1600.0, 15.0, 8.0, FS), _voice(8.0, 3))
    paths = {"ringing": ringing * 0.5, "clean": _voice(6.0, 4)}
    for name, x in paths.items():
        audio.write_array(folder / f"{name}.wav", x[:, None], FS, subtype="PCM_24")
    return {"hum1": _hummed_take(folder, 1), **{name: folder / f"{name}.wav" for name in paths}}


class TestSibilanceCommand:
    def test_json_per_take_and_pooled(self, takes):
        payload = json.loads(run("sibilance", takes["hum1"], takes["clean"], "--json").output)
        assert len(payload["takes"]) == 2 and payload["usable"]
        assert payload["peak_hz"] == pytest.approx(6000, rel=0.05)

    def test_plot(self, takes, tmp_path):
        picture = tmp_path / "sib.png"
        result = run("sibilance", takes["clean"], "--plot", picture)
        assert result.exit_code == 0 and picture.stat().st_size > 0
        assert_one_line_error(run("sibilance", takes["clean"], "--plot", picture), "already exists")
        assert run("sibilance", takes["clean"], "--plot", picture, "--force").exit_code == 0


class TestHumCommand:
    def test_text_names_the_frequency(self, takes):
        result = run("hum", takes["hum1"])
        assert result.exit_code == 0 and "50 Hz mains hum at 50.0" in result.output

    def test_json_with_designed_notches(self, takes):
        payload = json.loads(run("hum", takes["hum1"], "--json").output)
        take = payload["takes"][0]
        assert take["found"] and take["fundamental_hz"] == pytest.approx(50.02, abs=0.05)
        notch = take["notches"][0]
        assert notch["notch_hz"] == pytest.approx(50.02, abs=0.05) and "--r1" in notch["options"]

    @pytest.mark.slow  # a cheaper check of the same path runs by default (issue 8: the CPU budget)
    def test_pooled_over_takes_with_a_repeat(self, takes, tmp_path):
        payload = json.loads(run("hum", takes["hum1"], _hummed_take(tmp_path, 2), takes["hum1"], "--json").output)
        pooled = payload["pooled"]
        assert pooled["found"] and pooled["fundamental_hz"] == pytest.approx(50.02, abs=0.05)
        assert pooled["set_aside"] == [f"{takes['hum1']}: an exact repeat of an earlier take"]

    def test_clean_take(self, takes):
        result = run("hum", takes["clean"])
        assert result.exit_code == 0 and "no mains hum" in result.output

    @pytest.mark.slow  # a cheaper check of the same path runs by default (issue 8: the CPU budget)
    def test_plot(self, takes, tmp_path):
        picture = tmp_path / "hum.svg"
        assert run("hum", takes["hum1"], "--plot", picture).exit_code == 0 and picture.exists()

    def test_bad_mains_is_refused(self, takes):
        result = run("hum", takes["hum1"], "--mains", "55")
        assert result.exit_code == 2 and "55" in result.output and "Traceback" not in result.output


class TestResonanceCommand:
    def test_json_finds_the_planted_peak(self, takes):
        payload = json.loads(run("resonance", takes["ringing"], "--json").output)
        take = payload["takes"][0]
        assert take["found"] and take["peak"]["frequency_hz"] == pytest.approx(1600, rel=0.02)
        assert take["notches"][0]["notch_hz"] == pytest.approx(take["peak"]["frequency_hz"])
        assert 0 < take["peak"]["frequency_spread"] < 0.02 and 0 < take["peak"]["q_spread"] < 0.3
        assert take["takes_read"] == 1 and take["more_takes_to_aim"] >= 0

    @pytest.mark.slow  # a cheaper check of the same path runs by default (issue 8: the CPU budget)
    def test_text_and_pooled(self, takes):
        result = run("resonance", takes["ringing"], takes["clean"])
        assert result.exit_code == 0 and "resonance at 16" in result.output
        assert "pins it at best to +-" in result.output and "pooled over 2 takes" in result.output
        assert "enough to aim a notch within 2% in frequency and 30% in Q" in result.output
        assert "in 50% of the takes" in result.output  # found in one take of the two

    @pytest.mark.slow  # a cheaper check of the same path runs by default (issue 8: the CPU budget)
    def test_plot(self, takes, tmp_path):
        picture = tmp_path / "res.png"
        assert run("resonance", takes["ringing"], "--plot", picture).exit_code == 0 and picture.exists()


@pytest.mark.parametrize("command", ["sibilance", "hum", "resonance"])
class TestBadInput:
    def test_missing_file(self, command, tmp_path):
        assert_one_line_error(run(command, tmp_path / "gone.wav"), "no such file")

    def test_not_audio(self, command, tmp_path):
        path = tmp_path / "notes.wav"
        path.write_text("not audio")
        assert_one_line_error(run(command, path), "not an audio file")

    def test_plot_with_a_bad_suffix(self, command, takes, tmp_path):
        result = run(command, takes["clean"], "--plot", tmp_path / "p.gif")
        assert result.exit_code != 0 and "Traceback" not in result.output
        assert not (tmp_path / "p.gif").exists()


@pytest.mark.parametrize("command", ["hum", "resonance"])
def test_unknown_series_is_refused_before_any_take_is_read(command, tmp_path):
    # the take does not exist: the series is checked first, so its error is the one shown
    assert_one_line_error(run(command, tmp_path / "gone.wav", "--series", "E7"), "series 'E7': allowed E3")
