"""The fault matrix: bad inputs, refusals and injected faults through every command.

Shared by ``tests/test_fault_matrix.py`` (one parametrised test per case) and
``tests/benchmarks/bench_faults.py`` (counts). Each :class:`Case` runs in a fresh
copy of a small workspace (takes, circuit files, presets, earlier outputs, a FIFO)
through click's CliRunner, in process. After each run :func:`run_case` reports:

- the exit status and the output,
- whether a Python traceback (or an "unexpected error" line) appeared,
- data lost: files that existed before and changed or vanished (except those the
  case allows to change, e.g. with ``--force``),
- stray output: anything new (a partial file, a hidden ``.part``, an empty folder)
  except what the case allows to appear (only on success).
"""

from __future__ import annotations

import contextlib
import dataclasses
import errno
import fnmatch
import hashlib
import os
import re
import shutil
import stat
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path
from unittest import mock

import numpy as np
import soundfile as sf
from click.testing import CliRunner

__all__ = ["CASES", "Case", "Outcome", "make_template", "run_case", "template_unchanged"]

FS = 16000
PARTS = ["--r1", "10k", "--r2", "10k", "--r3", "5k", "--c1", "10n", "--c2", "10n", "--c3", "20n"]
SWEEP = ["--at", "4k,6k", "--workers", "1"]
ESC = "\x1b"


@dataclass(frozen=True)
class Case:
    """One fault: the command line (``{w}`` is the workspace), what must come out, what may change."""

    name: str
    args: tuple[str, ...]
    exit: int
    message: str = ""  # a regular expression the output must match
    may_create: tuple[str, ...] = ()  # glob patterns (relative to the workspace) allowed to appear
    may_change: tuple[str, ...] = ()  # existing paths allowed to change or go (e.g. with --force)
    inject: str | None = None  # "disk_full": every audio write and picture save fails with ENOSPC;
    # "interrupt_batch": Ctrl-C lands in a batch as its second take starts
    env: dict = field(default_factory=dict)
    slow: bool = False  # a whole end-to-end run of seconds: with the slow checks (pytest -m slow)
    may_keep: tuple[str, ...] = ()  # glob patterns allowed to appear even on failure (complete outputs kept)


@dataclass
class Outcome:
    case: Case
    exit_code: int
    output: str
    traceback: bool
    lost: list[str]
    stray: list[str]

    @property
    def matches(self) -> bool:
        return self.exit_code == self.case.exit and re.search(self.case.message, self.output, re.S) is not None

    @property
    def one_line(self) -> bool:
        """A failure says so in one line (warnings and notes aside)."""
        if self.exit_code == 0:
            return True
        lines = [line for line in self.output.splitlines()
                 if line.strip() and not line.startswith(("warning:", "note:"))]
        errors = [line for line in lines if line.startswith("Error:")]
        return len(errors) == 1 and (self.exit_code == 2 or len(lines) == 1)

    @property
    def clean(self) -> bool:
        return self.matches and self.one_line and not (self.traceback or self.lost or self.stray)


def _c(name, args, exit, message="", **extra) -> Case:
    return Case(name, tuple(args.split()) if isinstance(args, str) else tuple(args), exit, message, **extra)


def _voice(seconds: float, seed: int) -> np.ndarray:
    from emulate.voice import synth

    return synth.voice_like_take(FS, seconds, pitch_hz=140.0, sibilance_hz=5000.0, seed=seed)


def make_template(folder) -> Path:
    """The workspace every case starts from (copied fresh for each case)."""
    w = Path(folder)
    w.mkdir(parents=True, exist_ok=True)
    x = _voice(1.0, 1)
    sf.write(w / "take.wav", x, FS, subtype="PCM_16")
    sf.write(w / "take2.wav", _voice(1.0, 2), FS, subtype="PCM_16")
    sf.write(w / "silent.wav", np.zeros(FS), FS, subtype="PCM_16")
    sf.write(w / "full.flac", x, FS, subtype="PCM_16")
    data = (w / "full.flac").read_bytes()
    (w / "cut.flac").write_bytes(data[: len(data) // 2])
    data = (w / "take.wav").read_bytes()
    (w / "cut.wav").write_bytes(data[: len(data) // 2])
    (w / "empty.wav").write_bytes(b"")
    (w / "notes.wav").write_text("not audio\n")
    sf.write(w / "old.wav", np.full(100, 0.25), FS, subtype="PCM_16")
    (w / "old.png").write_bytes(b"\x89PNG old picture")
    (w / "readonly.wav").write_bytes((w / "old.wav").read_bytes())
    os.chmod(w / "readonly.wav", 0o444)
    (w / "afile").write_text("a file, not a folder\n")
    (w / "busy").mkdir()
    (w / "busy" / "keep.txt").write_text("an earlier output\n")
    (w / "holds-take").mkdir()
    shutil.copy(w / "take.wav", w / "holds-take" / "take.wav")
    (w / "same").mkdir()
    shutil.copy(w / "take2.wav", w / "same" / "take.wav")  # the same stem as take.wav
    circuits = {
        "good.toml": '[circuit]\nr1 = "10k"\nr2 = "10k"\nr3 = "5k"\nc1 = "10n"\nc2 = "10n"\nc3 = "20n"\n',
        "scalar.toml": "circuit = 5\n",
        "array.toml": '[[circuit]]\nr1 = "10k"\n',
        "notoml.toml": "this is [not toml\n",
        "notables.toml": "mix = 0.5\n",
        "unknown.toml": '[circuit]\nr9 = "1k"\n',
        "missingpart.toml": '[circuit]\nr1 = "10k"\n',
        "target.toml": '[target]\nnotch = "6k"\n',
        "badtarget.toml": '[target]\nnotch = "0"\n',
    }
    for name, text in circuits.items():
        (w / name).write_text(text, encoding="utf-8")
    (w / "latin1.toml").write_bytes(b'[circuit]\nr1 = "10k\xff"\n')
    _measurements(w)
    presets = w / "presets"
    presets.mkdir()
    from emulate.work.presets import Preset, PresetStore

    table = dict(zip(("r1", "r2", "r3", "c1", "c2", "c3"), ("10k", "10k", "5k", "10n", "10n", "20n")))
    PresetStore(presets).save(Preset("host", "A host", circuit=table, mix=0.8))
    PresetStore(presets).save(Preset("noisy", "B host", circuit=table, notes=f"{ESC}[2J{ESC}]0;owned{chr(7)}"))
    (presets / "broken.toml").write_text("schema_version = 1\nname = 'broken'\n")
    (w / "sw").mkdir()
    (w / "sw" / "summary.json").write_text('{"plan": {"notches_hz": [5000.0]}, "pick": {}}')
    (w / "season" / "a").mkdir(parents=True)
    (w / "season" / "b").mkdir()
    shutil.copy(w / "take.wav", w / "season" / "a" / "take.wav")
    shutil.copy(w / "take2.wav", w / "season" / "b" / "take2.wav")
    (w / "plan.toml").write_text('out = "renders"\n[[speaker]]\nname = "A host"\npreset = "host"\n'
                                 'takes = ["season"]\n', encoding="utf-8")
    (w / "badplan.toml").write_text('out = "renders"\nspeakers = 2\n', encoding="utf-8")
    (w / "renders-old").mkdir()
    (w / "renders-old" / "take.wav").write_text("someone's older file\n")
    os.utime(w / "renders-old" / "take.wav", (0, 0))  # older than every take
    return w


def _measurements(w: Path) -> None:
    """A CSV measurement of the PARTS network (emulate's own response), a malformed one, and a
    recording of a short stimulus through it (no noise, 100 samples of latency)."""
    from emulate.analog.networks import TwinT
    from emulate.measuring.stimulus import SweepPlan
    from emulate.measuring.synthetic import synthetic_recording

    network = TwinT(10e3, 10e3, 5e3, 10e-9, 10e-9, 20e-9)
    f = np.geomspace(50, 7000, 120)
    gain = 20 * np.log10(np.abs(network.response(f)) + 1e-6)
    (w / "m.csv").write_text("Hz,dB\n" + "".join(f"{fi:.3f},{g:.4f}\n" for fi, g in zip(f, gain)))
    (w / "bad.csv").write_text("Hz,dB\n100,-1\n200,oops\n")
    plan = SweepPlan(float(FS), 20.0, 7000.0, 1.0)
    sf.write(w / "rec.wav", synthetic_recording(plan, network, latency_samples=100), FS, subtype="FLOAT")


def _cases() -> list[Case]:
    P = " ".join(PARTS)
    S = " ".join(SWEEP)
    new_out = ("out.wav",)
    sweep_out = ("out", "out/*")
    BP = "--presets {w}/presets"
    B = f"--speaker A --preset host {BP}"
    batch_out = ("renders", "renders/*", "renders/*/*")
    cases = [
        # --- response ---------------------------------------------------------------------
        _c("response ok", f"response {P}", 0, "notch"),
        _c("response json", f"response {P} --json", 0, r'"notch_hz"'),
        _c("response bad value", "response --r1 abc --r2 10k --r3 5k --c1 10n --c2 10n --c3 20n", 1, "r1"),
        _c("regression_superscript_is_not_a_digit", "response --r1 10² --r2 10k --r3 5k --c1 10n --c2 10n --c3 20n",
           1, "superscripts"),
        _c("response vulgar fraction", "response --r1 ½k --r2 10k --r3 5k --c1 10n --c2 10n --c3 20n", 1, "r1"),
        _c("response negative", "response --r1 -10k --r2 10k --r3 5k --c1 10n --c2 10n --c3 20n", 1, "r1"),
        _c("response zero", "response --r1 0 --r2 10k --r3 5k --c1 10n --c2 10n --c3 20n", 1, "r1"),
        _c("response huge C", "response --r1 10k --r2 10k --r3 5k --c1 1e9 --c2 10n --c3 20n", 1, "c1"),
        _c("regression_suggestion_never_fails_a_valid_analysis",
           "response --r1 10k --r2 10k --r3 5k --c1 1 --c2 1 --c3 1", 0, "no notch in range"),
        _c("response mix too big", f"response {P} --mix 1.5", 1, "mix"),
        _c("response mix nan", f"response {P} --mix nan", 1, "mix"),
        _c("response bootstrap 1", f"response {P} --bootstrap 1", 1, "bootstrap"),
        _c("response bootstrap negative", f"response {P} --bootstrap -0.1", 1, "bootstrap"),
        _c("response source negative", f"response {P} --source -5", 1, "source"),
        _c("response load zero", f"response {P} --load 0", 1, "load"),
        _c("response depth pot text", f"response {P} --depth-pot abc", 1, "depth_pot|pot"),
        _c("response mix and depth", f"response {P} --mix 0.5 --depth 12", 2, "either --mix or --depth"),
        _c("response no circuit", "response", 2, "give the circuit"),
        _c("response rate zero", f"response {P} --rate 0", 1, "rate|Hz"),
        _c("response circuit file", "response --circuit {w}/good.toml", 0, "notch"),
        _c("response target file", "response --circuit {w}/target.toml", 0, "notch"),
        _c("response circuit missing", "response --circuit {w}/nothere.toml", 1, "no such circuit file"),
        _c("regression_circuit_scalar_is_not_a_table", "response --circuit {w}/scalar.toml", 1, "not a table"),
        _c("regression_circuit_array_of_tables", "response --circuit {w}/array.toml", 1, "not a table"),
        _c("regression_circuit_file_not_utf8", "response --circuit {w}/latin1.toml", 1, "not UTF-8"),
        _c("response circuit not toml", "response --circuit {w}/notoml.toml", 1, "not a readable TOML"),
        _c("response circuit no tables", "response --circuit {w}/notables.toml", 1, r"needs a \[circuit\]"),
        _c("response circuit unknown key", "response --circuit {w}/unknown.toml", 1, "unknown key"),
        _c("response circuit missing part", "response --circuit {w}/missingpart.toml", 1, "missing"),
        _c("response bad target", "response --circuit {w}/badtarget.toml", 1, "notch"),
        _c("response circuit is a folder", "response --circuit {w}/busy", 2, "directory|folder"),
        _c("response circuit and preset", "response --circuit {w}/good.toml --preset host --presets {w}/presets",
           2, "either --circuit"),
        _c("response preset", "response --preset host --presets {w}/presets", 0, "notch"),
        _c("response preset missing", "response --preset ghost --presets {w}/presets", 1, "no preset 'ghost'"),
        _c("response preset malformed", "response --preset broken --presets {w}/presets", 1, "broken.toml"),
        _c("response preset bad name", "response --preset ../x --presets {w}/presets", 1, "preset name"),
        _c("regression_plot_folder_missing_response", f"response {P} --plot {{w}}/nofolder/p.png", 1, "nofolder"),
        _c("response plot exists", f"response {P} --plot {{w}}/old.png", 1, "already exists.*--force"),
        _c("response plot exists force", f"response {P} --plot {{w}}/old.png --force", 0, "wrote",
           may_change=("old.png",)),
        _c("response plot new", f"response {P} --plot {{w}}/p.png", 0, "wrote", may_create=("p.png",)),
        _c("response plot is a fifo", f"response {P} --plot {{w}}/pipe.wav --force", 1, "FIFO"),
        _c("response plot disk full", f"response {P} --plot {{w}}/p.png", 1, "space|p.png", inject="disk_full"),
        # --- design -------------------------------------------------------------------------
        _c("design ok", "design --notch 6.3k", 0, "notch"),
        _c("design json", "design --notch 4.5k --q 2 --series E96 --json", 0, '"built"|notch'),
        _c("design notch zero", "design --notch 0", 1, "notch"),
        _c("design notch huge", "design --notch 1e9", 1, "notch"),
        _c("design notch text", "design --notch loud", 1, "notch|value"),
        _c("design notch superscript", "design --notch 6³k", 1, "superscripts"),
        _c("design q low", "design --notch 6k --q 0.1", 1, "q|Q"),
        _c("design q high", "design --notch 6k --q 100", 1, "q|Q"),
        _c("design series", "design --notch 6k --series E7", 1, "E7|series"),
        _c("design cap series", "design --notch 6k --cap-series X", 1, "series"),
        _c("design impedance", "design --notch 6k --impedance -1", 1, "impedance|resistance"),
        _c("design capacitor", "design --notch 6k --capacitor abc", 1, "capacit"),
        _c("design no notch", "design", 2, "--notch"),
        # --- render -------------------------------------------------------------------------
        _c("render ok", f"render {{w}}/take.wav {{w}}/out.wav {P}", 0, "wrote", may_create=new_out),
        _c("render flac", f"render {{w}}/take.wav {{w}}/out.flac {P}", 0, "wrote", may_create=("out.flac",)),
        _c("render float", f"render {{w}}/take.wav {{w}}/out.wav {P} --float", 0, "FLOAT", may_create=new_out),
        _c("regression_render_refuses_existing_out", f"render {{w}}/take.wav {{w}}/old.wav {P}", 1,
           "already exists.*--force"),
        _c("render existing out force", f"render {{w}}/take.wav {{w}}/old.wav {P} --force", 0, "wrote",
           may_change=("old.wav",)),
        _c("render out is in", f"render {{w}}/take.wav {{w}}/take.wav {P}", 1, "same file as IN"),
        _c("render out is in force", f"render {{w}}/take.wav {{w}}/take.wav {P} --force", 1, "same file as IN"),
        _c("regression_render_never_writes_into_a_fifo", f"render {{w}}/take.wav {{w}}/pipe.wav {P} --force", 1,
           "FIFO"),
        _c("render fifo", f"render {{w}}/take.wav {{w}}/pipe.wav {P}", 1, "FIFO"),
        _c("render device", f"render {{w}}/take.wav /dev/null {P} --force", 1, "FIFO, device"),
        _c("render read-only out", f"render {{w}}/take.wav {{w}}/readonly.wav {P}", 1, "already exists"),
        _c("render out folder missing", f"render {{w}}/take.wav {{w}}/nofolder/o.wav {P}", 1, "does not exist"),
        _c("render out is a folder", f"render {{w}}/take.wav {{w}}/busy {P}", 2, "directory|folder"),
        _c("render out extension", f"render {{w}}/take.wav {{w}}/out.xyz {P}", 1, "extension"),
        _c("render out no extension", f"render {{w}}/take.wav {{w}}/out {P}", 1, "extension"),
        _c("render in missing", f"render {{w}}/nothere.wav {{w}}/out.wav {P}", 1, "no such file"),
        _c("render in empty", f"render {{w}}/empty.wav {{w}}/out.wav {P}", 1, "empty"),
        _c("render in not audio", f"render {{w}}/notes.wav {{w}}/out.wav {P}", 1, "not an audio file"),
        _c("regression_truncated_flac_render", f"render {{w}}/cut.flac {{w}}/out.wav {P}", 1,
           "damaged or cut short"),
        _c("regression_cut_wav_reports_shortfall", f"render {{w}}/cut.wav {{w}}/out.wav {P}", 0,
           r"header promises \d+ frames, the file holds \d+", may_create=new_out),
        _c("render silent", f"render {{w}}/silent.wav {{w}}/out.wav {P}", 0, "wrote", may_create=new_out),
        _c("render subtype bogus", f"render {{w}}/take.wav {{w}}/out.wav {P} --subtype BOGUS", 1, "subtype"),
        _c("render float into flac", f"render {{w}}/take.wav {{w}}/out.flac {P} --subtype FLOAT", 1, "FLAC"),
        _c("render build worst", f"render {{w}}/take.wav {{w}}/out.wav {P} --build worst", 0, "build worst",
           may_create=new_out),
        _c("render build text", f"render {{w}}/take.wav {{w}}/out.wav {P} --build abc", 1, "build"),
        _c("render build huge", f"render {{w}}/take.wav {{w}}/out.wav {P} --build 99999999999999999999", 1,
           "draw number"),
        _c("render tolerance bad", f"render {{w}}/take.wav {{w}}/out.wav {P} --build worst --r-tol 200%", 1,
           "tolerance|r-tol|200"),
        _c("regression_plot_folder_missing_render", f"render {{w}}/take.wav {{w}}/out.wav {P} "
           "--plot {w}/nofolder/p.png", 1, "nofolder"),
        _c("render plot exists", f"render {{w}}/take.wav {{w}}/out.wav {P} --plot {{w}}/old.png", 1,
           "already exists"),
        _c("render plot new", f"render {{w}}/take.wav {{w}}/out.wav {P} --plot {{w}}/p.png", 0, "wrote",
           may_create=("out.wav", "p.png")),
        _c("render non-utf8 out name", [*"render {w}/take.wav".split(), "{w}/o\udcff.wav", *PARTS], 0, "wrote",
           may_create=("o*.wav",)),
        _c("render mix too big", f"render {{w}}/take.wav {{w}}/out.wav {P} --mix 2", 1, "mix"),
        _c("render preset missing", "render {w}/take.wav {w}/out.wav --preset ghost --presets {w}/presets",
           1, "no preset"),
        _c("render in is a folder", f"render {{w}}/busy {{w}}/out.wav {P}", 2, "directory|folder"),
        _c("regression_full_disk_render", f"render {{w}}/take.wav {{w}}/out.wav {P}", 1,
           "writing failed.*nothing was written", inject="disk_full"),
        _c("render full disk force keeps old", f"render {{w}}/take.wav {{w}}/old.wav {P} --force", 1,
           "writing failed", inject="disk_full"),
        _c("render removed", f"render {{w}}/take.wav {{w}}/out.wav {P} --removed {{w}}/gone.wav", 0, "removes",
           may_create=("out.wav", "gone.wav")),
        _c("render removed exists", f"render {{w}}/take.wav {{w}}/out.wav {P} --removed {{w}}/old.wav", 1,
           "already exists.*--force"),
        _c("render removed exists force", f"render {{w}}/take.wav {{w}}/out.wav {P} --removed {{w}}/old.wav --force",
           0, "removes", may_create=new_out, may_change=("old.wav",)),
        _c("render removed is out", f"render {{w}}/take.wav {{w}}/out.wav {P} --removed {{w}}/out.wav", 2,
           "another file than OUT"),
        _c("render removed is in", f"render {{w}}/take.wav {{w}}/out.wav {P} --removed {{w}}/take.wav --force", 1,
           "same file as IN"),
        _c("render removed extension", f"render {{w}}/take.wav {{w}}/out.wav {P} --removed {{w}}/gone.xyz", 1,
           "extension"),
        _c("render removed folder missing", f"render {{w}}/take.wav {{w}}/out.wav {P} --removed {{w}}/no/g.wav", 1,
           "does not exist"),
        _c("render removed full disk", f"render {{w}}/take.wav {{w}}/out.wav {P} --removed {{w}}/gone.wav", 1,
           "writing failed", inject="disk_full"),
        # --- sibilance -----------------------------------------------------------------------
        _c("sibilance ok", "sibilance {w}/take.wav", 0, "sibilance|peak"),
        _c("sibilance two takes json", "sibilance {w}/take.wav {w}/take2.wav --json", 0, "{"),
        _c("sibilance missing", "sibilance {w}/nothere.wav", 1, "no such file"),
        _c("sibilance silent", "sibilance {w}/silent.wav", 0, "."),
        _c("regression_truncated_flac_sibilance", "sibilance {w}/cut.flac", 1, "damaged or cut short"),
        _c("sibilance cut wav", "sibilance {w}/cut.wav", 0, "header promises"),
        _c("sibilance band reversed", "sibilance {w}/take.wav --band 5000 2000", 1, "band"),
        _c("sibilance band zero", "sibilance {w}/take.wav --band 0 100", 1, "band"),
        _c("sibilance not audio", "sibilance {w}/notes.wav", 1, "not an audio file"),
        _c("sibilance empty", "sibilance {w}/empty.wav", 1, "empty"),
        _c("sibilance plot folder missing", "sibilance {w}/take.wav --plot {w}/nofolder/p.png", 1, "nofolder"),
        _c("sibilance plot exists", "sibilance {w}/take.wav --plot {w}/old.png", 1, "already exists"),
        _c("sibilance no takes", "sibilance", 2, "TAKE"),
        # --- hum ------------------------------------------------------------
        _c("hum ok", "hum {w}/take.wav", 0, "mains hum"),
        _c("hum two takes json", "hum {w}/take.wav {w}/take2.wav --json", 0, "pooled"),
        _c("hum silent", "hum {w}/silent.wav", 0, "no "),
        _c("hum missing", "hum {w}/nothere.wav", 1, "no such file"),
        _c("hum truncated flac", "hum {w}/cut.flac", 1, "damaged or cut short"),
        _c("hum not audio", "hum {w}/notes.wav", 1, "not an audio file"),
        _c("hum empty", "hum {w}/empty.wav", 1, "empty"),
        _c("hum plot folder missing", "hum {w}/take.wav --plot {w}/nofolder/p.png", 1, "nofolder"),
        _c("hum plot exists", "hum {w}/take.wav --plot {w}/old.png", 1, "already exists"),
        _c("hum plot exists force", "hum {w}/take.wav --plot {w}/old.png --force", 0, "wrote",
           may_change=("old.png",)),
        _c("hum no takes", "hum", 2, "TAKE"),
        # --- resonance ------------------------------------------------------------
        _c("resonance ok", "resonance {w}/take.wav", 0, "resonance"),
        _c("resonance two takes json", "resonance {w}/take.wav {w}/take2.wav --json", 0, "pooled"),
        _c("resonance silent", "resonance {w}/silent.wav", 0, "no "),
        _c("resonance missing", "resonance {w}/nothere.wav", 1, "no such file"),
        _c("resonance truncated flac", "resonance {w}/cut.flac", 1, "damaged or cut short"),
        _c("resonance not audio", "resonance {w}/notes.wav", 1, "not an audio file"),
        _c("resonance empty", "resonance {w}/empty.wav", 1, "empty"),
        _c("resonance plot folder missing", "resonance {w}/take.wav --plot {w}/nofolder/p.png", 1, "nofolder"),
        _c("resonance plot exists", "resonance {w}/take.wav --plot {w}/old.png", 1, "already exists"),
        _c("resonance plot exists force", "resonance {w}/take.wav --plot {w}/old.png --force", 0, "wrote",
           may_change=("old.png",)),
        _c("resonance no takes", "resonance", 2, "TAKE"),
        _c("hum mains bad", "hum {w}/take.wav --mains 55", 2, "55"),
        # --- sweep --------------------------------------------------------------------------
        _c("sweep ok", f"sweep {{w}}/take.wav {S} --out {{w}}/out", 0, "pick", may_create=sweep_out),
        _c("sweep nested out", f"sweep {{w}}/take.wav {S} --out {{w}}/a/b/out", 0, "pick",
           may_create=("a", "a/b", "a/b/out", "a/b/out/*")),
        _c("regression_sweep_refuses_non_empty_out", f"sweep {{w}}/take.wav {S} --out {{w}}/busy", 1,
           "not empty.*--force"),
        _c("sweep non-empty out force", f"sweep {{w}}/take.wav {S} --out {{w}}/busy --force", 0, "pick",
           may_change=("busy", "busy/keep.txt"), may_create=("busy/*",)),
        _c("regression_sweep_never_overwrites_its_takes", f"sweep {{w}}/holds-take/take.wav {S} --out {{w}}/holds-take",
           1, "holds the take"),
        _c("sweep take inside out force", f"sweep {{w}}/holds-take/take.wav {S} --out {{w}}/holds-take --force", 1,
           "holds the take"),
        _c("sweep out is a file", f"sweep {{w}}/take.wav {S} --out {{w}}/afile", 2, "file|folder"),
        _c("regression_sweep_checks_every_take_first", f"sweep {{w}}/take.wav {{w}}/silent.wav {S} --out {{w}}/out",
           1, "silent.wav: cannot be swept"),
        _c("sweep bad take leaves no parents", f"sweep {{w}}/take.wav {{w}}/silent.wav {S} --out {{w}}/a/b/out", 1,
           "cannot be swept"),
        _c("regression_truncated_flac_sweep", f"sweep {{w}}/cut.flac {S} --out {{w}}/out", 1, "damaged or cut short"),
        _c("sweep missing take", f"sweep {{w}}/nothere.wav {S} --out {{w}}/out", 1, "no such file"),
        _c("sweep same stems", f"sweep {{w}}/take.wav {{w}}/same/take.wav {S} --out {{w}}/out", 1, "distinct"),
        _c("sweep steps zero", "sweep {w}/take.wav --from 4k --to 6k --steps 0 --out {w}/out", 1, "steps"),
        _c("sweep steps huge", "sweep {w}/take.wav --from 4k --to 6k --steps 1000 --out {w}/out", 1, "steps"),
        _c("sweep from only", "sweep {w}/take.wav --from 4k --out {w}/out", 2, "--to"),
        _c("sweep at and from", "sweep {w}/take.wav --at 4k --from 4k --to 5k --out {w}/out", 2, "either --at"),
        _c("sweep at text", "sweep {w}/take.wav --at abc --out {w}/out", 1, "abc|value"),
        _c("sweep at twice", "sweep {w}/take.wav --at 5k,5k --out {w}/out", 1, "0.5 Hz"),
        _c("sweep too low", "sweep {w}/take.wav --from 10 --to 100 --out {w}/out", 1, "sweep start"),
        _c("sweep workers zero", "sweep {w}/take.wav --at 4k --workers 0 --out {w}/out", 1, "workers"),
        _c("sweep workers huge", "sweep {w}/take.wav --at 4k --workers 100000 --out {w}/out", 1, "workers"),
        _c("sweep mix", f"sweep {{w}}/take.wav {S} --mix 2 --out {{w}}/out", 1, "mix"),
        _c("sweep q", f"sweep {{w}}/take.wav {S} --q 0.1 --out {{w}}/out", 1, "q|Q"),
        _c("sweep series", f"sweep {{w}}/take.wav {S} --series E7 --out {{w}}/out", 1, "series|E7"),
        _c("regression_plot_folder_missing_sweep", f"sweep {{w}}/take.wav {S} --out {{w}}/out "
           "--plot {w}/nofolder/p.png", 1, "nofolder"),
        _c("sweep plot exists", f"sweep {{w}}/take.wav {S} --out {{w}}/out --plot {{w}}/old.png", 1, "already exists"),
        _c("sweep plot inside out", f"sweep {{w}}/take.wav {S} --out {{w}}/out --plot {{w}}/out/p.png", 0, "wrote",
           may_create=sweep_out),
        _c("sweep preset missing", f"sweep {{w}}/take.wav {S} --preset ghost --presets {{w}}/presets --out {{w}}/out",
           1, "no preset"),
        _c("regression_full_disk_sweep", f"sweep {{w}}/take.wav {S} --out {{w}}/out", 1, "writing failed",
           inject="disk_full"),
        _c("sweep full disk force keeps old", f"sweep {{w}}/take.wav {S} --out {{w}}/busy --force", 1,
           "writing failed", inject="disk_full"),
        _c("sweep mix steps", "sweep {w}/take.wav --at 6k --mix-steps 2 --workers 1 --out {w}/out", 0,
           "stepping the mix.*mix0.50", may_create=sweep_out),
        _c("sweep q steps", "sweep {w}/take.wav --at 6k --q-steps 2 --q 1 --workers 1 --out {w}/out", 0,
           "stepping the Q.*q1-mix1.00", may_create=sweep_out),
        _c("sweep mix steps zero", "sweep {w}/take.wav --at 6k --mix-steps 0 --out {w}/out", 1, "mix steps 0"),
        _c("sweep q steps huge", "sweep {w}/take.wav --at 6k --q-steps 65 --out {w}/out", 1, "Q steps 65"),
        _c("sweep q steps top too low", "sweep {w}/take.wav --at 6k --q-steps 3 --q 0.2 --out {w}/out", 1,
           r"Q \(top of the Q steps\) 0.2"),
        _c("sweep mix steps with from", "sweep {w}/take.wav --from 4k --to 6k --mix-steps 2 --out {w}/out", 2,
           "give it with --at"),
        _c("sweep mix steps two notches", "sweep {w}/take.wav --at 4k,6k --mix-steps 2 --out {w}/out", 1,
           "holds one notch"),
        _c("sweep mix and q steps", "sweep {w}/take.wav --at 6k --mix-steps 2 --q-steps 2 --out {w}/out", 2,
           "not both"),
        _c("sweep no match", f"sweep {{w}}/take.wav {S} --no-match --out {{w}}/out", 0, "raw levels",
           may_create=sweep_out),
        _c("sweep removed", f"sweep {{w}}/take.wav {S} --removed --out {{w}}/out", 0, "removes",
           may_create=sweep_out),
        _c("sweep removed full disk", f"sweep {{w}}/take.wav {S} --removed --out {{w}}/out", 1, "writing failed",
           inject="disk_full"),
        # --- preset -------------------------------------------------------------------------
        _c("preset save", "preset save new --speaker X --notch 6k --presets {w}/presets", 0, "saved",
           may_create=("presets/new.toml",)),
        _c("preset save parts", f"preset save new --speaker X {P} --presets {{w}}/presets", 0, "saved",
           may_create=("presets/new.toml",)),
        _c("preset save exists", "preset save host --speaker X --notch 6k --presets {w}/presets", 1,
           "already exists.*--force"),
        _c("preset save exists force", "preset save host --speaker X --notch 6k --presets {w}/presets --force", 0,
           "saved", may_change=("presets/host.toml",)),
        _c("preset save bad name", "preset save ../evil --speaker X --notch 6k --presets {w}/presets", 1,
           "preset name"),
        _c("preset save non-utf8 name", ["preset", "save", "x\udcff", "--speaker", "X", "--notch", "6k",
                                         "--presets", "{w}/presets"], 1, "preset name"),
        _c("regression_preset_from_sweep_with_empty_pick",
           "preset save x --speaker X --from-sweep {w}/sw --presets {w}/presets", 1, "not a sweep summary"),
        _c("preset from sweep missing", "preset save x --speaker X --from-sweep {w}/nosweep --presets {w}/presets",
           1, "not a sweep summary"),
        _c("preset from finder", "preset save new --speaker X --from-finder {w}/take.wav {w}/take2.wav "
           "--presets {w}/presets", 0, "saved", may_create=("presets/new.toml",)),
        _c("preset from finder silent", "preset save new --speaker X --from-finder {w}/silent.wav "
           "--presets {w}/presets", 1, "found nothing usable"),
        _c("preset from finder exists", "preset save host --speaker X --from-finder {w}/take.wav "
           "--presets {w}/presets", 1, "already exists.*--force"),
        _c("preset from finder exists force", "preset save host --speaker X --from-finder {w}/take.wav "
           "--presets {w}/presets --force", 0, "saved", may_change=("presets/host.toml",)),
        _c("preset from finder no takes", "preset save new --speaker X --from-finder --presets {w}/presets", 2,
           "needs one or more takes"),
        _c("preset from finder unreadable", "preset save new --speaker X --from-finder {w}/notes.wav "
           "--presets {w}/presets", 1, "not an audio file"),
        _c("preset from finder truncated", "preset save new --speaker X --from-finder {w}/cut.flac "
           "--presets {w}/presets", 1, "damaged or cut short"),
        _c("preset save no source", "preset save x --speaker X --presets {w}/presets", 2, "exactly one"),
        _c("preset save two sources", f"preset save x --speaker X --notch 6k {P} --presets {{w}}/presets", 2,
           "exactly one"),
        _c("preset save notch zero", "preset save x --speaker X --notch 0 --presets {w}/presets", 1, "notch"),
        _c("preset save empty speaker", ["preset", "save", "x", "--speaker", " ", "--notch", "6k",
                                         "--presets", "{w}/presets"], 1, "speaker"),
        _c("preset save into a file", "preset save x --speaker X --notch 6k --presets {w}/afile", 2, "file"),
        _c("preset save new folder", "preset save x --speaker X --notch 6k --presets {w}/newp", 0, "saved",
           may_create=("newp", "newp/x.toml")),
        _c("preset save into a file by env", "preset save x --speaker X --notch 6k", 1, "not a folder",
           env={"EMULATE_PRESETS_DIR": "{w}/afile"}),
        _c("preset list", "preset list --presets {w}/presets", 0, "host"),
        _c("preset list json", "preset list --presets {w}/presets --json", 0, '"presets"'),
        _c("regression_presets_folder_missing_says_so", "preset list --presets {w}/nothere", 1, "does not exist"),
        _c("regression_presets_folder_is_a_file_says_so", "preset list", 1, "not a folder",
           env={"EMULATE_PRESETS_DIR": "{w}/afile"}),
        _c("preset list default lists shipped", "preset list", 0, "shipped with emulate"),
        _c("preset show", "preset show host --presets {w}/presets", 0, "host"),
        _c("regression_preset_show_strips_control_characters", "preset show noisy --presets {w}/presets", 0,
           r"^[^\x1b\x07]*$"),
        _c("preset show missing", "preset show ghost --presets {w}/presets", 1, "no preset"),
        _c("preset show malformed", "preset show broken --presets {w}/presets", 1, "broken.toml"),
        _c("preset show shipped", "preset show orrin-passive", 0, "orrin"),
        _c("preset delete", "preset delete host --presets {w}/presets", 0, "deleted",
           may_change=("presets/host.toml",)),
        _c("preset delete missing", "preset delete ghost --presets {w}/presets", 1, "no preset"),
        _c("preset delete shipped", "preset delete orrin-passive", 1, "ships with emulate"),
        # --- tolerance ------------------------------------------------------------------------
        _c("tolerance ok", f"tolerance {P} --draws 200", 0, "builds"),
        _c("tolerance draws zero", f"tolerance {P} --draws 0", 1, "draws"),
        _c("tolerance r-tol text", f"tolerance {P} --r-tol abc", 1, "tolerance|abc"),
        _c("tolerance c-tol huge", f"tolerance {P} --c-tol 300%", 1, "tolerance|300"),
        _c("tolerance trim share", f"tolerance {P} --draws 200 --trim-share 2", 1, "share"),
        _c("tolerance distribution", f"tolerance {P} --distribution cauchy", 2, "cauchy"),
        _c("tolerance plot exists", f"tolerance {P} --draws 200 --plot {{w}}/old.png", 1, "already exists"),
        _c("tolerance plot folder missing", f"tolerance {P} --draws 200 --plot {{w}}/nofolder/p.png", 1, "nofolder"),
        # --- sheet ----------------------------------------------------------------------------
        _c("sheet ok", "sheet --out {w}/sheet --notch 6.3k --draws 200", 0, "wrote",
           may_create=("sheet", "sheet/*"), slow=True),
        _c("sheet non-empty", "sheet --out {w}/busy --notch 6.3k --draws 200", 1, "not empty.*--force"),
        _c("sheet non-empty force", "sheet --out {w}/busy --notch 6.3k --draws 200 --force", 0, "wrote",
           may_change=("busy", "busy/keep.txt"), may_create=("busy/*",), slow=True),
        _c("sheet out is a file", "sheet --out {w}/afile --notch 6.3k", 2, "file"),
        _c("sheet parent missing", "sheet --out {w}/nofolder/sheet --notch 6.3k", 1, "does not exist"),
        _c("sheet notch zero", "sheet --out {w}/sheet --notch 0", 1, "notch"),
        _c("sheet draws zero", "sheet --out {w}/sheet --notch 6k --draws 0", 1, "draws"),
        _c("regression_sheet_errors_never_name_its_temporary_folder",
           "sheet --out {w}/sheet --notch 6.3k --draws 200", 1, r"^(?!.*\.part).*sheet", inject="disk_full"),
        # --- demo -----------------------------------------------------------------------------
        _c("regression_demo_refuses_zero_seconds_first", "demo --out {w}/demo --seconds 0", 1, "seconds"),
        _c("demo negative seconds", "demo --out {w}/demo --seconds -1", 1, "seconds"),
        _c("demo nan seconds", "demo --out {w}/demo --seconds nan", 1, "seconds"),
        _c("demo out non-empty", "demo --out {w}/busy --seconds 1", 1, "not empty.*--force"),
        _c("demo out is a file", "demo --out {w}/afile --seconds 1", 2, "file"),
        _c("demo out under a file", "demo --out {w}/afile/inside --seconds 1", 1, "not a folder"),
        _c("demo presets missing", "demo --out {w}/demo --seconds 1 --presets {w}/presets", 1, "demo presets"),
        _c("regression_full_disk_demo", "demo --out {w}/demo --seconds 1", 1, "writing failed",
           inject="disk_full"),
        # --- measure ----------------------------------------------------------------------------
        _c("measure stimulus ok", "measure stimulus {w}/sweep.wav --length 1", 0, "hearing",
           may_create=("sweep.wav",)),
        _c("measure stimulus exists", "measure stimulus {w}/old.wav --length 1", 1, "already exists.*--force"),
        _c("measure stimulus exists force", "measure stimulus {w}/old.wav --length 1 --force", 0, "wrote",
           may_change=("old.wav",)),
        _c("measure stimulus is a fifo", "measure stimulus {w}/pipe.wav --length 1 --force", 1, "FIFO"),
        _c("measure stimulus is a folder", "measure stimulus {w}/busy --length 1", 2, "directory|folder"),
        _c("measure stimulus folder missing", "measure stimulus {w}/nofolder/s.wav --length 1", 1, "nofolder"),
        _c("measure stimulus unknown container", "measure stimulus {w}/s.xyz --length 1", 1, "xyz|container"),
        _c("measure stimulus bad subtype", "measure stimulus {w}/s.flac --length 1 --subtype FLOAT", 1,
           "FLOAT"),
        _c("measure stimulus peak too high", "measure stimulus {w}/s.wav --peak 3", 1, "peak"),
        _c("measure stimulus length zero", "measure stimulus {w}/s.wav --length 0", 1, "length"),
        _c("measure stimulus length nan", "measure stimulus {w}/s.wav --length nan", 1, "length"),
        _c("measure stimulus above nyquist", "measure stimulus {w}/s.wav --rate 16000 --length 1", 1,
           "sweep end"),
        _c("measure stimulus rate text", "measure stimulus {w}/s.wav --rate fast", 2, "rate"),
        _c("measure stimulus disk full", "measure stimulus {w}/s.wav --length 1", 1, "space|s.wav",
           inject="disk_full"),
        _c("measure analyse csv", f"measure analyse {{w}}/m.csv {P} --max-parts 1", 0, "notch"),
        _c("measure analyse csv json", f"measure analyse {{w}}/m.csv {P} --max-parts 1 --json", 0,
           '"diagnosis"'),
        _c("measure analyse recording", f"measure analyse {{w}}/rec.wav {P} --to 7k --length 1 --max-parts 1",
           0, "latency 100 samples"),
        _c("measure analyse plot new", f"measure analyse {{w}}/m.csv {P} --max-parts 1 --plot {{w}}/m.svg", 0,
           "wrote", may_create=("m.svg",)),
        _c("measure analyse plot exists", f"measure analyse {{w}}/m.csv {P} --plot {{w}}/old.png", 1,
           "already exists.*--force"),
        _c("measure analyse plot exists force",
           f"measure analyse {{w}}/m.csv {P} --max-parts 1 --plot {{w}}/old.png --force", 0, "wrote",
           may_change=("old.png",)),
        _c("measure analyse plot suffix", f"measure analyse {{w}}/m.csv {P} --plot {{w}}/m.jpg", 1, "jpg|png"),
        _c("measure analyse plot disk full", f"measure analyse {{w}}/m.csv {P} --max-parts 1 --plot {{w}}/p.png",
           1, "space|p.png", inject="disk_full"),
        _c("measure analyse missing", f"measure analyse {{w}}/nothere.wav {P}", 1, "nothere"),
        _c("measure analyse not audio", f"measure analyse {{w}}/notes.wav {P}", 1, "notes.wav"),
        _c("measure analyse too short", f"measure analyse {{w}}/take.wav {P} --to 7k --length 1", 1,
           "shorter than the stimulus"),
        _c("measure analyse band above nyquist", f"measure analyse {{w}}/rec.wav {P} --length 1", 1, "sweep end"),
        _c("measure analyse csv malformed", f"measure analyse {{w}}/bad.csv {P}", 1, "line 3"),
        _c("measure analyse csv missing", f"measure analyse {{w}}/nothere.csv {P}", 1, "nothere.csv"),
        _c("measure analyse r-tol text", f"measure analyse {{w}}/m.csv {P} --r-tol abc", 1, "tolerance|abc"),
        _c("measure analyse max-parts 3", f"measure analyse {{w}}/m.csv {P} --max-parts 3", 2, "max-parts"),
        _c("measure analyse no circuit", "measure analyse {w}/m.csv", 2, "give the circuit"),
        # --- hum and resonance ----------------------------------------------------------------
        _c("hum json", "hum {w}/take.wav --json", 0, '"takes"'),
        _c("hum missing take", "hum {w}/nothere.wav", 1, "nothere"),
        _c("hum mains 55", "hum {w}/take.wav --mains 55", 2, "55"),
        _c("hum plot suffix", "hum {w}/take.wav --plot {w}/h.jpg", 1, "jpg|png"),
        _c("hum plot new", "hum {w}/take.wav --plot {w}/h.png", 0, "wrote", may_create=("h.png",)),
        _c("resonance missing take", "resonance {w}/nothere.wav", 1, "nothere"),
        _c("resonance plot disk full", "resonance {w}/take.wav --plot {w}/r.png", 1, "space|r.png",
           inject="disk_full"),
        # --- batch -------------------------------------------------------------------------------
        _c("batch inline ok", f"batch {B} --takes {{w}}/season --out {{w}}/renders --workers 1", 0, "2 rendered",
           may_create=batch_out),
        _c("batch plan ok", f"batch {{w}}/plan.toml --workers 1 {BP}", 0, "2 rendered", may_create=batch_out),
        _c("batch nested out", f"batch {B} --takes {{w}}/season/a --out {{w}}/x/y/renders --workers 1", 0,
           "1 rendered", may_create=("x", "x/*", "x/*/*", "x/*/*/*")),
        _c("batch same names in two folders", f"batch {B} --takes {{w}}/take.wav --takes {{w}}/same/take.wav "
           f"--out {{w}}/renders --workers 1", 0, "2 rendered", may_create=batch_out),
        _c("batch silent take", f"batch {B} --takes {{w}}/silent.wav --out {{w}}/renders --workers 1", 0,
           "n/a", may_create=batch_out),
        _c("batch no plan", "batch", 2, "plan file"),
        _c("batch inline incomplete", "batch --speaker A --preset host", 2, "missing --takes, --out"),
        _c("batch plan and inline", f"batch {{w}}/plan.toml {B} --takes {{w}}/season", 2, "not both"),
        _c("batch workers and cluster", f"batch {{w}}/plan.toml --workers 2 --cluster tcp://127.0.0.1:9 {BP}",
           2, "not both"),
        _c("batch plan missing", f"batch {{w}}/noplan.toml {BP}", 1, "cannot read the batch plan"),
        _c("batch plan not toml", f"batch {{w}}/notoml.toml {BP}", 1, "not a TOML"),
        _c("batch plan unknown key", f"batch {{w}}/badplan.toml {BP}", 1, "unknown key.*speakers"),
        _c("batch plan not utf8", f"batch {{w}}/latin1.toml {BP}", 1, "UTF-8"),
        _c("batch preset missing", "batch --speaker A --preset nobody --takes {w}/season --out {w}/renders "
           "--presets {w}/presets", 1, "no preset 'nobody'"),
        _c("batch preset broken", "batch --speaker A --preset broken --takes {w}/season --out {w}/renders "
           "--presets {w}/presets", 1, "broken"),
        _c("batch unreadable take", f"batch {B} --takes {{w}}/*.wav --out {{w}}/renders", 1, "empty file"),
        _c("batch pattern finds nothing", f"batch {B} --takes {{w}}/*.mp3 --out {{w}}/renders", 1, "matches no file"),
        _c("batch folder without audio", f"batch {B} --takes {{w}}/busy --out {{w}}/renders", 1, "no audio files"),
        _c("batch take listed twice", f"batch {B} --takes {{w}}/season --takes {{w}}/season/a/take.wav "
           "--out {w}/renders", 1, "listed twice"),
        _c("regression_batch_never_writes_inside_its_input_folder", f"batch {B} --takes {{w}}/season "
           "--out {w}/season/renders", 1, "overlaps"),
        _c("regression_batch_never_writes_over_a_take", f"batch {B} --takes {{w}}/holds-take/take.wav "
           "--out {w}/holds-take", 1, "overlaps"),
        _c("batch out contains the takes", f"batch {B} --takes {{w}}/season/a --out {{w}}/season", 1, "overlaps"),
        _c("batch out is a file", f"batch {B} --takes {{w}}/season --out {{w}}/afile", 2, "file"),
        _c("batch out under a file", f"batch {B} --takes {{w}}/season --out {{w}}/afile/r", 1, "not a folder"),
        _c("batch workers zero", f"batch {B} --takes {{w}}/season --out {{w}}/renders --workers 0", 1, "workers"),
        _c("batch workers huge", f"batch {B} --takes {{w}}/season --out {{w}}/renders --workers 100000", 1,
           "workers"),
        _c("batch existing output without force", f"batch {B} --takes {{w}}/season/a --out {{w}}/renders-old", 1,
           "no earlier batch.*--force"),
        _c("batch existing output force", f"batch {B} --takes {{w}}/season/a --out {{w}}/renders-old --force", 0,
           "1 rendered", may_change=("renders-old/take.wav",), may_create=("renders-old/*",)),
        _c("batch foreign summary", f"batch {B} --takes {{w}}/season --out {{w}}/sw", 1, "not an earlier batch"),
        _c("batch foreign summary force", f"batch {B} --takes {{w}}/season --out {{w}}/sw --force --workers 1", 0,
           "2 rendered", may_change=("sw/summary.json",), may_create=("sw/*", "sw/*/*")),
        _c("batch truncated flac", f"batch {B} --takes {{w}}/cut.flac --out {{w}}/renders", 1, "damaged or cut short"),
        _c("regression_batch_interrupted_keeps_only_complete_renders", f"batch {B} --takes {{w}}/season "
           "--out {w}/renders --workers 1", 1, "interrupted.*kept.*resume", inject="interrupt_batch",
           may_keep=("renders", "renders/a", "renders/a/take.wav", "renders/summary.*", "renders/index.html",
                     "renders/listening", "renders/listening/a", "renders/listening/a/take.wav--*.wav")),
        _c("batch full disk", f"batch {B} --takes {{w}}/season --out {{w}}/renders --workers 1", 1,
           "writing failed", inject="disk_full"),
        # --- the group ------------------------------------------------------------------------
        _c("unknown command", "frobnicate", 2, "No such command"),
        _c("unknown option", "response --frob", 2, "No such option"),
    ]
    return cases


# Long cases (a whole sweep, a picture written over an old one) whose property a cheaper case of
# the same command checks in the default run: with the slow checks, so that the default run stays
# within its CPU budget (issue 8). Every refusal, one success of each command and one full disk of
# each command stay in the default run.
LONG_CASES = frozenset({
    "sweep no match", "sweep removed", "sweep plot inside out", "sweep q steps", "sweep mix steps",
    "sweep non-empty out force", "sweep nested out", "sweep removed full disk",
    "response plot exists force", "measure analyse plot exists force",
    # a full disk under a sweep stays by default (regression_full_disk_sweep), and so does an old
    # output kept through a full disk with --force (render full disk force keeps old)
    "sweep full disk force keeps old",
})



def _command(case: Case) -> str:
    """The command a case runs; ``preset`` and ``measure`` by their subcommand."""
    return " ".join(case.args[:2]) if case.args[0] in ("preset", "measure") else case.args[0]


def _successes_beyond_two(cases) -> set[str]:
    """Successful runs (exit 0) of a command beyond its first two that are not regression cases.

    A success runs the whole command to its outputs (0.1-0.5 s each, a picture more); two of each
    command (with and without --force alike), every regression case, every refusal (a few
    milliseconds each: each names its own validator) and every injected fault stay in the default
    run; the rest are slow (issue 8: the default run under 60 s of CPU).
    """
    seen: dict[tuple, int] = {}
    beyond = set()
    for case in cases:
        if case.exit != 0 or case.slow or case.name in LONG_CASES or case.name.startswith("regression_"):
            continue
        kind = (_command(case), "--force" in case.args)
        seen[kind] = seen.get(kind, 0) + 1
        if seen[kind] > 2:
            beyond.add(case.name)
    return beyond


_ALL = _cases()
_SLOW = LONG_CASES | _successes_beyond_two(_ALL)
CASES = [dataclasses.replace(case, slow=True) if case.name in _SLOW else case for case in _ALL]
assert LONG_CASES <= {case.name for case in CASES}


# --- running ---------------------------------------------------------------------------------
def _snapshot(root: Path) -> dict[str, tuple]:
    found = {}
    for folder, dirs, names in os.walk(root):
        for name in dirs + names:
            path = Path(folder) / name
            rel = str(path.relative_to(root))
            info = os.lstat(path)
            if stat.S_ISREG(info.st_mode):
                found[rel] = ("file", hashlib.sha1(path.read_bytes()).hexdigest(), stat.S_IMODE(info.st_mode))
            else:
                found[rel] = (stat.S_IFMT(info.st_mode),)
    return found


@lru_cache(maxsize=None)
def _template_snapshot(template: Path) -> dict[str, tuple]:
    return _snapshot(template)


def template_unchanged(template: Path) -> bool:
    """Whether the template (which every workspace links to) still holds what it held at its first case."""
    return _snapshot(template) == _template_snapshot(template)


def _allowed(rel: str, patterns) -> bool:
    return any(fnmatch.fnmatchcase(rel, pattern) for pattern in patterns)


@contextlib.contextmanager
def _injected(kind: str | None):
    if kind is None:
        yield
        return
    assert kind in ("disk_full", "interrupt_batch"), kind

    def no_space(*_args, **_kwargs):
        raise sf.LibsndfileError(2, "Error : ")  # libsndfile's SF_ERR_SYSTEM, as a full disk gives it

    def no_space_picture(*_args, **_kwargs):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC), str(_args[1]) if len(_args) > 1 else None)

    if kind == "interrupt_batch":
        from emulate.work import batch

        real, calls = batch.run_job, []

        def second_is_interrupted(job):
            calls.append(job)
            if len(calls) > 1:
                raise KeyboardInterrupt
            return real(job)

        with mock.patch.object(batch, "run_job", second_is_interrupted):
            yield
        return
    import matplotlib.figure

    from emulate.audio.rawpcm import RawPCM  # WAV PCM written as bytes

    with mock.patch.object(sf.SoundFile, "write", no_space), mock.patch.object(RawPCM, "write", no_space), \
            mock.patch.object(matplotlib.figure.Figure, "savefig", no_space_picture):
        yield


def _fill(value: str, w: Path) -> str:
    return value.replace("{w}", str(w))


def run_case(case: Case, template: Path, workspace: Path) -> Outcome:
    """Run one case in a fresh copy of ``template`` at ``workspace`` and judge the result."""
    from emulate.cli import main

    # the workspace's files are hard links to the template's (a fifth of the cost of copies): the
    # commands replace files by renaming, never in place, so the template stays as it was; its
    # snapshot, taken once, is the workspace's before the run. A command that wrote into a file in
    # place would show here as data lost (and in every later case), never hide a loss.
    shutil.copytree(template, workspace, symlinks=True, copy_function=os.link)
    os.mkfifo(workspace / "pipe.wav")  # copytree cannot copy a FIFO
    before = {**_template_snapshot(template), "pipe.wav": (stat.S_IFIFO,)}
    env = {"EMULATE_PRESETS_DIR": str(workspace / "user-presets"), "XDG_DATA_HOME": str(workspace / "data")}
    env |= {key: _fill(value, workspace) for key, value in case.env.items()}
    with _injected(case.inject):
        result = CliRunner().invoke(main, [_fill(a, workspace) for a in case.args], env=env)
    output = result.output
    crashed = result.exception is not None and not isinstance(result.exception, SystemExit)
    traceback = crashed or "Traceback" in output or "unexpected error" in output
    after = _snapshot(workspace)
    lost = [rel for rel, what in before.items() if after.get(rel) != what and not _allowed(rel, case.may_change)]
    allowed_new = case.may_create if result.exit_code == 0 else case.may_keep
    stray = [rel for rel in after if rel not in before and not _allowed(rel, allowed_new)]
    return Outcome(case, result.exit_code, output, traceback, lost, stray)
