"""The command line: a click group of verbs; each parses, delegates and prints.

Any :class:`~emulate.errors.EmulateError` becomes one line on stderr and exit
status 1; :class:`~emulate.errors.EmulateWarning` lines are printed as
``warning: ...`` and do not change the exit status.
"""

from __future__ import annotations

import functools
import json
import math
import warnings

import click

from emulate import __version__, audio, emulation, spec, summary
from emulate.errors import EmulateError, EmulateWarning
from emulate.response import check_twin_t, measure

PART_HELP = {
    "r1": "R1, series resistor of the R-R-C T, ohms (e.g. 10k, 4k7)",
    "r2": "R2, series resistor of the R-R-C T, ohms",
    "r3": "R3, shunt resistor of the C-C-R T, ohms (R/2 when balanced)",
    "c1": "C1, series capacitor of the C-C-R T, farads (e.g. 10n, 2n2)",
    "c2": "C2, series capacitor of the C-C-R T, farads",
    "c3": "C3, shunt capacitor of the R-R-C T, farads (2C when balanced)",
}


class _Group(click.Group):
    """Turns package errors into one clear line and package warnings into notes."""

    def invoke(self, ctx):
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", EmulateWarning)
            try:
                return super().invoke(ctx)
            except EmulateError as exc:
                raise click.ClickException(str(exc)) from None
            finally:
                for item in caught:
                    if issubclass(item.category, EmulateWarning):
                        click.echo(f"warning: {item.message}", err=True)


@click.group(cls=_Group)
@click.version_option(__version__, prog_name="emulate")
def main():
    """Hear a proposed analog twin-T notch before you build it."""


def circuit_options(command):
    """The circuit as part options, a circuit file, or a preset (options override files)."""
    options = [click.option(f"--{name}", help=text) for name, text in PART_HELP.items()]
    options += [
        click.option("--source", help="source (output) resistance driving the network, ohms; default 0"),
        click.option("--load", help="load resistance on the output, ohms; default none"),
        click.option("--bootstrap", type=float,
                     help="K, 0 <= K < 1: bootstrapped active network, Q = 1/(4(1-K)) when balanced"),
        click.option("--depth-pot", help="model a real depth potentiometer of this track, ohms"),
        click.option("--mix", type=float, help="wet/dry depth control, 0 (dry) to 1 (full notch)"),
        click.option("--circuit", "circuit_file", type=click.Path(dir_okay=False),
                     help="TOML circuit file with a [circuit] or [target] table"),
    ]
    for option in reversed(options):
        command = option(command)
    return command


def network_from_options(options: dict):
    """The network the command-line options describe."""
    overrides = {key: options.get(key) for key in spec.CIRCUIT_KEYS if options.get(key) is not None}
    document = {}
    if options.get("circuit_file"):
        document = spec.read_circuit_file(options["circuit_file"])
        where = options["circuit_file"]
    else:
        where = ""
    if overrides or "circuit" in document:
        table = dict(document.get("circuit", {})) | overrides
        document = {k: v for k, v in document.items() if k != "target"} | {"circuit": table}
    if not document:
        raise click.UsageError("give the circuit: --r1 .. --c3 (plus --source, --load, --bootstrap) "
                               "or --circuit FILE")
    return spec.network_from_document(document, where=where, mix=options.get("mix"))


def json_option(command):
    return click.option("--json", "as_json", is_flag=True, help="print one JSON object instead of text")(command)


def _emit(as_json: bool, payload: dict, text: str) -> None:
    click.echo(json.dumps(payload, indent=2, allow_nan=False, default=_json_default) if as_json else text)


def _json_default(value):
    return None if isinstance(value, float) and not math.isfinite(value) else str(value)


@main.command()
@circuit_options
@json_option
def response(as_json, **options):
    """Print what a proposed circuit does: notch, depth, Q, passband, warnings, a table."""
    network = network_from_options(options)
    metrics = measure(network.response)
    found = check_twin_t(network, metrics)
    payload = summary.metrics_payload(network, metrics, found)
    _emit(as_json, payload, summary.response_text(network, metrics, found))


@main.command()
@click.option("--notch", required=True, help="target notch frequency, Hz (e.g. 6.3k, 4500)")
@click.option("--q", type=float, help="target Q, 0.25-20: an active (bootstrapped) network; default passive")
@click.option("--series", default="E24", show_default=True, help="resistor series, IEC 60063 (E6 .. E192)")
@click.option("--cap-series", default="E12", show_default=True, help="capacitor series, IEC 60063")
@click.option("--impedance", help="level of R1 = R2, ohms; default 10k")
@click.option("--capacitor", help="design around this C1 = C2, farads (e.g. 10n)")
@click.option("--source", help="source resistance driving the network, ohms; default 0")
@click.option("--load", help="load resistance on the output, ohms; default none")
@json_option
def design(notch, q, series, cap_series, impedance, capacitor, source, load, as_json):
    """Design a balanced twin-T for a target notch and snap it to preferred values."""
    target = {"notch": notch, "q": q, "series": series, "cap_series": cap_series,
              "impedance": impedance, "capacitor": capacitor}
    surroundings = spec.network_surroundings({"source": source, "load": load})
    result = spec.design_from_table(target, where="", **surroundings)
    found = check_twin_t(result.built, result.built_metrics)
    _emit(as_json, summary.design_payload(result, found), summary.design_text(result, found))


def run_quietly(function):
    """Decorator for commands that must not print a traceback on Ctrl-C."""
    @functools.wraps(function)
    def wrapper(*args, **kwargs):
        try:
            return function(*args, **kwargs)
        except KeyboardInterrupt:
            raise click.ClickException("interrupted; nothing was written") from None
    return wrapper


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
    with _progress(info.frames, f"rendering {in_path}") as bar:
        report = audio.render_file(in_path, out_path, processor, progress=bar.update,
                                   subtype="FLOAT" if as_float else subtype)
    payload = report.to_dict() | {"fidelity_db": processor.fidelity_db,
                                  "digital_method": processor.design.method}
    _emit(as_json, payload, summary.render_text(report, processor))


class _NoBar:
    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return False

    def update(self, steps: int) -> None:
        pass


def _progress(length: int, label: str):
    """A progress bar on stderr when it is a terminal; silent otherwise."""
    stream = click.get_text_stream("stderr")
    if not stream.isatty():
        return _NoBar()
    return click.progressbar(length=max(length, 1), label=label, file=stream)
