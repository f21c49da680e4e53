"""Commands that make sound: ``render`` (and the ``demo``)."""

from __future__ import annotations

import click

from emulate import audio, demo, emulation, summary
from emulate.cli.options import (circuit_options, emit, json_option, main, network_from_options, presets_option,
                                 progress, run_quietly)


@main.command()
@click.argument("in_path", metavar="IN", type=click.Path(dir_okay=False))
@click.argument("out_path", metavar="OUT", type=click.Path(dir_okay=False))
@circuit_options
@click.option("--subtype", help="output sample format (PCM_16, PCM_24, PCM_32, FLOAT); default: keep IN's")
@click.option("--float", "as_float", is_flag=True, help="write 32-bit float (no clipping, no dither)")
@json_option
@run_quietly
def render(in_path, out_path, subtype, as_float, as_json, **options):
    """Render the take IN through the proposed circuit into OUT (WAV, FLAC, AIFF ...)."""
    network = network_from_options(options)
    processor = emulation.processor_for(network)
    info = audio.read_info(in_path)
    with progress(info.frames, f"rendering {in_path}") as bar:
        report = audio.render_file(in_path, out_path, processor, progress=bar.update,
                                   subtype="FLOAT" if as_float else subtype)
    payload = report.to_dict() | {"fidelity_db": processor.fidelity_db,
                                  "digital_method": processor.design.method}
    emit(as_json, payload, summary.render_text(report, processor))


@main.command("demo")
@click.option("--out", "out_dir", default="demo-out", show_default=True, type=click.Path(file_okay=False),
              help="folder for the demo takes, renders and pictures (created)")
@click.option("--seconds", type=float, default=demo.DEMO_SECONDS, show_default=True,
              help="length of each invented take, s")
@presets_option
@json_option
@run_quietly
def demo_command(out_dir, seconds, presets_dir, as_json):
    """Invented two-host podcast: takes, sibilance, presets, renders and pictures."""
    takes = demo.run_demo(out_dir, presets_dir=presets_dir, seconds=seconds)
    emit(as_json, summary.demo_payload(takes), summary.demo_text(out_dir, takes))
