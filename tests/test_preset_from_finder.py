"""``preset save NAME --speaker S --from-finder TAKES...``: the sibilance finder's suggestion saved as a preset.

Reference: the takes are invented (emulate.voice.synth) with their sibilance centred at a known
frequency, so the saved notch must land near it; the circuit must be the one ``preset save
--notch`` designs for the same target (the one design path).
"""

from __future__ import annotations

import numpy as np
import pytest
import soundfile as sf
from click.testing import CliRunner

from emulate.cli import main
from emulate.work.presets import PresetStore

from helpers_lean import shared_voice_take

FS = 48000


@pytest.fixture
def takes(tmp_path):
    paths = []
    for seed in (1, 2):
        x = shared_voice_take(FS, 3.0, pitch_hz=120.0, sibilance_hz=6000.0, seed=seed)
        sf.write(tmp_path / f"t{seed}.wav", x, FS, subtype="PCM_16")
        paths.append(str(tmp_path / f"t{seed}.wav"))
    sf.write(tmp_path / "silent.wav", np.zeros(FS), FS, subtype="PCM_16")
    return paths


def save(tmp_path, *args):
    return CliRunner().invoke(main, ["preset", "save", *args, "--presets", str(tmp_path / "presets")])


class TestFromFinder:
    def test_saves_the_suggested_notch(self, tmp_path, takes):
        result = save(tmp_path, "host", "--speaker", "A host", "--from-finder", *takes)
        assert result.exit_code == 0, result.output
        preset = PresetStore(tmp_path / "presets").load("host")
        # the invented takes' sibilance is centred at 6 kHz (synth.voice_like_take); the finder's
        # peak lies within 5 % of it (its own doctest allows 5.7-6.3 kHz)
        assert float(preset.target["notch"]) == pytest.approx(6000.0, rel=0.05)
        assert "sibilance finder over 2 take(s)" in preset.made_by and 0.0 < preset.mix < 1.0

    def test_the_circuit_is_what_a_notch_target_designs(self, tmp_path, takes):
        assert save(tmp_path, "found", "--speaker", "A", "--from-finder", *takes).exit_code == 0
        found = PresetStore(tmp_path / "presets").load("found")
        options = ["--notch", found.target["notch"]] + (["--q", str(found.target["q"])] if "q" in found.target else [])
        assert save(tmp_path, "typed", "--speaker", "A", *options).exit_code == 0
        assert PresetStore(tmp_path / "presets").load("typed").circuit == found.circuit

    def test_refuses_when_nothing_is_usable(self, tmp_path, takes):
        result = save(tmp_path, "host", "--speaker", "A", "--from-finder", str(tmp_path / "silent.wav"))
        assert result.exit_code == 1 and "found nothing usable" in result.output
        assert len(result.output.strip().splitlines()) == 1
        assert not (tmp_path / "presets").exists()

    @pytest.mark.slow  # a cheaper check of the same path runs by default (issue 8: the CPU budget)
    def test_never_overwrites_without_force(self, tmp_path, takes):
        assert save(tmp_path, "host", "--speaker", "A", "--notch", "5k").exit_code == 0
        before = (tmp_path / "presets" / "host.toml").read_bytes()
        result = save(tmp_path, "host", "--speaker", "A", "--from-finder", *takes)
        assert result.exit_code == 1 and "already exists" in result.output
        assert (tmp_path / "presets" / "host.toml").read_bytes() == before
        assert save(tmp_path, "host", "--speaker", "A", "--from-finder", *takes, "--force").exit_code == 0
        assert (tmp_path / "presets" / "host.toml").read_bytes() != before

    @pytest.mark.parametrize("args,match", [(["--from-finder"], "needs one or more takes"),
                                            (["--notch", "5k", "x.wav"], "with --from-finder only"),
                                            (["--from-finder", "x.wav", "--notch", "5k"], "exactly one")])
    def test_usage(self, tmp_path, args, match):
        result = save(tmp_path, "host", "--speaker", "A", *args)
        assert result.exit_code == 2 and match in result.output
