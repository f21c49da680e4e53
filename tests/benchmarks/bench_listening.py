"""Listening benchmark: loudness matching of the reels, writing the listening page, opening it.

Runs one sweep of --takes invented voice-like takes (:func:`emulate.voice.synth.voice_like_take`),
--seconds long (default 20), 48 kHz stereo 24-bit, over --settings notch settings (default 8,
3 to 12 kHz in equal ratios) on two workers, in a temporary folder (or --work DIR), then measures,
--repeats times each (default 5; medians reported):

- the reel: :func:`emulate.work.reels.write_reel` of each take's excerpts (dry + one per setting,
  3 s each) loudness-matched and at raw levels; the difference is the matching cost (BS.1770 of
  every segment, pyloudnorm);
- the page: :func:`emulate.work.sweep.write_listening_page` (the dry copies and ``index.html``),
  and the HTML alone (:func:`emulate.report.listening.write_page`);
- opening it: headless Chromium (Debian's ``chromium`` + ``chromium-driver``, through selenium)
  from ``driver.get`` until the document and every player's metadata are loaded; the browser's
  start-up apart. Skipped, and said so, without Chromium.

Writes JSON (--json, default bench-out/listening.json).

Run: python3 tests/benchmarks/bench_listening.py [--takes 4] [--seconds 20] [--settings 8]
"""

from __future__ import annotations

import argparse
import json
import shutil
import statistics
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "tests"))

from emulate.audio import stream as audio  # noqa: E402
from emulate.report import listening  # noqa: E402
from emulate.voice import synth  # noqa: E402
from emulate.work import reels, sweep  # noqa: E402
from helpers_browser import chromium_missing, open_browser, open_page  # noqa: E402

RATE = 48000


def make_takes(folder: Path, count: int, seconds: float) -> list[Path]:
    folder.mkdir(parents=True, exist_ok=True)
    takes = []
    for i in range(count):
        x = synth.voice_like_take(RATE, seconds, pitch_hz=110.0 + 25 * i, sibilance_hz=4500.0 + 700 * i,
                                  seed=100 + i, channels=2)
        takes.append(folder / f"host{i + 1}.wav")
        audio.write_array(takes[-1], x, RATE, subtype="PCM_24")
    return takes


def timed(function, repeats: int) -> list[float]:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        function()
        times.append(time.perf_counter() - start)
    return times


def reel_segments(result, take: str):
    """The reel's segments read back from the written reel (the same excerpts, as matched)."""
    reel = result.reels[take]
    x, _ = audio.read_all(reel.path)
    return [reels.Segment(c.setting, x[round(c.start_s * RATE):round(c.end_s * RATE)]) for c in reel.cues]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--takes", type=int, default=4)
    parser.add_argument("--seconds", type=float, default=20.0)
    parser.add_argument("--settings", type=int, default=8)
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument("--work", type=Path)
    parser.add_argument("--json", type=Path, default=ROOT / "bench-out" / "listening.json")
    args = parser.parse_args()
    work = args.work or Path(tempfile.mkdtemp(prefix="bench-listening-"))
    try:
        figures = run(work, args)
    finally:
        if args.work is None:
            shutil.rmtree(work, ignore_errors=True)
    args.json.parent.mkdir(parents=True, exist_ok=True)
    args.json.write_text(json.dumps(figures, indent=2) + "\n")
    print(f"wrote {args.json}")


def run(work: Path, args) -> dict:
    takes = make_takes(work / "takes", args.takes, args.seconds)
    plan = sweep.SweepPlan(notches_hz=sweep.notch_steps(3000, 12000, args.settings))
    out = work / "out"
    result = sweep.sweep_into(takes, plan, out, workers=2)
    print(f"sweep: {args.takes} takes x {args.settings} settings, {args.seconds:g} s each")

    take = str(takes[0])
    segments = reel_segments(result, take)
    matched = timed(lambda: reels.write_reel(work / "r.wav", segments, RATE, "PCM_24"), args.repeats)
    raw = timed(lambda: reels.write_reel(work / "r.wav", segments, RATE, "PCM_24", match=False), args.repeats)
    reel_s = {"segments": len(segments), "matched_s": statistics.median(matched),
              "raw_s": statistics.median(raw)}
    reel_s["matching_cost_s"] = reel_s["matched_s"] - reel_s["raw_s"]
    print(f"reel of {len(segments)} x 3 s stereo segments: matched {reel_s['matched_s'] * 1e3:.0f} ms, "
          f"raw {reel_s['raw_s'] * 1e3:.0f} ms: matching costs {reel_s['matching_cost_s'] * 1e3:.0f} ms a reel")

    page = listening.page_from_sweep(result, dries={t: str(out / f"dry--{Path(t).name}") for t in result.reels})
    html_only = timed(lambda: listening.write_page(page, out), args.repeats)
    with_copies = timed(lambda: sweep.write_listening_page(result, out), args.repeats)
    players = len(page.takes) * (len(page.takes[0].players) + len(page.takes[0].extras) + 2)
    page_s = {"players": players, "html_s": statistics.median(html_only),
              "with_dry_copies_s": statistics.median(with_copies),
              "bytes": (out / listening.PAGE_NAME).stat().st_size}
    print(f"page with {players} players: html {page_s['html_s'] * 1e3:.1f} ms, with the dry copies "
          f"{page_s['with_dry_copies_s'] * 1e3:.1f} ms, {page_s['bytes']} bytes")

    figures = {"takes": args.takes, "seconds": args.seconds, "settings": args.settings, "reel": reel_s,
               "page": page_s}
    missing = chromium_missing()
    if missing:
        print(f"open: skipped ({missing})")
        figures["open"] = {"skipped": missing}
        return figures
    start = time.perf_counter()
    driver = open_browser()
    started = time.perf_counter() - start
    try:
        open_page(driver, out / listening.PAGE_NAME)  # warm-up: first load fills caches
        loads = [open_page(driver, out / listening.PAGE_NAME) for _ in range(args.repeats)]
    finally:
        driver.quit()
    figures["open"] = {"browser_start_s": started, "load_s": statistics.median(loads), "loads_s": loads}
    print(f"open in headless Chromium: {figures['open']['load_s'] * 1e3:.0f} ms until every player has its "
          f"metadata (median of {args.repeats}); browser start {started:.2f} s")
    return figures


if __name__ == "__main__":
    main()
