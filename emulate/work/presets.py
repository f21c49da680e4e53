"""The per-speaker preset store: one human-editable TOML file per preset.

Where presets live: :func:`default_presets_dir` gives the folder named by the
environment variable ``EMULATE_PRESETS_DIR`` when it is set and not empty,
otherwise the per-user data folder ``$XDG_DATA_HOME/emulate/presets`` (by default
``~/.local/share/emulate/presets``), looked up at each call, not at import. A
preset named ``NAME`` is the file ``NAME.toml`` there. The presets shipped with
emulate (package data, copied from the repository's ``presets/``;
:func:`shipped_presets_dir`) are read-only and seen beside the user's own when no
folder is named explicitly; a user preset of the same name takes precedence.

A preset file reads, top to bottom (every written file starts with a short
comment header saying the same)::

    schema_version = 1
    name = "orrin-passive"        # must match the file name
    speaker = "Orrin Quillfeather"
    mix = 0.7                     # 0 = dry .. 1 = full notch
    notes = "..."

    [made]
    when = 2026-11-20 18:30:00+00:00   # UTC
    how = "circuit options: ..."

    [circuit]                     # part values as written on a schematic
    r1 = "3k3"                    # r1 r2 r3 c1 c2 c3 required
    ...                           # source, load, depth_pot optional (ohms)
    bootstrap = 0.75              # optional: K in [0, 1) makes it the active network

    [target]                      # or instead of / beside [circuit]
    notch = "7.2k"                # Hz, required in a target
    q = 1.0                       # optional, 0.25..20
    series = "E24"                # optional, also impedance (ohms), capacitor (farads)

Reading never trusts a file: every field is checked and a bad one gives a
:class:`PresetError` naming the file and the field; one bad file never stops
the others from listing (:meth:`PresetStore.list_all`).
"""

from __future__ import annotations

import datetime as dt
import numbers
import os
import re
import tomllib
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import tomli_w

from emulate import files
from emulate.analog import parts, spec
from emulate.errors import BadValueError, EmulateWarning, PresetError
from emulate.validate import check_range

__all__ = ["CIRCUIT_KEYS", "SCHEMA_VERSION", "TARGET_KEYS", "Preset", "PresetStore",
           "check_name", "default_presets_dir", "shipped_presets_dir", "preset_from_toml", "preset_to_toml"]

SCHEMA_VERSION = 1
ENV_VAR = "EMULATE_PRESETS_DIR"

CIRCUIT_KEYS = spec.CIRCUIT_KEYS
TARGET_KEYS = spec.TARGET_KEYS
_TOP_KEYS = ("schema_version", "name", "speaker", "mix", "notes", "made", "circuit", "target")
_MADE_KEYS = ("when", "how")

_NAME_RE = re.compile(r"[A-Za-z0-9_-][A-Za-z0-9._-]{0,63}")
NAME_RULE = ("1-64 characters of ASCII letters, digits, '-', '_' and '.', "
             "not starting with '.'")

_HEADER = """\
# emulate preset: one named notch setting for one speaker. Edit freely; emulate
# checks every field when it reads the file.
#   name     must match the file name (NAME.toml); speaker and notes are free text
#   mix      0 = dry .. 1 = full notch
#   [made]   when = UTC time it was made; how = how it was made
#   [circuit] part values as on a schematic: 4k7, 22n, 600. r1 r2 r3 c1 c2 c3 are
#            required; source, load, depth_pot (ohms) optional; bootstrap = K in
#            [0, 1) makes it the active (bootstrapped) network, absent = passive
#   [target] notch (Hz, e.g. "6.3k") required; q 0.25..20, series (E3..E192),
#            impedance (ohms), capacitor (farads) optional
"""


def default_presets_dir() -> Path:
    """The user's preset folder: ``$EMULATE_PRESETS_DIR`` if set, else the per-user data folder.

    The per-user folder is ``$XDG_DATA_HOME/emulate/presets`` (XDG Base Directory
    convention), ``~/.local/share/emulate/presets`` when that variable is unset.

    Returns
    -------
    pathlib.Path
        The folder (it may not exist yet; :meth:`PresetStore.save` creates it).
        Relative values of the variable are taken from the current directory.

    Example
    -------
    >>> default_presets_dir().name
    'presets'
    """
    chosen = os.environ.get(ENV_VAR, "").strip()
    if chosen:
        return Path(chosen).expanduser()
    data = os.environ.get("XDG_DATA_HOME", "").strip()
    return (Path(data) if data else Path.home() / ".local" / "share") / "emulate" / "presets"


def shipped_presets_dir() -> Path:
    """The read-only presets shipped with emulate (package data; the repository's presets/ is the source).

    Example
    -------
    >>> (shipped_presets_dir() / "orrin-passive.toml").is_file()
    True
    """
    return Path(__file__).resolve().parent.parent / "data" / "presets"


def check_name(name: object) -> str:
    """Check a preset name against the naming rule and return it.

    Parameters
    ----------
    name : str
        1-64 characters of ASCII letters, digits, ``-``, ``_`` and ``.``, not
        starting with ``.``; so no path separators and no ``..`` traversal.

    Returns
    -------
    str
        The name, unchanged.

    Raises
    ------
    PresetError
        If the name breaks the rule; the message shows it and the rule.

    Example
    -------
    >>> check_name("orrin-passive")
    'orrin-passive'
    """
    if not (isinstance(name, str) and _NAME_RE.fullmatch(name)):
        raise PresetError(f"preset name {name!r}: use {NAME_RULE}")
    return name


# ---------------------------------------------------------------------------
# Field checks: each raises PresetError("field 'x': ...") and returns the
# normalised value.
# ---------------------------------------------------------------------------
def _field_error(where: str, why: str) -> PresetError:
    return PresetError(f"field {where!r}: {why}")


def _text(where: str, value: object, *, empty: bool) -> str:
    if not isinstance(value, str):
        raise _field_error(where, f"{value!r} is not text")
    if not empty and not value.strip():
        raise _field_error(where, "is empty; write some text")
    try:
        value.encode("utf-8")
    except UnicodeEncodeError as exc:
        raise _field_error(where, f"{value!r} cannot be stored as UTF-8") from exc
    return value


def _number(where: str, value: object, low: float, high: float, *, high_open=False) -> float:
    if not isinstance(value, numbers.Real) or isinstance(value, bool):
        raise _field_error(where, f"{value!r} is not a number")
    try:
        check_range("value", value, low, high, high_open=high_open)
    except BadValueError as exc:
        raise _field_error(where, str(exc)) from exc
    return float(value)


_NUMBER_KEYS = ("bootstrap", "q")  # kept as numbers; every other value is a part value, kept as text


def _as_written(key: str, value: object):
    """A table value kept as the user wrote it: text trimmed, a bare part value as its text."""
    if isinstance(value, str):
        return value.strip()
    if key in _NUMBER_KEYS:
        return float(value)
    return str(int(value)) if isinstance(value, numbers.Integral) else repr(float(value))


def _table(where: str, value: object, allowed: tuple[str, ...]) -> dict:
    if not isinstance(value, dict):
        raise _field_error(where, f"{value!r} is not a table")
    unknown = [key for key in value if key not in allowed]
    if unknown:
        raise _field_error(f"{where}.{unknown[0]}" if where else unknown[0],
                           f"unknown key; allowed {', '.join(allowed)}")
    return value


def _checked_by_spec(name: str, value: object, check) -> dict | None:
    """A [circuit] or [target] table checked by the one reader of that layout (emulate.analog.spec)."""
    if value is None:
        return None
    table = _table(name, value, CIRCUIT_KEYS if name == "circuit" else TARGET_KEYS)
    try:
        check(table)
    except BadValueError as exc:
        found = _SPEC_FIELD.match(str(exc))
        raise (_field_error(*found.groups()) if found else PresetError(str(exc))) from None
    order = CIRCUIT_KEYS if name == "circuit" else TARGET_KEYS  # canonical order: files read the same
    kept = {key: _as_written(key, table[key]) for key in order if key in table}
    for key in ("series", "cap_series"):
        if key in kept:
            kept[key] = parts.parse_series(kept[key])
    return kept


# spec names the field first: "circuit.r1: resistance ..." or "target.q 0.2: allowed ..."
_SPEC_FIELD = re.compile(r"^((?:circuit|target)(?:\.\w+)?):? (.*)$", re.S)


def _circuit(value: object) -> dict | None:
    return _checked_by_spec("circuit", value, lambda t: spec.network_from_table(t, where="circuit"))


def _target(value: object) -> dict | None:
    return _checked_by_spec("target", value, lambda t: spec.target_arguments(t, where="target"))


def _created(value: object) -> str:
    """ISO 8601 text or a datetime -> 'YYYY-MM-DDTHH:MM:SSZ' in UTC."""
    when = value
    if isinstance(value, str):
        try:
            when = dt.datetime.fromisoformat(value.strip())
        except ValueError as exc:
            raise _field_error("made.when", f"{value!r} is not an ISO 8601 time; "
                               "write e.g. 2026-11-20T18:30:00Z") from exc
    if not isinstance(when, dt.datetime) or when.utcoffset() is None:
        raise _field_error("made.when", f"{value!r} needs a date, time and zone; "
                           "write e.g. 2026-11-20T18:30:00Z")
    return when.astimezone(dt.UTC).isoformat().replace("+00:00", "Z")


def _schema(value: object) -> int:
    if not isinstance(value, int) or isinstance(value, bool) or value < 1:
        raise _field_error("schema_version", f"{value!r} is not a version; "
                           f"this emulate writes {SCHEMA_VERSION}")
    if value > SCHEMA_VERSION:
        raise _field_error("schema_version", f"{value} is newer than this emulate reads "
                           f"({SCHEMA_VERSION}); upgrade emulate")
    return value


def _now_utc() -> str:
    return dt.datetime.now(dt.UTC).replace(microsecond=0).isoformat().replace(
        "+00:00", "Z")


@dataclass(frozen=True)
class Preset:
    """One named notch setting for one speaker.

    Parameters
    ----------
    name : str
        The preset's name (see :func:`check_name`); also its file name.
    speaker : str
        Who it is for (free text, not empty).
    circuit : dict or None
        Parts as written on a schematic: ``r1 r2 r3`` (ohms) and ``c1 c2 c3``
        (farads) required, ``source``, ``load``, ``depth_pot`` (ohms) optional,
        e.g. ``{"r1": "3k3", ..., "c3": "22n", "source": "600"}``; ``bootstrap``
        (K, a float in [0, 1)) makes it the active network. Values are kept as
        written (numbers become their text); :meth:`network` builds it. Both
        tables are checked by :mod:`emulate.analog.spec`, the one reader of that layout.
    target : dict or None
        A design target: ``notch`` (Hz, e.g. ``"6.3k"``; 1 Hz..100 kHz)
        required; ``q`` (0.25..20), ``series`` and ``cap_series`` (E3..E192),
        ``impedance`` (ohms), ``capacitor`` (farads) optional. At least one of ``circuit``
        and ``target`` must be given.
    mix : float
        Wet/dry mix, 0..1 inclusive (1 = full notch).
    notes : str
        Free text, may span lines.
    created : str or datetime
        When it was made, ISO 8601 with a zone; kept as UTC ``...Z`` text.
        Default: now.
    made_by : str
        How it was made, e.g. ``"sweep pick: take 3 of 8"``.
    schema_version : int
        File layout version; only 1 exists.

    Does not check that the circuit is balanced or meets the target; the
    circuit and design modules do that.

    Raises
    ------
    PresetError
        For any bad field: ``field 'mix': value 1.5: allowed [0, 1]``.

    Example
    -------
    >>> p = Preset("demo", "A. Speaker", target={"notch": "6.3k", "q": 1.0}, mix=0.8)
    >>> p.target
    {'notch': '6.3k', 'q': 1.0}
    """

    name: str
    speaker: str
    circuit: dict | None = None
    target: dict | None = None
    mix: float = 1.0
    notes: str = ""
    created: str = field(default_factory=_now_utc)
    made_by: str = "by hand"
    schema_version: int = SCHEMA_VERSION

    def __post_init__(self):
        check_name(self.name)
        checked = {"speaker": _text("speaker", self.speaker, empty=False),
                   "circuit": _circuit(self.circuit), "target": _target(self.target),
                   "mix": _number("mix", self.mix, 0.0, 1.0),
                   "notes": _text("notes", self.notes, empty=True),
                   "created": _created(self.created),
                   "made_by": _text("made.how", self.made_by, empty=False),
                   "schema_version": _schema(self.schema_version)}
        if checked["circuit"] is None and checked["target"] is None:
            raise PresetError("a preset needs a [circuit] table, a [target] table or both")
        for key, value in checked.items():
            object.__setattr__(self, key, value)

    def network(self):
        """The :class:`emulate.analog.networks.TwinT` this preset describes, at its mix.

        Example
        -------
        >>> c = {"r1": "10k", "r2": "10k", "r3": "4k7", "c1": "10n", "c2": "10n", "c3": "22n"}
        >>> Preset("x", "y", circuit=c, mix=0.5).network().r3
        4700.0
        """
        return spec.network_from_preset(self)


# ---------------------------------------------------------------------------
# TOML text <-> Preset
# ---------------------------------------------------------------------------
def preset_to_toml(preset: Preset) -> str:
    """The preset as TOML text with the explanatory comment header.

    Parameters
    ----------
    preset : Preset
        An already checked preset.

    Returns
    -------
    str
        Text that :func:`preset_from_toml` reads back to an equal preset.

    Example
    -------
    >>> text = preset_to_toml(Preset("x", "y", target={"notch": "5k"}))
    >>> text.startswith("# emulate preset")
    True
    """
    document = {"schema_version": preset.schema_version, "name": preset.name,
                "speaker": preset.speaker, "mix": preset.mix, "notes": preset.notes,
                "made": {"when": dt.datetime.fromisoformat(preset.created),
                         "how": preset.made_by}}
    for key in ("circuit", "target"):
        if getattr(preset, key) is not None:
            document[key] = dict(getattr(preset, key))
    # Multi-line notes read best as TOML multi-line strings, but TOML readers may
    # turn "\r\n" into "\n" there, so notes holding "\r" stay on one line.
    multiline = "\r" not in preset.notes + preset.speaker + preset.made_by
    return _HEADER + "\n" + tomli_w.dumps(document, multiline_strings=multiline)


def preset_from_toml(text: str) -> Preset:
    """Read and check a preset from TOML text.

    Parameters
    ----------
    text : str
        The file's text.

    Returns
    -------
    Preset

    Raises
    ------
    PresetError
        If the text is not TOML, a key is unknown or missing, or a field is bad;
        the message names the field (the store adds the file name).

    Example
    -------
    >>> p = preset_from_toml(preset_to_toml(Preset("x", "y", target={"notch": "5k"})))
    >>> p.target
    {'notch': '5k'}
    """
    try:
        document = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise PresetError(f"not valid TOML: {exc}") from exc
    _table("", document, _TOP_KEYS)
    missing = [key for key in ("schema_version", "name", "speaker", "made") if key not in document]
    if missing:
        raise _field_error(missing[0], "missing")
    _schema(document["schema_version"])  # first, so a newer file says so plainly
    try:
        check_name(document["name"])
    except PresetError as exc:
        raise _field_error("name", str(exc)) from exc
    made = _table("made", document["made"], _MADE_KEYS)
    for key in _MADE_KEYS:
        if key not in made:
            raise _field_error(f"made.{key}", "missing")
    return Preset(name=document["name"], speaker=document["speaker"],
                  circuit=document.get("circuit"), target=document.get("target"),
                  mix=document.get("mix", 1.0), notes=document.get("notes", ""),
                  created=made["when"], made_by=made["how"],
                  schema_version=document["schema_version"])


# ---------------------------------------------------------------------------
# The store
# ---------------------------------------------------------------------------
def _shown(path: Path) -> str:
    """A path as a user would type it: relative to the working directory when inside it."""
    try:
        return str(path.relative_to(Path.cwd()))
    except ValueError:
        return str(path)


class PresetStore:
    """A folder of preset files, one ``NAME.toml`` per preset.

    Parameters
    ----------
    root : str or os.PathLike, optional
        The folder; default :func:`default_presets_dir`. It need not exist
        until the first :meth:`save`. Without ``root`` the shipped presets
        (:func:`shipped_presets_dir`) are seen too, read-only, under the user's own.

    Saving a new name is atomic create-if-absent: of two programs saving the same
    new name at once (without force), one saves and the other is refused.

    Example
    -------
    >>> import tempfile
    >>> store = PresetStore(tempfile.mkdtemp())
    >>> _ = store.save(Preset("demo", "A. Speaker", target={"notch": "6.3k"}))
    >>> store.names(), store.load("demo").target
    (['demo'], {'notch': '6.3k'})
    """

    def __init__(self, root: str | os.PathLike | None = None):
        self.explicit = root is not None
        self.root = Path(root) if root is not None else default_presets_dir()
        self.shipped = None if self.explicit else shipped_presets_dir()

    def path(self, name: str) -> Path:
        """The file of preset ``name``: the user's, else a shipped one; raises PresetError for a bad name."""
        own = self._own(name)
        if not own.is_file() and self.shipped is not None and (self.shipped / own.name).is_file():
            return self.shipped / own.name
        return own

    def _own(self, name: str) -> Path:
        return self.root / f"{check_name(name)}.toml"

    def check_folder(self) -> str | None:
        """Raise PresetError if the folder is a file (or not a folder); a note if it is missing.

        Returns
        -------
        str or None
            ``"... does not exist yet ..."`` when the folder is missing, else None.
        """
        if self.root.exists() and not self.root.is_dir():
            raise PresetError(f"presets folder {_shown(self.root)} is not a folder; allowed: a folder "
                              f"(--presets DIR or ${ENV_VAR})")
        if not self.root.exists():
            if self.explicit:
                raise PresetError(f"presets folder {_shown(self.root)} does not exist; allowed: an existing "
                                  "folder ('preset save' creates it)")
            return f"your presets folder {_shown(self.root)} does not exist yet ('preset save' creates it)"
        return None

    def _files(self) -> list[Path]:
        found = {}
        for folder in (self.shipped, self.root):  # the user's own last: they take precedence
            if folder is not None and folder.is_dir():
                found |= {p.name: p for p in folder.glob("*.toml") if p.is_file() and not p.name.startswith(".")}
        return [found[name] for name in sorted(found)]

    def names(self) -> list[str]:
        """Names of the preset files present (well-named ``*.toml``), sorted; [] if no folder."""
        return [p.stem for p in self._files() if _NAME_RE.fullmatch(p.stem)]

    def exists(self, name: str) -> bool:
        """Whether preset ``name`` has a file; raises PresetError for a bad name."""
        return self.path(name).is_file()

    def is_shipped(self, name: str) -> bool:
        """Whether ``name`` is read from the shipped presets (no user preset of that name)."""
        return self.shipped is not None and self.path(name).parent == self.shipped

    def load(self, name: str) -> Preset:
        """Read and check preset ``name``.

        Raises
        ------
        PresetError
            If the name is bad, there is no such preset, or the file is malformed
            (``presets/anna.toml: field 'mix': ...``).
        """
        path = self.path(name)
        if not path.is_file():
            if self.root.exists() and not self.root.is_dir():
                self.check_folder()
            have = ", ".join(self.names()) or "none"
            raise PresetError(f"no preset {name!r} in {_shown(self.root)} (have: {have})")
        try:
            preset = preset_from_toml(path.read_text(encoding="utf-8"))
        except (PresetError, BadValueError) as exc:
            raise PresetError(f"{_shown(path)}: {exc}") from exc
        except (OSError, UnicodeDecodeError) as exc:
            raise PresetError(f"{_shown(path)}: cannot be read: {exc}") from exc
        if preset.name != name:
            raise PresetError(f"{_shown(path)}: field 'name': {preset.name!r} does not match "
                              f"the file name {name!r}")
        return preset

    def list_all(self) -> tuple[list[Preset], list[tuple[Path, str]]]:
        """Every preset that reads, and a (path, message) problem for every file that does not.

        Returns
        -------
        presets : list of Preset
            Sorted by name.
        problems : list of (pathlib.Path, str)
            Malformed or badly named files; never raised.
        """
        presets, problems = [], []
        for path in self._files():
            try:
                presets.append(self.load(path.stem))
            except PresetError as exc:
                problems.append((path, str(exc)))
        return presets, problems

    def list(self) -> list[Preset]:
        """Every preset that reads, sorted by name; each bad file gives an EmulateWarning."""
        presets, problems = self.list_all()
        for _path, message in problems:
            warnings.warn(message, EmulateWarning, stacklevel=2)
        return presets

    def save(self, preset: Preset, force: bool = False) -> Path:
        """Write a preset atomically (temporary file in the folder, then ``os.replace``).

        Parameters
        ----------
        preset : Preset
            What to write, as ``NAME.toml``; the folder is created if missing.
        force : bool
            Replace an existing preset of that name; without it that is an error.

        Returns
        -------
        pathlib.Path
            The file written.

        Raises
        ------
        PresetError
            If the preset exists and ``force`` is false, or the folder or file
            cannot be written (nothing is left behind then).
        """
        path = self.check_free(preset.name, force)
        if self.root.exists() and not self.root.is_dir():
            self.check_folder()
        if os.path.lexists(path) and not path.is_file():
            raise PresetError(f"{_shown(path)}: is not a regular file; it is never replaced")
        text = preset_to_toml(preset)
        try:
            with files.parents_made(path):
                # a replaced preset keeps its permissions; a new one is readable by all
                mode = path.stat().st_mode & 0o777 if path.exists() else 0o644
                files.write_text(path, text, mode=mode, replace=force)
        except FileExistsError:  # saved by another program between the check and now
            raise self._exists(preset.name, path) from None
        except OSError as exc:
            raise PresetError(f"{_shown(path)}: cannot be written: {exc.strerror or exc}") from None
        return path

    def check_free(self, name: str, force: bool = False) -> Path:
        """The file :meth:`save` would write; refuses an existing preset without ``force`` (check before work).

        Raises
        ------
        PresetError
            A bad name, or the preset exists and ``force`` is false.
        """
        path = self._own(name)
        if os.path.lexists(path) and not force:
            raise self._exists(name, path)
        return path

    @staticmethod
    def _exists(name: str, path: Path) -> PresetError:
        return PresetError(f"preset {name!r} already exists ({_shown(path)}); "
                           "save with force (--force) to replace it")

    def delete(self, name: str) -> None:
        """Remove preset ``name``; raises PresetError if the name is bad or it does not exist."""
        path = self._own(name)
        if not path.is_file():
            shipped = " (it ships with emulate and is read-only)" if self.is_shipped(name) else ""
            raise PresetError(f"no preset {name!r} in {_shown(self.root)} to delete{shipped}")
        try:
            path.unlink()
        except OSError as exc:
            raise PresetError(f"{_shown(path)}: cannot be deleted: {exc}") from exc
