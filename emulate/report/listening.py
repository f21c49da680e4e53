"""The listening page: one self-contained ``index.html`` to hear takes dry and notched, fairly.

The pipeline, top to bottom:

1. data: per take a :class:`TakeListing` (the dry take, its versions, extras such as a
   reel or what the notch removes), the summary table, the pick and its reason, pictures;
   a sweep fills it from its result (:func:`page_from_sweep`), a batch from its dry/wet
   pairs (one version per take);
2. level matching: every player of a take is turned down to the quietest version's
   loudness (BS.1770 loudness the caller measured; :func:`match_levels`), so no version
   wins for being louder; the page states each player's gain;
3. HTML: every piece of text escaped, audio referenced by relative path inside the
   page's folder, pictures embedded (``data:`` URIs), the style and a small plain
   script inline: no server, no network, nothing fetched from elsewhere;
4. blind A/B: per take two players whose versions are dealt at random and hidden until
   "Reveal" is pressed.

What this module does *not* do: it does not render, measure or copy audio; paths it is
given must already lie inside the page's folder.
"""

from __future__ import annotations

import base64
import html
import json
import math
from dataclasses import dataclass, replace
from pathlib import Path
from urllib.parse import quote

from emulate import files
from emulate.errors import BadValueError

__all__ = ["PAGE_NAME", "SWEEP_COLUMNS", "ListeningPage", "RenderPair", "TakeListing", "Version", "match_levels",
           "page_from_pairs", "page_from_sweep", "page_html", "write_page"]

PAGE_NAME = "index.html"
#: The summary table of a sweep: row key and heading.
SWEEP_COLUMNS = (("setting", "setting"), ("notch_hz", "notch as built (Hz)"), ("q", "Q"), ("mix", "mix"),
                 ("sibilance_reduction_db", "sibilance cut (dB)"), ("loudness_change_db", "loudness change (dB)"),
                 ("relative_reduction_db", "relative cut (dB)"), ("speech_cost_percent", "speech cost (%)"))
_PICTURE_TYPES = {".png": "image/png", ".svg": "image/svg+xml"}


@dataclass(frozen=True)
class Version:
    """One player: a version of a take.

    ``path`` is the audio file (inside the page's folder); ``loudness_db`` its loudness on
    any scale shared by the take's versions (LUFS, or LU relative to the dry take; None if
    unknown); ``gain_db`` the playback gain the page applies (<= 0 dB).
    """

    label: str
    path: str
    loudness_db: float | None = None
    gain_db: float = 0.0


@dataclass(frozen=True)
class TakeListing:
    """Everything heard of one take: the dry take, its versions (settings, or a batch's one render),
    extras heard as they are (a reel, what the notch removes) and the picked version's label."""

    name: str
    dry: Version
    versions: tuple[Version, ...]
    extras: tuple[Version, ...] = ()
    pick: str | None = None
    notes: tuple[str, ...] = ()

    @property
    def players(self) -> tuple[Version, ...]:
        """The dry take and its versions: what is level-matched and dealt in the blind A/B."""
        return (self.dry, *self.versions)


@dataclass(frozen=True)
class ListeningPage:
    """A whole page: the takes, the summary table, the pick, pictures.

    ``columns`` are (row key, heading) pairs of ``rows``. A sweep and a batch fill the
    same fields; a batch without a pick leaves ``pick`` None.
    """

    title: str
    takes: tuple[TakeListing, ...]
    columns: tuple[tuple[str, str], ...] = ()
    rows: tuple[dict, ...] = ()
    pick: str | None = None
    pick_reason: str = ""
    pictures: tuple[str, ...] = ()
    matched: bool = True
    notes: tuple[str, ...] = ()
    caption: str = "per setting, means over the takes"  # what a row of the table is


def match_levels(listing: TakeListing) -> TakeListing:
    """The listing with every player turned down to its quietest player's loudness.

    A player of unknown loudness keeps 0 dB (and so does every player when none is known).

    Example
    -------
    >>> take = TakeListing("t", Version("dry", "t.wav", 0.0), (Version("wet", "w.wav", -4.6),))
    >>> [v.gain_db for v in match_levels(take).players]
    [-4.6, 0.0]
    """
    known = [v.loudness_db for v in listing.players if v.loudness_db is not None and math.isfinite(v.loudness_db)]
    if not known:
        return listing
    quietest = min(known)

    def matched(version: Version) -> Version:
        level = version.loudness_db
        usable = level is not None and math.isfinite(level)
        return replace(version, gain_db=round(quietest - level, 2) if usable else 0.0)
    return replace(listing, dry=matched(listing.dry), versions=tuple(matched(v) for v in listing.versions))


@dataclass(frozen=True)
class RenderPair:
    """One take of a batch: its dry and rendered files (inside the page's folder) and how the
    loudness changed (BS.1770, dB; None if not measured)."""

    name: str
    dry: str
    wet: str
    loudness_change_db: float | None = None
    label: str = "rendered"
    extras: tuple[Version, ...] = ()


def page_from_pairs(pairs, *, title: str = "Listening: batch", columns=(), rows=(), matched: bool = True,
                    notes=()) -> ListeningPage:
    """The page of a batch: per take the dry file and its render, level-matched unless ``matched`` is False.

    Parameters
    ----------
    pairs : iterable of RenderPair
        Every file must lie inside the folder the page is written for (:func:`write_page`).
    title : str
        The page's heading.
    columns, rows
        The summary table, as :class:`ListeningPage` takes it (e.g. one row per take).
    matched : bool
        Turn each take's louder file down to the quieter one's loudness (default).
    notes : iterable of str
        Lines shown under the heading.

    Example
    -------
    >>> page = page_from_pairs([RenderPair("t.wav", "dry/t.wav", "out/t.wav", -4.6)])
    >>> [v.gain_db for v in page.takes[0].players]
    [-4.6, 0.0]
    """
    listings = []
    for pair in pairs:
        dry_db = None if pair.loudness_change_db is None else 0.0  # the change is relative to the dry
        listing = TakeListing(pair.name, Version("dry", pair.dry, dry_db),
                              (Version(pair.label, pair.wet, pair.loudness_change_db),), tuple(pair.extras))
        listings.append(match_levels(listing) if matched else listing)
    return ListeningPage(title=title, takes=tuple(listings), columns=tuple(columns), rows=tuple(rows),
                         matched=matched, notes=tuple(notes))


def page_from_sweep(result, *, pictures=(), matched: bool = True, dries=None) -> ListeningPage:
    """The page of a finished sweep (an :class:`emulate.work.sweep.SweepResult`).

    Loudness of each render is the take's dry loudness plus the measured loudness change
    (ITU-R BS.1770), so the versions are matched without measuring anything again.
    ``dries`` maps each take to its copy inside the page's folder (default: the take
    itself, which must then lie inside that folder).
    """
    dries = dries or {}
    listings = []
    for take, reel in result.reels.items():
        jobs = {job.setting: job for job in result.jobs if job.take == take}
        versions = tuple(Version(label, jobs[label].path, jobs[label].loudness_change_db)
                         for label in (s.label for s in result.plan.heard))
        extras = [Version("reel: dry, then each setting" + ("" if reel.matched else " (raw levels)"), reel.path)]
        if take in result.removed:
            extras.append(Version(f"what {result.pick['setting']} removes (dry minus wet)", result.removed[take]))
        listing = TakeListing(Path(take).name, Version("dry", dries.get(take, take), 0.0), versions, tuple(extras),
                              result.pick["setting"], tuple(filter(None, [reel.note()])))
        listings.append(match_levels(listing) if matched else listing)
    return ListeningPage(title=f"Listening: {len(result.plan.settings)} settings, stepping the "
                               f"{result.plan.axis_words}",
                         takes=tuple(listings), columns=SWEEP_COLUMNS, rows=tuple(map(_with_percent, result.rows)),
                         pick=result.pick["setting"], pick_reason=result.pick["reason"],
                         pictures=tuple(str(p) for p in pictures), matched=matched)


def write_page(page: ListeningPage, folder, *, into=None) -> Path:
    """Write ``index.html`` for ``folder`` atomically; return its path.

    Parameters
    ----------
    page : ListeningPage
        What the page shows.
    folder : path-like
        The folder the page's audio paths lie in; they are written relative to it.
    into : path-like, optional
        Where to write the page, if not ``folder`` (e.g. a staging folder that will
        be renamed to ``folder``).

    Raises
    ------
    BadValueError
        An audio path outside ``folder``, or a picture that is not PNG/SVG or cannot be read.
    """
    path = Path(folder if into is None else into) / PAGE_NAME
    files.write_text(path, page_html(page, folder))
    return path


# --- HTML ------------------------------------------------------------------------------------
def _text(value) -> str:
    return html.escape(str(value), quote=True)


def _source(path, folder) -> str:
    """The relative URL of an audio file inside ``folder`` (refused elsewhere: the page would not travel)."""
    try:
        relative = Path(path).relative_to(folder)  # as named (the folder may not exist yet)
    except ValueError:
        try:
            relative = Path(path).resolve().relative_to(Path(folder).resolve())
        except ValueError:
            raise BadValueError(f"{path}: a listening page plays only files inside its folder {folder}") from None
    if ".." in relative.parts:
        raise BadValueError(f"{path}: a listening page plays only files inside its folder {folder}")
    return quote(relative.as_posix())


def _picture(path) -> str:
    path = Path(path)
    kind = _PICTURE_TYPES.get(path.suffix.lower())
    if kind is None:
        raise BadValueError(f"{path}: a listening page shows .png or .svg pictures")
    try:
        data = base64.b64encode(path.read_bytes()).decode("ascii")
    except OSError as exc:
        raise BadValueError(f"{path}: cannot read the picture ({exc.strerror})") from None
    return (f'<figure><img src="data:{kind};base64,{data}" alt="{_text("summary picture: " + path.name)}">'
            f"<figcaption>{_text(path.name)}</figcaption></figure>")


def _player(version: Version, folder, css: str = "player") -> str:
    gain = "as written" if "extra" in css else f"{version.gain_db:+.1f} dB"
    return (f'<li class="{css}"><span class="what">{_text(version.label)}</span> '
            f'<span class="gain" title="playback gain applied by this page">{gain}</span>'
            f'<audio controls preload="metadata" src="{_source(version.path, folder)}" '
            f'data-gain-db="{version.gain_db:.2f}" aria-label="{_text(version.label)}"></audio></li>')


def _with_percent(row: dict) -> dict:
    """The speech cost in percent, as the text summary gives it."""
    return row | {"speech_cost_percent": 100.0 * row["intelligibility_cost"]}


def _cell(value) -> str:
    """Numbers as a reader wants them: whole hertz, hundredths of a dB, Q or mix."""
    if isinstance(value, float):
        if not math.isfinite(value):
            return "-"
        return _text(f"{value:.0f}" if abs(value) >= 100 else f"{value:.2f}")
    return _text(value)


def _table(page: ListeningPage) -> str:
    if not page.rows:
        return ""
    head = "".join(f'<th scope="col">{_text(heading)}</th>' for _, heading in page.columns)
    body = []
    for row in page.rows:
        picked = page.pick is not None and row.get("setting") == page.pick
        cells = "".join(f"<td>{_cell(row.get(key, ''))}</td>" for key, _ in page.columns)
        mark = "" if page.pick is None else "<td>pick</td>" if picked else "<td></td>"  # no pick: no column
        body.append(f'<tr{" class=picked" if picked else ""}>{cells}{mark}</tr>')
    pick_head = "" if page.pick is None else '<th scope="col">pick</th>'
    return (f'<section aria-labelledby="summary"><h2 id="summary">Summary</h2><div class="scroll">'
            f'<table><caption>{_text(page.caption)}</caption><thead><tr>{head}'
            f'{pick_head}</tr></thead><tbody>{"".join(body)}</tbody></table></div></section>')


def _blind(index: int, listing: TakeListing) -> str:
    options = "".join(f'<option value="{i}">{_text(v.label)}</option>' for i, v in enumerate(listing.players))
    return (f'<section class="blind" data-take="{index}" aria-label="blind comparison">'
            f"<h4>Blind A/B</h4><p>Choose two versions; they are dealt to A and B at random and their "
            f"names stay hidden until you reveal them.</p>"
            f'<label>one <select class="ab-one">{options}</select></label> '
            f'<label>other <select class="ab-other">{options}</select></label> '
            f'<button type="button" class="ab-deal">Deal</button>'
            f'<ul class="players"><li class="player"><span class="what">A</span>'
            f'<audio controls preload="metadata" class="ab-a" aria-label="A"></audio></li>'
            f'<li class="player"><span class="what">B</span>'
            f'<audio controls preload="metadata" class="ab-b" aria-label="B"></audio></li></ul>'
            f'<button type="button" class="ab-reveal">Reveal</button>'
            f'<p class="ab-answer" aria-live="polite" hidden></p></section>')


def _take(index: int, listing: TakeListing, folder) -> str:
    pick = f"<p>The pick for this take: <strong>{_text(listing.pick)}</strong></p>" if listing.pick else ""
    notes = "".join(f'<p class="note">{_text(n)}</p>' for n in listing.notes)
    players = "".join(_player(v, folder) for v in listing.players)
    extras = "".join(_player(v, folder, "player extra") for v in listing.extras)
    extra_list = f"<h4>Also</h4><ul class=players>{extras}</ul>" if extras else ""
    return (f'<section class="take" aria-labelledby="take{index}"><h3 id="take{index}">{_text(listing.name)}</h3>'
            f"{pick}{notes}<h4>Versions</h4><ul class=players>{players}</ul>{extra_list}"
            f"{_blind(index, listing)}</section>")


def _blind_data(page: ListeningPage, folder) -> str:
    data = [[{"label": v.label, "src": _source(v.path, folder), "gain": v.gain_db} for v in t.players]
            for t in page.takes]
    first = [[0, next((i for i, v in enumerate(t.players) if v.label == t.pick), len(t.players) - 1)]
             for t in page.takes]
    text = json.dumps({"takes": data, "first": first})
    # inside <script>: no "</script>", no HTML comment openers (escaped as JSON unicode)
    return text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")


def page_html(page: ListeningPage, folder) -> str:
    """The page as HTML text (audio paths relative to ``folder``)."""
    level = ("Players of a take are level-matched: each is turned down to the quietest version's "
             "loudness (ITU-R BS.1770); the gain applied is shown beside it." if page.matched else
             "Raw levels: the players are not level-matched; louder versions tend to sound better.")
    pick = (f'<section aria-labelledby="pick"><h2 id="pick">Pick</h2><p><strong>{_text(page.pick)}</strong>: '
            f"{_text(page.pick_reason)}</p></section>") if page.pick else ""
    pictures = "".join(_picture(p) for p in page.pictures)
    pictures = f'<section aria-labelledby="pictures"><h2 id="pictures">Pictures</h2>{pictures}</section>' \
        if pictures else ""
    notes = "".join(f'<p class="note">{_text(n)}</p>' for n in page.notes)
    takes = "".join(_take(i, t, folder) for i, t in enumerate(page.takes))
    return _TEMPLATE.format(
        title=_text(page.title), level=_text(level), notes=notes, pick=pick, table=_table(page),
        pictures=pictures, takes=takes, data=_blind_data(page, folder), style=_STYLE, script=_SCRIPT)


_TEMPLATE = """<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; media-src 'self'; img-src data:; \
style-src 'unsafe-inline'; script-src 'unsafe-inline'">
<title>{title}</title>
<style>{style}</style>
</head>
<body>
<main>
<h1>{title}</h1>
<p class="caution"><strong>Caution:</strong> set your playback volume low before the first play and
raise it slowly; a notch can be switched in and out abruptly here.</p>
<p>{level}</p>
<noscript><p class="note">Scripts are off: levels are not matched and the blind A/B does not work.</p></noscript>
{notes}
{pick}
{table}
{pictures}
<section aria-labelledby="takes"><h2 id="takes">Takes</h2>
{takes}
</section>
</main>
<script type="application/json" id="blind-data">{data}</script>
<script>{script}</script>
</body>
</html>
"""

_STYLE = """
:root { --ink: #1d2329; --paper: #fbfaf6; --rule: #c9c4b6; --accent: #0b5d66; --soft: #efece3; }
body { margin: 0; background: var(--paper); color: var(--ink);
       font: 1rem/1.5 system-ui, -apple-system, "Segoe UI", sans-serif; }
main { max-width: 60rem; margin: 0 auto; padding: 1rem 1.25rem 3rem; }
h1 { font-size: 1.5rem; border-bottom: 3px solid var(--accent); padding-bottom: .3rem; }
h2 { font-size: 1.25rem; margin-top: 2rem; } h3 { font-size: 1.1rem; } h4 { font-size: 1rem; margin: .8rem 0 .3rem; }
.caution { background: var(--soft); border-left: 4px solid #8a4b00; padding: .5rem .75rem; }
.note { font-style: italic; }
.scroll { overflow-x: auto; }
table { border-collapse: collapse; font-variant-numeric: tabular-nums; }
caption { text-align: left; font-style: italic; padding: .2rem 0; }
th, td { border-bottom: 1px solid var(--rule); padding: .25rem .5rem; text-align: right; white-space: nowrap; }
th:first-child, td:first-child { text-align: left; }
tr.picked { background: var(--soft); font-weight: 600; }
.take { border-top: 1px solid var(--rule); padding-top: .5rem; }
ul.players { list-style: none; padding: 0; margin: 0; }
li.player { display: grid; grid-template-columns: minmax(10rem, 1fr) 5rem minmax(14rem, 2fr);
            align-items: center; gap: .5rem; padding: .2rem 0; }
li.player .gain { font-variant-numeric: tabular-nums; text-align: right; }
audio { width: 100%; }
.blind { background: var(--soft); padding: .5rem .75rem; margin-top: .75rem; border-radius: 4px; }
.blind li.player { grid-template-columns: 2rem 1fr; }
button, select { font: inherit; padding: .2rem .6rem; }
button { background: var(--accent); color: #fff; border: 0; border-radius: 3px; cursor: pointer; }
:focus-visible { outline: 3px solid #d08a00; outline-offset: 2px; }
figure { margin: 1rem 0; } img { max-width: 100%; height: auto; background: #fff; }
"""

_SCRIPT = """
(function () {
  "use strict";
  var data = JSON.parse(document.getElementById("blind-data").textContent);
  function volumeOf(gainDb) { return Math.min(1, Math.pow(10, gainDb / 20)); }
  function coin() {
    var bits = new Uint8Array(1);
    window.crypto.getRandomValues(bits);
    return bits[0] & 1;
  }
  Array.prototype.forEach.call(document.querySelectorAll("audio[data-gain-db]"), function (player) {
    player.volume = volumeOf(parseFloat(player.getAttribute("data-gain-db")));
  });
  document.addEventListener("play", function (event) {
    Array.prototype.forEach.call(document.querySelectorAll("audio"), function (other) {
      if (other !== event.target) { other.pause(); }
    });
  }, true);
  Array.prototype.forEach.call(document.querySelectorAll(".blind"), function (box) {
    var take = parseInt(box.getAttribute("data-take"), 10);
    var versions = data.takes[take];
    var one = box.querySelector(".ab-one"), other = box.querySelector(".ab-other");
    var a = box.querySelector(".ab-a"), b = box.querySelector(".ab-b");
    var answer = box.querySelector(".ab-answer");
    one.value = String(data.first[take][0]);
    other.value = String(data.first[take][1]);
    function deal() {
      var pair = [versions[parseInt(one.value, 10)], versions[parseInt(other.value, 10)]];
      if (coin()) { pair.reverse(); }
      [a, b].forEach(function (player, i) {
        player.pause();
        player.src = pair[i].src;
        player.volume = volumeOf(pair[i].gain);
      });
      answer.textContent = "A was " + pair[0].label + "; B was " + pair[1].label + ".";
      answer.hidden = true;
      box.setAttribute("data-dealt", "yes");
    }
    box.querySelector(".ab-deal").addEventListener("click", deal);
    box.querySelector(".ab-reveal").addEventListener("click", function () { answer.hidden = false; });
    deal();
  });
}());
"""
