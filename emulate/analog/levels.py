"""The level plan: how close each op-amp in the real box comes to its rails.

A sine of ``level_dbu`` at the source is swept over the audio band; at every node
an op-amp drives (and at the network's inner nodes) the peak voltage is
``sqrt(2) * V_rms(level) * max_f |H_node(f)|``, reached at the worst frequency.
Its headroom is the op-amp's symmetric swing (at its rated load) over that peak,
in dB; the stage that drives the load (the output follower of an active network)
has the swing it holds into that load (:meth:`OpAmp.peak_into`: a heavy load
draws the op-amp's output current limit before the swing is reached); the slew headroom is the slew rate over the steepest slope the stage must
follow, ``max_f 2 pi f V_peak |H_node(f)|`` (a sine's largest slope). The
limiting stage is the one with the least headroom.

Levels: ``--level`` is the nominal (alignment) level in dBu; ``--full-scale``
is what 0 dBFS of a take is in dBu. When only the level is given, the alignment
sits 18 dB below full scale (EBU R68 practice, from memory): +4 dBu nominal
means 0 dBFS = +22 dBu.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from emulate.analog.opamp import OpAmp, dbu_to_volts_rms
from emulate.analog.response import AUDIO_BAND_HZ
from emulate.errors import BadValueError, EmulateWarning
from emulate.validate import check_range

__all__ = [
    "ALIGNMENT_BELOW_FS_DB",
    "INNER_NODES",
    "LevelPlan",
    "StageLevel",
    "full_scale_dbu",
    "level_plan",
    "load_stage",
    "warn_plan",
]

ALIGNMENT_BELOW_FS_DB = 18.0  # EBU R68: alignment level -18 dBFS (from memory)
INNER_NODES = {"rc": "R-R-C junction", "cr": "C-C-R junction", "net": "network output"}
_GRID_POINTS = 400


def full_scale_dbu(level_dbu: float | None, full_scale: float | None) -> float:
    """What 0 dBFS is in dBu: ``full_scale``, else ``level_dbu`` + 18 dB.

    Raises
    ------
    BadValueError
        If neither is given, or either lies outside -60..+40 dBu.

    Example
    -------
    >>> full_scale_dbu(4.0, None)
    22.0
    """
    if level_dbu is None and full_scale is None:
        raise BadValueError("give --level DBU or --full-scale DBU")
    for what, value in (("level (dBu)", level_dbu), ("full scale (dBu)", full_scale)):
        if value is not None:
            check_range(what, value, -60.0, 40.0)
    return float(full_scale) if full_scale is not None else float(level_dbu) + ALIGNMENT_BELOW_FS_DB


@dataclass(frozen=True)
class StageLevel:
    """One node of the plan: peak volts at its worst frequency, headroom in dB."""

    node: str
    role: str
    driven: bool  # an op-amp output (True) or an inner node of the network
    peak_v: float
    worst_hz: float
    headroom_db: float
    slew_headroom_db: float

    def as_dict(self) -> dict:
        return dict(self.__dict__)


@dataclass(frozen=True)
class LevelPlan:
    """The plan at one level: every stage, and the one that limits."""

    level_dbu: float
    opamp: OpAmp
    stages: tuple[StageLevel, ...]
    warnings: tuple[str, ...]

    @property
    def limiting(self) -> StageLevel:
        """The op-amp output with the least headroom (the first to clip)."""
        return min((s for s in self.stages if s.driven), key=lambda s: min(s.headroom_db, s.slew_headroom_db))

    @property
    def headroom_db(self) -> float:
        """Headroom of the limiting stage, dB (negative: it clips at this level)."""
        s = self.limiting
        return min(s.headroom_db, s.slew_headroom_db)

    def as_dict(self) -> dict:
        return {"level_dbu": self.level_dbu, "opamp": self.opamp.name, "headroom_db": self.headroom_db,
                "limiting_node": self.limiting.node, "stages": [s.as_dict() for s in self.stages],
                "warnings": list(self.warnings)}

    def text(self) -> str:
        """A small table: node, role, peak, worst frequency, headroom."""
        lines = [f"level plan at {self.level_dbu:+.1f} dBu ({self.opamp.describe()})"]
        for s in self.stages:
            mark = "" if s.driven else " (inner node)"
            lines.append(f"  {s.node:<6} {s.role + mark:<32} peak {s.peak_v:6.2f} V at {s.worst_hz:7.0f} Hz   "
                         f"headroom {s.headroom_db:+6.1f} dB, slew {s.slew_headroom_db:+6.1f} dB")
        lines.append(f"  headroom {self.headroom_db:+.1f} dB, limited by {self.limiting.node} "
                     f"({self.limiting.role})")
        lines += [f"  warning: {w}" for w in self.warnings]
        return "\n".join(lines)


def level_plan(network, opamp: OpAmp, level_dbu: float, *, band_hz=AUDIO_BAND_HZ) -> LevelPlan:
    """Peak signal and headroom at every op-amp output and inner node for a sine at ``level_dbu``.

    The network's followers are made of ``opamp`` (finite gain-bandwidth); a
    level of a sine at the source, swept over ``band_hz``, is the stimulus.

    Parameters
    ----------
    network : TwinT
        The circuit (its ``opamp`` field is replaced by ``opamp``).
    opamp : OpAmp
        The op-amp class of every stage.
    level_dbu : float
        RMS level of the sine at the source, dBu (-60..+40).
    band_hz : (float, float)
        Frequencies swept, Hz.

    Raises
    ------
    BadValueError
        If the level is out of range.

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> from emulate.analog.opamp import OpAmp
    >>> plan = level_plan(TwinT.balanced(1000.0, r_ohms=10e3), OpAmp.parse("jfet"), 4.0)
    >>> plan.limiting.node, round(plan.headroom_db, 1)
    ('src', 17.8)
    """
    check_range("level (dBu)", level_dbu, -60.0, 40.0)
    network = network.replace(opamp=opamp)
    circuit, _ = network.circuit()
    f_hz = np.geomspace(band_hz[0], band_hz[1], _GRID_POINTS)
    v_peak = math.sqrt(2) * dbu_to_volts_rms(level_dbu)
    loaded = load_stage(network)
    nodes = [(n, role, True) for n, role in network.opamp_outputs().items()]
    nodes += [(n, role, False) for n, role in INNER_NODES.items()]
    stages = []
    for node, role, driven in nodes:
        swing = opamp.peak_into(network.load_ohms) if node == loaded else opamp.peak_v
        if node == loaded:
            role += f" into {network.load_ohms:g} ohm"
        stages.append(_stage(circuit, node, role, driven, f_hz, v_peak, opamp, swing))
    return LevelPlan(float(level_dbu), opamp, tuple(stages), tuple(_load_warnings(network, opamp)))


def load_stage(network) -> str | None:
    """The op-amp output the load hangs on (an active network's output follower), else None."""
    return "buf" if network.is_active and math.isfinite(network.load_ohms) else None


def _stage(circuit, node, role, driven, f_hz, v_peak, opamp, swing_v) -> StageLevel:
    magnitude = np.abs(circuit.response(f_hz, node))
    i = int(np.argmax(magnitude))
    peak = v_peak * magnitude[i]
    slope = np.max(2 * np.pi * f_hz * v_peak * magnitude)
    return StageLevel(node, role, driven, float(peak), float(f_hz[i]),
                      float(20 * np.log10(swing_v / max(peak, 1e-30))),
                      float(20 * np.log10(opamp.slew_v_per_s / max(slope, 1e-30))))


def _load_warnings(network, opamp) -> list[str]:
    found = []
    if load_stage(network) is not None and opamp.peak_into(network.load_ohms) < opamp.peak_v:
        found.append(f"load {network.load_ohms:g} ohm draws the {opamp.name} output follower into its "
                     f"{opamp.max_current_a * 1e3:g} mA current limit: it swings "
                     f"{opamp.peak_into(network.load_ohms):.2f} V peak instead of {opamp.peak_v:.2f} V")
    return found


def warn_plan(plan: LevelPlan) -> list[EmulateWarning]:
    """Warnings for a plan that clips (negative headroom) at its level."""
    if plan.headroom_db >= 0:
        return []
    s = plan.limiting
    if s.headroom_db <= s.slew_headroom_db:
        return [EmulateWarning(f"{s.node} ({s.role}) clips at {plan.level_dbu:+.1f} dBu: {s.peak_v:.2f} V peak "
                               f"at {s.worst_hz:.0f} Hz against {plan.opamp.peak_v:.2f} V swing "
                               f"({plan.headroom_db:+.1f} dB)")]
    return [EmulateWarning(f"{s.node} ({s.role}) slew-limits at {plan.level_dbu:+.1f} dBu: it needs "
                           f"{-s.slew_headroom_db:.1f} dB more than the {plan.opamp.slew_v_per_s / 1e6:g} V/us "
                           "it has at the top of the band; choose a faster op-amp class")]
