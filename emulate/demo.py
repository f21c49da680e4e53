"""The built-in demonstration: two invented speakers, their takes and their presets.

Scenario (invented): *Low Tide Notes*, a weekly talk podcast recorded in the
one-room studio of Saltmarsh Community Radio. Two co-hosts, both made up:
Orrin, whose /s/ sits low (near 4.8 kHz), and Tamsin, whose /s/ is bright (near
7.2 kHz). Their takes are synthesised here (:mod:`emulate.voice.synth`); nothing is
recorded from anyone. Each host has a preset shipped with emulate (the repository's
``presets/``, installed as package data).

The pipeline, top to bottom: synthesise each take -> find its sibilance ->
load the host's preset -> render the take through the preset's circuit, at full
notch and at the preset's mix -> measure what changed -> say what to listen for.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from emulate import files
from emulate.audio import stream as audio
from emulate.dsp import emulation
from emulate.report import plots
from emulate.voice import bands, loudness, sibilance, synth
from emulate.analog import spec
from emulate.errors import PresetError
from emulate.validate import check_range
from emulate.work.presets import PresetStore, default_presets_dir, shipped_presets_dir
from emulate.analog.response import measure_notch

__all__ = ["DEMO_RATE_HZ", "DEMO_SECONDS", "MORE_TAKES", "SECONDS_RANGE", "DemoSpeaker", "SPEAKERS",
           "DemoRender", "DemoTake", "presets_folder", "run_demo"]

DEMO_RATE_HZ = 48000
DEMO_SECONDS = 12.0
MORE_TAKES = 2  # extra takes per host, for trying the sibilance, sweep and preset commands
SECONDS_RANGE = (1.0, 600.0)  # a take needs some syllables; longer only waits


@dataclass(frozen=True)
class DemoSpeaker:
    key: str
    pitch_hz: float
    sibilance_hz: float
    preset: str
    seed: int


SPEAKERS = (
    DemoSpeaker("orrin", pitch_hz=108.0, sibilance_hz=4800.0, preset="orrin-passive", seed=11),
    DemoSpeaker("tamsin", pitch_hz=212.0, sibilance_hz=7200.0, preset="tamsin-active", seed=23),
)


@dataclass(frozen=True)
class DemoRender:
    path: Path
    mix: float
    sibilance_reduction_db: float
    loudness_change_db: float
    fidelity_db: float
    method: str


@dataclass(frozen=True)
class DemoTake:
    speaker: DemoSpeaker
    path: Path
    report: sibilance.SibilanceReport
    preset_path: Path
    notch_hz: float
    renders: tuple[DemoRender, ...]
    burst_times_s: tuple[float, ...]
    pictures: tuple[Path, ...]
    more_takes: tuple[Path, ...]


def presets_folder(presets_dir=None) -> Path:
    """Where the demo presets are: ``presets_dir``, the default folder, or the repository's."""
    candidates = [Path(presets_dir)] if presets_dir else [default_presets_dir(), shipped_presets_dir()]
    for folder in candidates:
        if all((folder / f"{s.preset}.toml").is_file() for s in SPEAKERS):
            return folder
    wanted = ", ".join(f"{s.preset}.toml" for s in SPEAKERS)
    raise PresetError(f"the demo presets ({wanted}) are in none of {', '.join(map(str, candidates))}; "
                      "leave out --presets to use the ones shipped with emulate")


def run_demo(out_dir, *, presets_dir=None, seconds: float = DEMO_SECONDS, progress=None,
             force: bool = False) -> list[DemoTake]:
    """Write the takes, renders and pictures into the folder ``out_dir``, all of it or nothing.

    Everything is checked first (seconds, presets, the folder: a non-empty one needs
    ``force`` and is then replaced as a whole once the new demo is complete); the
    folder is written beside ``out_dir`` and renamed onto it at the end, so an error
    or an interruption leaves nothing new behind.

    Raises
    ------
    BadValueError, PresetError, emulate.errors.OutputRefusedError
        Before anything is written.
    """
    out_dir = Path(out_dir)
    check_range("demo seconds", seconds, *SECONDS_RANGE)
    store = PresetStore(presets_folder(presets_dir))
    files.check_new_folder(out_dir, force=force)
    with files.parents_made(out_dir), files.atomic_path(out_dir) as staging:
        for folder in ("takes", "renders", "pictures"):
            (staging / folder).mkdir(parents=True)
        takes = [_demo_take(staging, speaker, store, seconds, progress) for speaker in SPEAKERS]
    return [_moved(take, staging, out_dir) for take in takes]


def _moved(value, staging: Path, out_dir: Path):
    """``value`` with every path inside ``staging`` renamed to the same path under ``out_dir``."""
    if isinstance(value, Path):
        return out_dir / value.relative_to(staging) if staging in value.parents else value
    if isinstance(value, tuple):
        return tuple(_moved(item, staging, out_dir) for item in value)
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return dataclasses.replace(value, **{f.name: _moved(getattr(value, f.name), staging, out_dir)
                                             for f in dataclasses.fields(value) if f.init})
    return value


def _demo_take(out_dir, speaker, store, seconds, progress) -> DemoTake:
    x = synth.voice_like_take(DEMO_RATE_HZ, seconds, pitch_hz=speaker.pitch_hz,
                              sibilance_hz=speaker.sibilance_hz, seed=speaker.seed)
    take_path = out_dir / "takes" / f"{speaker.key}-take1.wav"
    audio.write_array(take_path, x, DEMO_RATE_HZ, subtype="PCM_24")
    report = sibilance.find_sibilance(x, DEMO_RATE_HZ)
    preset = store.load(speaker.preset)
    network = spec.network_from_preset(preset)
    renders = tuple(_render(out_dir, take_path, x, network.replace(mix=mix), report, preset.name, progress)
                    for mix in sorted({1.0, network.mix}))
    schedule = synth.take_schedule(seconds, seed=speaker.seed)
    bursts = tuple(round(start, 2) for start, _ in schedule.bursts_s)
    notch_hz = measure_notch(network.response).notch_hz
    pictures = _pictures(out_dir, speaker, network, x, renders[-1], notch_hz, report)
    more = tuple(_more_take(out_dir, speaker, number, seconds) for number in range(2, 2 + MORE_TAKES))
    return DemoTake(speaker, take_path, report, store.path(preset.name), notch_hz, renders, bursts,
                    pictures, more)


def _more_take(out_dir, speaker, number: int, seconds: float) -> Path:
    """Another take of the same host: same voice, other words (seed), pitch a little off."""
    x = synth.voice_like_take(DEMO_RATE_HZ, seconds, pitch_hz=speaker.pitch_hz * (1 + 0.02 * number),
                              sibilance_hz=speaker.sibilance_hz * (1 - 0.01 * number),
                              seed=speaker.seed + number)
    path = out_dir / "takes" / f"{speaker.key}-take{number}.wav"
    audio.write_array(path, x, DEMO_RATE_HZ, subtype="PCM_24")
    return path


def _pictures(out_dir, speaker, network, dry, heard: "DemoRender", notch_hz, report) -> tuple[Path, ...]:
    """The preset's analog-vs-digital response and the take's spectrum before and after ``heard``."""
    wet_path, words = heard.path, plots.circuit_words(network.replace(mix=heard.mix))
    folder = out_dir / "pictures"
    response = plots.plot_response(network, folder / f"{speaker.key}-response.png", fs=DEMO_RATE_HZ)
    wet, _ = audio.read_all(wet_path)
    spectrum = plots.plot_take_spectrum(dry, wet, DEMO_RATE_HZ, folder / f"{speaker.key}-spectrum.png",
                                        notch_hz=notch_hz, band_hz=report.band_hz,
                                        label=f"{Path(wet_path).name} through the {words}")
    return response, spectrum


def _render(out_dir, take_path, dry, network, report, preset_name, progress) -> DemoRender:
    out = out_dir / "renders" / f"{take_path.stem}--{preset_name}--mix{network.mix:.2f}.wav"
    processor = emulation.processor_for(network)
    audio.render_file(take_path, out, processor, progress=progress)
    wet, _ = audio.read_all(out)
    dry = np.asarray(dry, float).reshape(len(dry), -1)
    return DemoRender(
        path=out, mix=network.mix,
        sibilance_reduction_db=bands.sibilance_reduction_db(dry, wet, DEMO_RATE_HZ, report.band_hz),
        loudness_change_db=loudness.loudness_change_db(dry, wet, DEMO_RATE_HZ),
        fidelity_db=processor.fidelity_db, method=processor.design.method)
