"""Tests of the sweep: notch steps, renders, reels, summary and pick (emulate.work.sweep).

Takes are invented by :func:`emulate.voice.synth.voice_like_take` and written into ``tmp_path``
by :func:`emulate.audio.stream.write_array`; 2-3 s each, so a sweep of 2 takes x 3 settings
takes about a second.
"""

from __future__ import annotations

import csv
import io
import json
import math
from pathlib import Path

import numpy as np
import pytest

from emulate.audio import stream as audio
from emulate.voice import bands, sibilance, synth
from emulate.work import reels, sweep
from emulate.errors import BadValueError

FS = 48000
PLANTED_HZ = 6000.0
# Settings an octave apart around the planted sibilance (3k / 6k / 12k).
SETTINGS_HZ = (3000.0, 6000.0, 12000.0)
MEASURES = ("sibilance_reduction_db", "loudness_change_db", "intelligibility_cost", "relative_reduction_db")


def write_take(path, seconds, *, sibilance_hz=PLANTED_HZ, seed=1, channels=2, pitch_hz=120.0,
               subtype="PCM_24"):
    """An invented voice-like take written as a file; returns its path."""
    x = synth.voice_like_take(FS, seconds, pitch_hz=pitch_hz, sibilance_hz=sibilance_hz, seed=seed,
                              channels=channels)
    audio.write_array(path, x, FS, subtype=subtype)
    return path


@pytest.fixture(scope="module")
def swept(tmp_path_factory):
    """Two takes (2.0 s stereo 24-bit, 2.5 s mono 16-bit) swept over 3k / 6k / 12k."""
    folder = tmp_path_factory.mktemp("sweep")
    takes = [write_take(folder / "orrin.wav", 2.0, seed=1),
             write_take(folder / "tamsin.wav", 2.5, seed=2, channels=1, pitch_hz=210.0, subtype="PCM_16")]
    plan = sweep.SweepPlan(notches_hz=SETTINGS_HZ)
    result = sweep.run_sweep(takes, plan, folder / "out", workers=1)
    return takes, plan, result, folder / "out"


class TestNotchSteps:
    def test_geometric_with_both_ends(self):
        # A geometric series: every ratio equal to (to/from)**(1/(steps-1)) (definition).
        steps = sweep.notch_steps(3000, 12000, 5)
        assert steps[0] == 3000 and steps[-1] == pytest.approx(12000, rel=1e-12)
        np.testing.assert_allclose(np.diff(np.log(steps)), math.log(4) / 4, rtol=1e-12)

    def test_matches_numpy_geomspace(self):
        # numpy.geomspace is the general-purpose reference for equal ratios.
        assert sweep.notch_steps(4000, 8000, 7) == pytest.approx(tuple(np.geomspace(4000, 8000, 7)))

    def test_one_step_is_the_start(self):
        assert sweep.notch_steps(5000, 9000, 1) == (5000.0,)

    @pytest.mark.parametrize("from_hz, to_hz, steps, match", [
        (3000, 12000, 0, "sweep steps 0: allowed a whole number from 1 to 64"),
        (3000, 12000, 65, r"sweep steps 65"),
        (3000, 12000, 2.5, r"sweep steps 2.5: allowed a whole number"),
        (3000, 12000, True, r"sweep steps True"),
        (3000, 12000, float("nan"), r"sweep steps nan"),
        (10, 12000, 3, r"sweep start \(Hz\) 10: allowed \[20, 30000\]"),
        (3000, 40000, 3, r"sweep end \(Hz\) 40000"),
        (float("nan"), 12000, 3, r"sweep start \(Hz\) nan"),
    ])
    def test_bad_values(self, from_hz, to_hz, steps, match):
        with pytest.raises(BadValueError, match=match):
            sweep.notch_steps(from_hz, to_hz, steps)


class TestSweepPlan:
    @pytest.mark.parametrize("notches", [(), (4000.0, 4000.0), (4000.0, 4000.2)])
    def test_settings_must_be_distinct(self, notches):
        # each setting names its render files, so two at the same rounded frequency would clash
        with pytest.raises(BadValueError, match="no two within 0.5 Hz"):
            sweep.SweepPlan(notches_hz=notches)

    def test_dict_round_trip_without_a_load(self):
        plan = sweep.SweepPlan(notches_hz=(4000.0, 8000.0), q=1.0, mix=0.7)
        table = sweep.SweepResult(plan, [], [], {}).as_dict()["plan"]
        assert table["load_ohms"] is None  # JSON has no infinity
        assert sweep.SweepPlan.from_dict(json.loads(json.dumps(table))) == plan


class TestRunSweep:
    def test_every_render_says_its_setting_and_keeps_the_take_format(self, swept):
        takes, plan, result, out = swept
        assert len(result.jobs) == len(takes) * len(SETTINGS_HZ)
        for take in takes:
            info = audio.read_info(take)
            for target in SETTINGS_HZ:
                path = out / f"{take.stem}--{sweep.setting_label(target, plan)}.wav"
                assert f"notch{target:.0f}Hz" in path.name and "q0.25" in path.name and "mix1.00" in path.name
                rendered = audio.read_info(path)
                assert (rendered.frames, rendered.samplerate, rendered.channels, rendered.subtype) == \
                    (info.frames, info.samplerate, info.channels, info.subtype)
        assert sorted(job.path for job in result.jobs) == sorted(str(p) for p in out.glob("*--notch*.wav"))

    def test_one_reel_per_take_of_the_documented_length(self, swept):
        # Takes shorter than the excerpt (3 s) are heard whole: reel = take x (settings + 1) + gaps.
        takes, _, result, _ = swept
        assert set(result.reels) == {str(t) for t in takes}
        for take in takes:
            info = audio.read_info(take)
            gap = int(reels.REEL_GAP_S * FS)
            reel = audio.read_info(result.reels[str(take)].path)
            assert reel.frames == info.frames * (len(SETTINGS_HZ) + 1) + gap * len(SETTINGS_HZ)
            assert (reel.channels, reel.subtype) == (info.channels, info.subtype)

    def test_reel_is_dry_then_each_setting_in_order(self, tmp_path, monkeypatch):
        monkeypatch.setattr(reels, "REEL_EXCERPT_S", 1.0)  # shorter than the take: a real excerpt
        take = write_take(tmp_path / "host.wav", 2.5, subtype="FLOAT")  # float: samples compare exactly
        plan = sweep.SweepPlan(notches_hz=(8000.0, 4000.0))  # heard in rising order, not plan order
        result = sweep.run_sweep([take], plan, tmp_path / "out", workers=1, match=False)
        reel, _ = audio.read_all(result.reels[str(take)].path)
        dry, _ = audio.read_all(take)
        n, gap = FS, int(reels.REEL_GAP_S * FS)
        assert len(reel) == 3 * n + 2 * gap
        start, stop = sibilance.most_sibilant_excerpt(dry, FS, seconds=1.0)
        np.testing.assert_array_equal(reel[:n], dry[start:stop])
        for i, target in enumerate(sorted(plan.notches_hz)):
            wet, _ = audio.read_all(tmp_path / "out" / f"host--{sweep.setting_label(target, plan)}.wav")
            piece = reel[n + i * (gap + n):n + (i + 1) * (gap + n)]
            assert not piece[:gap].any()
            np.testing.assert_array_equal(piece[gap:], wet[start:stop])

    def test_summary_rows_hold_the_measures(self, swept, tmp_path):
        _, plan, result, _ = swept
        csv_path, json_path = sweep.write_summary(result, tmp_path)
        rows = list(csv.DictReader(io.StringIO(csv_path.read_text())))
        document = json.loads(json_path.read_text())  # strict JSON: no NaN/Infinity
        for table in (rows, document["rows"]):
            assert [float(r["notch_target_hz"]) for r in table] == list(SETTINGS_HZ)
            for row in table:
                assert all(math.isfinite(float(row[m])) for m in MEASURES)
        for row in result.rows:
            # relative reduction is defined as sibilance-band reduction plus loudness change (module doc)
            assert row["relative_reduction_db"] == pytest.approx(
                row["sibilance_reduction_db"] + row["loudness_change_db"])
            assert 0 <= row["intelligibility_cost"] <= 1
        assert document["pick"] == result.pick

    def test_rows_are_means_over_takes(self, swept):
        _, _, result, _ = swept
        for row in result.rows:
            mine = [j for j in result.jobs if j.notch_target_hz == row["notch_target_hz"]]
            assert len(mine) == 2
            assert row["sibilance_reduction_db"] == pytest.approx(np.mean([j.sibilance_reduction_db for j in mine]))

    def test_pick_is_the_planted_frequency_with_a_reason(self, swept):
        # Takes with strong sibilance planted at 6 kHz: of 3k/6k/12k the 6 kHz notch is the one
        # that lowers the sibilant band most against the programme.
        _, _, result, _ = swept
        assert result.pick["notch_target_hz"] == PLANTED_HZ
        assert "sibilance band falls" in result.pick["reason"]
        best = max(result.rows, key=lambda r: r["relative_reduction_db"])
        assert best["notch_target_hz"] == PLANTED_HZ

    @pytest.mark.slow
    @pytest.mark.parametrize("planted_hz", [4800.0, 7200.0])
    def test_pick_follows_the_planted_frequency(self, tmp_path, planted_hz):
        # The demo hosts' /s/ (invented): settings a half-octave apart, one near each.
        takes = [write_take(tmp_path / f"t{s}.wav", 2.0, sibilance_hz=planted_hz, seed=s, channels=1)
                 for s in (3, 4)]
        plan = sweep.SweepPlan(notches_hz=(3400.0, 4800.0, 6800.0, 9600.0))
        result = sweep.run_sweep(takes, plan, tmp_path / "out", workers=1)
        nearest = min(plan.notches_hz, key=lambda f: abs(math.log(f / planted_hz)))
        assert result.pick["notch_target_hz"] == nearest

    @pytest.mark.slow
    def test_one_and_two_workers_agree(self, swept, tmp_path):
        takes, plan, result, _ = swept
        again = sweep.run_sweep(takes, plan, tmp_path / "out", workers=2)
        assert again.rows == result.rows and again.pick == result.pick

    @pytest.mark.slow  # a cheaper check of the same path runs by default (issue 8: the CPU budget)
    def test_progress_counts_every_frame(self, swept, tmp_path):
        takes, _, _, _ = swept
        seen = []
        plan = sweep.SweepPlan(notches_hz=(5000.0,))
        sweep.run_sweep(takes, plan, tmp_path, workers=1, progress=seen.append)
        assert sum(seen) == sum(audio.read_info(t).frames for t in takes)

    def test_same_file_name_in_two_folders_is_refused(self, tmp_path):
        takes = []
        for folder in ("a", "b"):
            (tmp_path / folder).mkdir()
            takes.append(write_take(tmp_path / folder / "take.wav", 1.0))
        with pytest.raises(BadValueError, match=r"takes need distinct file names .*'take', 'take'"):
            sweep.run_sweep(takes, sweep.SweepPlan(notches_hz=(5000.0,)), tmp_path / "out", workers=1)
        assert not (tmp_path / "out").exists()  # refused before anything is written

    @pytest.mark.parametrize("workers, match", [(0, "workers 0: allowed a whole number from 1 to 256"),
                                                (1.5, "workers 1.5: allowed a whole number")])
    def test_bad_workers(self, swept, tmp_path, workers, match):
        takes, plan, _, _ = swept
        with pytest.raises(BadValueError, match=match):
            sweep.run_sweep(takes, plan, tmp_path, workers=workers)

    def test_no_takes(self, tmp_path):
        with pytest.raises(BadValueError, match="no takes given"):
            sweep.run_sweep([], sweep.SweepPlan(notches_hz=(5000.0,)), tmp_path)

    def test_take_without_sibilance_sweeps_over_the_search_band(self, tmp_path):
        take = write_take(tmp_path / "vowels.wav", 2.0, sibilance_hz=None, channels=1)
        dry, _ = audio.read_all(take)
        assert not sibilance.find_sibilance(dry, FS).usable
        result = sweep.run_sweep([take], sweep.SweepPlan(notches_hz=(4000.0, 8000.0)), tmp_path / "out",
                                 workers=1)
        for job in result.jobs:
            wet, _ = audio.read_all(job.path)
            # the measure falls back to the finder's search band (2-12 kHz, sibilance.DEFAULT_SEARCH_BAND_HZ)
            assert job.sibilance_reduction_db == pytest.approx(
                bands.sibilance_reduction_db(dry, wet, FS, sibilance.DEFAULT_SEARCH_BAND_HZ), abs=1e-12)
        assert "reason" in result.pick and len(result.reels) == 1


class TestRowsAsCsv:
    def test_header_and_numbers(self):
        text = sweep.rows_as_csv([{"setting": "a", "notch_hz": 1234.56789, "q": 0.25}])
        assert text == "setting,notch_hz,q\na,1234.57,0.25\n"


class TestCheckOut:
    def test_regression_a_take_inside_out_is_refused_even_with_force(self, tmp_path):
        take = tmp_path / "out" / "take.wav"
        take.parent.mkdir()
        take.write_bytes(b"a take")
        for force in (False, True):
            with pytest.raises(BadValueError, match="holds the take"):
                sweep.check_out([take], tmp_path / "out", force=force)

    def test_regression_a_non_empty_folder_needs_force(self, tmp_path):
        (tmp_path / "out").mkdir()
        (tmp_path / "out" / "old.wav").write_bytes(b"x")
        with pytest.raises(BadValueError, match="not empty"):
            sweep.check_out([tmp_path / "take.wav"], tmp_path / "out", force=False)
        sweep.check_out([tmp_path / "take.wav"], tmp_path / "out", force=True)


class TestReadPick:
    @pytest.mark.parametrize("pick", ["{}", '{"setting": "x"}', "[]", "null"])
    def test_regression_empty_or_partial_pick_is_one_error(self, tmp_path, pick):
        (tmp_path / "summary.json").write_text('{"plan": {"notches_hz": [5000.0]}, "pick": %s}' % pick)
        with pytest.raises(BadValueError, match="not a sweep summary"):
            sweep.read_pick(tmp_path)


class TestMixAndQSteps:
    def test_mix_steps_in_equal_steps_to_the_top(self):
        assert sweep.mix_steps(4) == (0.25, 0.5, 0.75, 1.0)
        assert sweep.mix_steps(2, 0.8) == (0.4, 0.8)

    def test_q_steps_equal_ratios_from_passive(self):
        # passive balanced twin-T: Q = 1/4 (Analog Devices MT-225); geometric like numpy.geomspace
        steps = sweep.q_steps(4, 2.0)
        assert steps[0] == 0.25 and steps[-1] == 2.0
        assert steps == pytest.approx(tuple(np.geomspace(0.25, 2.0, 4)), rel=1e-3)  # 3 significant digits

    @pytest.mark.parametrize("call, match", [
        (lambda: sweep.mix_steps(0), "mix steps 0: allowed a whole number from 1 to 64"),
        (lambda: sweep.mix_steps(3, 1.5), r"mix 1.5: allowed \[0, 1\]"),
        (lambda: sweep.q_steps(65), "Q steps 65"),
        (lambda: sweep.q_steps(3, 0.1), r"Q \(top of the Q steps\) 0.1: allowed \[0.25, 20\]"),
    ])
    def test_bad_values(self, call, match):
        with pytest.raises(BadValueError, match=match):
            call()

    @pytest.mark.parametrize("fields, match", [
        ({"notches_hz": (4000.0, 6000.0), "mixes": (0.5, 1.0)}, "holds one notch"),
        ({"notches_hz": (6000.0,), "mixes": (0.5,), "qs": (1.0,)}, "not both mix and Q"),
        ({"notches_hz": (6000.0,), "mixes": (0.5, 0.501)}, r"0.005 \(mix\)"),
    ])
    def test_plan_refuses(self, fields, match):
        with pytest.raises(BadValueError, match=match):
            sweep.SweepPlan(**fields)

    def test_plan_round_trips_with_steps(self):
        plan = sweep.SweepPlan(notches_hz=(6000.0,), qs=(0.25, 1.0))
        assert sweep.SweepPlan.from_dict(json.loads(json.dumps(sweep.SweepResult(plan, [], [], {}).as_dict()["plan"]))) \
            == plan

    def test_mix_sweep_rows_reels_and_pick(self, swept, tmp_path):
        takes, _, _, _ = swept
        plan = sweep.SweepPlan(notches_hz=(PLANTED_HZ,), mixes=(1.0, 0.5))
        result = sweep.run_sweep(takes[:1], plan, tmp_path / "out", workers=1)
        assert [r["mix"] for r in result.rows] == [1.0, 0.5] and result.plan.axis == "mix"
        assert {r["notch_target_hz"] for r in result.rows} == {PLANTED_HZ}
        # depth = 20 log10(1 - mix) (common practice): mix 0.5 notches at most 6 dB, so cuts less than mix 1
        cuts = {r["mix"]: r["sibilance_reduction_db"] for r in result.rows}
        assert cuts[0.5] < cuts[1.0] <= 60
        assert result.pick["mix"] == 1.0 and "mix" in result.pick
        cues = result.reels[str(takes[0])].cues
        assert [c.setting for c in cues] == ["dry", "notch6000Hz-q0.25-mix0.50", "notch6000Hz-q0.25-mix1.00"]

    def test_q_sweep_rows(self, swept, tmp_path):
        takes, _, _, _ = swept
        plan = sweep.SweepPlan(notches_hz=(PLANTED_HZ,), qs=(0.25, 2.0))
        result = sweep.run_sweep(takes[:1], plan, tmp_path / "out", workers=1)
        assert [r["q"] for r in result.rows] == [0.25, 2.0] and result.plan.axis == "q"
        # a narrower notch (higher Q) costs less speech (ANSI S3.5 band importance spread wide)
        cost = {r["q"]: r["intelligibility_cost"] for r in result.rows}
        assert cost[2.0] < cost[0.25]
        for row in result.rows:
            assert row["notch_hz"] == pytest.approx(PLANTED_HZ, rel=0.03)  # E24/E12 parts: within 3 %


class TestListeningOutputs:
    def test_reels_are_loudness_matched_by_default(self, swept):
        # BS.1770 (pyloudnorm via emulate.voice.loudness) of each reel segment equals the dry segment's;
        # 24- and 16-bit reels: quantisation moves it far less than 0.05 LU
        from emulate.voice.loudness import loudness_lufs

        takes, _, result, _ = swept
        for take in takes:
            reel = result.reels[str(take)]
            x, fs = audio.read_all(reel.path)
            levels = [loudness_lufs(x[round(c.start_s * fs):round(c.end_s * fs)], fs) for c in reel.cues]
            assert levels == pytest.approx([levels[0]] * len(levels), abs=0.05)
            assert reel.matched and reel.cues[0].setting == "dry"
            assert Path(reel.cues_path).exists()

    @pytest.mark.slow
    def test_sweep_into_writes_page_dry_copies_and_removed(self, swept, tmp_path):
        takes, plan, _, _ = swept
        out = tmp_path / "out"
        result = sweep.sweep_into(takes, sweep.SweepPlan(notches_hz=(4000.0, 6000.0)), out, workers=1,
                                  removed=True)
        page = (out / "index.html").read_text()
        for take in takes:
            assert (out / f"dry--{take.name}").read_bytes() == take.read_bytes()
            removed = Path(result.removed[str(take)])
            assert removed.parent == out and result.pick["setting"] in removed.name and removed.exists()
            assert f'src="{removed.name}"' in page
        assert not [p for p in out.iterdir() if p.name.startswith(".")]

    def test_no_page_when_not_asked(self, swept, tmp_path):
        takes, _, _, _ = swept
        sweep.sweep_into(takes[:1], sweep.SweepPlan(notches_hz=(6000.0,)), tmp_path / "out", workers=1, page=False)
        assert not (tmp_path / "out" / "index.html").exists()
