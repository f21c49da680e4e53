"""Commands about the circuit itself: ``response`` and ``design``."""

from __future__ import annotations

import click

from emulate.analog import spec
from emulate.report import summary
from emulate.cli.options import (check_plot, circuit_options, emit, force_option, json_option, main,
                                 network_from_options)
from emulate.analog.response import check_twin_t, measure_network
from emulate.analog.stability import check_stability
from emulate.cli.realbox import real_network, realbox_options, realbox_report, wants_levels

__all__ = ["response", "design"]


@main.command()
@circuit_options
@click.option("--rate", type=float, help="also report the digital emulation at this sample rate, Hz")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False), help="draw the analog response, with the digital one at --rate (default 48000 Hz) (.png or .svg)")
@force_option("an existing --plot file")
@realbox_options
@json_option
def response(rate, plot_path, force, as_json, **options):
    """Print what a proposed circuit does: notch, depth, Q, passband, warnings, a table."""
    network = real_network(network_from_options(options), options)
    check_plot(plot_path, force)
    metrics = measure_network(network)
    found = check_twin_t(network, metrics)
    stable = check_stability(network)
    payload = summary.metrics_payload(network, metrics, found, stable)
    text = summary.response_text(network, metrics, found, stable)
    if rate is not None and stable.stable:
        from emulate.dsp import emulation  # the digital design (no numba): loaded only for --rate

        digital = emulation.digital_for(network, rate)
        payload["digital"] = summary.digital_payload(digital)
        text += "\n" + summary.digital_text(digital)
    if wants_levels(options):
        extra, extra_text = realbox_report(network, options)
        payload |= extra
        text += "\n" + extra_text
    if plot_path:
        from emulate.report import plots

        label = options.get("preset") or options.get("circuit_file")
        text += f"\nwrote {plots.plot_response(network, plot_path, fs=rate or 48000.0, label=label)}"
    emit(as_json, payload, text)


@main.command()
@click.option("--notch", required=True, help="target notch frequency, Hz (e.g. 6.3k, 4500)")
@click.option("--q", type=float, help="target Q, 0.25-20: an active (bootstrapped) network; default passive")
@click.option("--series", default="E24", show_default=True, help="resistor series, IEC 60063 (E6 .. E192)")
@click.option("--cap-series", default="E12", show_default=True, help="capacitor series, IEC 60063")
@click.option("--impedance", help="level of R1 = R2, ohms; default 10k")
@click.option("--capacitor", help="design around this C1 = C2, farads (e.g. 10n)")
@click.option("--source", help="source resistance driving the network, ohms; default 0")
@click.option("--load", help="load resistance on the output, ohms; default none")
@click.option("--parts-per-position", type=click.IntRange(1, 2), default=1, show_default=True,
              help="1: one part a position (R3/C3 may be two equal parts); 2: any two parts in series or parallel")
@json_option
def design(notch, q, series, cap_series, impedance, capacitor, source, load, parts_per_position, as_json):
    """Design a balanced twin-T for a target notch and build it from preferred values."""
    target = {"notch": notch, "q": q, "series": series, "cap_series": cap_series,
              "impedance": impedance, "capacitor": capacitor, "parts_per_position": parts_per_position}
    surroundings = spec.network_surroundings({"source": source, "load": load})
    result = spec.design_from_table(target, where="", **surroundings)
    found = check_twin_t(result.built, result.built_metrics)
    emit(as_json, summary.design_payload(result, found), summary.design_text(result, found))
