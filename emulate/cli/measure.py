"""``measure``: write a test sweep, then analyse a recording of it through the built box."""

from __future__ import annotations

import math
import os

import click

from emulate import files
from emulate.cli.options import (check_plot, circuit_options, emit, force_option, json_option, main,
                                 network_from_options, progress, run_quietly)

__all__ = ["HEARING", "sweep_options", "measure", "stimulus", "analyse"]

HEARING = ("protect your hearing: the sweep climbs to 20 kHz at a steady level; keep monitors low or off "
           "while recording it, and raise --peak only as far as the recording needs")


def sweep_options(command):
    """The sweep's band and length (the analysis needs the same as the stimulus had)."""
    options = [
        click.option("--from", "f1_hz", default="20", show_default=True, help="sweep start, Hz"),
        click.option("--to", "f2_hz", default="20k", show_default=True, help="sweep end, Hz (below half the rate)"),
        click.option("--length", "seconds", type=float, default=10.0, show_default=True,
                     help="sweep length, s (0.5-120); longer sweeps tolerate more noise"),
    ]
    for option in reversed(options):
        command = option(command)
    return command


def _plan(fs, f1_hz, f2_hz, seconds, level_dbfs=None):
    from emulate.analog.parts import parse_value
    from emulate.measuring.stimulus import DEFAULT_LEVEL_DBFS, SweepPlan

    level = DEFAULT_LEVEL_DBFS if level_dbfs is None else level_dbfs
    return SweepPlan(float(fs), parse_value(f1_hz), parse_value(f2_hz), seconds, level)


@main.group()
def measure():
    """Measure the built box: write a sweep, record it through the box, analyse the recording."""


@measure.command()
@click.argument("out_path", metavar="OUT", type=click.Path(dir_okay=False))
@click.option("--rate", type=int, default=48000, show_default=True, help="sample rate, Hz")
@sweep_options
@click.option("--peak", "level_dbfs", type=float, default=-18.0, show_default=True,
              help="peak level of the sweep, dBFS (-60..0); start modest")
@click.option("--subtype", default="PCM_24", show_default=True, help="sample format (PCM_16, PCM_24, FLOAT)")
@force_option("an existing OUT (never a folder, a FIFO or a device)")
@json_option
@run_quietly
def stimulus(out_path, rate, f1_hz, f2_hz, seconds, level_dbfs, subtype, force, as_json):
    """Write the test signal OUT: sync marker, then an exponential sine sweep (Farina).

    OUT appears complete or not at all; an existing OUT is refused without --force.
    """
    from emulate.audio import stream as audio

    plan = _plan(rate, f1_hz, f2_hz, seconds, level_dbfs)
    files.check_new_output(out_path, force=force, what="OUT")
    audio.check_out_format(out_path, subtype)
    report = audio.write_array(out_path, plan.signal(), rate, subtype=subtype)
    text = (f"wrote {report.out_path}: {plan.total_frames / plan.fs:.2f} s at {rate} Hz, sweep "
            f"{plan.f1_hz:g}-{plan.f2_hz:g} Hz over {plan.seconds:g} s at {plan.level_dbfs:g} dBFS peak\n"
            f"  play it through the box and record the box's output from the start; analyse with the same "
            f"--from/--to/--length\n  {HEARING}")
    emit(as_json, {"out": report.out_path, "plan": plan.as_dict(), "caution": HEARING}, text)


@measure.command()
@click.argument("recording", metavar="RECORDING", type=click.Path(dir_okay=False))
@circuit_options
@sweep_options
@click.option("--r-tol", default="5%", show_default=True, help="resistor tolerance: the fit stays within it")
@click.option("--c-tol", default="10%", show_default=True, help="capacitor tolerance: the fit stays within it")
@click.option("--max-parts", type=click.IntRange(1, 2), default=2, show_default=True,
              help="most parts the fit moves together")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False),
              help="draw the measurement over the model and the fit (.png or .svg)")
@force_option("an existing --plot file")
@json_option
@run_quietly
def analyse(recording, f1_hz, f2_hz, seconds, r_tol, c_tol, max_parts, plot_path, force, as_json, **options):
    """Analyse RECORDING (a WAV of the stimulus through the box, or a CSV: Hz, dB[, deg]) against the model."""
    from emulate.analog.networks import PART_NAMES
    from emulate.analog.tolerance import Tolerances
    from emulate.measuring import analyse as analysis
    from emulate.measuring import fit

    network = network_from_options(options)
    tolerances = dict(zip(PART_NAMES, Tolerances.parse(r_tol, c_tol).fractions().tolist()))
    check_plot(plot_path, force)
    measured = _measured(recording, f1_hz, f2_hz, seconds, analysis)
    sets = 6 if max_parts == 1 else 21  # every one part, and every pair, of six
    with progress(sets, "fitting part values") as bar:
        diagnosis = fit.diagnose(network, measured, tolerances, max_parts=max_parts, progress=bar.update)
    payload, text = _compare(network, measured, diagnosis, analysis)
    if plot_path:
        text += f"\n  wrote {_plot(network, measured, diagnosis, plot_path)}"
    emit(as_json, payload, text)


def _measured(recording, f1_hz, f2_hz, seconds, analysis):
    if str(recording).lower().endswith(".csv"):
        return analysis.read_csv(recording)
    from emulate.audio import stream as audio

    info = audio.read_info(recording)
    plan = _plan(info.samplerate, f1_hz, f2_hz, seconds)  # checked before the whole file is read
    x, _ = audio.read_all(recording)
    return analysis.deconvolve(x, plan, source=os.path.basename(recording))


def _compare(network, measured, diagnosis, analysis) -> tuple[dict, str]:
    """Measured metrics beside the model's (both measured the same way, on the same band)."""
    import numpy as np

    model_db = 20 * np.log10(np.maximum(np.abs(network.response(measured.f_hz)), 1e-15))
    got = analysis.band_metrics(measured.f_hz, measured.gain_db)
    want = analysis.band_metrics(measured.f_hz, model_db)
    latency = "" if measured.latency_samples is None else f", latency {measured.latency_samples} samples"
    lines = [f"measured {measured.source}: {measured.band_hz[0]:.0f}-{measured.band_hz[1]:.0f} Hz, "
             f"gain {diagnosis.gain_db:+.2f} dB{latency}",
             "            measured     model",
             f"  notch   {got.notch_hz:9.1f}  {want.notch_hz:9.1f} Hz   ({100 * (got.notch_hz / want.notch_hz - 1):+.2f} %)",
             f"  depth   {got.depth_db:9.1f}  {want.depth_db:9.1f} dB of cut below the band's peak",
             f"  Q       {_q(got.q):>9}  {_q(want.q):>9}",
             f"  {diagnosis.text()}",
             "  (fitted on the gain and the phase)" if diagnosis.used_phase else
             "  (fitted on the gain alone: the measurement holds no phase, or one that does not follow the "
             "model's)"]
    payload = {"measured": got.as_dict(), "model": want.as_dict(), "latency_samples": measured.latency_samples,
               "diagnosis": diagnosis.as_dict()}
    return payload, "\n".join(lines)


def _q(q: float) -> str:
    return "n/a" if not math.isfinite(q) else f"{q:.3f}"


def _plot(network, measured, diagnosis, path):
    import numpy as np

    from emulate.report import plots

    f = np.geomspace(*measured.band_hz, 800)
    model = 20 * np.log10(np.maximum(np.abs(network.response(f)), 1e-15))
    fitted = 20 * np.log10(np.maximum(np.abs(diagnosis.fitted.response(f)), 1e-15)) if diagnosis.parts_off else None
    return plots.plot_measured(f, measured.on(f) - diagnosis.gain_db, model, fitted, path,
                               title=f"measured {measured.source} and model")
