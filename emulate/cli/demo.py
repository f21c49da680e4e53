"""The built-in demonstration command: ``demo``."""

from __future__ import annotations

import click

from emulate import demo
from emulate.report import summary
from emulate.cli.options import emit, json_option, main, presets_option, run_quietly

__all__ = ["demo_command"]


@main.command("demo")
@click.option("--out", "out_dir", default="demo-out", show_default=True, type=click.Path(file_okay=False),
              help="folder for the demo takes, renders and pictures (created; appears complete or not at all)")
@click.option("--seconds", type=float, default=demo.DEMO_SECONDS, show_default=True,
              help=f"length of each invented take, s ({demo.SECONDS_RANGE[0]:g}-{demo.SECONDS_RANGE[1]:g})")
@presets_option
@click.option("--force", is_flag=True, help="replace a non-empty --out folder (once the new demo is "
                                            "complete); without it nothing existing is overwritten")
@json_option
@run_quietly
def demo_command(out_dir, seconds, presets_dir, force, as_json):
    """Invented two-host podcast: takes, sibilance, presets, renders and pictures."""
    takes = demo.run_demo(out_dir, presets_dir=presets_dir, seconds=seconds, force=force)
    emit(as_json, summary.demo_payload(takes), summary.demo_text(out_dir, takes))
