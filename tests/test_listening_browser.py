"""The listening page in a real headless browser (Chromium through selenium).

A sweep of two invented takes (one with a hostile file name) writes its page; the test opens
it from disk and checks what a listener would meet: no script errors, every player's source
inside the folder and decoded (metadata loaded, duration > 0, no media error; HTML Living
Standard ``readyState >= HAVE_METADATA``), the level matching applied (``volume`` = 10^(gain/20),
the dB definition), the table listing every setting, and the blind A/B: hidden until revealed,
the reveal naming what A and B really play. Skipped, with the reason, where Chromium is absent.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from urllib.parse import unquote, urlparse

import pytest
from click.testing import CliRunner

from emulate.audio import stream as audio
from emulate.cli import main
from emulate.voice import synth
from helpers_browser import chromium_missing, players_state

pytestmark = [pytest.mark.slow, pytest.mark.skipif(chromium_missing() is not None,
                                                   reason=f"listening page not tested: {chromium_missing()}")]

FS = 48000
SETTINGS = ("notch4000Hz-q0.25-mix1.00", "notch6000Hz-q0.25-mix1.00", "notch8000Hz-q0.25-mix1.00")
HOSTILE = 'o"dd <b>&name'


@pytest.fixture(scope="module")
def page(tmp_path_factory):
    folder = tmp_path_factory.mktemp("listen")
    takes = [folder / "host.wav", folder / f"{HOSTILE}.flac"]
    for seed, take in enumerate(takes):
        x = synth.voice_like_take(FS, 2.0, pitch_hz=120.0 + 80 * seed, sibilance_hz=6000.0, seed=seed,
                                  channels=2 - seed)
        audio.write_array(take, x, FS, subtype="PCM_24" if seed == 0 else "PCM_16")
    out = folder / "out"
    result = CliRunner().invoke(main, ["sweep", *map(str, takes), "--at", "4k,6k,8k", "--out", str(out),
                                       "--workers", "1", "--removed", "--plot", str(out / "sweep.png")])
    assert result.exit_code == 0, result.output
    return out / "index.html"


def test_loads_without_script_errors(browser):
    severe = [entry for entry in browser.get_log("browser") if entry["level"] == "SEVERE"]
    assert severe == []
    assert browser.find_element("tag name", "h1").text == "Listening: 3 settings, stepping the notch frequency"


def test_every_player_source_exists_and_decodes(browser, page):
    players = players_state(browser)
    assert len(players) == 2 * (1 + len(SETTINGS) + 2 + 2)  # per take: dry, settings, reel, removed, A, B
    for player in players:
        path = Path(unquote(urlparse(player["src"]).path))
        assert path.parent == page.parent and path.exists(), player
        assert player["error"] is None and player["ready"] >= 1 and player["duration"] > 0, player


def test_level_matching_is_applied(browser):
    for player in players_state(browser):
        if player["gain"] is not None:
            assert player["volume"] == pytest.approx(10 ** (float(player["gain"]) / 20), abs=1e-6)
            assert float(player["gain"]) <= 0


def test_table_lists_every_setting(browser):
    first_column = [cell.text for cell in browser.find_elements("css selector", "tbody tr td:first-child")]
    assert first_column == list(SETTINGS)


def test_take_names_are_shown_as_text(browser):
    headings = [h.text for h in browser.find_elements("css selector", ".take h3")]
    assert headings == ["host.wav", f"{HOSTILE}.flac"]


def _blind_truth(browser, box) -> dict:
    """What A and B really play, by label (from the page's own data and the players' sources)."""
    data = json.loads(browser.find_element("id", "blind-data").get_attribute("textContent"))
    versions = data["takes"][int(box.get_attribute("data-take"))]
    by_src = {v["src"]: v["label"] for v in versions}
    truth = {}
    for name in ("a", "b"):
        src = box.find_element("css selector", f".ab-{name}").get_attribute("currentSrc")
        truth[name] = by_src[src[src.rindex("/") + 1:]]
    return truth


def test_blind_pair_is_hidden_until_revealed(browser):
    for box in browser.find_elements("css selector", ".blind"):
        answer = box.find_element("css selector", ".ab-answer")
        assert not answer.is_displayed()
        assert not any(label in box.find_element("css selector", "ul").text for label in SETTINGS)
        truth = _blind_truth(browser, box)
        assert sorted(truth.values()) == ["dry", SETTINGS[1]]  # the first deal: dry against the pick
        box.find_element("css selector", ".ab-reveal").click()
        assert answer.is_displayed()
        assert answer.text == f"A was {truth['a']}; B was {truth['b']}."


def test_deal_another_pair(browser):
    box = browser.find_elements("css selector", ".blind")[0]
    box.find_element("css selector", ".ab-one option:nth-child(2)").click()
    box.find_element("css selector", ".ab-other option:nth-child(4)").click()
    box.find_element("css selector", ".ab-deal").click()
    answer = box.find_element("css selector", ".ab-answer")
    assert not answer.is_displayed()
    truth = _blind_truth(browser, box)
    assert sorted(truth.values()) == [SETTINGS[0], SETTINGS[2]]
    box.find_element("css selector", ".ab-reveal").click()
    assert answer.text == f"A was {truth['a']}; B was {truth['b']}."
    for player in players_state(browser):
        assert player["error"] is None and not math.isnan(player["duration"])
