"""The command that makes sound: ``render``."""

from __future__ import annotations

import math
from pathlib import Path

import click

from emulate.analog import spec
from emulate.audio import stream as audio
from emulate.cli.options import (check_plot, circuit_options, emit, force_option, json_option, main,
                                 network_from_options, progress, run_quietly)
from emulate.cli.realbox import HEARING_CAUTION, real_network, realbox_options, wants_levels
from emulate.dsp import emulation
from emulate import files
from emulate.report import summary

__all__ = ["render", "precompile"]


@main.command()
@click.argument("in_path", metavar="IN", type=click.Path(dir_okay=False))
@click.argument("out_path", metavar="OUT", type=click.Path(dir_okay=False))
@circuit_options
@click.option("--subtype", help="output sample format (PCM_16, PCM_24, PCM_32, FLOAT); default: keep IN's")
@click.option("--float", "as_float", is_flag=True, help="write 32-bit float (no clipping, no dither)")
@click.option("--build", help="hear a real build: typical, worst (corner), or a draw number N "
                              "of the tolerance run (see 'emulate tolerance')")
@click.option("--r-tol", default="1%", show_default=True, help="with --build: resistor tolerance")
@click.option("--c-tol", default="5%", show_default=True, help="with --build: capacitor tolerance")
@click.option("--distribution", type=click.Choice(["uniform", "normal"]), default="uniform",
              show_default=True, help="with --build: how parts spread within tolerance")
@click.option("--seed", type=int, default=0, show_default=True, help="with --build: the tolerance run's seed")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False), help="draw the take's spectrum before and after, notch marked (.png or .svg)")
@click.option("--removed", "removed_path", type=click.Path(dir_okay=False),
              help="also write what the notch removes from IN (dry minus wet, time-aligned) to this file")
@force_option("an existing OUT (never IN, a folder, a FIFO or a device), --removed file and --plot file")
@realbox_options
@click.option("--with-noise", is_flag=True, help="add the box's own noise (resistors, op-amps) at the "
                                                  "studio level; needs --level or --full-scale")
@json_option
@run_quietly
def render(in_path, out_path, subtype, as_float, build, r_tol, c_tol, distribution, seed, plot_path,
           removed_path, with_noise, force, as_json, **options):
    """Render the take IN through the proposed circuit into OUT (WAV, FLAC, AIFF ...).

    OUT appears complete or not at all. An existing OUT is refused without --force;
    OUT may never be IN, a folder, a FIFO or a device.
    """
    network = network_from_options(options)
    if build is not None:
        from emulate.analog import tolerance

        tolerances = tolerance.Tolerances.parse(r_tol, c_tol, distribution)
        network = tolerance.build_at(network, tolerances, build, seed)
    network = real_network(network, options)
    if with_noise and not wants_levels(options):
        raise click.UsageError("--with-noise needs --level DBU or --full-scale DBU (the noise is in volts)")
    info = audio.read_info(in_path)
    audio.check_out_path(in_path, out_path)
    files.remove_stale(out_path)  # a killed render's temporary, even beside an OUT it completed
    files.check_new_output(out_path, force=force, what="OUT")
    audio.output_format(out_path)
    _check_removed(in_path, out_path, removed_path, force)
    check_plot(plot_path, force)

    def make_processor():
        made = emulation.processor_for(network)
        return _real_box(made, network, options, with_noise, seed) if wants_levels(options) else made
    processor = make_processor()
    with progress(info.frames, f"rendering {in_path}") as bar:
        report = audio.render_file(in_path, out_path, processor, progress=bar.update,
                                   subtype="FLOAT" if as_float else subtype, replace=force)
    payload = report.to_dict() | summary.fidelity_payload(processor.design) | {
                                  "digital_method": processor.design.method,
                                  "build": build, "parts": spec.table_from_network(network)}
    text = summary.render_text(report, processor)
    if wants_levels(options):
        payload["real_box"] = processor.hits()
        text += "\n" + _hits_text(processor.hits()) + f"\n  {HEARING_CAUTION}"
    if build is not None:
        text += f"\n  build {build}: {summary.network_line(network)}"
    try:
        if removed_path:
            from emulate.dsp.removed import RemovedPart

            with progress(info.frames, f"rendering what the notch removes from {in_path}") as bar:
                audio.render_file(in_path, removed_path, RemovedPart(make_processor()), progress=bar.update,
                                  subtype="FLOAT" if as_float else subtype)
            payload["removed"] = str(removed_path)
            text += f"\n  wrote {removed_path} (what the notch removes: dry minus wet, time-aligned)"
        if plot_path:
            text += _plot(in_path, out_path, plot_path, network)
    except BaseException:  # the command failed as a whole: a new OUT goes too
        files.discard(out_path)
        if removed_path:
            files.discard(removed_path)
        raise
    emit(as_json, payload, text)


def _check_removed(in_path, out_path, removed_path, force: bool) -> None:
    """The --removed file: never IN or OUT, an existing one only with --force."""
    if not removed_path:
        return
    if Path(removed_path).resolve() == Path(out_path).resolve():
        raise click.BadParameter("--removed must name another file than OUT", param_hint="--removed")
    audio.check_out_path(in_path, removed_path)
    files.check_new_output(removed_path, force=force, what="--removed file")
    audio.output_format(removed_path)


def _plot(in_path, out_path, plot_path, network) -> str:
    from emulate.analog.response import measure_notch
    from emulate.report import plots

    label = f"{Path(in_path).name} through the {plots.circuit_words(network)}"
    # both files streamed a chunk at a time: memory stays flat with the take's length
    drawn = plots.plot_take_spectrum(in_path, out_path, float(audio.read_info(in_path).samplerate), plot_path,
                                     notch_hz=measure_notch(network.response).notch_hz, label=label)
    return f"\n  wrote {drawn}"


def _real_box(processor, network, options, with_noise: bool, seed: int):
    """The emulation inside the real stage's rails and slew rate (and its noise)."""
    import numpy as np

    from emulate.analog import levels, noise
    from emulate.dsp.realstage import RealBoxProcessor

    density = None
    if with_noise:
        hiss = noise.output_noise(network, network.opamp)
        density = lambda f_hz: np.interp(f_hz, hiss.f_hz, hiss.total)
    full = levels.full_scale_dbu(options.get("level_dbu"), options.get("full_scale_dbu"))
    load = network.load_ohms if levels.load_stage(network) else math.inf
    return RealBoxProcessor(processor, network.opamp, full, noise_density=density, seed=seed, load_ohms=load)


def _hits_text(hits: dict) -> str:
    noise = ", the box's noise added" if hits["noise_added"] else ""
    return (f"  real box ({hits['opamp']}, 0 dBFS = {hits['full_scale_dbu']:+.1f} dBu{noise}): "
            f"{hits['rail_hits']} samples at the rails ({hits['input_rail_hits']} at the input stage, "
            f"{hits['output_rail_hits']} at the output), {hits['slew_limited']} slew-limited")


@main.command()
def precompile():
    """Compile the render's kernels once for this machine, so a render starts without numba.

    The kernels are compiled ahead of time (about 10 s, needs a C compiler) into a
    per-user cache folder ($EMULATE_KERNELS_DIR, else ~/.cache/emulate/kernels); a
    render then loads them in about a millisecond instead of starting numba (about
    0.4 s). Without them, renders use numba's JIT kernels: same samples, slower start.
    Run it again after an upgrade of emulate, Python or numpy (a stale build is never used).
    """
    from emulate.dsp import compiled

    status = compiled.main()
    if status:
        raise SystemExit(status)
