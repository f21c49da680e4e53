"""How a user writes a circuit down: tables of part values or of a design target.

One layout serves the command-line part options, the circuit file (TOML) and the
preset files, so a preset is also a valid ``--circuit`` file::

    mix = 0.8                 # optional, 0 (dry) .. 1 (full notch)

    [circuit]                 # either the parts...
    r1 = "10k"                # ohms, engineering notation or IEC 60062 code
    r2 = "10k"
    r3 = "5k"
    c1 = "10n"                # farads
    c2 = "10n"
    c3 = "20n"
    source = "600"            # optional: source resistance, ohms
    load = "100k"             # optional: load resistance, ohms
    bootstrap = 0.8           # optional: K for the active network
    depth_pot = "100k"        # optional: a real depth pot instead of an ideal mix

    [target]                  # ...or a target to design from
    notch = "6.3k"            # Hz
    q = 1.0                   # optional; absent = passive
    series = "E24"            # optional
    cap_series = "E12"        # optional
    impedance = "10k"         # optional
    capacitor = "10n"         # optional
    parts_per_position = 2    # optional: 1 (default) or 2 parts at each position

Given both, ``[circuit]`` is what is analysed and ``[target]`` is kept as the
record of how it was designed.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

from emulate.analog import parts
from emulate.analog.design import IMPEDANCE_RANGE_OHMS, NOTCH_RANGE_HZ, Q_RANGE, Design, design_twin_t
from emulate.errors import BadValueError
from emulate.analog.networks import PART_NAMES, TwinT, part_kind
from emulate.validate import check_range

__all__ = ["CIRCUIT_KEYS", "TARGET_KEYS", "network_from_table", "network_surroundings", "design_from_table",
           "target_arguments", "table_from_network", "read_circuit_file", "network_from_document",
           "preset_document", "network_from_preset"]

CIRCUIT_KEYS = PART_NAMES + ("source", "load", "bootstrap", "depth_pot")
TARGET_KEYS = ("notch", "q", "series", "cap_series", "impedance", "capacitor", "parts_per_position")


def network_from_table(table: dict, *, mix: float = 1.0, where: str = "circuit") -> TwinT:
    """Build a :class:`TwinT` from a ``[circuit]`` table (values as text or numbers).

    Raises
    ------
    BadValueError : a missing part, an unknown key, or a bad value, naming ``where``.
    """
    _known_keys(table, CIRCUIT_KEYS, where)
    missing = [name for name in PART_NAMES if table.get(name) is None]
    if missing:
        raise BadValueError(f"{where or 'circuit'}: missing {', '.join(m.upper() for m in missing)}; "
                            "give all of R1, R2, R3, C1, C2, C3")
    values = {name: _value(table[name], part_kind(name), _field(where, name)) for name in PART_NAMES}
    bootstrap = table.get("bootstrap")
    if bootstrap is not None:
        bootstrap = _number(bootstrap, _field(where, "bootstrap"))
        check_range(_field(where, "bootstrap"), bootstrap, 0.0, 1.0, high_open=True)
    depth_pot = table.get("depth_pot")
    return TwinT(
        **values,
        **network_surroundings(table, where),
        bootstrap=bootstrap,
        mix=mix,
        depth_pot_ohms=None if depth_pot is None else _value(depth_pot, "resistance", _field(where, "depth_pot")),
    )


def network_surroundings(table: dict, where: str = "") -> dict:
    """``source_ohms`` and ``load_ohms`` from a table's ``source`` and ``load`` (defaults 0, none)."""
    return {
        "source_ohms": _value(table.get("source"), "resistance", _field(where, "source"), default=0.0),
        "load_ohms": _value(table.get("load"), "resistance", _field(where, "load"), default=math.inf),
    }


def design_from_table(table: dict, *, source_ohms: float = 0.0, load_ohms: float = math.inf,
                      where: str = "target") -> Design:
    """Design from a ``[target]`` table; see :func:`emulate.analog.design.design_twin_t`."""
    notch, options = target_arguments(table, where=where)
    return design_twin_t(notch, source_ohms=source_ohms, load_ohms=load_ohms, **options)


def target_arguments(table: dict, *, where: str = "target") -> tuple[float, dict]:
    """Check a ``[target]`` table: the notch (Hz) and the keyword arguments of the design.

    Raises
    ------
    BadValueError : a missing notch, an unknown key or a bad value, naming the field.
    """
    _known_keys(table, TARGET_KEYS, where)
    if table.get("notch") is None:
        raise BadValueError(f"{where}: missing notch (Hz), e.g. notch = \"6.3k\"")
    options = {}
    if table.get("q") is not None:
        options["q"] = _number(table["q"], _field(where, "q"))
        check_range(_field(where, "q"), options["q"], *Q_RANGE)
    for key in ("series", "cap_series"):
        if table.get(key) is not None:
            options[key] = _series(table[key], _field(where, key))
    if table.get("impedance") is not None:
        options["impedance_ohms"] = _value(table["impedance"], "resistance", _field(where, "impedance"))
        check_range(_field(where, "impedance"), options["impedance_ohms"], *IMPEDANCE_RANGE_OHMS)
    if table.get("parts_per_position") is not None:
        options["parts_per_position"] = _number(table["parts_per_position"], _field(where, "parts_per_position"))
        if options["parts_per_position"] not in (1, 2):
            raise BadValueError(f"{_field(where, 'parts_per_position')}: {table['parts_per_position']!r}; allowed 1 or 2")
        options["parts_per_position"] = int(options["parts_per_position"])
    if table.get("capacitor") is not None:
        options["capacitor_farads"] = _value(table["capacitor"], "capacitance", _field(where, "capacitor"))
    notch = _value(table["notch"], None, _field(where, "notch"))
    check_range(_field(where, "notch"), notch, *NOTCH_RANGE_HZ)
    return notch, options


def _series(raw, where: str) -> str:
    try:
        return parts.parse_series(str(raw))
    except BadValueError as exc:
        if where == "series":  # no table around it: the message names the series already
            raise
        raise BadValueError(f"{where}: {exc}") from None


def table_from_network(network: TwinT) -> dict:
    """The ``[circuit]`` table for a network, values as the trade writes them."""
    table = {name: _exact_text(value, part_kind(name)) for name, value in network.parts().items()}
    if network.source_ohms:
        table["source"] = _exact_text(network.source_ohms, "resistance")
    if math.isfinite(network.load_ohms):
        table["load"] = _exact_text(network.load_ohms, "resistance")
    if network.bootstrap is not None:
        table["bootstrap"] = round(float(network.bootstrap), 6)
    if network.depth_pot_ohms is not None:
        table["depth_pot"] = _exact_text(network.depth_pot_ohms, "resistance")
    return table


def _exact_text(value: float, kind: str) -> str:
    """The trade's notation with as few figures as give the value back (3 to 6).

    Half of an E96 value (R3 as two parts in parallel) needs 4 figures: 9k53 / 2
    = 4765 ohms; writing 4k76 would unbalance the network by 0.1 %.
    """
    for digits in range(3, 7):
        text = parts.format_value(value, kind, digits)
        if abs(parts.parse_value(text, kind) / value - 1) < 1e-6:
            return text
    return text


def read_circuit_file(path) -> dict:
    """Read a circuit (or preset) TOML file into a plain dict; one clear error if unreadable."""
    path = Path(path)
    try:
        with path.open("rb") as handle:
            document = tomllib.load(handle)
    except FileNotFoundError:
        raise BadValueError(f"{path}: no such circuit file") from None
    except (OSError, tomllib.TOMLDecodeError) as exc:
        raise BadValueError(f"{path}: not a readable TOML circuit file ({exc})") from None
    except UnicodeDecodeError as exc:
        raise BadValueError(f"{path}: not UTF-8 text (byte {exc.object[exc.start]:#04x} at offset "
                            f"{exc.start}); a circuit file is UTF-8 TOML") from None
    if "circuit" not in document and "target" not in document:
        raise BadValueError(f"{path}: needs a [circuit] table of parts or a [target] table")
    for name in ("circuit", "target"):
        if name in document and not isinstance(document[name], dict):
            raise BadValueError(f"{path}: {name} = {document[name]!r} is not a table; write one "
                                f"[{name}] table of key = value lines")
    return document


def network_from_document(document: dict, *, where: str, mix: float | None = None) -> TwinT:
    """The network a circuit document describes: its parts, or the design of its target."""
    mix = _number(document.get("mix", 1.0), _field(where, "mix")) if mix is None else mix
    if "circuit" in document:
        return network_from_table(document["circuit"], mix=mix, where=_table(where, "circuit"))
    design = design_from_table(document["target"], where=_table(where, "target"))
    return design.built.replace(mix=mix)


def preset_document(preset) -> dict:
    """A preset (:class:`emulate.work.presets.Preset`) as a circuit document (mix, tables)."""
    document = {"mix": preset.mix}
    for table in ("circuit", "target"):
        if getattr(preset, table):
            document[table] = dict(getattr(preset, table))
    return document


def network_from_preset(preset) -> TwinT:
    """The network a preset describes, at its mix."""
    return network_from_document(preset_document(preset), where=f"preset '{preset.name}'")


def _field(where: str, name: str) -> str:
    return f"{where}.{name}" if where else name


def _table(where: str, name: str) -> str:
    return f"{where} [{name}]" if where else ""


def _known_keys(table: dict, allowed, where: str) -> None:
    if not isinstance(table, dict):
        raise BadValueError(f"{where}: expected a table of values, got {table!r}")
    unknown = sorted(set(table) - set(allowed))
    if unknown:
        raise BadValueError(f"{where}: unknown key(s) {', '.join(unknown)}; allowed: {', '.join(allowed)}")


def _value(raw, kind, where: str, default=None) -> float:
    if raw is None:
        return default
    try:
        return parts.parse_value(raw, kind)
    except BadValueError as exc:
        raise BadValueError(f"{where}: {exc}") from None


def _number(raw, where: str) -> float:
    if isinstance(raw, bool) or not isinstance(raw, (int, float, str)):
        raise BadValueError(f"{where}: {raw!r} is not a number")
    try:
        return float(raw)
    except ValueError:
        raise BadValueError(f"{where}: {raw!r} is not a number") from None

