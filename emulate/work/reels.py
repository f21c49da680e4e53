"""Listening reels: short excerpts of one take, dry then each setting, at matched loudness.

The pipeline, top to bottom:

1. measure: each segment's integrated loudness (ITU-R BS.1770 through
   :func:`emulate.voice.loudness.loudness_lufs`);
2. match: each segment is gained to the first (dry) segment's loudness, so no
   version sounds "better" for being louder (a louder take is commonly preferred:
   common practice in listening tests, no source);
3. headroom: no segment is pushed over 0 dBFS (sample peak); if matching would, every
   segment is lowered together by the same amount and the reel says so;
4. write: the segments ``REEL_GAP_S`` apart into one audio file, and a cue list beside
   it (``NAME.cues.csv``: segment, start, end, setting, gain applied, loudness).

What this module does *not* do: it does not render or pick excerpts; a sweep (or a
batch) hands it the excerpts. ``match=False`` keeps the raw levels (gains 0 dB).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from emulate import files
from emulate.audio import stream as audio
from emulate.errors import BadValueError
from emulate.voice.loudness import LOUDNESS_BLOCK_S, loudness_lufs

__all__ = ["REEL_EXCERPT_S", "REEL_GAP_S", "Cue", "Reel", "Segment", "cues_csv", "cues_path",
           "matched_gains_db", "write_reel"]

REEL_GAP_S = 0.6
REEL_EXCERPT_S = 3.0
CEILING_DBFS = 0.0  # no segment is gained above this sample peak


@dataclass(frozen=True)
class Segment:
    """One piece of a reel: what it is (``setting``, e.g. ``dry``) and its audio ``(frames, channels)``."""

    setting: str
    audio: np.ndarray


@dataclass(frozen=True)
class Cue:
    """Where a segment sits in the reel (seconds) and the gain applied to it (dB)."""

    segment: int
    start_s: float
    end_s: float
    setting: str
    gain_db: float
    loudness_lufs: float | None  # before the gain; None below the BS.1770 gate or too short

    def as_dict(self) -> dict:
        return {"segment": self.segment, "start_s": self.start_s, "end_s": self.end_s,
                "setting": self.setting, "gain_db": self.gain_db, "loudness_lufs": self.loudness_lufs}


@dataclass(frozen=True)
class Reel:
    """A written reel: its file, its cue list, and how the levels were set."""

    path: str
    cues_path: str
    cues: tuple[Cue, ...]
    matched: bool
    lowered_db: float  # the common cut that kept every segment under 0 dBFS (0 if none was needed)

    def note(self) -> str:
        """One line on the levels, for people (empty when nothing needs saying)."""
        if not self.matched:
            return "raw levels (not loudness-matched)"
        notes = []
        if self.lowered_db > 0:
            notes.append(f"every segment lowered {self.lowered_db:.1f} dB together so none goes over "
                         f"{CEILING_DBFS:g} dBFS")
        unmeasured = [cue.setting for cue in self.cues if cue.loudness_lufs is None]
        if unmeasured:
            notes.append(f"not matched (no BS.1770 loudness: under 0.4 s or below the gate): {', '.join(unmeasured)}")
        return "; ".join(notes)

    def as_dict(self) -> dict:
        return {"path": self.path, "cues_path": self.cues_path, "matched": self.matched,
                "lowered_db": self.lowered_db, "cues": [cue.as_dict() for cue in self.cues]}


def _segment_lufs(x: np.ndarray, fs: int) -> float | None:
    """BS.1770 integrated loudness of a segment; None if shorter than a gating block or below the gate."""
    if len(x) < LOUDNESS_BLOCK_S * fs:
        return None
    lufs = loudness_lufs(x, fs)
    return lufs if math.isfinite(lufs) else None


def _peak_db(x: np.ndarray) -> float:
    peak = float(np.max(np.abs(x))) if x.size else 0.0
    return 20 * math.log10(peak) if peak > 0 else -math.inf


def matched_gains_db(segments, fs: int, *, match: bool = True) -> tuple[list[float], list[float | None], float]:
    """Gains that bring every segment to the first segment's loudness, kept under 0 dBFS.

    Parameters
    ----------
    segments : sequence of Segment
        The first is the reference (the dry excerpt); at least one.
    fs : int
        Sample rate, Hz.
    match : bool
        False: every gain is 0 dB (raw levels).

    Returns
    -------
    gains_db : list of float
        Per segment, the gain applied, dB (the common cut included). A segment whose
        loudness is undefined (shorter than 0.4 s or below the -70 LUFS gate, as is the
        reference's) is not matched: gain 0 dB less the common cut.
    loudness : list of float or None
        Per segment, BS.1770 integrated loudness before the gain, LUFS.
    lowered_db : float
        The common cut (>= 0 dB) that keeps the highest gained sample peak at 0 dBFS.

    Example
    -------
    >>> rng = np.random.default_rng(0)
    >>> noise = rng.standard_normal((48000, 1)) * 0.05
    >>> gains, _, cut = matched_gains_db([Segment("dry", noise), Segment("wet", noise / 2)], 48000)
    >>> [round(g, 2) for g in gains], cut
    ([0.0, 6.02], 0.0)
    """
    if not segments:
        raise BadValueError("a reel needs at least one segment (the dry excerpt)")
    loudness = [_segment_lufs(s.audio, fs) for s in segments]
    reference = loudness[0]
    gains = [reference - lufs if match and reference is not None and lufs is not None else 0.0
             for lufs in loudness]
    highest = max(_peak_db(s.audio) + g for s, g in zip(segments, gains))
    lowered = max(0.0, highest - CEILING_DBFS) if match else 0.0
    return [g - lowered for g in gains], loudness, lowered


def cues_path(reel_path) -> Path:
    """The cue list beside a reel: ``reel--x.wav`` -> ``reel--x.cues.csv``."""
    reel_path = Path(reel_path)
    return reel_path.with_name(reel_path.stem + ".cues.csv")


def write_reel(reel_path, segments, fs: int, subtype: str, *, match: bool = True) -> Reel:
    """Write a listening reel and its cue list: the segments in order, ``REEL_GAP_S`` apart.

    Parameters
    ----------
    reel_path : path-like
        The reel file (written atomically); the cue list goes to :func:`cues_path`.
    segments : sequence of Segment
        The dry excerpt first, then the same excerpt at each setting, in the order heard;
        all with the same channel count.
    fs : int
        Sample rate, Hz.
    subtype : str
        Sample format of the reel (the take's).
    match : bool
        Loudness-match to the first segment (default); False keeps the raw levels.

    Returns
    -------
    Reel
        The paths, the cues (start and end in seconds, gain applied) and the common cut.

    Raises
    ------
    BadValueError, AudioFileError
        No segments, segments of different channel counts, or as
        :func:`emulate.audio.stream.write_array`.

    Example
    -------
    >>> import tempfile, os
    >>> reel = write_reel(os.path.join(tempfile.mkdtemp(), "r.wav"),
    ...                   [Segment("dry", np.ones((10, 1)) / 2), Segment("wet", np.zeros((10, 1)))],
    ...                   48000, "PCM_24")
    >>> audio.read_info(reel.path).frames, [round(c.start_s, 4) for c in reel.cues]
    (28820, [0.0, 0.6002])
    """
    if len({s.audio.shape[1] for s in segments}) > 1:
        raise BadValueError(f"reel segments have {sorted({s.audio.shape[1] for s in segments})} channels; "
                            "allowed: the same channel count in every segment")
    gains, loudness, lowered = matched_gains_db(segments, fs, match=match)
    gap = np.zeros((int(REEL_GAP_S * fs), segments[0].audio.shape[1]))
    pieces, cues, start = [], [], 0
    for number, (segment, gain, lufs) in enumerate(zip(segments, gains, loudness), start=1):
        if pieces:
            pieces.append(gap)
            start += len(gap)
        pieces.append(segment.audio * 10 ** (gain / 20))
        cues.append(Cue(number, start / fs, (start + len(segment.audio)) / fs, segment.setting, gain, lufs))
        start += len(segment.audio)
    audio.write_array(reel_path, np.concatenate(pieces), fs, subtype=subtype)
    reel = Reel(str(reel_path), str(cues_path(reel_path)), tuple(cues), match, lowered)
    files.write_text(reel.cues_path, cues_csv(reel))
    return reel


def cues_csv(reel: Reel) -> str:
    """The cue list as CSV text: a header line, then one line per segment (times in s, gain in dB).

    Example
    -------
    >>> print(cues_csv(Reel("r.wav", "r.cues.csv", (Cue(1, 0.0, 3.0, "dry", 0.0, -23.0),), True, 0.0)), end="")
    segment,start_s,end_s,setting,gain_db,loudness_lufs
    1,0.000,3.000,dry,+0.00,-23.00
    """
    lines = ["segment,start_s,end_s,setting,gain_db,loudness_lufs"]
    for cue in reel.cues:
        lufs = "" if cue.loudness_lufs is None else f"{cue.loudness_lufs:.2f}"
        lines.append(f"{cue.segment},{cue.start_s:.3f},{cue.end_s:.3f},{_csv_text(cue.setting)},"
                     f"{cue.gain_db:+.2f},{lufs}")
    return "\n".join(lines) + "\n"


def _csv_text(text: str) -> str:
    """A CSV field: quoted (quotes doubled) when it holds a comma, quote or line break (RFC 4180)."""
    return f'"{text.replace(chr(34), chr(34) * 2)}"' if any(c in text for c in ',"\r\n') else text
