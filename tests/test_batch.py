"""Tests for the batch: the plan (emulate.work.plan), its checks and runs (emulate.work.batch), the command.

Reference values: a linear gain g changes every level by 20 log10(g) dB (definition of the
decibel); ITU-R BS.1770 loudness through pyloudnorm (the reference implementation the
package already trusts, tests/test_loudness.py); AES17 (a full-scale sine reads 0 dBFS).
"""

from __future__ import annotations

import json
import math
import os
import shutil
import time
from pathlib import Path

import numpy as np
import pytest
import soundfile as sf
from click.testing import CliRunner

from emulate.cli import main
from emulate.errors import BadValueError, OutputRefusedError, PresetError
from emulate.work import batch
from emulate.work.plan import BatchPlan, find_takes, read_plan
from emulate.work.presets import Preset, PresetStore

from helpers_lean import shared_voice_take

FS = 16000
PARTS = dict(zip(("r1", "r2", "r3", "c1", "c2", "c3"), ("2k7", "2k7", "1k3", "10n", "10n", "20n")))


def write_take(path: Path, seconds: float = 1.0, seed: int = 1, channels: int = 1) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    x = shared_voice_take(FS, seconds, pitch_hz=130.0, sibilance_hz=5000.0, seed=seed)
    sf.write(path, np.column_stack([x] * channels) if channels > 1 else x, FS, subtype="PCM_16")
    return path


@pytest.fixture
def season(tmp_path) -> Path:
    return make_season(tmp_path)


def make_season(tmp_path: Path) -> Path:
    """Two speakers' takes in nested folders, a presets folder with both presets."""
    write_take(tmp_path / "raw" / "host-a" / "ep1" / "t1.wav", seed=1)
    write_take(tmp_path / "raw" / "host-a" / "t2.flac", seed=2)
    write_take(tmp_path / "raw" / "host-b" / "t1.wav", seed=3, channels=2)
    (tmp_path / "raw" / "host-a" / "notes.txt").write_text("not a take\n")
    store = PresetStore(tmp_path / "presets")
    store.save(Preset("host-a", "Host A", circuit=PARTS, mix=0.8))
    store.save(Preset("host-b", "Host B", circuit=PARTS | {"r1": "3k3", "r2": "3k3", "r3": "1k6"}, mix=0.7))
    (tmp_path / "plan.toml").write_text(
        'out = "renders"\n'
        '[[speaker]]\nname = "Host A"\npreset = "host-a"\ntakes = ["raw/host-a"]\n'
        '[[speaker]]\nname = "Host B"\npreset = "host-b"\ntakes = ["raw/host-b/*.wav"]\n')
    return tmp_path


def store_of(season: Path) -> PresetStore:
    return PresetStore(season / "presets")


def relative(paths, base: Path) -> list[str]:
    return sorted(str(Path(p).relative_to(base)) for p in paths)


class TestReadPlan:
    def test_reads_speakers_and_resolves_from_the_plan_folder(self, season):
        read = read_plan(season / "plan.toml")
        assert [s.preset for s in read.speakers] == ["host-a", "host-b"]
        assert read.out == season.resolve() / "renders"

    @pytest.mark.parametrize("text,match", [
        ("this is [not toml", "not a TOML"),
        ('out = "r"\n', "speaker"),
        ('[[speaker]]\nname = "a"\npreset = "p"\ntakes = ["t"]\n', "out must be"),
        ('out = "r"\nfrom = 1\n[[speaker]]\nname = "a"\npreset = "p"\ntakes = ["t"]\n', "unknown key.*from"),
        ('out = "r"\n[[speaker]]\nname = "a"\npreset = "p"\n', "takes must be"),
        ('out = "r"\n[[speaker]]\nname = "a"\npreset = 5\ntakes = ["t"]\n', "preset must be"),
        ('out = "r"\n[[speaker]]\nname = "a"\npreset = "p"\ntakes = []\n', "takes must be"),
        ('out = "r"\n[[speaker]]\nname = "a"\npreset = "p"\ntakes = ["t"]\n'
         '[[speaker]]\nname = "a"\npreset = "q"\ntakes = ["u"]\n', "distinct"),
    ])
    def test_refuses_a_bad_plan_with_one_line(self, tmp_path, text, match):
        (tmp_path / "plan.toml").write_text(text)
        with pytest.raises(BadValueError, match=match):
            read_plan(tmp_path / "plan.toml")

    def test_refuses_bytes_that_are_not_utf8(self, tmp_path):
        (tmp_path / "plan.toml").write_bytes(b'out = "r\xff"\n')
        with pytest.raises(BadValueError, match="UTF-8"):
            read_plan(tmp_path / "plan.toml")


class TestFindTakes:
    def test_mirrors_the_folders_under_out(self, season):
        found = find_takes(read_plan(season / "plan.toml"))
        assert relative([t.out_path for t in found], season.resolve()) == [
            "renders/host-a/ep1/t1.wav", "renders/host-a/t2.flac", "renders/host-b/t1.wav"]

    def test_one_folder_maps_its_content_straight_under_out(self, season):
        found = find_takes(BatchPlan.inline("A", "host-a", ["raw/host-a"], "renders", base=season))
        assert relative([t.out_path for t in found], season) == ["renders/ep1/t1.wav", "renders/t2.flac"]

    @pytest.mark.parametrize("out", ["raw", "raw/host-a", "raw/host-a/renders"])
    def test_regression_never_writes_next_to_or_over_an_input(self, season, out):
        with pytest.raises(BadValueError, match="overlaps|holds the take"):
            find_takes(BatchPlan.inline("A", "host-a", ["raw/host-a"], out, base=season))

    def test_out_beside_single_files_is_allowed(self, season):
        found = find_takes(BatchPlan.inline("B", "host-b", ["raw/host-b/t1.wav"], "raw/host-b/r", base=season))
        assert relative([t.out_path for t in found], season) == ["raw/host-b/r/t1.wav"]

    def test_a_take_listed_twice_is_refused(self, season):
        with pytest.raises(BadValueError, match="listed twice"):
            find_takes(BatchPlan.inline("A", "host-a", ["raw/host-a", "raw/host-a/t2.flac"], "r", base=season))

    @pytest.mark.parametrize("entry,match", [("raw/*.mp3", "matches no file"), ("nowhere", "no such"),
                                             ("presets", "no audio files")])
    def test_an_entry_that_finds_nothing_is_refused(self, season, entry, match):
        with pytest.raises(BadValueError, match=match):
            find_takes(BatchPlan.inline("A", "host-a", [entry], "r", base=season))


class TestMeters:
    """The summary's figures, measured block by block while rendering."""

    @pytest.mark.parametrize("fs,blocks", [(48000, [65536]), (44100, [1, 4409, 4411, 100000]), (16000, [777])])
    def test_loudness_meter_equals_pyloudnorm(self, fs, blocks):
        from emulate.voice.loudness import LoudnessMeter, loudness_lufs

        x = np.random.default_rng(fs).standard_normal((fs * 3, 2)) * np.array([0.1, 0.03])
        meter, start, k = LoudnessMeter(fs, 2), 0, 0
        while start < len(x):
            meter.add(x[start:start + blocks[k % len(blocks)]])
            start, k = start + blocks[k % len(blocks)], k + 1
        # ITU-R BS.1770-4 through pyloudnorm (the reference): the same gating from the same sums
        assert meter.lufs() == pytest.approx(loudness_lufs(x, fs), abs=1e-9)

    def test_loudness_meter_gates_silence(self):
        from emulate.voice.loudness import LoudnessMeter

        meter = LoudnessMeter(48000, 1)
        meter.add(np.zeros((48000, 1)))
        assert meter.lufs() == -math.inf

    def test_band_meter_reads_a_sine_in_band_at_its_level(self):
        from emulate.voice.bands import BandMeter

        t = np.arange(48000) / 48000
        meter = BandMeter(48000, 1, (4000, 8000))
        meter.add(0.5 * np.sin(2 * np.pi * 5657 * t)[:, None])
        # AES17: a full-scale sine reads 0 dBFS, so amplitude 0.5 reads 20 log10(0.5) = -6.02 dBFS;
        # 0.05 dB: the Butterworth pass band is flat within that at the band's geometric centre
        assert meter.level_db() == pytest.approx(20 * math.log10(0.5), abs=0.05)

    def test_a_gain_changes_both_figures_by_its_decibels(self):
        from emulate.voice.compare import LevelsMeter, compare_meters

        x = np.random.default_rng(2).standard_normal((48000, 2)) * 0.1
        dry, wet = LevelsMeter(48000, 2, (4000, 8000)), LevelsMeter(48000, 2, (4000, 8000))
        dry.add(x)
        wet.add(0.5 * x)
        measures = compare_meters(dry, wet)
        # definition of the decibel: a gain of 0.5 is -6.02 dB on every level
        assert measures["sibilance_reduction_db"] == pytest.approx(6.0206, abs=1e-6)
        assert measures["loudness_change_db"] == pytest.approx(-6.0206, abs=1e-6)

    def test_undefined_figures_are_none(self):
        from emulate.voice.compare import LevelsMeter, compare_meters

        dry, wet = LevelsMeter(48000, 1, (4000, 8000)), LevelsMeter(48000, 1, (4000, 8000))
        dry.add(np.zeros((4800, 1)))
        wet.add(np.zeros((4800, 1)))
        assert compare_meters(dry, wet) == {"sibilance_reduction_db": None, "loudness_change_db": None}


class TestPrepareBatch:
    def test_every_take_is_a_job_at_first(self, season):
        checked = batch.prepare_batch(read_plan(season / "plan.toml"), store_of(season))
        assert len(checked.jobs) == 3 and not checked.kept
        assert all(job.action == "render" and not job.replace for job in checked.jobs)
        assert not (season / "renders").exists()  # nothing written by the checks

    def test_a_missing_preset_is_refused_before_anything(self, season):
        text = (season / "plan.toml").read_text().replace('"host-b"', '"nobody"')
        (season / "plan.toml").write_text(text)
        with pytest.raises(PresetError, match="nobody"):
            batch.prepare_batch(read_plan(season / "plan.toml"), store_of(season))
        assert not (season / "renders").exists()

    def test_an_unreadable_take_is_refused_before_anything(self, season):
        (season / "raw" / "host-a" / "bad.wav").write_text("not audio")
        with pytest.raises(Exception, match="bad.wav"):
            batch.prepare_batch(read_plan(season / "plan.toml"), store_of(season))
        assert not (season / "renders").exists()

    def test_a_foreign_file_out_of_date_is_refused_without_force(self, season):
        target = season / "renders" / "host-b" / "t1.wav"
        target.parent.mkdir(parents=True)
        target.write_text("someone's file")
        os.utime(target, (0, 0))
        with pytest.raises(OutputRefusedError, match="--force"):
            batch.prepare_batch(read_plan(season / "plan.toml"), store_of(season))
        checked = batch.prepare_batch(read_plan(season / "plan.toml"), store_of(season), force=True)
        assert [job.replace for job in checked.jobs if job.out_path.endswith("host-b/t1.wav")] == [True]

    def test_a_foreign_file_at_an_excerpt_path_is_refused_without_force(self, season):
        excerpt = season / "renders" / "listening" / "host-b" / "t1.wav--dry.wav"
        excerpt.parent.mkdir(parents=True)
        excerpt.write_text("someone's file")
        with pytest.raises(OutputRefusedError, match="t1.wav--dry.wav.*--force"):
            batch.prepare_batch(read_plan(season / "plan.toml"), store_of(season))

    def test_a_foreign_summary_is_refused_without_force(self, season):
        (season / "renders").mkdir()
        (season / "renders" / "summary.json").write_text('{"rows": []}')
        with pytest.raises(OutputRefusedError, match="not an earlier batch"):
            batch.prepare_batch(read_plan(season / "plan.toml"), store_of(season))

    def test_a_render_path_that_is_a_folder_is_refused(self, season):
        (season / "renders" / "host-b" / "t1.wav").mkdir(parents=True)
        with pytest.raises(OutputRefusedError, match="folder"):
            batch.prepare_batch(read_plan(season / "plan.toml"), store_of(season))


class TestRunBatch:
    def run(self, season, workers=1, **options):
        checked = batch.prepare_batch(read_plan(season / "plan.toml"), store_of(season), **options)
        return batch.run_batch(checked, batch.LocalRunner(workers))

    def test_renders_mirror_the_takes_and_the_summary_lists_them(self, season):
        results = self.run(season, workers=2)
        out = season.resolve() / "renders"
        assert relative([r.output for r in results], out) == ["host-a/ep1/t1.wav", "host-a/t2.flac", "host-b/t1.wav"]
        for r in results:
            assert sf.info(r.output).frames == sf.info(r.take).frames and r.status == "rendered"
            assert r.sibilance_band_change_db < -3.0 < r.loudness_change_db < 0.0  # a notch in the band
        summary = json.loads((out / "summary.json").read_text())
        assert summary["kind"] == batch.SUMMARY_KIND and len(summary["takes"]) == 3
        header = (out / "summary.csv").read_text().splitlines()[0].split(",")
        assert {"sibilance_band_change_db", "loudness_change_db", "peak_dbfs", "clipped_samples",
                "seconds"} <= set(header)
        assert sorted(p.name for p in out.rglob(".*")) == []  # no temporaries

    def test_the_same_render_as_render_file(self, season):
        # the batch reuses the render path: the same samples as a plain render of the take
        from emulate.audio import stream
        from emulate.dsp import emulation

        results = self.run(season)  # one worker: the second take reuses the first one's processor, reset
        for r in results:
            network = store_of(season).load(r.preset).network()
            stream.render_file(r.take, season / "plain.wav", emulation.processor_for(network))
            np.testing.assert_array_equal(sf.read(r.output)[0], sf.read(season / "plain.wav")[0])

    def test_a_rerun_keeps_what_is_current_and_renders_what_is_not(self, season):
        first = self.run(season)
        before = {r.output: os.stat(r.output).st_mtime_ns for r in first}
        time.sleep(0.01)
        os.utime(season / "raw" / "host-b" / "t1.wav")  # this take changed since its render
        second = self.run(season)
        assert [r.status for r in second] == ["kept", "kept", "rendered"]
        assert all(os.stat(r.output).st_mtime_ns == before[r.output] for r in second if r.status == "kept")
        assert [r.sibilance_band_change_db for r in second[:2]] == [r.sibilance_band_change_db for r in first[:2]]

    @pytest.mark.slow  # a cheaper check of the same path runs by default (issue 8: the CPU budget)
    def test_redo_renders_everything(self, season):
        self.run(season)
        assert [r.status for r in self.run(season, redo=True)] == ["rendered"] * 3

    def test_a_current_render_without_summary_is_measured_not_rendered(self, season):
        first = self.run(season)
        for name in ("summary.json", "summary.csv", "index.html"):  # the summaries lost, the renders kept
            (season / "renders" / name).unlink()
        shutil.rmtree(season / "renders" / "listening")
        second = self.run(season)
        assert [r.status for r in second] == ["kept"] * 3
        for a, b in zip(first, second):
            assert b.sibilance_band_change_db == pytest.approx(a.sibilance_band_change_db, abs=0.05)
            assert b.clipped_samples is None  # not known from the file alone
        assert len(list((season / "renders" / "listening").rglob("*--dry.wav"))) == 3  # the page's excerpts again

    def test_regression_a_killed_runs_temporary_beside_a_complete_render_goes(self, season):
        # kill -9 between the link onto the target and the unlink of the temporary
        first = self.run(season)
        target = Path(first[0].output)
        stale = target.parent / f".{target.name}.999999999-0123456789ab.part"
        os.link(target, stale)
        self.run(season)
        assert not stale.exists() and target.exists()

    def test_regression_an_interrupted_batch_keeps_only_complete_renders(self, season):
        checked = batch.prepare_batch(read_plan(season / "plan.toml"), store_of(season))

        class StopsAfterOne(batch.LocalRunner):
            def results(self, jobs):
                jobs = list(jobs)
                yield jobs[0], batch.run_job(jobs[0])
                # a worker was killed mid-render: its temporary is left beside the target
                target = Path(jobs[1].out_path)
                target.parent.mkdir(parents=True, exist_ok=True)
                (target.parent / f".{target.name}.999999999-0123456789ab.part").write_bytes(b"partial")
                raise KeyboardInterrupt

        with pytest.raises(KeyboardInterrupt):
            batch.run_batch(checked, StopsAfterOne(1))
        out = season.resolve() / "renders"
        left = relative([p for p in out.rglob("*") if p.is_file()], out)
        assert left == ["host-a/ep1/t1.wav", "index.html", "listening/host-a/ep1/t1.wav--dry.wav",
                        "listening/host-a/ep1/t1.wav--wet.wav", "summary.csv", "summary.json"]
        assert not (out / "host-b").exists()  # the folder it made, left empty, is gone
        assert len(json.loads((out / "summary.json").read_text())["takes"]) == 1


class TestLocalRunner:
    def test_refuses_zero_workers(self):
        with pytest.raises(BadValueError, match="workers"):
            batch.LocalRunner(0)


class TestBatchCommand:
    def invoke(self, season, *args):
        return CliRunner().invoke(main, [*map(str, args), "--presets", str(season / "presets")],
                                  catch_exceptions=False)

    def test_plan_file(self, season):
        result = self.invoke(season, "batch", season / "plan.toml", "--workers", "1")
        assert result.exit_code == 0, result.output
        assert "3 rendered" in result.output and "summary.csv" in result.output

    def test_inline_plan_and_json(self, season):
        result = self.invoke(season, "batch", "--speaker", "Host B", "--preset", "host-b", "--takes",
                             season / "raw" / "host-b", "--out", season / "b", "--json")
        assert result.exit_code == 0, result.output
        payload = json.loads(result.output)
        assert payload["totals"]["rendered"] == 1 and payload["takes"][0]["speaker"] == "Host B"

    def test_no_page(self, season):
        result = self.invoke(season, "batch", season / "plan.toml", "--workers", "1", "--no-page")
        assert result.exit_code == 0, result.output
        out = season / "renders"
        assert sorted(p.name for p in out.iterdir()) == ["host-a", "host-b", "summary.csv", "summary.json"]

    @pytest.mark.parametrize("args,match", [
        ([], "give a plan file"),
        (["--speaker", "A"], "missing --preset, --takes, --out"),
        (["--cluster", "tcp://127.0.0.1:1", "--workers", "2", "--speaker", "A", "--preset", "host-a",
          "--takes", "raw", "--out", "r"], "not both"),
    ])
    def test_usage_errors(self, season, args, match):
        result = self.invoke(season, "batch", *args)
        assert result.exit_code == 2 and match in result.output

    def test_plan_and_inline_together(self, season):
        result = self.invoke(season, "batch", season / "plan.toml", "--speaker", "A")
        assert result.exit_code == 2 and "not both" in result.output


@pytest.fixture(scope="module")
def long_season(tmp_path_factory) -> Path:
    """Six 30-second stereo takes and a preset: two workers are busy for seconds."""
    base = tmp_path_factory.mktemp("long-season")
    rng = np.random.default_rng(5)
    for i in range(6):
        path = base / "takes" / f"ep{i % 2}" / f"t{i}.wav"
        path.parent.mkdir(parents=True, exist_ok=True)
        sf.write(path, rng.standard_normal((48000 * 30, 2)) * 0.05, 48000, subtype="PCM_16")
    PresetStore(base / "presets").save(Preset("p", "A", circuit=PARTS, mix=0.8))
    return base


def batch_args(season: Path, out: Path) -> list:
    return ["batch", "--speaker", "A", "--preset", "p", "--takes", season / "takes", "--out", out,
            "--workers", "2", "--presets", season / "presets"]


def assert_only_complete_renders(season: Path, out: Path) -> None:
    """Every render present has its take's length; nothing hidden is left."""
    from test_interrupts import temporaries

    assert temporaries(out.parent) == []
    for render in out.rglob("*.wav"):
        if batch.LISTENING_FOLDER in render.relative_to(out).parts:
            continue
        assert sf.info(render).frames == sf.info(season / "takes" / render.relative_to(out)).frames


@pytest.mark.slow
class TestBatchInterrupted:
    @pytest.mark.parametrize("name,group", [("SIGINT", True), ("SIGTERM", False)])
    def test_stop_keeps_complete_renders_and_no_worker(self, long_season, tmp_path, name, group):
        from test_interrupts import alive, descendants, reap, start, stop, temporaries, wait_for

        out = tmp_path / "out"
        process = start(batch_args(long_season, out), tmp_path)
        assert wait_for(lambda: temporaries(out) or process.poll() is not None)
        workers = descendants(process.pid)
        began = time.monotonic()
        code, err = stop(process, name, group)
        try:
            assert time.monotonic() - began < 30.0  # promptly: not after every take
            assert "Traceback" not in err
            if code != 0:
                assert "interrupted" in err or "stopped by" in err, err
                assert "resume" in err
            assert wait_for(lambda: not alive(workers), 30.0), alive(workers)
        finally:
            reap(workers)
        assert_only_complete_renders(long_season, out)

    def test_kill_9_leaves_no_worker_and_the_next_run_resumes(self, long_season, tmp_path):
        from test_interrupts import alive, descendants, reap, start, temporaries, wait_for

        out = tmp_path / "out"
        process = start(batch_args(long_season, out), tmp_path)
        assert wait_for(lambda: temporaries(out))
        workers = descendants(process.pid)
        process.kill()
        process.communicate(timeout=60)
        try:
            assert wait_for(lambda: not alive(workers), 30.0), alive(workers)
        finally:
            reap(workers)
        again = start(batch_args(long_season, out), tmp_path)
        assert again.wait(timeout=600) == 0, again.stderr.read()
        assert_only_complete_renders(long_season, out)
        assert len(list(out.glob("ep*/*.wav"))) == 6


class TestBatchStopsOnADamagedTake:
    def test_regression_the_error_says_what_was_kept(self, season):
        data = (season / "raw" / "host-a" / "t2.flac").read_bytes()
        (season / "raw" / "host-a" / "t2.flac").write_bytes(data[: len(data) // 2])  # cut mid-stream
        result = CliRunner().invoke(main, ["batch", str(season / "plan.toml"), "--workers", "1", "--presets",
                                           str(season / "presets")])
        assert result.exit_code == 1 and "damaged or cut short" in result.output
        assert "complete renders" in result.output and "resume" in result.output
        rows = json.loads((season / "renders" / "summary.json").read_text())["takes"]
        assert [Path(r["output"]).name for r in rows] == ["t1.wav"]
        assert not (season / "renders" / "host-a" / "t2.flac").exists()


class TestListeningPage:
    def test_one_section_per_take_and_every_player_plays_a_file_there(self, season):
        import re
        from urllib.parse import unquote

        results = batch.run_batch(batch.prepare_batch(read_plan(season / "plan.toml"), store_of(season)),
                                  batch.LocalRunner(1))
        out = season.resolve() / "renders"
        page = (out / "index.html").read_text()
        assert page.count('class="take"') == len(results) == 3
        sources = [unquote(src) for src in re.findall(r'<audio controls preload="metadata" src="([^"]+)"', page)]
        assert len(sources) == 6 and all((out / src).is_file() for src in sources)
        assert "sibilance band" in page and "Host B" in page
        assert "<caption>one row per take</caption>" in page
        assert '<th scope="col">pick</th>' not in page  # a batch has no pick

    def test_excerpts_line_up_with_the_take_and_the_render(self, season):
        results = batch.run_batch(batch.prepare_batch(read_plan(season / "plan.toml"), store_of(season)),
                                  batch.LocalRunner(1))
        out = season.resolve() / "renders"
        for r in results:
            dry_path, wet_path = batch.excerpt_paths(out, r.output)
            take, render = sf.read(r.take, always_2d=True)[0], sf.read(r.output, always_2d=True)[0]
            dry, wet = sf.read(dry_path, always_2d=True)[0], sf.read(wet_path, always_2d=True)[0]
            first = min(len(take) - len(dry), int(len(take) * batch.EXCERPT_FROM))
            np.testing.assert_array_equal(dry, take[first:first + len(dry)])  # 16-bit codes kept exactly in 24 bits
            # the render is the same samples dithered to 16 bits: TPDF dither of +-1 LSB then rounding
            # moves a sample at most 1.5 LSB (Lipshitz, Wannamaker & Vanderkooy, JAES 1992); the excerpt
            # is the undithered 24-bit one. One sample out of line would differ far more.
            assert np.max(np.abs(wet - render[first:first + len(wet)])) <= 1.5 * 2.0 ** -15 + 2.0 ** -23
