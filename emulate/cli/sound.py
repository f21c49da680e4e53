"""The command that makes sound: ``render``."""

from __future__ import annotations

from pathlib import Path

import click

from emulate.audio import stream as audio
from emulate.dsp import emulation
from emulate.analog import spec
from emulate.report import summary
from emulate import files
from emulate.cli.options import (check_plot, circuit_options, emit, force_option, json_option, main,
                                 network_from_options, progress, run_quietly)


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
@force_option("an existing OUT (never IN, a folder, a FIFO or a device) and an existing --plot file")
@json_option
@run_quietly
def render(in_path, out_path, subtype, as_float, build, r_tol, c_tol, distribution, seed, plot_path, force,
           as_json, **options):
    """Render the take IN through the proposed circuit into OUT (WAV, FLAC, AIFF ...).

    OUT appears complete or not at all. An existing OUT is refused without --force;
    OUT may never be IN, a folder, a FIFO or a device.
    """
    network = network_from_options(options)
    if build is not None:
        from emulate.analog import tolerance

        tolerances = tolerance.Tolerances.parse(r_tol, c_tol, distribution)
        network = tolerance.build_at(network, tolerances, build, seed)
    info = audio.read_info(in_path)
    audio.check_out_path(in_path, out_path)
    files.check_new_output(out_path, force=force, what="OUT")
    audio.output_format(out_path)
    check_plot(plot_path, force)
    processor = emulation.processor_for(network)
    with progress(info.frames, f"rendering {in_path}") as bar:
        report = audio.render_file(in_path, out_path, processor, progress=bar.update,
                                   subtype="FLOAT" if as_float else subtype)
    payload = report.to_dict() | summary.fidelity_payload(processor.design) | {
                                  "digital_method": processor.design.method,
                                  "build": build, "parts": spec.table_from_network(network)}
    text = summary.render_text(report, processor)
    if build is not None:
        text += f"\n  build {build}: {summary.network_line(network)}"
    if plot_path:
        from emulate.report import plots
        from emulate.analog.response import measure

        try:
            (dry, fs), (wet, _) = audio.read_all(in_path), audio.read_all(out_path)
            label = f"{Path(in_path).name} through the {plots.circuit_words(network)}"
            drawn = plots.plot_take_spectrum(dry, wet, fs, plot_path, notch_hz=measure(network.response).notch_hz,
                                             label=label)
            text += f"\n  wrote {drawn}"
        except BaseException:  # the command failed as a whole: a new OUT goes too
            files.discard(out_path)
            raise
    emit(as_json, payload, text)
