"""Commands about a speaker: ``sweep`` and the ``preset`` group (``sibilance`` is in :mod:`emulate.cli.finders`)."""

from __future__ import annotations

from pathlib import Path

import click

from emulate.audio import stream as audio
from emulate.work import presets
from emulate.analog import spec
from emulate.report import summary
from emulate.cli.options import (check_plot, circuit_options, emit, force_option, json_option, main,
                                 network_from_options, presets_option, progress, run_quietly, store_from)
from emulate.analog.parts import parse_value
from emulate.analog.response import measure

__all__ = ["takes_argument", "sweep_command", "preset", "preset_save", "preset_list", "preset_show",
           "preset_delete"]

takes_argument = click.argument("takes", metavar="TAKE...", nargs=-1, required=True,
                                type=click.Path(dir_okay=False))


def _sweep_notches(from_hz, to_hz, steps, at):
    from emulate.work import sweep  # the process pool and reels: loaded only for sweeps

    if at:
        if from_hz or to_hz:
            raise click.UsageError("give either --at or --from/--to/--steps, not both")
        return tuple(parse_value(item.strip()) for item in at.split(",") if item.strip())
    if not (from_hz and to_hz):
        raise click.UsageError("give --from and --to (with --steps), or --at F1,F2,...")
    return sweep.notch_steps(parse_value(from_hz), parse_value(to_hz), steps)


@main.command("sweep")
@takes_argument
@click.option("--from", "from_hz", help="first notch frequency, Hz (e.g. 4k)")
@click.option("--to", "to_hz", help="last notch frequency, Hz (e.g. 8k)")
@click.option("--steps", type=int, default=6, show_default=True, help="settings, in equal ratios")
@click.option("--at", help="explicit notch frequencies instead, Hz, comma-separated (4k,4.5k,5k)")
@click.option("--out", "out_dir", required=True, type=click.Path(file_okay=False),
              help="folder for the renders, reels, summary and listening page (created)")
@click.option("--q", type=float, help="Q held for every setting (active network); default passive")
@click.option("--series", help="resistor series, IEC 60063; default E24")
@click.option("--cap-series", help="capacitor series, IEC 60063; default E12")
@click.option("--impedance", help="level of R1 = R2, ohms; default 10k")
@click.option("--mix", type=float, help="wet/dry mix held, 0..1; default 1")
@click.option("--source", help="source resistance, ohms; default 0")
@click.option("--load", help="load resistance, ohms; default none")
@click.option("--preset", help="hold what this preset holds (Q, impedance, mix, source, load); options override")
@presets_option
@click.option("--mix-steps", type=int, help="instead of notches: at the one --at notch, this many mixes "
              "(depth) in equal steps up to --mix (default 1)")
@click.option("--q-steps", type=int, help="instead of notches: at the one --at notch, this many values "
              "of Q in equal ratios from 0.25 (passive) up to --q (default 2)")
@click.option("--workers", type=int, help="parallel renders; default: one per core")
@click.option("--plot", "plot_path", type=click.Path(dir_okay=False),
              help="draw the summary: reduction, loudness and speech cost against the setting (.png or .svg)")
@click.option("--no-match", is_flag=True, help="reels and listening page at the raw levels (default: "
              "loudness-matched to the dry take, ITU-R BS.1770)")
@click.option("--removed", "with_removed", is_flag=True,
              help="also render, per take, what the picked setting removes (dry minus wet, time-aligned)")
@force_option("a non-empty --out folder (as a whole, once the new sweep is complete) and an existing "
              "--plot file")
@json_option
@run_quietly
def sweep_command(takes, from_hz, to_hz, steps, at, out_dir, q, series, cap_series, impedance, mix,
                  source, load, preset, presets_dir, mix_steps, q_steps, workers, plot_path, no_match,
                  with_removed, force, as_json):
    """Render every take at every setting; reels, a summary table, a pick and a listening page.

    Steps the notch frequency, or at one notch the mix (--mix-steps) or the Q
    (--q-steps). Reels and the page (index.html, opened from the folder with any
    browser) are loudness-matched unless --no-match. The --out folder appears
    complete or not at all; a take inside it is refused.
    """
    from emulate.work import sweep  # the process pool and reels: loaded only for sweeps

    held = {} if preset is None else sweep.held_by(presets.PresetStore(presets_dir).load(preset).network())
    given = {"q": q, "series": series, "cap_series": cap_series, "mix": mix,
             "impedance_ohms": None if impedance is None else parse_value(impedance, "resistance")}
    given |= {k: v for k, v in spec.network_surroundings({"source": source, "load": load}).items()
              if (source if k == "source_ohms" else load) is not None}
    held |= {k: v for k, v in given.items() if v is not None}
    held |= _stepped(sweep, mix_steps, q_steps, held, from_hz or to_hz)
    plan = sweep.SweepPlan(notches_hz=_sweep_notches(from_hz, to_hz, steps, at), **held)
    plan.network(plan.notches_hz[0])  # a bad plan fails here, before any work
    sweep.check_workers(workers)
    sweep.check_out(takes, out_dir, force=force)
    check_plot(plot_path, force, made_folder=out_dir)
    total = sum(audio.read_info(t).frames for t in takes) * len(plan.notches_hz)
    written = []

    def draw(result, staging):
        from emulate.report import plots

        rows = [row | {"pick": row["setting"] == result.pick["setting"]} for row in result.rows]
        written.append(plots.plot_sweep(rows, _under(plot_path, out_dir, staging), x=_PLOT_AXIS[plan.axis]))
        return written

    with progress(total, "sweeping") as bar:
        result = sweep.sweep_into(takes, plan, out_dir, force=force, workers=workers, progress=bar.update,
                                  finish=draw if plot_path else None, match=not no_match,
                                  removed=with_removed)
    text = summary.sweep_text(result, Path(out_dir) / "summary.csv", Path(out_dir) / "summary.json",
                              Path(out_dir) / "index.html")
    if plot_path:
        text += f"\nwrote {plot_path}"
    emit(as_json, result.as_dict(), text)


_PLOT_AXIS = {"notch": "notch_hz", "mix": "mix", "q": "q"}


def _stepped(sweep, mix_steps, q_steps, held: dict, from_to) -> dict:
    """The plan fields of a mix or Q sweep (empty for a notch sweep); one notch must be given with --at."""
    if mix_steps is None and q_steps is None:
        return {}
    if mix_steps is not None and q_steps is not None:
        raise click.UsageError("give --mix-steps or --q-steps, not both (a sweep steps one thing)")
    if from_to:
        raise click.UsageError("--mix-steps and --q-steps hold one notch: give it with --at, not --from/--to")
    if mix_steps is not None:
        return {"mixes": sweep.mix_steps(mix_steps, held.get("mix", 1.0))}
    return {"qs": sweep.q_steps(q_steps, held.get("q") or sweep.Q_STEPS_TOP)}


def _under(path, out_dir, staging) -> Path:
    """``path``, or its place in the staging folder when it lies inside ``out_dir``."""
    path, out_dir = Path(path), Path(out_dir)
    try:
        return Path(staging) / path.resolve().relative_to(out_dir.resolve())
    except ValueError:
        return path


@main.group()
def preset():
    """Keep notch settings per speaker: save, list, show, delete."""


@preset.command("save")
@click.argument("name")
@click.argument("takes", metavar="[TAKES]...", nargs=-1, type=click.Path(dir_okay=False))
@click.option("--speaker", required=True, help="who the preset is for (free text)")
@click.option("--notes", default="", help="free-text notes")
@circuit_options
@click.option("--notch", help="save a design target instead: notch frequency, Hz")
@click.option("--q", type=float, help="with --notch: target Q (active network)")
@click.option("--series", help="with --notch: resistor series (default E24)")
@click.option("--impedance", help="with --notch: level of R1 = R2, ohms")
@click.option("--from-sweep", type=click.Path(file_okay=False),
              help="save the pick of the sweep in this folder (its summary.json)")
@click.option("--from-finder", is_flag=True,
              help="save the notch the sibilance finder suggests for TAKES (pooled over them)")
@force_option("an existing preset of that name")
def preset_save(name, takes, speaker, notes, notch, q, series, impedance, from_sweep, from_finder, force,
                **options):
    """Save preset NAME from circuit options, a design target, a sweep's pick, or the finder.

    With --from-finder, the takes (one speaker's) go through the sibilance finder and its
    suggested notch (frequency, Q, depth) is designed from preferred values and saved.
    """
    store = store_from(options)
    sources = [bool(notch), bool(from_sweep), bool(from_finder), _has_circuit(options)]
    if sum(sources) != 1:
        raise click.UsageError("give exactly one of: circuit options (--r1 .. or --circuit), "
                               "--notch (a design target), --from-sweep DIR, --from-finder TAKES...")
    if from_finder and not takes:
        raise click.UsageError("--from-finder needs one or more takes: preset save NAME --speaker S "
                               "--from-finder TAKE...")
    if takes and not from_finder:
        raise click.UsageError(f"unexpected argument(s) {' '.join(takes)}: takes are given with --from-finder only")
    if from_finder:
        store.check_free(name, force)  # before the finder's work
        made = _from_finder(takes, series, impedance, options)
    elif from_sweep:
        made = _from_sweep(from_sweep, options.get("mix"))
    elif notch:
        made = _from_target(notch, q, series, impedance, options)
    else:
        network = network_from_options(options)
        made = {"circuit": spec.table_from_network(network), "mix": network.mix,
                "made_by": "circuit options"}
    build = made.pop("build", "")
    notes = "\n".join(text for text in (notes, build) if text)
    path = store.save(presets.Preset(name=name, speaker=speaker, notes=notes, **made), force=force)
    click.echo(f"saved preset '{name}' to {path}")


def _has_circuit(options) -> bool:
    parts = ("r1", "r2", "r3", "c1", "c2", "c3")
    return bool(options.get("circuit_file") or options.get("preset")) or any(options.get(k) for k in parts)


def _from_target(notch, q, series, impedance, options) -> dict:
    target = {key: value for key, value in
              {"notch": notch, "q": q, "series": series, "impedance": impedance}.items() if value is not None}
    surroundings = spec.network_surroundings({"source": options.get("source"), "load": options.get("load")})
    design = spec.design_from_table(target, where="", **surroundings)
    mix = 1.0 if options.get("mix") is None else options["mix"]
    return {"target": target, "circuit": spec.table_from_network(design.built), "mix": mix,
            "build": _build_note(design),
            "made_by": f"design target: notch {notch} Hz, as built {design.built_metrics.notch_hz:.1f} Hz"}


def _from_finder(takes, series, impedance, options) -> dict:
    """The finder's suggested notch over ``takes``, designed as a ``--notch`` target is."""
    from emulate.cli.finders import pooled_sibilance
    from emulate.errors import BadValueError
    from emulate.voice.notches import PASSIVE_BELOW_Q

    _reports, found = pooled_sibilance(takes)
    if not found.usable:
        raise BadValueError(f"the sibilance finder found nothing usable in {len(takes)} take(s) ({found.reason}); "
                            "nothing was saved; give takes of one speaker with sibilant speech in them")
    q = None if found.suggested_q < PASSIVE_BELOW_Q else round(min(found.suggested_q, 20.0), 3)
    made = _from_target(f"{found.suggested_notch_hz:.6g}", q, series, impedance, options)
    if options.get("mix") is None:
        made["mix"] = round(found.suggested_mix, 3)
    made["made_by"] = (f"sibilance finder over {len(takes)} take(s): notch {found.suggested_notch_hz:.0f} Hz, "
                       f"Q {found.suggested_q:.2f}, depth {found.suggested_depth_db:.1f} dB; " + made["made_by"])
    return made


def _build_note(design) -> str:
    return f"build R3 as {design.r3_build} and C3 as {design.c3_build}."


def _from_sweep(folder, mix) -> dict:
    from emulate.work import sweep  # the process pool and reels: loaded only for sweeps

    plan, pick = sweep.read_pick(folder)
    setting = sweep.Setting(pick["notch_target_hz"], pick.get("q", plan.q), pick.get("mix", plan.mix))
    if setting.q == sweep.PASSIVE_Q and plan.q is None:
        setting = sweep.Setting(setting.notch_hz, None, setting.mix)
    design = plan.design(setting)
    target = {"notch": f"{pick['notch_target_hz']:.6g}", "series": plan.series}
    if setting.q is not None:
        target["q"] = setting.q
    return {"circuit": spec.table_from_network(design.built), "target": target, "build": _build_note(design),
            "mix": setting.mix if mix is None else mix,
            "made_by": f"sweep pick: {pick['setting']} of {len(plan.settings)}: {pick['reason']}"}


@preset.command("list")
@presets_option
@json_option
def preset_list(as_json, presets_dir):
    """List the presets in the presets folder."""
    store = presets.PresetStore(presets_dir)
    note = store.check_folder()
    if note:
        click.echo(f"note: {note}", err=True)
    found, problems = store.list_all()
    for _path, message in problems:
        click.echo(f"warning: {message}", err=True)
    shipped = [p.name for p in found if store.is_shipped(p.name)]
    text = summary.preset_list_text(store.root, found)
    if shipped:
        text += f"\n  (shipped with emulate, read-only: {', '.join(shipped)})"
    emit(as_json, {"folder": str(store.root), "presets": [summary.preset_payload(p) for p in found],
                   "shipped": shipped, "problems": [m for _, m in problems]}, text)


@preset.command("show")
@click.argument("name")
@presets_option
@json_option
def preset_show(name, as_json, presets_dir):
    """Show preset NAME and what its circuit does."""
    store = presets.PresetStore(presets_dir)
    found = store.load(name)
    network = spec.network_from_preset(found)
    metrics = measure(network.response)
    emit(as_json, summary.preset_payload(found) | {"metrics": metrics.as_dict()},
         summary.preset_text(store.path(name), found, network, metrics))


@preset.command("delete")
@click.argument("name")
@presets_option
def preset_delete(name, presets_dir):
    """Delete preset NAME (its file)."""
    store = presets.PresetStore(presets_dir)
    store.delete(name)
    click.echo(f"deleted preset '{name}' from {store.root}")

