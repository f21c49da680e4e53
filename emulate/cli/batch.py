"""The command that renders a season: ``batch`` (a plan file, or one speaker inline)."""

from __future__ import annotations

from pathlib import Path

import click

from emulate.cli.options import (emit, force_option, json_option, main, presets_option, printable, progress, stopped,
                                  store_from)
from emulate import files
from emulate.errors import EmulateError
from emulate.lifetime import Stopped

__all__ = ["batch_command"]

HEARING_NOTE = "listen at a moderate level: renders can be louder in places than their takes"


@main.command("batch")
@click.argument("plan_path", metavar="[PLAN.toml]", required=False, type=click.Path(dir_okay=False))
@click.option("--speaker", help="one speaker inline (no plan file): who the takes are, free text")
@click.option("--preset", help="inline: the speaker's saved preset (see 'emulate preset list')")
@click.option("--takes", multiple=True, metavar="FOLDER|PATTERN|FILE",
              help="inline: a folder (every audio file under it), a glob pattern or a file; repeat for more")
@click.option("--out", "out_dir", type=click.Path(file_okay=False),
              help="the output folder (inline: required; with PLAN.toml: instead of the plan's out)")
@presets_option
@click.option("--workers", type=int, help="parallel renders on this machine; default one per core")
@click.option("--cluster", metavar="ADDRESS",
              help="run on a dask.distributed scheduler (e.g. tcp://host:8786); its workers must see the "
                   "takes and the output folder at the same paths")
@click.option("--redo", is_flag=True, help="render every take again, replacing the earlier renders")
@click.option("--no-page", is_flag=True, help="write no listening page (index.html) and none of the excerpts it "
                                              "plays; an earlier page is left as it was")
@force_option("out-of-date files at render paths that no earlier batch wrote, and summary files that are "
              "not a batch's (a take is never replaced: the output folder must lie apart from the takes)")
@json_option
def batch_command(plan_path, speaker, preset, takes, out_dir, presets_dir, workers, cluster, redo, no_page, force,
                  as_json):
    """Render every take with its speaker's preset, in parallel; a summary CSV and JSON.

    Give a plan file (TOML: out = "FOLDER", then per speaker a [[speaker]] table with
    name, preset and takes), or one speaker inline with --speaker, --preset, --takes and
    --out. The takes' folders are mirrored under the output folder; nothing is ever
    written next to or over a take. A re-run keeps renders that are complete and newer than
    their take and preset (--redo renders all again). Ctrl-C keeps the complete renders
    and the summary of them; run the same command again to resume.
    """
    from emulate.work import batch

    the_plan = _plan(plan_path, speaker, preset, takes, out_dir)
    if cluster and workers is not None:
        raise click.UsageError("give either --workers (this machine) or --cluster ADDRESS, not both")
    runner = batch.LocalRunner(workers)  # checks --workers
    checked = batch.prepare_batch(the_plan, store_from({"presets_dir": presets_dir}), redo=redo, force=force,
                                  page=not no_page)
    if cluster:
        runner = batch.ClusterRunner(cluster)
    mark = len(files.kept_files())
    try:
        with progress(checked.frames, "batch") as bar:
            results = batch.run_batch(checked, runner, progress=bar.update)
    except KeyboardInterrupt as exc:
        raise stopped(_interrupted(exc, the_plan)) from None
    except EmulateError as exc:
        if not files.kept_files(mark):  # nothing complete: the error says it all
            raise
        raise click.ClickException(printable(f"{exc}; the batch stopped there: the complete renders under "
                                             f"{the_plan.out} are kept (listed in its summary.csv); run the "
                                             "same command again to resume")) from None
    finally:
        if cluster:
            runner.close()
    emit(as_json, {"out": str(the_plan.out), "totals": batch.totals(results), "takes": [r.row() for r in results]},
         _text(results, the_plan, batch.totals(results), page=not no_page))


def _plan(plan_path, speaker, preset, takes, out_dir):
    from emulate.work import plan

    inline = [name for name, value in (("--speaker", speaker), ("--preset", preset), ("--takes", takes))
              if value]
    if plan_path and inline:
        raise click.UsageError(f"give a plan file or {', '.join(inline)} inline, not both")
    if plan_path:
        the_plan = plan.read_plan(plan_path)
        return the_plan if out_dir is None else plan.BatchPlan(the_plan.speakers, Path(out_dir), the_plan.base)
    missing = [name for name, value in (("--speaker", speaker), ("--preset", preset), ("--takes", takes),
                                        ("--out", out_dir)) if not value]
    if missing:
        raise click.UsageError(f"give a plan file PLAN.toml, or one speaker inline: missing {', '.join(missing)}")
    return plan.BatchPlan.inline(speaker, preset, takes, out_dir)


def _interrupted(exc: KeyboardInterrupt, the_plan) -> str:
    why = f"stopped by {exc.args[0]}" if isinstance(exc, Stopped) and exc.args else "interrupted"
    return printable(f"{why}; the complete renders under {the_plan.out} are kept (listed in its summary.csv), "
                     "those in flight were removed; run the same command again to resume")


def _text(results, the_plan, totals: dict, *, page: bool) -> str:
    lines = [f"batch: {totals['takes']} take(s) of {totals['speakers']} speaker(s), "
             f"{totals['audio_hours'] * 60:.1f} min of audio: {totals['rendered']} rendered, "
             f"{totals['kept']} kept from an earlier run"]
    for r in results:
        change = "n/a" if r.sibilance_band_change_db is None else f"{r.sibilance_band_change_db:+.1f} dB"
        loud = "n/a" if r.loudness_change_db is None else f"{r.loudness_change_db:+.1f} dB"
        peak = "silent" if r.peak_dbfs is None else f"{r.peak_dbfs:.1f} dBFS"
        clipped = "" if not r.clipped_samples else f", {r.clipped_samples} samples clipped"
        lines.append(f"  {r.status:8} {r.output}  band {change}, loudness {loud}, peak {peak}{clipped}")
    if totals["clipped_takes"]:
        lines.append(f"warning: {totals['clipped_takes']} render(s) clipped; lower the take's level or render "
                     "to a float format")
    out = Path(the_plan.out)
    page_words = f" and the listening page {out / 'index.html'}" if page else ""
    lines.append(f"wrote {out / 'summary.csv'}, {out / 'summary.json'}{page_words}")
    lines.append(f"caution: {HEARING_NOTE}")
    return "\n".join(lines)
