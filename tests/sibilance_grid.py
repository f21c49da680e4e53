"""The controlled sibilance grid: invented takes whose sibilance is known, and how to judge a report.

Each case is a steady harmonic vowel (formants changing every 250 ms, a -6 or -12 dB/octave
source tilt, RMS -20 dBFS) with noise bursts of known centre (bell-shaped over +-15 %), level
relative to the vowel RMS and duty, at a given rate, over an optional background (white noise
at -40 or -30 dBFS, or 50 Hz mains hum with harmonics at -30 dBFS). Negative controls hold no
bursts: vowels only, noise only, hum only, vowels with noise.

"Clearly audible" is our own criterion (common practice, no source): during a burst, its power
in its own band (centre +-15 %) stands at least 6 dB over the masker (vowel plus background)
in that band, measured on the separately generated components.

Judging: a case is found when the report's class for the burst (/s/ at 4 kHz and above, /sh/
below, as the finder classifies) is usable with its peak within 3 % of the centre. A negative
control passes when neither class is usable.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

from emulate.voice.synth import sine_series

TILTS_DB = (-6.0, -12.0)
CENTRES_HZ = (3000.0, 5000.0, 6500.0, 8000.0, 10000.0)
LEVELS_DB = (0.0, -6.0, -12.0, -18.0)
DUTIES = (0.1, 0.3, 0.5)
RATES_HZ = (44100, 48000, 96000)
BACKGROUNDS = ("none", "noise-40", "noise-30", "hum")
VOWEL_DBFS = -20.0
SECONDS = 3.0
AUDIBLE_DB = 6.0
PEAK_REL = 0.03
_FORMANTS_HZ = ((700, 1200, 2500), (300, 2200, 2900), (350, 850, 2300), (500, 1750, 2500), (500, 900, 2400))


@dataclass(frozen=True)
class Case:
    tilt_db: float
    centre_hz: float | None  # None: a negative control
    level_db: float
    duty: float
    fs: int
    background: str
    vowels: bool = True
    seed: int = 0

    @property
    def name(self) -> str:
        if self.centre_hz is None:
            return f"control vowels={self.vowels} tilt={self.tilt_db:g} bg={self.background} fs={self.fs}"
        return (f"tilt={self.tilt_db:g} fc={self.centre_hz:g} level={self.level_db:g} duty={self.duty:g} "
                f"fs={self.fs} bg={self.background}")

    @property
    def kind(self) -> str:
        return "s" if (self.centre_hz or 0) >= 4000.0 else "sh"


def grid_cases() -> list[Case]:
    """Every burst case of the grid (2 x 5 x 4 x 3 x 3 x 4 = 1440)."""
    return [Case(t, c, lv, d, fs, bg, seed=i) for i, (t, c, lv, d, fs, bg) in
            enumerate(itertools.product(TILTS_DB, CENTRES_HZ, LEVELS_DB, DUTIES, RATES_HZ, BACKGROUNDS))]


def negative_controls() -> list[Case]:
    """Vowels only, noise only, hum only, vowels with noise; at every rate (and both tilts)."""
    cases = []
    for i, fs in enumerate(RATES_HZ):
        for tilt in TILTS_DB:
            cases += [Case(tilt, None, 0, 0, fs, "none", seed=100 + i),
                      Case(tilt, None, 0, 0, fs, "noise-40", seed=200 + i),
                      Case(tilt, None, 0, 0, fs, "noise-30", seed=300 + i)]
        cases += [Case(-6.0, None, 0, 0, fs, bg, vowels=False, seed=400 + i) for bg in BACKGROUNDS[1:]]
    return cases


def _vowel(case: Case, n: int, rng) -> np.ndarray:
    fs = case.fs
    t = np.arange(n) / fs
    pitch = 140.0 * 2.0 ** (np.sin(2 * np.pi * 0.4 * t + rng.uniform(0, 6)) / 12.0)  # +-1 semitone
    phase = 2 * np.pi * np.cumsum(pitch) / fs
    top = min(12000.0, 0.45 * fs)
    out = np.zeros(n)
    seg = int(0.25 * fs)
    for start in range(0, n, seg):
        stop = min(start + seg, n)
        centres = np.array(_FORMANTS_HZ[rng.integers(len(_FORMANTS_HZ))], float)
        k = np.arange(1, int(top // pitch[start:stop].min()) + 1)[:, None]
        f_k = k * pitch[start:stop]
        envelope = sum(w / np.sqrt(1 + ((f_k - c) / (0.05 * c + 40)) ** 2) for c, w in zip(centres, (1, .5, .25)))
        amp = np.where(f_k < top, envelope * k ** (case.tilt_db / 6.0), 0.0)
        out[start:stop] = sine_series(amp, phase[start:stop])  # sum of amp * sin(k phase), several times faster
    ramp = np.minimum(1.0, np.minimum(np.arange(n), n - 1 - np.arange(n)) / (0.01 * fs))
    out *= ramp
    return out * (10 ** (VOWEL_DBFS / 20) / np.sqrt(2)) / np.sqrt(np.mean(out**2))


def _bell_noise(centre_hz: float, n: int, fs: float, rng) -> np.ndarray:
    spectrum = np.fft.rfft(rng.standard_normal(n))
    f = np.fft.rfftfreq(n, 1 / fs)
    lo, hi = 0.85 * centre_hz, 1.15 * centre_hz
    shape = np.where((f > lo) & (f < hi), np.sin(np.pi * (f - lo) / (hi - lo)), 0.0)
    noise = np.fft.irfft(spectrum * shape, n)
    return noise / np.sqrt(np.mean(noise**2))


def _gate(case: Case, n: int, rng) -> np.ndarray:
    """Bursts of 80-160 ms with 10 ms raised-cosine ramps, total duty ``case.duty``."""
    fs, gate = case.fs, np.zeros(n)
    want, t = case.duty * n, int(0.1 * fs)
    count = 0
    while count < want and t < n - int(0.1 * fs):
        length = int(rng.uniform(0.08, 0.16) * fs)
        gap = int(length * (1 - case.duty) / case.duty * rng.uniform(0.7, 1.3))
        r = int(0.01 * fs)
        burst = np.ones(min(length, n - t))
        burst[:r] = 0.5 - 0.5 * np.cos(np.pi * np.arange(r) / r)
        burst[-r:] = burst[:r][::-1]
        gate[t : t + burst.size] = burst
        count += burst.size
        t += length + gap
    return gate


def _background(case: Case, n: int, rng) -> np.ndarray:
    if case.background == "none":
        return np.zeros(n)
    if case.background.startswith("noise"):
        level = float(case.background.split("-")[1])
        return rng.standard_normal(n) * 10 ** (-level / 20) / np.sqrt(2)
    t = np.arange(n) / case.fs
    amp = 10 ** (-30 / 20)
    return sum(amp / k * np.sin(2 * np.pi * 50.0 * k * t + k) for k in range(1, 8))


def make_case(case: Case) -> tuple[np.ndarray, float]:
    """The take (mono) and, for burst cases, the burst's margin over the masker in its band (dB)."""
    rng = np.random.default_rng(case.seed)
    n = int(SECONDS * case.fs)
    vowel = _vowel(case, n, rng) if case.vowels else np.zeros(n)
    masker = vowel + _background(case, n, rng)
    if case.centre_hz is None:
        return masker, float("nan")
    vowel_rms = 10 ** (VOWEL_DBFS / 20) / np.sqrt(2)
    burst = _bell_noise(case.centre_hz, n, case.fs, rng) * vowel_rms * 10 ** (case.level_db / 20)
    gate = _gate(case, n, rng)
    margin = _band_db(burst, case) - _band_db(masker, case)
    return masker + burst * gate, margin


def _band_db(x: np.ndarray, case: Case) -> float:
    power = np.abs(np.fft.rfft(x)) ** 2
    f = np.fft.rfftfreq(x.size, 1 / case.fs)
    inside = (f > 0.85 * case.centre_hz) & (f < 1.15 * case.centre_hz)
    return float(10 * np.log10(power[inside].sum() + 1e-300))


def audible(margin_db: float) -> bool:
    return margin_db >= AUDIBLE_DB


def judge(report, case: Case) -> tuple[bool, float]:
    """(found, relative peak error) for a burst case; (passes, nan) for a negative control."""
    if case.centre_hz is None:
        return not any(c.usable for c in report.classes.values()), float("nan")
    c = report.classes.get(case.kind)
    if c is None or not c.usable:
        return False, float("nan")
    error = c.peak_hz / case.centre_hz - 1.0
    return abs(error) <= PEAK_REL, error
