"""The controlled hum grid: invented voice-like takes with mains hum of known frequency and level.

Each case is an invented voice-like take (:func:`emulate.voice.synth.voice_like_take`, RMS
-18 dBFS) with hum added at a known fundamental (49.9, 50, 59.9 or 60.1 Hz: within the
+-0.2 Hz most grids hold, common practice), a known level of the fundamental (-50 to -20
dBFS, AES17: a full-scale sine reads 0 dBFS), with or without harmonics (2..7 at
1/k the fundamental's amplitude, odd ones stronger, as a rectifier's buzz; our own shape).
Clean takes are the negative controls.

Judging (the issue's targets): found with the fundamental within 0.05 Hz; a clean take
passes when nothing is found.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

from emulate.voice.synth import voice_like_take

__all__ = ["Case", "controls", "grid_cases", "hum_signal", "judge", "make_case"]

FUNDAMENTALS_HZ = (49.9, 50.0, 59.9, 60.1)
LEVELS_DBFS = (-50.0, -40.0, -30.0, -20.0)
HARMONICS = (False, True)
RATES_HZ = (44100, 48000)
SECONDS = 8.0
FREQ_ABS_HZ = 0.05


@dataclass(frozen=True)
class Case:
    fundamental_hz: float | None  # None: a clean take
    level_dbfs: float
    harmonics: bool
    fs: int
    seed: int = 0

    @property
    def name(self) -> str:
        if self.fundamental_hz is None:
            return f"clean fs={self.fs} seed={self.seed}"
        return (f"f={self.fundamental_hz:g} level={self.level_dbfs:g} harmonics={self.harmonics} "
                f"fs={self.fs}")


def grid_cases() -> list[Case]:
    """Every hum case (4 frequencies x 4 levels x 2 x 2 rates = 64)."""
    return [Case(f, lv, h, fs, seed=i) for i, (f, lv, h, fs) in
            enumerate(itertools.product(FUNDAMENTALS_HZ, LEVELS_DBFS, HARMONICS, RATES_HZ))]


def controls() -> list[Case]:
    """Clean takes at each rate, four seeds each, pitches spanning low to high voices."""
    return [Case(None, 0.0, False, fs, seed=500 + s) for fs in RATES_HZ for s in range(4)]


def make_case(case: Case) -> np.ndarray:
    """The take (mono): a voice-like take plus the case's hum."""
    pitch = (95.0, 130.0, 180.0, 230.0)[case.seed % 4]
    x = voice_like_take(case.fs, SECONDS, pitch_hz=pitch, sibilance_hz=6000.0, seed=case.seed)[:, 0]
    if case.fundamental_hz is None:
        return x
    return x + hum_signal(x.size, case.fs, case.fundamental_hz, case.level_dbfs, case.harmonics)


def hum_signal(frames: int, fs: float, fundamental_hz: float, level_dbfs: float, harmonics: bool) -> np.ndarray:
    """Mains hum of ``frames`` samples: the fundamental at ``level_dbfs`` (its peak
    ``10**(level/20)``, AES17), with harmonics 2..7 as the module docstring says."""
    t = np.arange(frames) / fs
    amplitude = 10.0 ** (level_dbfs / 20.0)
    ks = range(1, 8) if harmonics else (1,)
    weight = {k: 1.0 if k == 1 else (1.0 / k if k % 2 else 0.5 / k) for k in ks}
    return sum(amplitude * w * np.sin(2 * np.pi * k * fundamental_hz * t + 0.3 * k) for k, w in weight.items())


def judge(report, case: Case) -> tuple[bool, float]:
    """(passes, fundamental error in Hz); a clean take passes when no hum is found."""
    if case.fundamental_hz is None:
        return not report.found, float("nan")
    if not report.found:
        return False, float("nan")
    error = report.fundamental_hz - case.fundamental_hz
    return abs(error) <= FREQ_ABS_HZ, error
