"""A batch plan: which takes go through which speaker's preset, and where the renders go.

A plan is a small TOML file a person writes (or one speaker given on the command
line, :meth:`BatchPlan.inline`)::

    # emulate batch plan
    out = "renders"                 # the renders, mirroring the takes' folders, and the summary

    [[speaker]]
    name = "Host A"                 # free text: who this is
    preset = "host-a"               # a saved preset ('emulate preset list')
    takes = ["season2/host-a",      # a folder: every audio file under it, sub-folders included
             "extras/*-a.wav"]      # or a glob pattern ('**' spans folders); or one file

Relative paths are read from the plan file's folder (inline: the working folder).

Where a render goes: the takes' folders are mirrored under ``out``. The *root* is the
deepest folder that holds every entry of the plan (a folder entry itself, a pattern's
fixed leading folders, a file's folder); a take at ``root/a/b.wav`` renders to
``out/a/b.wav``. So one speaker's folder ``season2/host-a`` maps its sub-folders
straight under ``out``, and two speakers' folders ``season2/host-a`` and
``season2/host-b`` appear as ``out/host-a`` and ``out/host-b``.

What this module does *not* do: it renders nothing and reads no audio (the takes'
headers are read by the batch's checks, :mod:`emulate.work.batch`).
"""

from __future__ import annotations

import glob
import os
import tomllib
from dataclasses import dataclass
from pathlib import Path

from emulate.errors import BadValueError

__all__ = ["AUDIO_SUFFIXES", "BatchPlan", "PlannedTake", "SpeakerPlan", "find_takes", "read_plan"]

#: File name suffixes taken as audio inside a folder entry: the containers libsndfile reads
#: (headerless RAW aside, which needs its format spelt out).
AUDIO_SUFFIXES = frozenset({".wav", ".flac", ".aif", ".aiff", ".ogg", ".caf", ".w64", ".rf64", ".au",
                            ".snd", ".voc", ".wve", ".mat", ".sd2", ".htk", ".sf", ".avr", ".pvf",
                            ".xi", ".mpc", ".opus", ".mp3"})
_PLAN_KEYS = ("out", "speaker")
_SPEAKER_KEYS = ("name", "preset", "takes")
_EXAMPLE = ('a plan reads: out = "FOLDER", then per speaker a [[speaker]] table with name = "...", '
            'preset = "..." and takes = ["FOLDER or PATTERN", ...]')


@dataclass(frozen=True)
class SpeakerPlan:
    """One speaker: a preset name and the takes (folders, glob patterns or files, as written)."""

    name: str
    preset: str
    takes: tuple[str, ...]


@dataclass(frozen=True)
class PlannedTake:
    """One take found by a plan: the file, the speaker it belongs to, and its render's path."""

    take: Path
    speaker: SpeakerPlan
    out_path: Path


@dataclass(frozen=True)
class BatchPlan:
    """Speakers, their presets and takes, and the output folder.

    Attributes
    ----------
    speakers : tuple of SpeakerPlan
        At least one; speaker names distinct.
    out : pathlib.Path
        The output folder (resolved against ``base``).
    base : pathlib.Path
        The folder relative take paths are read from.

    Example
    -------
    >>> plan = BatchPlan.inline("Host A", "host-a", ["takes"], "renders", base=Path("/data"))
    >>> plan.out, plan.speakers[0].takes
    (PosixPath('/data/renders'), ('takes',))
    """

    speakers: tuple[SpeakerPlan, ...]
    out: Path
    base: Path

    def __post_init__(self):
        if not self.speakers:
            raise BadValueError(f"a batch plan needs one or more [[speaker]] tables; {_EXAMPLE}")
        names = [s.name for s in self.speakers]
        if len(set(names)) != len(names):
            raise BadValueError(f"speaker names must be distinct in a plan; got {names}")

    @classmethod
    def inline(cls, speaker: str, preset: str, takes, out, *, base=None) -> BatchPlan:
        """The plan for one speaker given on the command line (paths from ``base``, default: here)."""
        base = Path.cwd() if base is None else Path(base)
        entry = _speaker({"name": speaker, "preset": preset, "takes": list(takes)}, "command line")
        return cls((entry,), base / out, base)

    @classmethod
    def from_text(cls, text: str, *, base, where: str = "plan") -> BatchPlan:
        """A plan from its TOML text; relative paths are read from ``base``.

        Raises
        ------
        BadValueError
            Not TOML, an unknown or missing key, a value of the wrong kind; the message
            names the key and shows the layout.
        """
        try:
            document = tomllib.loads(text)
        except tomllib.TOMLDecodeError as exc:
            raise BadValueError(f"{where}: not a TOML batch plan ({exc}); {_EXAMPLE}") from None
        unknown = sorted(set(document) - set(_PLAN_KEYS))
        if unknown:
            raise BadValueError(f"{where}: unknown key(s) {', '.join(unknown)}; allowed: out and "
                                f"[[speaker]] tables; {_EXAMPLE}")
        out = document.get("out")
        if not isinstance(out, str) or not out.strip():
            raise BadValueError(f"{where}: out must be the output folder, as text; {_EXAMPLE}")
        tables = document.get("speaker")
        if not isinstance(tables, list) or not all(isinstance(t, dict) for t in tables):
            raise BadValueError(f"{where}: give the speakers as [[speaker]] tables; {_EXAMPLE}")
        speakers = tuple(_speaker(table, f"{where}: speaker {i + 1}") for i, table in enumerate(tables))
        return cls(speakers, Path(base) / out, Path(base))

    def as_dict(self) -> dict:
        """Plain JSON-ready data (paths as text)."""
        return {"out": str(self.out), "base": str(self.base),
                "speakers": [{"name": s.name, "preset": s.preset, "takes": list(s.takes)} for s in self.speakers]}


def read_plan(path) -> BatchPlan:
    """Read a plan file (UTF-8 TOML); its relative paths are read from its folder.

    Raises
    ------
    BadValueError
        Unreadable, not UTF-8, or not a plan (see :meth:`BatchPlan.from_text`).

    Example
    -------
    >>> import tempfile
    >>> path = Path(tempfile.mkdtemp()) / "plan.toml"
    >>> _ = path.write_text('out = "r"\\n[[speaker]]\\nname = "A"\\npreset = "a"\\ntakes = ["t"]\\n')
    >>> read_plan(path).speakers[0].preset
    'a'
    """
    path = Path(path)
    try:
        text = path.read_bytes().decode("utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        reason = exc.strerror if isinstance(exc, OSError) and exc.strerror else "not UTF-8 text"
        raise BadValueError(f"{path}: cannot read the batch plan ({reason}); allowed: a UTF-8 TOML file") from None
    return BatchPlan.from_text(text, base=path.resolve().parent, where=str(path))


def _speaker(table: dict, where: str) -> SpeakerPlan:
    unknown = sorted(set(table) - set(_SPEAKER_KEYS))
    if unknown:
        raise BadValueError(f"{where}: unknown key(s) {', '.join(unknown)}; allowed: name, preset, takes")
    for key in ("name", "preset"):
        if not isinstance(table.get(key), str) or not table[key].strip():
            raise BadValueError(f"{where}: {key} must be given as text; {_EXAMPLE}")
    takes = table.get("takes")
    if isinstance(takes, str):
        takes = [takes]
    if not isinstance(takes, list) or not takes or not all(isinstance(t, str) and t.strip() for t in takes):
        raise BadValueError(f"{where}: takes must be one or more folders, glob patterns or files, as text")
    return SpeakerPlan(table["name"].strip(), table["preset"].strip(), tuple(takes))


def _anchor(entry: Path) -> Path:
    """The folder an entry stands for: itself (a folder), its fixed leading folders (a pattern), its folder."""
    if glob.has_magic(str(entry)):
        fixed = []
        for part in entry.parts:
            if glob.has_magic(part):
                break
            fixed.append(part)
        return Path(*fixed)
    return entry if entry.is_dir() else entry.parent


def _entry_takes(entry: Path, where: str) -> list[Path]:
    if glob.has_magic(str(entry)):
        found = sorted(Path(p) for p in glob.glob(str(entry), recursive=True) if os.path.isfile(p))
        if not found:
            raise BadValueError(f"{where}: pattern {entry} matches no file")
        return found
    if entry.is_dir():
        found = sorted(p for p in entry.rglob("*") if p.is_file() and p.suffix.lower() in AUDIO_SUFFIXES
                       and not any(part.startswith(".") for part in p.relative_to(entry).parts))
        if not found:
            raise BadValueError(f"{where}: folder {entry} holds no audio files "
                                f"(looked for {', '.join(sorted(AUDIO_SUFFIXES)[:6])} ...)")
        return found
    if not entry.exists():
        raise BadValueError(f"{where}: {entry}: no such folder or file")
    return [entry]


def find_takes(plan: BatchPlan) -> list[PlannedTake]:
    """Every take of the plan with its render's path, in plan order; refuses what cannot be mirrored safely.

    Raises
    ------
    BadValueError
        An entry that finds nothing; a take listed twice (by one speaker or two); an
        output folder that is, holds or lies inside an input folder or take (a render
        would land next to or over an input).

    Example
    -------
    >>> import tempfile
    >>> base = Path(tempfile.mkdtemp()); (base / "takes" / "ep1").mkdir(parents=True)
    >>> _ = (base / "takes" / "ep1" / "a.wav").write_bytes(b"")
    >>> [str(t.out_path.relative_to(base)) for t in find_takes(BatchPlan.inline("A", "a", ["takes"], "r", base=base))]
    ['r/ep1/a.wav']
    """
    entries = [(speaker, Path(plan.base) / text) for speaker in plan.speakers for text in speaker.takes]
    found, seen = [], {}
    for speaker, entry in entries:
        for take in _entry_takes(entry, f"speaker {speaker.name!r}"):
            key = take.resolve()
            if key in seen:
                raise BadValueError(f"{take}: listed twice (speaker {seen[key]!r} and {speaker.name!r}); "
                                    "each take may be rendered once in a batch")
            seen[key] = speaker.name
            found.append((speaker, take))
    anchors = [_anchor(entry).resolve() for _, entry in entries]
    recursive = [entry.is_dir() or "**" in str(entry) for _, entry in entries]
    out = Path(plan.out).resolve()
    _check_apart(out, zip(anchors, recursive), [take.resolve() for _, take in found])
    root = Path(os.path.commonpath(anchors))
    return [PlannedTake(take, speaker, Path(plan.out) / take.resolve().relative_to(root))
            for speaker, take in found]


def _check_apart(out: Path, anchors, takes: list[Path]) -> None:
    """Refuse an output folder that overlaps the inputs (it would write next to or over them).

    ``anchors`` are (folder, recursive) pairs: the output folder may lie inside the
    folder of a file entry or of a one-level pattern, never inside a folder entry or a
    ``**`` pattern's folder (a later run would take the renders for takes).
    """
    for folder, recursive in anchors:
        if out == folder or out in folder.parents or (recursive and folder in out.parents):
            raise BadValueError(f"{out}: the output folder overlaps the input folder {folder}; renders "
                                "would land next to or over the takes; allowed: a folder apart from the takes")
    inside = [t for t in takes if out in t.parents]
    if inside:
        raise BadValueError(f"{out}: the output folder holds the take {inside[0]}; allowed: a folder "
                            "apart from the takes")
