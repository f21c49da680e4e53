"""The speaker commands through click's CliRunner: sibilance, sweep, preset save|list|show|delete.

Takes are invented (:func:`emulate.voice.synth.voice_like_take`) and written into ``tmp_path``; the
sibilance is planted at a known frequency so the commands' answers can be checked.
"""

from __future__ import annotations

import json
import math
import shutil
from pathlib import Path

import pytest
from click.testing import CliRunner

import emulate
from emulate.audio import stream as audio
from emulate.work import presets
from emulate.voice import synth
from emulate.cli import main
from helpers_cli import assert_one_line_error

FS = 48000
PLANTED_HZ = 6000.0


def run(*args, env=None):
    return CliRunner().invoke(main, [str(a) for a in args], env=env)


def write_take(path, seconds=2.0, *, sibilance_hz=PLANTED_HZ, seed=1):
    x = synth.voice_like_take(FS, seconds, pitch_hz=120, sibilance_hz=sibilance_hz, seed=seed, channels=2)
    audio.write_array(path, x, FS, subtype="PCM_24")
    return path


@pytest.fixture(scope="module")
def takes(tmp_path_factory):
    folder = tmp_path_factory.mktemp("takes")
    return [write_take(folder / f"take{s}.wav", seed=s) for s in (1, 2)]


@pytest.fixture(scope="module")
def swept(tmp_path_factory, takes):
    """One sweep folder made by the command (3k / 6k / 12k), shared by the tests that read it."""
    out = tmp_path_factory.mktemp("sweep")
    result = run("sweep", *takes, "--at", "3k,6k,12k", "--out", out, "--workers", 1, "--json")
    assert result.exit_code == 0, result.output
    return out, json.loads(result.output)


PARTS = ("--r1", "10k", "--r2", "10k", "--r3", "5k", "--c1", "2n2", "--c2", "2n2", "--c3", "4n4")


def balanced_notch_hz(r_ohms: float, c_farads: float) -> float:
    """f0 = 1/(2 pi R C) of the balanced twin-T (Analog Devices MT-225)."""
    return 1.0 / (2.0 * math.pi * r_ohms * c_farads)


class TestSibilance:
    def test_text(self, takes):
        result = run("sibilance", *takes)
        assert result.exit_code == 0, result.output
        assert "sibilance per take" in result.output and "suggested notch" in result.output
        assert "all takes together" in result.output  # two takes pooled

    def test_json_suggests_the_planted_frequency(self, takes):
        result = run("sibilance", *takes, "--json")
        assert result.exit_code == 0, result.output
        payload = json.loads(result.output)
        # the suggestion is the geometric centre of the band holding 80 % of the sibilant energy;
        # the planted bell is symmetric in Hz around 6 kHz, so within 10 % of it
        assert payload["usable"]
        assert payload["suggested_notch_hz"] == pytest.approx(PLANTED_HZ, rel=0.10)
        assert [t["take"] for t in payload["takes"]] == [str(t) for t in takes]

    def test_band_option(self, takes):
        result = run("sibilance", takes[0], "--band", 4000, 9000, "--json")
        assert result.exit_code == 0, result.output
        lo, hi = json.loads(result.output)["band_hz"]
        assert 4000 <= lo < hi <= 9000

    def test_vowel_only_take_has_no_usable_sibilance(self, tmp_path):
        take = write_take(tmp_path / "vowels.wav", sibilance_hz=None)
        result = run("sibilance", take)
        assert result.exit_code == 0, result.output
        assert "/s/ none" in result.output and "no suggestion" in result.output
        payload = json.loads(run("sibilance", take, "--json").output)
        assert payload["usable"] is False and payload["suggested_notch_hz"] is None

    def test_not_audio(self, tmp_path):
        path = tmp_path / "notes.wav"
        path.write_text("not a sound\n")
        assert_one_line_error(run("sibilance", path), "not an audio file")

    def test_missing_file(self, tmp_path):
        assert_one_line_error(run("sibilance", tmp_path / "gone.wav"), "no such file")


class TestSweep:
    @pytest.mark.slow
    def test_json_end_to_end(self, swept, takes):
        out, payload = swept
        assert payload["plan"]["notches_hz"] == [3000.0, 6000.0, 12000.0]
        assert payload["plan"]["load_ohms"] is None  # no load: JSON null, not Infinity
        assert payload["pick"]["notch_target_hz"] == PLANTED_HZ and payload["pick"]["reason"]
        assert len(payload["jobs"]) == 6 and all((out / f"reel--{t.stem}.wav").is_file() for t in takes)
        assert (out / "summary.csv").is_file()
        assert json.loads((out / "summary.json").read_text())["pick"] == payload["pick"]

    @pytest.mark.slow
    def test_text_with_from_to(self, takes, tmp_path):
        result = run("sweep", takes[0], "--from", "4k", "--to", "8k", "--steps", 2, "--out", tmp_path,
                     "--workers", 1)
        assert result.exit_code == 0, result.output
        assert "swept 2 settings x 1 takes" in result.output and "<- pick" in result.output
        assert "notch4000Hz" in result.output and "notch8000Hz" in result.output

    @pytest.mark.parametrize("args, match", [
        (("--at", "4k,6k", "--from", "3k"), "either --at or --from"),
        (("--from", "3k"), "give --from and --to"),
        (("--at", "4k,4k"), "no two within 0.5 Hz"),
        (("--from", "3k", "--to", "9k", "--steps", 0), "sweep steps 0"),
    ])
    def test_bad_plans(self, takes, tmp_path, args, match):
        result = run("sweep", takes[0], "--out", tmp_path / "out", *args)
        assert result.exit_code != 0 and match in result.output and "Traceback" not in result.output
        assert not (tmp_path / "out").exists()


class TestPresetSave:
    def test_from_circuit_options(self, tmp_path):
        result = run("preset", "save", "host-a", "--speaker", "Host A (invented)", *PARTS, "--mix", 0.6,
                     "--presets", tmp_path)
        assert result.exit_code == 0, result.output
        saved = presets.PresetStore(tmp_path).load("host-a")
        assert saved.circuit["r1"] == "10k" and saved.circuit["c3"] == "4n4" and saved.mix == 0.6
        assert saved.target is None

    def test_from_notch_target(self, tmp_path):
        result = run("preset", "save", "host-b", "--speaker", "Host B", "--notch", "7.2k", "--q", 1,
                     "--presets", tmp_path)
        assert result.exit_code == 0, result.output
        saved = presets.PresetStore(tmp_path).load("host-b")
        assert saved.target == {"notch": "7.2k", "q": 1.0}
        values = saved.network()
        # as built from preferred values, the balanced formula lands near the target (MT-225);
        # 5 %: E24/E12 values are at most about 5 % apart
        assert balanced_notch_hz(values.r1, values.c1) == pytest.approx(7200, rel=0.05)
        assert 0 < values.bootstrap < 1  # Q 1 needs the active network

    @pytest.mark.slow
    def test_from_sweep(self, swept, tmp_path):
        out, payload = swept
        result = run("preset", "save", "host-c", "--speaker", "Host C", "--from-sweep", out,
                     "--presets", tmp_path)
        assert result.exit_code == 0, result.output
        saved = presets.PresetStore(tmp_path).load("host-c")
        assert float(saved.target["notch"]) == PLANTED_HZ
        assert "sweep pick" in saved.made_by and payload["pick"]["setting"] in saved.made_by
        shown = json.loads(run("preset", "show", "host-c", "--presets", tmp_path, "--json").output)
        assert shown["metrics"]["notch_hz"] == pytest.approx(payload["pick"]["notch_hz"], rel=1e-9)

    @pytest.mark.slow
    def test_from_a_q_sweep_keeps_the_picked_q(self, takes, tmp_path):
        out = tmp_path / "qsweep"
        swept = run("sweep", takes[0], "--at", "6k", "--q-steps", 2, "--q", 1, "--out", out, "--workers", 1, "--json")
        assert swept.exit_code == 0, swept.output
        pick = json.loads(swept.output)["pick"]
        result = run("preset", "save", "host-q", "--speaker", "Host Q", "--from-sweep", out, "--presets", tmp_path)
        assert result.exit_code == 0, result.output
        saved = presets.PresetStore(tmp_path).load("host-q")
        assert saved.target.get("q", 0.25) == pick["q"] and saved.mix == pick["mix"]
        network = saved.network()
        # the bootstrap holds the picked Q: Q = 1/(4(1-K)) (Analog Devices MT-225); passive when 0.25
        q = 0.25 if network.bootstrap is None else 1 / (4 * (1 - network.bootstrap))
        assert q == pytest.approx(pick["q"], rel=0.05)  # the divider from preferred values: within 5 %

    def test_from_a_folder_that_is_not_a_sweep(self, tmp_path):
        result = run("preset", "save", "x", "--speaker", "X", "--from-sweep", tmp_path, "--presets", tmp_path)
        assert_one_line_error(result, "not a sweep summary")

    @pytest.mark.parametrize("extra", [(), ("--notch", "6k", *PARTS)])
    def test_exactly_one_source(self, tmp_path, extra):
        result = run("preset", "save", "x", "--speaker", "X", "--presets", tmp_path, *extra)
        assert result.exit_code != 0 and "give exactly one of" in result.output

    def test_replacing_needs_force(self, tmp_path):
        args = ("preset", "save", "host", "--speaker", "Host", "--presets", tmp_path)
        assert run(*args, "--notch", "6k").exit_code == 0
        path = tmp_path / "host.toml"
        before = path.read_bytes()
        assert_one_line_error(run(*args, "--notch", "5k"), "already exists")
        assert path.read_bytes() == before
        assert run(*args, "--notch", "5k", "--force").exit_code == 0
        assert presets.PresetStore(tmp_path).load("host").target["notch"] == "5k"

    @pytest.mark.parametrize("name", ["../escape", "a/b", "..", ".hidden", "a\\b"])
    def test_bad_names(self, tmp_path, name):
        result = run("preset", "save", name, "--speaker", "X", "--notch", "6k", "--presets", tmp_path / "p")
        assert_one_line_error(result, "preset name")
        assert not (tmp_path / "p").exists() and not (tmp_path / "escape.toml").exists()


@pytest.fixture(scope="module")
def saved_store(tmp_path_factory):
    """A presets folder with two good presets (saved by the command) and one malformed file, made once."""
    folder = tmp_path_factory.mktemp("store") / "presets"
    for name, notch in (("anna", "5k"), ("ben", "7k")):
        result = run("preset", "save", name, "--speaker", name.title(), "--notch", notch, "--presets", folder)
        assert result.exit_code == 0, result.output
    (folder / "broken.toml").write_text('name = "broken"\nmix = "lots"\n')
    return folder


@pytest.fixture
def store(saved_store, tmp_path):
    """A fresh copy of the saved presets folder for each test (tests delete and replace presets)."""
    return Path(shutil.copytree(saved_store, tmp_path / "presets"))


class TestPresetList:
    def test_lists_good_presets_and_warns_of_a_bad_file(self, store):
        result = CliRunner().invoke(main, ["preset", "list", "--presets", str(store)])
        assert result.exit_code == 0, result.output
        assert "anna" in result.output and "ben" in result.output
        assert "warning:" in result.output and "broken.toml" in result.output

    def test_json(self, store):
        result = run("preset", "list", "--presets", store, "--json")
        payload = json.loads(result.output[result.output.index("{"):])
        assert [p["name"] for p in payload["presets"]] == ["anna", "ben"]
        assert len(payload["problems"]) == 1 and "broken.toml" in payload["problems"][0]

    def test_environment_variable_selects_the_folder(self, store, tmp_path, monkeypatch):
        monkeypatch.chdir(tmp_path)  # ./presets would be another folder
        result = run("preset", "list", env={presets.ENV_VAR: str(store)})
        assert result.exit_code == 0 and "anna" in result.output and str(store) in result.output

    def test_option_beats_the_environment_variable(self, store, tmp_path):
        result = run("preset", "list", "--presets", store, env={presets.ENV_VAR: str(tmp_path / "other")})
        assert "anna" in result.output

    def test_empty_folder(self, tmp_path):
        result = run("preset", "list", "--presets", tmp_path)
        assert result.exit_code == 0 and "no presets" in result.output


class TestPresetShow:
    def test_text_and_json(self, store):
        result = run("preset", "show", "anna", "--presets", store)
        assert result.exit_code == 0, result.output
        assert "preset 'anna'" in result.output and "notch" in result.output
        payload = json.loads(run("preset", "show", "anna", "--presets", store, "--json").output)
        # designed for 5 kHz from preferred values: within 5 % (E24/E12 spacing)
        assert payload["metrics"]["notch_hz"] == pytest.approx(5000, rel=0.05)

    def test_through_the_environment_variable(self, store):
        result = run("preset", "show", "ben", env={presets.ENV_VAR: str(store)})
        assert result.exit_code == 0 and "preset 'ben'" in result.output

    def test_malformed(self, store):
        assert_one_line_error(run("preset", "show", "broken", "--presets", store), "broken.toml")

    def test_missing(self, store):
        assert_one_line_error(run("preset", "show", "carl", "--presets", store), "no preset 'carl'")


class TestPresetDelete:
    def test_deletes(self, store):
        result = run("preset", "delete", "anna", "--presets", store)
        assert result.exit_code == 0 and not (store / "anna.toml").exists()
        assert (store / "ben.toml").exists()

    def test_missing_is_a_clear_error(self, store):
        assert_one_line_error(run("preset", "delete", "carl", "--presets", store), "no preset 'carl'")

    @pytest.mark.parametrize("name", ["../ben", "presets/ben"])
    def test_bad_name(self, store, name):
        assert_one_line_error(run("preset", "delete", name, "--presets", store), "preset name")
        assert (store / "ben.toml").exists()


class TestRenderWithPreset:
    def test_renders_through_a_saved_preset(self, tmp_path, takes):
        folder = tmp_path / "presets"
        assert run("preset", "save", "host", "--speaker", "Host", *PARTS, "--presets", folder).exit_code == 0
        out = tmp_path / "out.wav"
        result = run("render", takes[0], out, "--preset", "host", "--presets", folder, "--json")
        assert result.exit_code == 0, result.output
        payload = json.loads(result.output)
        assert payload["parts"]["r1"] == "10k" and audio.read_info(out).frames == audio.read_info(takes[0]).frames

    def test_through_the_environment_variable(self, tmp_path, takes):
        folder = tmp_path / "presets"
        assert run("preset", "save", "host", "--speaker", "Host", *PARTS, "--presets", folder).exit_code == 0
        result = run("render", takes[0], tmp_path / "out.wav", "--preset", "host",
                     env={presets.ENV_VAR: str(folder)})
        assert result.exit_code == 0, result.output

    @pytest.mark.parametrize("name, match", [("../host", "preset name"), ("nobody", "no preset 'nobody'")])
    def test_bad_or_missing_preset(self, tmp_path, takes, name, match):
        result = run("render", takes[0], tmp_path / "out.wav", "--preset", name, "--presets", tmp_path)
        assert_one_line_error(result, match)
        assert not (tmp_path / "out.wav").exists()


class TestSweepFromPreset:
    @pytest.mark.slow
    def test_holds_what_the_preset_holds(self, tmp_path):
        # the shipped active preset: K = 0.75 gives Q = 1/(4(1-K)) = 1 (Analog Devices MT-225)
        shipped = Path(emulate.__file__).resolve().parent.parent / "presets"
        take = tmp_path / "take.wav"
        audio.write_array(take, synth.voice_like_take(48000, 2.0, pitch_hz=210, sibilance_hz=7000, seed=3), 48000)
        result = CliRunner().invoke(main, ["sweep", str(take), "--at", "6k,7k", "--preset", "tamsin-active",
                                           "--presets", str(shipped), "--mix", "0.5",
                                           "--out", str(tmp_path / "out"), "--json"])
        assert result.exit_code == 0, result.output
        plan = json.loads(result.output)["plan"]
        assert plan["q"] == pytest.approx(1.0) and plan["mix"] == 0.5  # the option overrides the preset
        assert plan["source_ohms"] == 100.0 and plan["load_ohms"] == 10e3
