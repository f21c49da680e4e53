"""The finders' commands: ``sibilance``, ``hum`` and ``resonance``.

Each reads its takes block by block (any length in bounded memory), prints text or
``--json``, and can draw what it saw (``--plot``). None of them loads the sweep or the
loudness code.
"""

from __future__ import annotations

import click

from emulate.cli.options import check_plot, emit, force_option, json_option, main
from emulate.report import summary
from emulate.voice.takes import TakeSource

__all__ = ["takes_argument", "plot_option", "series_option", "sibilance", "hum", "resonance"]

takes_argument = click.argument("takes", metavar="TAKE...", nargs=-1, required=True,
                                type=click.Path(dir_okay=False))
_plot_path_option = click.option("--plot", "plot_path", type=click.Path(dir_okay=False),
                                 help="draw what the finder saw in the first take (.png or .svg)")
_plot_force_option = force_option("an existing --plot file")


def plot_option(command):
    """``--plot FILE`` and ``--force`` (to replace an existing picture)."""
    return _plot_path_option(_plot_force_option(command))


def _series(ctx, param, value):
    """The series named, checked before any take is read."""
    from emulate.analog.parts import parse_series

    return parse_series(value)


series_option = click.option("--series", default="E24", show_default=True, callback=_series,
                             help="resistor series for the designed notches, IEC 60063")


def _sources(takes):
    return [TakeSource.from_file(take) for take in takes]


@main.command()
@takes_argument
@click.option("--band", nargs=2, type=float, metavar="LO HI",
              help="search band, Hz (default 2000 12000: covers /sh/ and /s/)")
@click.option("--target", type=click.Choice(["s", "sh"]), default="s", show_default=True,
              help="which sibilant the suggested notch is aimed at")
@plot_option
@json_option
def sibilance(takes, band, target, plot_path, force, as_json):
    """Find where one speaker's /s/ and /sh/ sit, over one or more takes."""
    check_plot(plot_path, force)
    options = {"target": target} | ({"search_band_hz": tuple(band)} if band else {})
    reports, combined = pooled_sibilance(takes, **options)
    text = summary.sibilance_text(takes, reports, combined)
    if plot_path:
        text += f"\nwrote {_plot_sibilance(reports[0], combined, plot_path)}"
    emit(as_json, summary.sibilance_payload(takes, reports, combined), text)


def pooled_sibilance(takes, **options):
    """The sibilance finder over takes read block by block: each take's report and the pooled one.

    ``options`` go to :func:`emulate.voice.sibilance.find_sibilance` (``target``,
    ``search_band_hz``); one take's report is its own pooled report.
    """
    from emulate.voice.sibilance import combine_reports, find_sibilance

    reports = [find_sibilance(source, **options) for source in _sources(takes)]
    return reports, (combine_reports(reports, labels=takes) if len(reports) > 1 else reports[0])


def _plot_sibilance(first, combined, path):
    from emulate.report import plots
    from emulate.voice.frames import LOG_GRID_HZ
    from emulate.voice.takes import dbfs

    curves = {}
    for kind, c in first.classes.items():
        if c.usable:
            curves[f"/{kind}/ frames"] = (LOG_GRID_HZ, dbfs(c.densities[0]))
            curves.setdefault("vowel frames", (LOG_GRID_HZ, dbfs(c.densities[1])))
            curves.setdefault("band floors", (LOG_GRID_HZ, dbfs(c.densities[2])))
    if not curves:
        curves = {"(no sibilant frames)": ([1000.0, 10000.0], [float("nan"), float("nan")])}
    marks = [(combined.suggested_notch_hz, f"notch {combined.suggested_notch_hz:.0f} Hz")] if combined.usable else []
    return plots.plot_finding(curves, path, title="sibilant and vowel spectra of the first take",
                              ylabel="level (dB re full scale per Hz)", f_range_hz=(200.0, 20000.0),
                              band_hz=combined.band_hz if combined.usable else None, marks=marks)


def _designed(notches, series):
    from emulate.voice.notches import designed_circuit

    return [designed_circuit(notch, series=series) for notch in notches]


@main.command()
@takes_argument
@click.option("--mains", type=click.Choice(["50", "60"]), help="look only for this mains family; default both")
@series_option
@plot_option
@json_option
def hum(takes, mains, series, plot_path, force, as_json):
    """Find mains hum: exact frequency, drift, harmonics and notches with their circuits.

    With several takes, also their pooled hum (repeats and one outlying take set aside)."""
    check_plot(plot_path, force)
    from emulate.voice.hum import combine_hum, find_hum

    results = []
    for take, source in zip(takes, _sources(takes)):
        report = find_hum(source, mains_hz=None if mains is None else float(mains))
        results.append((take, report, _designed(report.notches, series)))
    pooled = None
    if len(results) > 1:
        combined = combine_hum([r for _, r, _ in results], labels=takes)
        pooled = (f"pooled over {len(takes)} takes", combined, _designed(combined.notches, series))
    text = "\n".join(summary.hum_text(*r) for r in results + ([pooled] if pooled else []))
    text += _set_aside_text(pooled)
    if plot_path:
        text += f"\nwrote {_plot_hum(results[0][1], plot_path)}"
    payload = {"takes": [summary.hum_payload(*r) for r in results]}
    if pooled:
        payload["pooled"] = summary.hum_payload(*pooled) | {"set_aside": list(pooled[1].set_aside)}
    emit(as_json, payload, text)


def _set_aside_text(pooled) -> str:
    """The pooled report's takes left out, one line each (nothing when not pooled)."""
    return "".join(f"\n  set aside {why}" for why in pooled[1].set_aside) if pooled else ""


def _plot_hum(report, path):
    from emulate.report import plots

    lines = report.lines or ()
    curves = {"*level over the programme around it": ([line.frequency_hz for line in lines],
                                                      [line.above_programme_db for line in lines])}
    if not lines:
        curves = {"(no hum)": ([50.0, 1000.0], [float("nan"), float("nan")])}
    return plots.plot_finding(curves, path, title="mains harmonics of the first take",
                              ylabel="dB over the programme", f_range_hz=(30.0, 1500.0),
                              marks=[(n.notch_hz, n.label) for n in report.notches])


@main.command()
@takes_argument
@series_option
@plot_option
@json_option
def resonance(takes, series, plot_path, force, as_json):
    """Find one narrow, persistent spectral peak (a ringing room mode, a stand or capsule).

    With several takes, also their pooled resonance (repeats and one outlying take set aside)."""
    check_plot(plot_path, force)
    from emulate.voice.resonance.finder import combine_resonance, find_resonance

    results = []
    for take, source in zip(takes, _sources(takes)):
        report = find_resonance(source)
        results.append((take, report, _designed([report.notch] if report.notch else [], series)))
    pooled = None
    if len(results) > 1:
        combined = combine_resonance([r for _, r, _ in results], labels=takes)
        pooled = (f"pooled over {len(takes)} takes", combined,
                  _designed([combined.notch] if combined.notch else [], series))
    text = "\n".join([*(summary.resonance_text(*r) for r in results),
                      *([summary.resonance_text(*pooled, pooled=True)] if pooled else [])])
    text += _set_aside_text(pooled)
    if plot_path:
        first = results[0][1]
        from emulate.report import plots

        marks = [(first.notch.notch_hz, f"notch {first.notch.notch_hz:.0f} Hz")] if first.notch else []
        curves = ({"excess over the neighbourhood": (first.grid_hz, first.excess_db)}
                  if first.grid_hz is not None else {f"(nothing read: {first.reason.split(':')[0]})":
                                                   ([100.0, 1000.0], [float("nan")] * 2)})
        text += "\nwrote " + str(plots.plot_finding(curves, plot_path, title="the first take against its "
                                                    "neighbourhood", ylabel="dB", marks=marks,
                                                    f_range_hz=(50.0, 20000.0)))
    payload = {"takes": [summary.resonance_payload(*r) for r in results]}
    if pooled:
        payload["pooled"] = summary.resonance_payload(*pooled) | {"set_aside": list(pooled[1].set_aside)}
    emit(as_json, payload, text)
