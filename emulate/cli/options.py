"""The click group and what every command shares: error handling, options, output.

Any :class:`~emulate.errors.EmulateError` becomes one line on stderr and exit
status 1; :class:`~emulate.errors.EmulateWarning` lines are printed as
``warning: ...`` and do not change the exit status.
"""

from __future__ import annotations

import functools
import importlib
import warnings

import click

from emulate import __version__
from emulate.work import presets
from emulate.analog import spec
from emulate.errors import EmulateError, EmulateWarning

PART_HELP = {
    "r1": "R1, series resistor of the R-R-C T, ohms (e.g. 10k, 4k7)",
    "r2": "R2, series resistor of the R-R-C T, ohms",
    "r3": "R3, shunt resistor of the C-C-R T, ohms (R/2 when balanced)",
    "c1": "C1, series capacitor of the C-C-R T, farads (e.g. 10n, 2n2)",
    "c2": "C2, series capacitor of the C-C-R T, farads",
    "c3": "C3, shunt capacitor of the R-R-C T, farads (2C when balanced)",
}


# each command lives in the module of its subject, imported only when the command
# runs, so `emulate render` does not pay for plotting or speech analysis imports
COMMAND_MODULES = {
    "response": "circuit", "design": "circuit",
    "render": "sound", "demo": "demo",
    "sibilance": "speaker", "sweep": "speaker", "preset": "speaker",
    "tolerance": "build", "sheet": "build", "measure": "measure",
}


class _Group(click.Group):
    """Lazy commands; package errors become one clear line, package warnings notes."""

    def list_commands(self, ctx):
        return sorted(COMMAND_MODULES)

    def get_command(self, ctx, name):
        if name in COMMAND_MODULES and name not in self.commands:
            importlib.import_module(f"emulate.cli.{COMMAND_MODULES[name]}")
        return super().get_command(ctx, name)

    def invoke(self, ctx):
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", EmulateWarning)
            try:
                return super().invoke(ctx)
            except EmulateError as exc:
                raise click.ClickException(str(exc)) from None
            except OSError as exc:  # a file system refusal the checks did not foresee
                where = f"{exc.filename}: " if exc.filename else ""
                raise click.ClickException(f"{where}{exc.strerror or exc}") from None
            finally:
                for item in caught:
                    if issubclass(item.category, EmulateWarning):
                        click.echo(f"warning: {item.message}", err=True)


@click.group(cls=_Group)
@click.version_option(__version__, prog_name="emulate")
def main():
    """Hear a proposed analog twin-T notch before you build it."""


_presets_dir_option = click.option(
    "--presets", "presets_dir", type=click.Path(file_okay=False),
    help=f"presets folder; default ${presets.ENV_VAR} or ./presets")


def presets_option(command):
    """``--presets DIR`` for commands that read or write presets."""
    return _presets_dir_option(command)


def store_from(options: dict) -> presets.PresetStore:
    """The preset store the options name (``--presets``, else the default folder)."""
    return presets.PresetStore(options.get("presets_dir"))


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
        click.option("--depth", "depth_db", type=float,
                     help="set the depth control by the level at the notch instead, dB (e.g. -12)"),
        click.option("--circuit", "circuit_file", type=click.Path(dir_okay=False),
                     help="TOML circuit file with a [circuit] or [target] table"),
        click.option("--preset", help="start from this saved preset (see 'emulate preset list')"),
        _presets_dir_option,
    ]
    for option in reversed(options):
        command = option(command)
    return command


def network_from_options(options: dict):
    """The network the command-line options describe."""
    overrides = {key: options.get(key) for key in spec.CIRCUIT_KEYS if options.get(key) is not None}
    document, where = {}, ""
    if options.get("circuit_file") and options.get("preset"):
        raise click.UsageError("give either --circuit FILE or --preset NAME, not both")
    if options.get("circuit_file"):
        document = spec.read_circuit_file(options["circuit_file"])
        where = options["circuit_file"]
    elif options.get("preset"):
        document = spec.preset_document(store_from(options).load(options["preset"]))
        where = f"preset '{options['preset']}'"
    if overrides or "circuit" in document:
        table = dict(document.get("circuit", {})) | overrides
        document = {k: v for k, v in document.items() if k != "target"} | {"circuit": table}
    if not document:
        raise click.UsageError("give the circuit: --r1 .. --c3 (plus --source, --load, --bootstrap), "
                               "--circuit FILE or --preset NAME")
    network = spec.network_from_document(document, where=where, mix=options.get("mix"))
    return _at_depth(network, options) if options.get("depth_db") is not None else network


def _at_depth(network, options):
    """The depth control set so that the notch lies at ``--depth`` dB (ideal mix or pot)."""
    from emulate.dsp import depth

    if options.get("mix") is not None:
        raise click.UsageError("give either --mix or --depth, not both")
    full = network.replace(mix=1.0)
    if network.depth_pot_ohms is not None:
        return full.replace(mix=depth.pot_position_for_depth(full, options["depth_db"]))
    return full.replace(mix=depth.mix_for_depth(full, options["depth_db"]))


def json_option(command):
    return click.option("--json", "as_json", is_flag=True, help="print one JSON object instead of text")(command)


def emit(as_json: bool, payload: dict, text: str) -> None:
    """Print ``text``, or ``payload`` as strict JSON (non-finite numbers become null)."""
    if as_json:
        from emulate.report.summary import json_text

        text = json_text(payload)
    click.echo(text)


def run_quietly(function):
    """Decorator for commands that must not print a traceback on Ctrl-C."""
    @functools.wraps(function)
    def wrapper(*args, **kwargs):
        try:
            return function(*args, **kwargs)
        except KeyboardInterrupt:
            raise click.ClickException("interrupted; nothing was written") from None
    return wrapper


class _NoBar:
    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return False

    def update(self, steps: int) -> None:
        pass


def progress(length: int, label: str):
    """A progress bar on stderr when it is a terminal; silent otherwise."""
    stream = click.get_text_stream("stderr")
    if not stream.isatty():
        return _NoBar()
    return click.progressbar(length=max(length, 1), label=label, file=stream)
