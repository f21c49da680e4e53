"""Tests for emulate.work.presets: the Preset record, its TOML form and the folder store."""

import dataclasses
import math
import os
import threading
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from emulate.analog import parts
from emulate.errors import EmulateWarning, PresetError
from emulate.work import presets as presets_module
from emulate.work.presets import (
    shipped_presets_dir,
    Preset,
    PresetStore,
    check_name,
    default_presets_dir,
    preset_from_toml,
    preset_to_toml,
)

SHIPPED = Path(__file__).resolve().parent.parent / "presets"
CIRCUIT = {"r1": "10k", "r2": "10k", "r3": "5k", "c1": "2n2", "c2": "2n2", "c3": "4n4"}
WHEN = "2026-11-20T18:30:00Z"
NAME_CHARS = "abcXYZ019-_."
names = st.text(NAME_CHARS, min_size=1, max_size=64).filter(lambda n: not n.startswith("."))
# Any text UTF-8 can hold (hypothesis leaves out lone surrogates by default).
odd_text = st.text(st.characters(blacklist_categories=("Cs",)), max_size=80)


def make(name="demo", **changes):
    fields = {"name": name, "speaker": "Test Speaker", "circuit": dict(CIRCUIT), "mix": 0.6,
              "created": WHEN, "made_by": "circuit options: test"}
    fields.update(changes)
    return Preset(**fields)


def write(folder, name, text):
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"{name}.toml"
    path.write_text(text, encoding="utf-8")
    return path


class TestDefaultPresetsDir:
    def test_environment_variable_wins(self, monkeypatch, tmp_path):
        monkeypatch.setenv("EMULATE_PRESETS_DIR", str(tmp_path / "mine"))
        assert default_presets_dir() == tmp_path / "mine"

    @pytest.mark.parametrize("value", [None, "", "  "])
    def test_else_the_per_user_data_folder(self, monkeypatch, tmp_path, value):
        # XDG Base Directory convention (common practice): $XDG_DATA_HOME/<app>/...
        if value is None:
            monkeypatch.delenv("EMULATE_PRESETS_DIR", raising=False)
        else:
            monkeypatch.setenv("EMULATE_PRESETS_DIR", value)
        monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "data"))
        monkeypatch.chdir(tmp_path)
        assert default_presets_dir() == tmp_path / "data" / "emulate" / "presets"

    def test_without_xdg_data_home_under_the_home_folder(self, monkeypatch, tmp_path):
        monkeypatch.delenv("EMULATE_PRESETS_DIR", raising=False)
        monkeypatch.delenv("XDG_DATA_HOME", raising=False)
        monkeypatch.setenv("HOME", str(tmp_path))
        assert default_presets_dir() == tmp_path / ".local" / "share" / "emulate" / "presets"

    def test_never_the_repository_presets_folder(self, monkeypatch):
        # regression: the README walk-through saved into the repository's shipped presets/
        monkeypatch.delenv("EMULATE_PRESETS_DIR", raising=False)
        monkeypatch.chdir(SHIPPED.parent)
        assert default_presets_dir().resolve() != SHIPPED.resolve()


class TestCheckName:
    @pytest.mark.parametrize("name", ["a", "x" * 64, "orrin-passive", "take.2", "_x", "-x", "A9"])
    def test_good_names(self, name):
        assert check_name(name) == name

    @pytest.mark.parametrize("name", ["", ".hidden", "..", "../x", "a/b", "a\\b", "x" * 65,
                                      "a b", "caf\u00e9", "a\x00", None, 7])
    def test_bad_names_show_the_rule(self, name):
        with pytest.raises(PresetError, match=r"preset name .*: use 1-64 characters of ASCII"):
            check_name(name)


class TestPreset:
    def test_normalises_what_it_keeps(self):
        p = make(target={"notch": " 7.2k ", "series": "e24"}, mix=1,
                 created="2026-11-20T19:30:00+01:00", circuit={**CIRCUIT, "source": 600})
        assert p.target == {"notch": "7.2k", "series": "E24"}
        assert p.circuit["source"] == "600" and p.mix == 1.0 and isinstance(p.mix, float)
        assert p.created == WHEN  # ISO 8601, converted to UTC

    def test_network_is_what_the_circuit_says(self):
        p = make(circuit={**CIRCUIT, "source": "100", "bootstrap": 0.75})
        net = p.network()
        assert net.c3 == pytest.approx(4.4e-9, rel=1e-12)
        assert net.source_ohms == 100.0 and net.bootstrap == 0.75 and net.mix == p.mix
        # Balanced twin-T null f0 = 1/(2 pi R C), Analog Devices MT-225; 1e-9
        # relative allows for the nodal solver's rounding only.
        assert net.null_hz() == pytest.approx(1 / (2 * math.pi * 10e3 * 2.2e-9), rel=1e-9)

    def test_target_is_kept_as_written_and_designs(self):
        p = make(circuit=None, target={"notch": "6.3k", "q": 2, "impedance": "4k7", "capacitor": "10n"})
        assert p.target == {"notch": "6.3k", "q": 2.0, "impedance": "4k7", "capacitor": "10n"}
        assert p.circuit is None
        assert p.network().bootstrap == pytest.approx(1 - 1 / (4 * 2.0), abs=0.02)  # K = 1 - 1/(4Q), MT-225

    @pytest.mark.parametrize("changes,match", [
        ({"mix": 1.5}, r"field 'mix': value 1.5: allowed \[0, 1\]"),
        ({"mix": -0.1}, r"field 'mix': value -0.1: allowed"),
        ({"mix": "0.8"}, r"field 'mix': '0.8' is not a number"),
        ({"mix": True}, r"field 'mix': True is not a number"),
        ({"circuit": {**CIRCUIT, "bootstrap": 1.0}},
         r"field 'circuit.bootstrap': 1.0: allowed \[0, 1\)"),
        ({"circuit": {**CIRCUIT, "bootstrap": -0.1}}, r"field 'circuit.bootstrap'"),
        ({"circuit": {**CIRCUIT, "r1": "10nF"}},
         r"field 'circuit.r1': resistance '10nF': unit 'F' is for capacitance"),
        ({"circuit": {**CIRCUIT, "c1": "4k7"}}, r"field 'circuit.c1': capacitance '4k7': 4700 F"),
        ({"circuit": {**CIRCUIT, "c1": None}}, r"field 'circuit': missing C1"),
        ({"circuit": {**CIRCUIT, "r4": "1k"}}, r"field 'circuit.r4': unknown key; allowed r1"),
        ({"circuit": {k: v for k, v in CIRCUIT.items() if k != "r3"}},
         r"field 'circuit': missing R3; give all of R1, R2, R3"),
        ({"circuit": "10k"}, r"field 'circuit': '10k' is not a table"),
        ({"target": {"q": 1.0}}, r"field 'target': missing notch"),
        ({"target": {"notch": "5k", "q": 0.2}}, r"field 'target.q': 0.2: allowed \[0.25, 20\]"),
        ({"target": {"notch": "5k", "q": 21}}, r"field 'target.q'"),
        ({"target": {"notch": "0.5"}}, r"field 'target.notch': 0.5: allowed \[1, 100000\]"),
        ({"target": {"notch": "5x"}}, r"field 'target.notch': value '5x': not a value"),
        ({"target": {"notch": "5k", "series": "E7"}}, r"field 'target.series': series 'E7'"),
        ({"target": {"notch": "5k", "width": 3}}, r"field 'target.width': unknown key"),
        ({"circuit": None}, r"needs a \[circuit\] table, a \[target\] table or both"),
        ({"speaker": " "}, r"field 'speaker': is empty"),
        ({"speaker": 3}, r"field 'speaker': 3 is not text"),
        ({"notes": "a\ud800"}, r"field 'notes': .* cannot be stored as UTF-8"),
        ({"made_by": ""}, r"field 'made.how': is empty"),
        ({"created": "2026-11-20T18:30:00"}, r"field 'made.when': .* needs a date, time and zone"),
        ({"created": "yesterday"}, r"field 'made.when': 'yesterday' is not an ISO 8601 time"),
        ({"schema_version": 2}, r"field 'schema_version': 2 is newer than this emulate reads \(1\)"),
        ({"schema_version": "1"}, r"field 'schema_version': '1' is not a version"),
        ({"name": "../x"}, r"preset name '../x'"),
    ])
    def test_every_field_is_checked(self, changes, match):
        with pytest.raises(PresetError, match=match):
            make(**changes)


class TestPresetToToml:
    def test_has_a_comment_header_and_readable_tables(self):
        text = preset_to_toml(make(notes="two\nlines", target={"notch": "7.2k"}))
        assert text.startswith("# emulate preset")
        for line in ('name = "demo"', "mix = 0.6", "[made]", "[circuit]", 'r1 = "10k"',
                     "[target]", 'notch = "7.2k"', "two\nlines"):
            assert line in text

    @given(notes=odd_text, speaker=odd_text.filter(str.strip), how=odd_text.filter(str.strip))
    @settings(max_examples=150, deadline=None)
    def test_round_trip_with_odd_characters(self, notes, speaker, how):
        p = make(notes=notes, speaker=speaker, made_by=how, target={"notch": "5k", "q": 0.7})
        assert preset_from_toml(preset_to_toml(p)) == p


class TestPresetFromToml:
    GOOD = preset_to_toml(make())

    @pytest.mark.parametrize("text,match", [
        ("mix = = 1", r"not valid TOML"),
        (GOOD.replace('notes = ""', "notes = ''\ncolour = 'red'"),
         r"field 'colour': unknown key; allowed schema_version"),
        (GOOD.replace("mix = 0.6", 'mix = "0.6"'), r"field 'mix': '0.6' is not a number"),
        (GOOD.replace("mix = 0.6", "mix = 1.5"), r"field 'mix': value 1.5: allowed \[0, 1\]"),
        (GOOD.replace('name = "demo"', ""), r"field 'name': missing"),
        (GOOD.replace('name = "demo"', 'name = "a/b"'), r"field 'name': preset name 'a/b'"),
        (GOOD.replace("schema_version = 1", "schema_version = 9"), r"9 is newer"),
        (GOOD.replace("\n[made]\n", "\n[made]\nby = 'x'\n"), r"field 'made.by': unknown key"),
        (GOOD.replace("when = 2026-11-20 18:30:00+00:00", "when = 1"),
         r"field 'made.when': 1 needs a date, time and zone"),
        (GOOD.replace("when = 2026-11-20 18:30:00+00:00", "when = 2026-11-20"),
         r"field 'made.when': datetime.date\(2026, 11, 20\) needs a date, time and zone"),
        (GOOD.replace("when = 2026-11-20 18:30:00+00:00", ""), r"field 'made.when': missing"),
        (GOOD.replace("\n[made]\n", "\n[madeup]\n"), r"field 'madeup': unknown key"),
        (GOOD.replace('r1 = "10k"', "r1 = 4x7"), r"not valid TOML"),
        (GOOD.replace('r1 = "10k"', 'r1 = "4x7"'), r"field 'circuit.r1': resistance '4x7'"),
        (GOOD.replace('r1 = "10k"', "r1 = 10000"), None),  # a bare number is fine
    ])
    def test_malformed_text(self, text, match):
        if match is None:
            assert preset_from_toml(text).circuit["r1"] == "10000"
            return
        with pytest.raises(PresetError, match=match):
            preset_from_toml(text)


class TestPresetStoreSave:
    def test_creates_the_folder_and_round_trips(self, tmp_path):
        store = PresetStore(tmp_path / "a" / "b")
        p = make(target={"notch": "7.2k", "q": 1.0})
        assert store.save(p) == tmp_path / "a" / "b" / "demo.toml"
        assert store.load("demo") == p

    @given(name=names, notes=odd_text)
    @settings(max_examples=60, deadline=None,
              suppress_health_check=[HealthCheck.function_scoped_fixture])
    def test_round_trip_any_allowed_name_and_notes(self, tmp_path, name, notes):
        store = PresetStore(tmp_path)
        p = make(name=name, notes=notes)
        store.save(p, force=True)
        assert store.load(name) == p
        assert name in store.names()

    def test_existing_preset_needs_force(self, tmp_path):
        store = PresetStore(tmp_path)
        path = store.save(make(mix=0.5))
        before = path.read_text(encoding="utf-8")
        with pytest.raises(PresetError, match=r"preset 'demo' already exists .*save with force"):
            store.save(make(mix=0.9))
        assert path.read_text(encoding="utf-8") == before
        store.save(make(mix=0.9), force=True)
        assert store.load("demo").mix == 0.9

    def test_leaves_no_temporary_files(self, tmp_path):
        store = PresetStore(tmp_path)
        for i in range(3):
            store.save(make(mix=i / 4), force=True)
        assert sorted(os.listdir(tmp_path)) == ["demo.toml"]

    def test_failed_write_keeps_the_old_file_and_no_temporary(self, tmp_path, monkeypatch):
        store = PresetStore(tmp_path)
        path = store.save(make(mix=0.5))

        def refuse(*_args):
            raise OSError("disk full")
        monkeypatch.setattr(os, "replace", refuse)
        with pytest.raises(PresetError, match=r"demo.toml: cannot be written: disk full"):
            store.save(make(mix=0.9), force=True)
        assert sorted(os.listdir(tmp_path)) == ["demo.toml"]
        assert preset_from_toml(path.read_text(encoding="utf-8")).mix == 0.5


class TestPresetStoreLoad:
    def test_missing_preset_lists_what_there_is(self, tmp_path):
        store = PresetStore(tmp_path)
        store.save(make("alpha"))
        store.save(make("beta"))
        with pytest.raises(PresetError, match=r"no preset 'ghost' in .* \(have: alpha, beta\)"):
            store.load("ghost")

    @pytest.mark.parametrize("text,match", [
        ("mix = = 1", r"bad\.toml: not valid TOML"),
        (preset_to_toml(make("bad")).replace("mix = 0.6", "mix = 1.5"),
         r"bad\.toml: field 'mix': value 1.5: allowed \[0, 1\]"),
        (preset_to_toml(make("bad")).replace("mix = 0.6", "mix = [1]"),
         r"bad\.toml: field 'mix': \[1\] is not a number"),
        (preset_to_toml(make("bad")) + "extra = 1\n", r"bad\.toml: field 'circuit.extra': unknown"),
        (preset_to_toml(make("other")), r"bad\.toml: field 'name': 'other' does not match"),
    ])
    def test_malformed_file_names_file_and_field(self, tmp_path, text, match):
        write(tmp_path, "bad", text)
        with pytest.raises(PresetError, match=match):
            PresetStore(tmp_path).load("bad")

    def test_not_utf8(self, tmp_path):
        (tmp_path / "bad.toml").write_bytes(b"name = '\xff'\n")
        with pytest.raises(PresetError, match=r"bad\.toml: cannot be read"):
            PresetStore(tmp_path).load("bad")

    @pytest.mark.parametrize("name", ["../x", "a/b", ".hidden"])
    def test_bad_name(self, tmp_path, name):
        with pytest.raises(PresetError, match=r"preset name .*: use 1-64"):
            PresetStore(tmp_path).load(name)


class TestPresetStoreListAll:
    def test_bad_files_are_reported_and_the_rest_still_list(self, tmp_path):
        store = PresetStore(tmp_path)
        store.save(make("good-1"))
        store.save(make("good-2"))
        write(tmp_path, "broken", "mix = = 1")
        write(tmp_path, "range", preset_to_toml(make("range")).replace("mix = 0.6", "mix = 2"))
        write(tmp_path, "bad name", preset_to_toml(make("good-3")))
        (tmp_path / "readme.txt").write_text("not a preset")
        presets, problems = store.list_all()
        assert [p.name for p in presets] == ["good-1", "good-2"]
        messages = {path.name: message for path, message in problems}
        assert set(messages) == {"broken.toml", "range.toml", "bad name.toml"}
        assert "not valid TOML" in messages["broken.toml"]
        assert "field 'mix'" in messages["range.toml"]
        assert "preset name 'bad name'" in messages["bad name.toml"]

    def test_missing_folder_is_empty(self, tmp_path):
        assert PresetStore(tmp_path / "none").list_all() == ([], [])


class TestPresetStoreList:
    def test_warns_for_each_bad_file(self, tmp_path):
        store = PresetStore(tmp_path)
        store.save(make("good"))
        write(tmp_path, "broken", "mix = = 1")
        with pytest.warns(EmulateWarning, match=r"broken\.toml: not valid TOML"):
            assert [p.name for p in store.list()] == ["good"]


class TestPresetStoreNames:
    def test_sorted_well_named_files_only(self, tmp_path):
        store = PresetStore(tmp_path)
        for name in ("b", "a", "c.2"):
            store.save(make(name))
        write(tmp_path, "bad name", "")
        write(tmp_path, ".hidden", "")
        assert store.names() == ["a", "b", "c.2"]


class TestPresetStoreExists:
    def test_exists(self, tmp_path):
        store = PresetStore(tmp_path)
        store.save(make())
        assert store.exists("demo") and not store.exists("other")
        with pytest.raises(PresetError, match=r"preset name '\.\./demo'"):
            store.exists("../demo")


class TestPresetStoreDelete:
    def test_delete_then_gone(self, tmp_path):
        store = PresetStore(tmp_path)
        store.save(make())
        store.delete("demo")
        assert store.names() == [] and not store.exists("demo")

    def test_deleting_a_missing_preset_is_an_error(self, tmp_path):
        with pytest.raises(PresetError, match=r"no preset 'ghost' in .* to delete"):
            PresetStore(tmp_path).delete("ghost")


class TestShippedPresets:
    """The example presets in the repository's presets/ folder."""

    def test_all_load_without_problems(self):
        presets, problems = PresetStore(SHIPPED).list_all()
        assert problems == []
        # a user following the README saves presets beside the shipped ones: those may be there too
        assert {p.name for p in presets} >= {"orrin-passive", "tamsin-active", "tamsin-target"}

    @pytest.mark.parametrize("name,band_hz", [("orrin-passive", (4.5e3, 5e3)),
                                              ("tamsin-active", (7e3, 7.5e3))])
    def test_circuits_are_balanced_preferred_parts_in_their_band(self, name, band_hz):
        c = PresetStore(SHIPPED).load(name).network()
        r, cap = c.r1, c.c1
        # Balanced twin-T: R1 = R2 = R, R3 = R/2, C1 = C2 = C, C3 = 2C and
        # f0 = 1/(2 pi R C) (Analog Devices MT-225). 1e-12: exact decimal values.
        assert c.r2 == r and c.c2 == cap
        assert c.r3 == pytest.approx(r / 2, rel=1e-12)
        assert c.c3 == pytest.approx(2 * cap, rel=1e-12)
        assert band_hz[0] <= 1 / (2 * math.pi * r * cap) <= band_hz[1]
        # R and C are IEC 60063 E12 values (so also E24).
        assert parts.neighbours(r, "E12") == (r, r)
        assert parts.neighbours(cap, "E12") == (cap, cap)

    def test_active_bootstrap_gives_a_sensible_q(self):
        k = PresetStore(SHIPPED).load("tamsin-active").network().bootstrap
        # Bootstrapped twin-T: Q = 1/(4(1-K)) (Analog Devices MT-225).
        assert 1 / (4 * (1 - k)) == pytest.approx(1.0)

    def test_files_are_as_the_store_writes_them(self):
        # Hand edits are welcome, but the shipped examples stay in the written layout.
        store = PresetStore(SHIPPED)
        for name in store.names():
            text = store.path(name).read_text(encoding="utf-8")
            assert text == preset_to_toml(store.load(name)), name

    def test_save_load_of_a_shipped_preset_is_lossless(self, tmp_path):
        p = PresetStore(SHIPPED).load("tamsin-target")
        PresetStore(tmp_path).save(dataclasses.replace(p, mix=0.5))
        assert PresetStore(tmp_path).load("tamsin-target") == dataclasses.replace(p, mix=0.5)


class TestShippedAsPackageData:
    """The presets a normal install ships (emulate/data/presets) are the repository's presets/."""

    def test_package_data_matches_the_repository_source(self):
        source = {p.name: p.read_bytes() for p in SHIPPED.glob("*.toml")}
        shipped = {p.name: p.read_bytes() for p in shipped_presets_dir().glob("*.toml")}
        assert shipped == source, "copy presets/*.toml to emulate/data/presets/"

    def test_seen_under_the_users_own_by_default(self, tmp_path, monkeypatch):
        monkeypatch.setenv("EMULATE_PRESETS_DIR", str(tmp_path / "mine"))
        store = PresetStore()
        assert store.load("orrin-passive").name == "orrin-passive" and store.is_shipped("orrin-passive")
        own = dataclasses.replace(store.load("orrin-passive"), speaker="my own copy")
        store.save(own)  # a user preset of the same name takes precedence
        assert store.load("orrin-passive").speaker == "my own copy" and not store.is_shipped("orrin-passive")

    def test_not_seen_in_an_explicit_folder(self, tmp_path):
        assert PresetStore(tmp_path).names() == []

    def test_cannot_be_deleted(self, tmp_path, monkeypatch):
        monkeypatch.setenv("EMULATE_PRESETS_DIR", str(tmp_path / "mine"))
        with pytest.raises(PresetError, match="ships with emulate"):
            PresetStore().delete("orrin-passive")
        assert (shipped_presets_dir() / "orrin-passive.toml").is_file()


class TestRegressionParallelSaves:
    """Two `preset save NAME` at once without --force: one saves, the other is refused."""

    def test_regression_parallel_saves_cannot_both_succeed(self, tmp_path):
        store = PresetStore(tmp_path)
        barrier = threading.Barrier(8)
        outcomes = []

        def save(number):
            barrier.wait()
            try:
                store.save(make("race", speaker=f"writer {number}"))
                outcomes.append(("saved", number))
            except PresetError as exc:
                outcomes.append(("refused", str(exc)))

        threads = [threading.Thread(target=save, args=(n,)) for n in range(8)]
        for thread in threads:
            thread.start()
        for thread in threads:
            thread.join()
        saved = [number for what, number in outcomes if what == "saved"]
        assert len(saved) == 1 and len(outcomes) == 8
        assert store.load("race").speaker == f"writer {saved[0]}"
        assert sorted(p.name for p in tmp_path.iterdir()) == ["race.toml"]

    def test_a_file_appearing_after_the_check_is_not_replaced(self, tmp_path, monkeypatch):
        store = PresetStore(tmp_path)
        (tmp_path / "race.toml").write_text("the other writer's")
        monkeypatch.setattr(presets_module.os.path, "lexists", lambda _path: False)  # the check saw nothing
        with pytest.raises(PresetError, match="already exists"):
            store.save(make("race"))
        assert (tmp_path / "race.toml").read_text() == "the other writer's"


class TestCheckFolder:
    def test_regression_presets_folder_that_is_a_file_says_so(self, tmp_path):
        (tmp_path / "f").write_text("")
        with pytest.raises(PresetError, match="not a folder"):
            PresetStore(tmp_path / "f").check_folder()

    def test_regression_missing_presets_folder_says_so(self, tmp_path, monkeypatch):
        with pytest.raises(PresetError, match="does not exist"):
            PresetStore(tmp_path / "none").check_folder()
        monkeypatch.setenv("EMULATE_PRESETS_DIR", str(tmp_path / "none"))
        assert "does not exist yet" in PresetStore().check_folder()
