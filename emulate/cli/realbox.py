"""What ``response``, ``render`` and ``sheet`` share about the real box: level, full scale, op-amp.

Not a command module: the options and the one function that turns them into a
level plan and a noise report. Nothing here runs unless one of the options is given,
so the linear path of every command stays as it was.
"""

from __future__ import annotations

import warnings

import click

from emulate.analog.opamp import CLASSES, DEFAULT_CLASS, OpAmp

__all__ = [
    "HEARING_CAUTION",
    "opamp_from_options",
    "plan_level_dbu",
    "real_network",
    "realbox_options",
    "realbox_report",
    "wants_levels",
]

HEARING_CAUTION = ("protect your hearing: start monitoring low; a take rendered at a studio level "
                   "with --with-noise or clipping can be loud")


def realbox_options(command):
    """``--level``, ``--full-scale`` and ``--opamp``."""
    options = [
        click.option("--level", "level_dbu", type=float,
                     help="nominal studio level, dBu (e.g. 4): plan headroom and noise at it; "
                          "on render, 0 dBFS = level + 18 dB unless --full-scale"),
        click.option("--full-scale", "full_scale_dbu", type=float,
                     help="what 0 dBFS of the take is in the studio, dBu (e.g. 18)"),
        click.option("--opamp", "opamp_class",
                     help=f"op-amp class of every stage: {', '.join(CLASSES)} or custom, optionally "
                          f"with overrides (jfet,gbw=8M,slew=20); default {DEFAULT_CLASS} when a level "
                          "is given, else ideal followers"),
    ]
    for option in reversed(options):
        command = option(command)
    return command


def wants_levels(options: dict) -> bool:
    """True when a level or a full scale was given (the non-linear, planned path)."""
    return options.get("level_dbu") is not None or options.get("full_scale_dbu") is not None


def opamp_from_options(options: dict) -> OpAmp | None:
    """The op-amp the options name; the default class when only a level is given; else None."""
    if options.get("opamp_class"):
        return OpAmp.parse(options["opamp_class"])
    return OpAmp.parse(DEFAULT_CLASS) if wants_levels(options) else None


def real_network(network, options: dict):
    """The network with its followers made of the chosen op-amp (unchanged without one)."""
    opamp = opamp_from_options(options)
    return network if opamp is None else network.replace(opamp=opamp)


def plan_level_dbu(options: dict) -> float:
    """The level the plan is made at: ``--level``, else the full-scale sine (``--full-scale``)."""
    from emulate.analog.levels import full_scale_dbu

    full = full_scale_dbu(options.get("level_dbu"), options.get("full_scale_dbu"))
    return options["level_dbu"] if options.get("level_dbu") is not None else full


def realbox_report(network, options: dict) -> tuple[dict, str]:
    """Level plan and noise of ``network`` at the options' level: (payload, text)."""
    from emulate.analog import levels, noise

    opamp = opamp_from_options(options)
    level = plan_level_dbu(options)
    plan = levels.level_plan(network, opamp, level)
    for item in levels.warn_plan(plan):
        warnings.warn(item, stacklevel=2)
    hiss = noise.output_noise(network, opamp)
    payload = {"level_plan": plan.as_dict(), "noise": hiss.as_dict(level), "opamp": opamp.as_dict()}
    return payload, plan.text() + "\n" + hiss.text(level)
