"""Commands for building it for real: ``tolerance`` and ``sheet``."""

from __future__ import annotations

import contextlib
import sys

import click

from emulate.report import sheet, summary
from emulate.analog import spec, tolerance, trim as trims
from emulate.cli.options import (check_plot, circuit_options, emit, force_option, json_option, main,
                                 network_from_options)
from emulate.cli.realbox import real_network, realbox_options, realbox_report, wants_levels

__all__ = ["tolerance_options", "PROGRESS_FROM_DRAWS", "tolerance_command", "sheet_command"]


def tolerance_options(command):
    """Tolerances, distribution, draws, seed, spec and trim share (shared by both commands)."""
    options = [
        click.option("--r-tol", default="1%", show_default=True, help="resistor tolerance (1%, F, 0.01)"),
        click.option("--c-tol", default="5%", show_default=True, help="capacitor tolerance (5%, J, 0.05)"),
        click.option("--tol", "per_part", multiple=True, metavar="PART=TOL",
                     help="one part's tolerance, e.g. R3=0.1%; repeat for more (R4/R5: the bootstrap divider)"),
        click.option("--distribution", type=click.Choice(tolerance.DISTRIBUTIONS), default="uniform",
                     show_default=True, help="uniform within tolerance, or normal with the tolerance as 3 sigma"),
        click.option("--draws", type=int, default=tolerance.DEFAULT_DRAWS, show_default=True,
                     help="Monte Carlo builds"),
        click.option("--seed", type=int, default=0, show_default=True, help="seed; build i of a seed never changes"),
        click.option("--spec-db", type=float, default=tolerance.DEFAULT_SPEC_DB, show_default=True,
                     help="depth spec below the passband, dB, for the yield"),
        click.option("--trim-share", type=float, default=trims.DEFAULT_TRIM_SHARE, show_default=True,
                     help="share of builds the R3 trimmer must reach, 0.5-1"),
    ]
    for option in reversed(options):
        command = option(command)
    return command


def _analyse(network, options):
    """Tolerances of the network at full notch: the parts set the null, the mix only scales it."""
    tolerances = tolerance.Tolerances.parse(options["r_tol"], options["c_tol"], options["distribution"],
                                            options["per_part"])
    with _progress(options["draws"]) as update:
        result = tolerance.monte_carlo(network.wet(), tolerances, draws=options["draws"], seed=options["seed"],
                                       spec_db=options["spec_db"], progress=update)
    return tolerances, result, trims.suggest_trim(result, share=options["trim_share"])


PROGRESS_FROM_DRAWS = 100_000  # shorter runs take well under a second


@contextlib.contextmanager
def _progress(draws):
    """A progress bar on stderr for long runs; a no-op update otherwise."""
    if not isinstance(draws, int) or draws < PROGRESS_FROM_DRAWS:
        yield None
        return
    with click.progressbar(length=draws, label="builds", file=sys.stderr) as bar:
        yield bar.update


def _text(result, trim) -> str:
    d = result.as_dict()
    corner = result.corners.as_dict()
    return "\n".join([
        f"{result.draws} builds, {result.tolerances.describe()}, seed {result.seed}",
        f"  notch   {d['notch_hz_p5']:.1f} / {d['notch_hz_p50']:.1f} / {d['notch_hz_p95']:.1f} Hz (5/50/95 %)",
        f"  depth   {d['depth_below_passband_db_p5']:.1f} / {d['depth_below_passband_db_p50']:.1f} / "
        f"{d['depth_below_passband_db_p95']:.1f} dB of cut below the passband",
        f"  yield   {result.yield_fraction:.1%} at {result.spec_db:g} dB; typical build {result.typical_index}",
        *summary.unmeasured_lines(d),
        summary.corner_line(corner),
        f"  matters most: {', '.join(s.part for s in result.sensitivity()[:3])} (depth)",
        f"  trim    {trim.describe()}",
    ])


@main.command(name="tolerance")
@circuit_options
@tolerance_options
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False), help="write the envelope chart (.png or .svg)")
@force_option("an existing --plot file")
@click.option("--temperature", help="also report drift over this range, degrees C (e.g. 0..50)")
@click.option("--resistor-type", default="metal-film", show_default=True,
              help="with --temperature: metal-film or thick-film")
@click.option("--capacitor-type", default="polypropylene", show_default=True,
              help="with --temperature: c0g, polypropylene, polyester or x7r")
@json_option
def tolerance_command(plot_path, force, temperature, resistor_type, capacitor_type, as_json, **options):
    """Monte Carlo builds and worst-case corners of a circuit, with an R3 trim."""
    network = network_from_options(options)
    check_plot(plot_path, force)
    _, result, trim = _analyse(network, options)
    if plot_path:
        from emulate.report import plots  # matplotlib: loaded only for --plot

        plots.plot_tolerance(result, plot_path, label=options.get("preset") or options.get("circuit_file"))
    payload, text = result.as_dict() | {"trim": trim.as_dict()}, _text(result, trim)
    if temperature is not None:
        from emulate.analog import drift

        found = drift.temperature_drift(network, drift.parse_temperature_range(temperature),
                                        resistor_type=resistor_type, capacitor_type=capacitor_type)
        payload, text = payload | {"drift": found.as_dict()}, text + "\n" + found.text()
    emit(as_json, payload, text)


@main.command(name="sheet")
@click.option("--out", "out_dir", required=True, type=click.Path(file_okay=False), help="folder to write")
@circuit_options
@click.option("--notch", help="design target instead of parts: notch frequency, Hz (e.g. 6.3k)")
@click.option("--q", type=float, help="design target Q, 0.25-20 (active network); default passive")
@click.option("--series", help="resistor series for the design, IEC 60063; default E24")
@click.option("--parts-per-position", type=click.IntRange(1, 2), default=1, show_default=True,
              help="design: 1 part a position (R3/C3 may be two equal parts) or any 2 parts")
@tolerance_options
@click.option("--title", default=sheet.DEFAULT_TITLE, show_default=True, help="heading of the sheet")
@force_option("a non-empty --out folder (as a whole, once the new sheet is complete)")
@realbox_options
@json_option
def sheet_command(out_dir, notch, q, series, parts_per_position, title, force, as_json, **options):
    """Write a build sheet folder: schematic, every part, netlist, responses, tolerances, trim, cautions.

    The folder appears complete or not at all.
    """
    sheet.check_out_dir(out_dir, force)
    design = None
    if notch is not None:
        surroundings = spec.network_surroundings({"source": options.get("source"), "load": options.get("load")})
        design = spec.design_from_table({"notch": notch, "q": q, "series": series,
                                         "parts_per_position": parts_per_position}, where="", **surroundings)
        network = design.built
    else:
        network = network_from_options(options)
    tolerances, result, trim = _analyse(network, options)
    block = _title_block(options, notch)
    extra, notes = _real_parts(network, options)
    path = sheet.write_sheet(out_dir, network, tolerances=tolerances, design=design, tolerance_result=result,
                             trim=trim, title=title, force=force, title_block=block, notes=notes)
    header = sheet.PARTS_HEADER
    payload = ({"out": str(path), "files": sorted(p.name for p in path.iterdir()), "title_block": block,
                "parts": [dict(zip(header, row)) for row in sheet.parts_rows(network, tolerances, design)],
                "assumed": dict(sheet.assumed_rows(network)), "trim": trim.as_dict()}
               | result.as_dict() | extra)
    emit(as_json, payload, f"wrote {path}/sheet.md, sheet.html, schematic.svg/.png and circuit.cir\n"
                           f"{_text(result, trim)}\n"
                           + "".join(f"{line}\n" for lines in notes.values() for line in lines)
                           + f"cautions: {sheet.CAUTION_LINE}")


def _title_block(options, notch) -> dict:
    """The circuit's name and speaker for the sheet's title block."""
    if options.get("preset"):
        from emulate.cli.options import store_from

        preset = store_from(options).load(options["preset"])
        return {"circuit": f"preset {preset.name}", "speaker": preset.speaker}
    if options.get("circuit_file"):
        return {"circuit": f"circuit file {options['circuit_file']}"}
    if notch is not None:
        return {"circuit": f"designed for {notch} Hz"}
    return {}


def _real_parts(network, options) -> tuple[dict, dict]:
    """The sheet's real-box sections: dielectrics always; level plan and noise with a level."""
    from emulate.analog import drift

    warned = drift.dielectric_warnings(network)
    notes = {"Dielectrics": warned or ["no common dielectric moves this notch further than its -3 dB width "
                                       "over 0..50 C (typical tempcos, from memory)"]}
    extra = {"dielectric_warnings": warned}
    if wants_levels(options):
        payload, text = realbox_report(real_network(network, options), options)
        notes["Level and noise"] = text.splitlines()
        extra |= payload
    return extra, notes
