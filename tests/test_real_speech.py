"""The finders on real recorded speech (openly licensed; ``tests/data/fetch_speech.sh``).

The recordings are words spoken by real speakers, shipped in two Debian packages (see
``tests/data/speech/SOURCES.md`` once fetched): alsa-utils 1.2.8-1's channel announcements
(48 kHz, GPL-2) and ktuberling-data 4:22.12.3-1's English object names (44.1 kHz, GPL-2+).
Nothing here is invented; the tests skip with a message when the data is absent.

Independent reference (a different method from the finder's): the /s/ segments below were
marked by this project's helper from a 10 ms spectrogram timeline of each file (a frication
run, 3-12 kHz over 200-1500 Hz, where the word's spelling puts an /s/), trimmed 10 ms inside
each end; not by listening. Their spectral peak is read with plain ``scipy.signal.welch``
(512-point Hann segments) smoothed over 1/6 octave, between 2 and 12 kHz. The issue's
targets: the finder's /s/ peak within 2 semitones of that reference; words without
sibilants reported as having no sibilance in at least 85 % of cases.

Hum: words of one package spliced end to end (each file as recorded, pauses and all) are
takes of 8-11 s; the hum finder must find nothing on them, and with hum added as the hum grid
adds it (``tests/hum_grid.py``: 49.9, 50, 59.9, 60.1 Hz, -50 to -20 dBFS, with and without
harmonics; see HUM_SPLICES for which) the fundamental within 0.05 Hz (the issue's targets;
the reference is the frequency added). Measured when written: nothing on the three clean
splices, 64 of 64 within 0.05 Hz, worst 0.023 Hz, RMS 0.0065 Hz.

Resonance: these splices are words recorded apart, each with a few tenths of a second of its
own pauses (or digital silence), not a take with the room's noise between words; the finder
must say that it has too few quiet moments rather than read a peak from them.
"""

from pathlib import Path

import numpy as np
import pytest
import soundfile as sf
from scipy import signal

import hum_grid
from emulate.voice.hum import find_hum
from emulate.voice.resonance.finder import find_resonance
from emulate.voice.sibilance import find_sibilance

DATA = Path(__file__).parent / "data" / "speech"

#: file -> /s/ segments (start, stop) in seconds, marked as the module docstring says.
S_SEGMENTS = {
    "Front_Center.wav": [(0.80, 0.92)],  # "centre"
    "Rear_Center.wav": [(0.67, 0.79)],  # "centre"
    "Side_Left.wav": [(0.04, 0.19)],  # "side"
    "Side_Right.wav": [(0.02, 0.15)],  # "side"
    "skirt.ogg": [(0.14, 0.31)],
    "stick.ogg": [(0.08, 0.27)],
    "spectacles.ogg": [(0.19, 0.33)],  # the first /s/
    "sunglasses.ogg": [(0.12, 0.26), (0.69, 0.79)],  # "sun", "-glass-"
    "moustache.ogg": [(0.15, 0.31)],  # the /s/ (the "-tache" /sh/ after it is left out)
}
#: Words without /s/, /z/, /sh/, /zh/ or an affricate, by their spelling (stops, aspiration,
#: /f/ and /th/ included on purpose).
NON_SIBILANT = (
    "Front_Left.wav Front_Right.wav Rear_Left.wav Rear_Right.wav ball bow coat ear earring egypt_boy "
    "egypt_camel egypt_cart egypt_column egypt_donkey egypt_girl egypt_man egypt_palmtree egypt_road egypt_well "
    "egypt_woman egypt_pyramid eye eyebrow flower hair hat moon_alien moon_earth moon_hotel moon_moonwalker "
    "moon_planet moon_radar moon_rocket moon_ufo mouth pizzeria_bacon pizzeria_broccolli pizzeria_cucumber "
    "pizzeria_olive pizzeria_onion pizzeria_oregano pizzeria_pepper pizzeria_pepperoni pizzeria_pineapple "
    "pizzeria_tomato tie tv_car tv_train tv_tree umbrella").split()

pytestmark = pytest.mark.skipif(not (DATA / "SOURCES.md").exists(),
                                reason="recorded speech not fetched: run tests/data/fetch_speech.sh")


def _read(name):
    path = DATA / (name if "." in name else name + ".ogg")
    x, fs = sf.read(path, always_2d=True)
    return x, fs


def reference_peak_hz(x, fs, segments):
    """Peak of the marked segments' Welch spectrum (1/6-octave smoothed), 2-12 kHz."""
    mono = x.mean(axis=1)
    parts = [mono[int(a * fs) : int(b * fs)] for a, b in segments]
    f, _ = signal.welch(parts[0], fs, nperseg=512)
    pxx = np.mean([signal.welch(p, fs, nperseg=512)[1] * p.size for p in parts], axis=0)
    band = f[(f >= 2000) & (f <= 12000)]
    smooth = [pxx[(f >= b * 2 ** (-1 / 12)) & (f <= b * 2 ** (1 / 12))].mean() for b in band]
    return float(band[int(np.argmax(smooth))])


def test_the_data_is_what_the_table_names():
    names = {line.split()[1] for line in (DATA.parent / "SHA256SUMS").read_text().splitlines()}
    assert set(S_SEGMENTS) <= names
    assert {n if "." in n else n + ".ogg" for n in NON_SIBILANT} <= names
    for name in names:
        assert sf.info(DATA / name).samplerate >= 44100


@pytest.mark.parametrize("name", [n for n in S_SEGMENTS if n != "spectacles.ogg"])
def test_s_peak_within_two_semitones_of_the_reference(name):
    x, fs = _read(name)
    r = find_sibilance(x, fs)
    reference = reference_peak_hz(x, fs, S_SEGMENTS[name])
    assert r.usable, r.reason
    assert abs(12 * np.log2(r.peak_hz / reference)) <= 2.0, (r.peak_hz, reference)


def test_a_low_s_is_read_as_sh_but_at_the_right_frequency():
    # measured: this speaker's /s/ in "spectacles" peaks at 3.6 kHz, under the finder's
    # 4 kHz /s/-/sh/ boundary, so it is reported as /sh/ (a known limit: the boundary is
    # fixed, not per speaker); the peak itself is right
    x, fs = _read("spectacles.ogg")
    r = find_sibilance(x, fs)
    sh = r.classes["sh"]
    reference = reference_peak_hz(x, fs, S_SEGMENTS["spectacles.ogg"])
    assert sh.usable and abs(12 * np.log2(sh.peak_hz / reference)) <= 2.0


@pytest.fixture(scope="module")
def quiet_share():
    """Share of the non-sibilant words reported with no sibilance of either class."""
    quiet = [name for name in NON_SIBILANT
             if not any(c.usable for c in find_sibilance(*_read(name)).classes.values())]
    return len(quiet) / len(NON_SIBILANT)


def test_words_without_sibilants(quiet_share):
    # the target: at least 85 % reported with no sibilance. Measured 44 of 50 (88 %);
    # stops and aspiration in six words ("cart", "hat", "moonwalker", "cucumber", "train", "tree")
    # still come back as sibilant
    assert quiet_share >= 0.85


#: Splices for the hum finder: words of one package end to end, in this order, and the mains
#: frequencies added to each. ktuberling-data's recordings carry a line near 50 Hz of their own
#: (the fundamental alone: on the finder's steady spectrum it stands 6-14 dB over the programme
#: in each ten-word splice, under the 10 dB a line needs in the two used here, over it in
#: "egypt_girl" to "flower" and "hair" to "moon_ufo", which report 50.29 and 50.22 Hz clean; mains
#: hum recorded with the words, as far as the files tell), so an added 49.9 or 50 Hz line would
#: meet it (its readings then depend on the two lines' phases); their 60 Hz family is clean
#: (at most 1.8 dB), as are both families in alsa-utils' (at most 1.4 dB).
HUM_SPLICES = {
    "alsa-utils": (["Front_Center.wav", "Front_Left.wav", "Front_Right.wav", "Rear_Center.wav", "Rear_Left.wav",
                    "Rear_Right.wav", "Side_Left.wav", "Side_Right.wav"], hum_grid.FUNDAMENTALS_HZ),
    "ktuberling-a": (["ball", "bow", "coat", "ear", "earring", "egypt_boy", "egypt_camel", "egypt_cart",
                      "egypt_column", "egypt_donkey"], (59.9, 60.1)),
    "ktuberling-b": (["pizzeria_pineapple", "pizzeria_tomato", "skirt", "spectacles", "stick", "sunglasses", "tie",
                      "tv_car", "tv_train", "tv_tree"], (59.9, 60.1)),
}
#: The default run adds the grid's faintest hum without harmonics; the slow run every level.
HUM_ADDED = [pytest.param(splice, f, level, harmonics, id=f"{splice}-{f:g}Hz-{level:g}dBFS-{harmonics}",
                          marks=() if (level, harmonics) == (-50.0, False) else pytest.mark.slow)
             for splice, (_, fundamentals) in HUM_SPLICES.items() for f in fundamentals
             for level in hum_grid.LEVELS_DBFS for harmonics in hum_grid.HARMONICS]


@pytest.fixture(scope="module")
def splices():
    """Each splice as one mono take and its rate."""
    takes = {}
    for splice, (names, _) in HUM_SPLICES.items():
        parts = [_read(name) for name in names]
        takes[splice] = (np.concatenate([x.mean(axis=1) for x, _ in parts]), parts[0][1])
    return takes


@pytest.mark.parametrize("splice", HUM_SPLICES)
def test_no_hum_in_clean_recorded_speech(splices, splice):
    assert not find_hum(*splices[splice]).found


@pytest.mark.parametrize("splice, fundamental_hz, level_dbfs, harmonics", HUM_ADDED)
def test_hum_added_to_recorded_speech(splices, splice, fundamental_hz, level_dbfs, harmonics):
    x, fs = splices[splice]
    r = find_hum(x + hum_grid.hum_signal(x.size, fs, fundamental_hz, level_dbfs, harmonics), fs)
    assert r.found, r.reason
    assert abs(r.fundamental_hz - fundamental_hz) <= hum_grid.FREQ_ABS_HZ, r.fundamental_hz


@pytest.mark.parametrize("splice", ["alsa-utils", "ktuberling-b"])
def test_resonance_says_the_pauses_are_too_few(splices, splice):
    # measured: 0.90 s of quiet moments in the alsa-utils splice (12 % of its samples are digital
    # silence, which does not count), none in ktuberling-b's; the finder needs 1.5 s
    r = find_resonance(*splices[splice])
    assert not r.found and r.reason.startswith("too few quiet moments")
