"""The batch's listening page in a real headless browser (Chromium through selenium; skipped where absent).

Checks what a listener meets: no script errors, one section per take, every player's source
inside the output folder and decoded (HTML Living Standard ``readyState >= HAVE_METADATA``,
duration > 0, no media error), and the table listing every take.
"""

from __future__ import annotations

from pathlib import Path
from urllib.parse import unquote, urlparse

import pytest
from click.testing import CliRunner

from emulate.cli import main
from helpers_browser import chromium_missing, players_state
from test_batch import make_season

pytestmark = [pytest.mark.slow, pytest.mark.skipif(chromium_missing() is not None,
                                                   reason=f"batch listening page not tested: {chromium_missing()}")]


@pytest.fixture(scope="module")
def page(tmp_path_factory):
    season = make_season(tmp_path_factory.mktemp("batch-listen"))
    result = CliRunner().invoke(main, ["batch", str(season / "plan.toml"), "--workers", "1",
                                       "--presets", str(season / "presets")])
    assert result.exit_code == 0, result.output
    return season / "renders" / "index.html"


def test_loads_without_script_errors(browser):
    assert [e for e in browser.get_log("browser") if e["level"] == "SEVERE"] == []
    assert len(browser.find_elements("css selector", "section.take")) == 3


def test_every_player_source_exists_and_decodes(browser, page):
    players = [p for p in players_state(browser) if p["src"]]
    assert len(players) >= 6  # per take: dry and wet
    for player in players:
        path = Path(unquote(urlparse(player["src"]).path))
        assert page.parent in path.parents and path.exists(), player
        assert player["error"] is None and player["ready"] >= 1 and player["duration"] > 0, player


def test_table_lists_every_take(browser):
    takes = [cell.text for cell in browser.find_elements("css selector", "tbody tr td:first-child")]
    assert takes == ["host-a/ep1/t1.wav", "host-a/t2.flac", "host-b/t1.wav"]
