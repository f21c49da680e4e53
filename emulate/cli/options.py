"""The click group and what every command shares: error handling, options, output.

Any :class:`~emulate.errors.EmulateError` becomes one line on stderr and exit
status 1; :class:`~emulate.errors.EmulateWarning` lines are printed as
``warning: ...`` and do not change the exit status.
"""

from __future__ import annotations

import functools
import importlib
import os
import re
import warnings
from pathlib import Path

import click

from emulate import __version__, files, lifetime
from emulate.errors import BadValueError, EmulateError, EmulateWarning

__all__ = ["PART_HELP", "COMMAND_MODULES", "COMMAND_SUMMARY", "interrupted_line", "stopped", "printable", "main",
           "PRESETS_ENV_VAR", "presets_option", "store_from", "circuit_options", "network_from_options",
           "force_option", "check_plot", "json_option", "emit", "run_quietly", "progress"]

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
    "render": "sound", "precompile": "sound", "demo": "demo",
    "sibilance": "finders", "hum": "finders", "resonance": "finders",
    "sweep": "speaker", "preset": "speaker",
    "tolerance": "build", "sheet": "build", "measure": "measure",
    "batch": "batch",
}

# the first line of each command's help, for ``emulate --help`` without importing the
# command modules (tests/test_cli.py checks that each line matches its command)
COMMAND_SUMMARY = {
    "response": "Print what a proposed circuit does: notch, depth, Q, passband, warnings, a table.",
    "design": "Design a balanced twin-T for a target notch and build it from preferred values.",
    "render": "Render the take IN through the proposed circuit into OUT (WAV, FLAC, AIFF ...).",
    "precompile": "Compile the render's kernels once for this machine, so a render starts without numba.",
    "demo": "Invented two-host podcast: takes, sibilance, presets, renders and pictures.",
    "sibilance": "Find where one speaker's /s/ and /sh/ sit, over one or more takes.",
    "hum": "Find mains hum: exact frequency, drift, harmonics and notches with their circuits.",
    "resonance": "Find one narrow, persistent spectral peak (a ringing room mode, a stand or capsule).",
    "sweep": "Render every take at every setting; reels, a summary table, a pick and a listening page.",
    "preset": "Keep notch settings per speaker: save, list, show, delete.",
    "tolerance": "Monte Carlo builds and worst-case corners of a circuit, with an R3 trim.",
    "sheet": "Write a build sheet folder: schematic, every part, netlist, responses, tolerances, trim, cautions.",
    "measure": "Measure the built box: write a sweep, record it through the box, analyse the recording.",
    "batch": "Render every take with its speaker's preset, in parallel; a summary CSV and JSON.",
}


class _Group(click.Group):
    """Lazy commands; package errors become one clear line, package warnings notes."""

    def list_commands(self, ctx):
        return sorted(COMMAND_MODULES)

    def get_command(self, ctx, name):
        if name in COMMAND_MODULES and name not in self.commands:
            importlib.import_module(f"emulate.cli.{COMMAND_MODULES[name]}")
        return super().get_command(ctx, name)

    def format_commands(self, ctx, formatter):
        """The command list from :data:`COMMAND_SUMMARY`, so ``--help`` imports no command."""
        rows = [(name, COMMAND_SUMMARY[name]) for name in self.list_commands(ctx)
                if name in COMMAND_SUMMARY]
        if len(rows) < len(self.list_commands(ctx)):  # a command without a summary line
            return super().format_commands(ctx, formatter)
        limit = formatter.width - 6 - max(len(name) for name, _ in rows)
        with formatter.section("Commands"):
            formatter.write_dl([(name, click.utils.make_default_short_help(text, limit))
                                for name, text in rows])

    def main(self, *args, **kwargs):
        """Run the command line; BLAS is held to one thread for the whole run.

        Set here, when the command line starts and before numpy is loaded, not on
        import: importing the package changes no environment variable. The circuit
        engine solves thousands of tiny (about 10 x 10) systems, where BLAS threads only
        add start-up and contention, and they stalled forked sweep workers.
        """
        os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
        return super().main(*args, **kwargs)

    def invoke(self, ctx):
        mark = len(files.kept_files())
        with warnings.catch_warnings(record=True) as caught, lifetime.stop_on_signals():
            warnings.simplefilter("always", EmulateWarning)
            try:
                return super().invoke(ctx)
            except (click.exceptions.Exit, click.exceptions.Abort, click.ClickException):
                raise
            except EmulateError as exc:
                raise click.ClickException(printable(str(exc))) from None
            except OSError as exc:  # a file system refusal the checks did not foresee
                where = f"{exc.filename}: " if exc.filename else ""
                raise click.ClickException(printable(f"{where}{exc.strerror or exc}; nothing was written")) from None
            except KeyboardInterrupt as exc:  # Ctrl-C, SIGTERM, SIGHUP (lifetime.Stopped)
                raise stopped(interrupted_line(exc, mark)) from None
            except Exception as exc:  # a fault no check foresaw: still one line (EMULATE_DEBUG=1 shows it all)
                if os.environ.get("EMULATE_DEBUG"):
                    raise
                raise click.ClickException(printable(f"unexpected error ({type(exc).__name__}: {exc}); "
                                                     "please report it")) from None
            finally:
                shown = {str(item.message) for item in caught if issubclass(item.category, EmulateWarning)}
                for message in sorted(shown, key=[str(item.message) for item in caught].index):
                    click.echo(printable(f"warning: {message}"), err=True)


def stopped(line: str) -> click.ClickException:
    """The one line a stopped command ends with; nothing the stop left half-built prints after it."""
    lifetime.quiet_late_faults()
    return click.ClickException(line)


def interrupted_line(exc: KeyboardInterrupt, mark: int = 0) -> str:
    """What an interrupted command says: by what, and truthfully what was kept."""
    kept = files.kept_files(mark)
    why = f"stopped by {exc.args[0]}" if isinstance(exc, lifetime.Stopped) and exc.args else "interrupted"
    if not kept:
        return f"{why}; nothing was written (work in progress removed)"
    return printable(f"{why}; kept (complete): {', '.join(map(str, kept))}; work in progress removed")


_CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f-\x9f]")


def printable(text: str) -> str:
    """``text`` safe for a terminal: control characters (escape sequences) shown as ``?``,
    bytes that are not UTF-8 (from file names) shown as ``\\xNN``; newlines and tabs kept.

    Example
    -------
    >>> printable("note\x1b[2J")
    'note?[2J'
    """
    text = _CONTROL.sub("?", text)
    return text.encode("utf-8", "surrogateescape").decode("utf-8", "backslashreplace")


@click.group(cls=_Group)
@click.version_option(__version__, prog_name="emulate")
def main():
    """Hear a proposed analog twin-T notch before you build it."""


PRESETS_ENV_VAR = "EMULATE_PRESETS_DIR"  # emulate.work.presets.ENV_VAR, without importing it
_presets_dir_option = click.option(
    "--presets", "presets_dir", type=click.Path(file_okay=False),
    help=f"presets folder; default ${PRESETS_ENV_VAR}, else $XDG_DATA_HOME/emulate/presets")


def presets_option(command):
    """``--presets DIR`` for commands that read or write presets."""
    return _presets_dir_option(command)


def store_from(options: dict):
    """The :class:`~emulate.work.presets.PresetStore` the options name (``--presets``, else the default folder)."""
    from emulate.work import presets

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
        click.option("--depth", "depth_cut_db", type=float,
                     help="set the depth control by the depth wanted instead: dB of cut at the notch, "
                          "positive (e.g. 12)"),
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
    from emulate.analog import spec

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
    return _at_depth(network, options) if options.get("depth_cut_db") is not None else network


def _at_depth(network, options):
    """The depth control set so that the notch lies ``--depth`` dB (of cut) below the passband.

    A depth is positive dB of cut everywhere (text, JSON, CSV, plots); the depth
    functions take the level at the notch, a signed gain, so the sign turns here.
    """
    from emulate.dsp import depth

    if options.get("mix") is not None:
        raise click.UsageError("give either --mix or --depth, not both")
    cut = options["depth_cut_db"]
    if not cut > 0:  # nan included
        raise BadValueError(f"--depth {cut:g}: allowed a positive number of dB of cut (e.g. 12 for a notch "
                            "12 dB below the passband)")
    full = network.replace(mix=1.0)
    if network.depth_pot_ohms is not None:
        return full.replace(mix=depth.pot_position_for_depth(full, -cut))
    return full.replace(mix=depth.mix_for_depth(full, -cut))


def force_option(what: str):
    """``--force``: the only way to replace ``what``; its help says what is never overwritten."""
    return click.option("--force", is_flag=True,
                        help=f"replace {what}; without it nothing existing is overwritten")


def check_plot(plot_path, force: bool, *, made_folder=None) -> None:
    """Refuse a --plot path before any work (exists without --force, folder missing, not a
    file, a suffix other than .png or .svg). Its folder must exist, unless it lies inside
    ``made_folder``, a folder the command makes (sweep --out)."""
    if plot_path:
        files.check_new_output(plot_path, force=force, what="--plot")
        files.check_picture_suffix(plot_path)
        folder = Path(plot_path).absolute().parent
        inside = made_folder is not None and folder.is_relative_to(Path(made_folder).absolute())
        if not folder.is_dir() and not inside:
            raise files.OutputRefusedError(f"{plot_path}: folder {folder} does not exist; allowed: a path "
                                           "in an existing folder")


def json_option(command):
    return click.option("--json", "as_json", is_flag=True, help="print one JSON object instead of text")(command)


def emit(as_json: bool, payload: dict, text: str) -> None:
    """Print ``text``, or ``payload`` as strict JSON (non-finite numbers become null)."""
    if as_json:
        from emulate.report.summary import json_text

        click.echo(json_text(payload))
    else:
        click.echo(printable(text))


def run_quietly(function):
    """Decorator for commands that must not print a traceback on Ctrl-C (says what was kept)."""
    @functools.wraps(function)
    def wrapper(*args, **kwargs):
        mark = len(files.kept_files())
        try:
            return function(*args, **kwargs)
        except KeyboardInterrupt as exc:
            raise stopped(interrupted_line(exc, mark)) from None
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
