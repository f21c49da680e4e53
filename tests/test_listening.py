"""Tests of the listening page (emulate.report.listening) without a browser: escaping, paths,
level matching, the table, the blind A/B data. ``test_listening_browser.py`` opens real pages.

References: HTML escaping as the HTML Living Standard asks for text and attribute values
(html.escape is the general-purpose reference); URL paths percent-encoded (RFC 3986).
"""

from __future__ import annotations

import html
import json
import re

import pytest

from emulate.errors import BadValueError
from emulate.report import listening

HOSTILE = '<script>alert("x")</script> & \'quoted\' </script><!--'


def page_in(folder, name="take.wav", *, pick="notch6000Hz", rows=None, pictures=()):
    """A small page for one take: dry and two settings, all inside ``folder``."""
    take = listening.TakeListing(
        name, listening.Version("dry", str(folder / f"dry--{name}"), 0.0),
        (listening.Version("notch4000Hz", str(folder / "a.wav"), -1.0),
         listening.Version(pick, str(folder / "b.wav"), -4.6)),
        (listening.Version("reel", str(folder / "reel.wav")),), pick=pick)
    rows = rows if rows is not None else [{"setting": "notch4000Hz", "q": 0.25}, {"setting": pick, "q": 0.25}]
    return listening.ListeningPage("Listening", (listening.match_levels(take),), (("setting", "setting"), ("q", "Q")),
                                   tuple(rows), pick, "why " + pick, pictures)


def script_data(text: str) -> dict:
    found = re.search(r'<script type="application/json" id="blind-data">(.*?)</script>', text, re.S)
    return json.loads(found.group(1))


class TestMatchLevels:
    def test_every_player_turned_down_to_the_quietest(self, tmp_path):
        take = page_in(tmp_path).takes[0]
        # loudness 0, -1, -4.6 dB: gains -4.6, -3.6, 0 (quietest minus each)
        assert [v.gain_db for v in take.players] == pytest.approx([-4.6, -3.6, 0.0])
        assert all(v.gain_db <= 0 for v in take.players)  # never louder than written

    def test_unknown_loudness_keeps_0_db(self):
        take = listening.TakeListing("t", listening.Version("dry", "d.wav", None),
                                     (listening.Version("w", "w.wav", None),))
        assert [v.gain_db for v in listening.match_levels(take).players] == [0.0, 0.0]


class TestPageHtml:
    def test_take_names_and_labels_are_escaped(self, tmp_path):
        text = listening.page_html(page_in(tmp_path, name=HOSTILE + ".wav", pick=HOSTILE), tmp_path)
        assert "<script>alert" not in text and "<!--" not in text.split("<main>")[1]
        assert html.escape(HOSTILE, quote=True) in text
        # exactly the two scripts the page has: the data and the inline code
        assert text.count("<script") == 2 and text.count("</script>") == 2
        assert script_data(text)["takes"][0][2]["label"] == HOSTILE  # the JSON reads back intact

    def test_audio_is_referenced_by_relative_encoded_path(self, tmp_path):
        text = listening.page_html(page_in(tmp_path, name="a b#1.wav"), tmp_path)
        sources = re.findall(r'<audio[^>]* src="([^"]*)"', text)
        assert 'dry--a%20b%231.wav' in sources and "reel.wav" in sources  # RFC 3986 percent-encoding
        assert not any(s.startswith(("/", "file:", "http")) for s in sources)

    def test_a_file_outside_the_folder_is_refused(self, tmp_path):
        (tmp_path / "page").mkdir()
        with pytest.raises(BadValueError, match="only files inside its folder"):
            listening.page_html(page_in(tmp_path), tmp_path / "page")

    def test_nothing_is_fetched_from_elsewhere(self, tmp_path):
        text = listening.page_html(page_in(tmp_path), tmp_path)
        assert not re.search(r"(src|href)=\"(https?:|//)", text)
        assert "@import" not in text and "url(" not in text
        assert "Content-Security-Policy" in text and "default-src 'none'" in text

    def test_table_lists_every_setting_and_marks_the_pick(self, tmp_path):
        text = listening.page_html(page_in(tmp_path), tmp_path)
        table = text[text.index("<table"):text.index("</table>")]
        assert "notch4000Hz" in table and "notch6000Hz" in table
        assert table.count("<td>pick</td>") == 1

    def test_gains_are_stated_beside_each_player(self, tmp_path):
        text = listening.page_html(page_in(tmp_path), tmp_path)
        assert "-4.6 dB" in text and "-3.6 dB" in text and 'data-gain-db="-4.60"' in text

    def test_blind_data_starts_with_dry_against_the_pick(self, tmp_path):
        data = script_data(listening.page_html(page_in(tmp_path), tmp_path))
        assert data["first"] == [[0, 2]]
        assert [v["label"] for v in data["takes"][0]] == ["dry", "notch4000Hz", "notch6000Hz"]

    def test_a_caution_on_levels_is_shown(self, tmp_path):
        assert "volume low" in listening.page_html(page_in(tmp_path), tmp_path)

    def test_pictures_are_embedded(self, tmp_path):
        (tmp_path / "p.svg").write_text('<svg xmlns="http://www.w3.org/2000/svg"/>')
        text = listening.page_html(page_in(tmp_path, pictures=(str(tmp_path / "p.svg"),)), tmp_path)
        assert 'src="data:image/svg+xml;base64,' in text

    def test_other_picture_kinds_are_refused(self, tmp_path):
        (tmp_path / "p.gif").write_bytes(b"GIF89a")
        with pytest.raises(BadValueError, match=r"\.png or \.svg"):
            listening.page_html(page_in(tmp_path, pictures=(str(tmp_path / "p.gif"),)), tmp_path)


class TestWritePage:
    def test_written_into_another_folder_with_paths_relative_to_the_first(self, tmp_path):
        staging = tmp_path / "staging"
        staging.mkdir()
        path = listening.write_page(page_in(tmp_path / "final"), tmp_path / "final", into=staging)
        assert path == staging / "index.html"
        assert 'src="dry--take.wav"' in path.read_text()
        assert [p.name for p in staging.iterdir()] == ["index.html"]  # atomic: no temporary left


class TestPageFromPairs:
    def test_a_batch_of_pairs_makes_one_listing_per_take(self, tmp_path):
        pairs = [listening.RenderPair(f"take{i}.wav", str(tmp_path / f"dry{i}.wav"), str(tmp_path / f"wet{i}.wav"),
                                      -2.0 * i) for i in (1, 2)]
        page = listening.page_from_pairs(pairs, columns=(("take", "take"),), rows=({"take": "take1.wav"},))
        assert [t.name for t in page.takes] == ["take1.wav", "take2.wav"] and page.pick is None
        assert [v.gain_db for v in page.takes[1].players] == [-4.0, 0.0]  # dry turned down to the render
        text = listening.page_html(page, tmp_path)
        assert 'src="wet2.wav"' in text and "take1.wav" in text and "<h2 id=\"pick\">" not in text

    def test_raw_levels_on_request(self, tmp_path):
        pairs = [listening.RenderPair("t.wav", str(tmp_path / "d.wav"), str(tmp_path / "w.wav"), -6.0)]
        page = listening.page_from_pairs(pairs, matched=False)
        assert [v.gain_db for v in page.takes[0].players] == [0.0, 0.0]
        assert "Raw levels" in listening.page_html(page, tmp_path)
