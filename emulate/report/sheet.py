"""The build sheet: one folder with sheet.md, a self-contained sheet.html and the PNG pictures.

The pipeline, top to bottom:

1. measure   the network as built (:func:`emulate.analog.response.measure`).
2. compose   the sheet as a list of blocks (headings, paragraphs, tables, lists,
             pictures), written once and rendered twice, so the Markdown and the
             HTML always say the same thing.
3. draw      the pictures (:mod:`emulate.report.plots`) into a temporary folder beside
             ``out_dir``.
4. render    sheet.md (pictures as relative links) and sheet.html (inline CSS,
             pictures as base64 ``data:`` URIs: the single file opens anywhere).
5. publish   rename the temporary folder onto ``out_dir``; on any error the
             temporary folder is removed and ``out_dir`` is untouched.

Part-type advice is common practice (no source): metal-film resistors; film
capacitors (polypropylene best, polyester acceptable) in the signal path, C0G/NP0
ceramics only for small values; never high-k ceramics (X7R, Y5V), whose
capacitance moves with voltage and which distort.
"""

from __future__ import annotations

import base64
import html
import math
from dataclasses import dataclass
from pathlib import Path

from emulate.analog import parts
from emulate.report import plots
from emulate.errors import BadValueError
from emulate.files import atomic_path
from emulate.analog.networks import PART_NAMES, TwinT, part_kind
from emulate.analog.response import measure

DEFAULT_TITLE = "Twin-T notch: build sheet"
C0G_LIMIT_FARADS = 1e-9  # C0G/NP0 ceramics up to about 1 nF (common practice, no source)
MIXER_FEEDBACK_OHMS = 10e3
DEPTH_POT_OHMS = 10e3  # a linear pot between two buffers (common practice, no source)
CAUTIONS = (
    "Line-level signals only: do not feed it loudspeaker outputs or microphone phantom power.",
    "Protect your hearing when auditioning: start with the monitor level low; a deep notch swept "
    "through a loud take can surprise you.",
    "Never connect it to mains.",
    "Anything mains-powered (power supplies) must follow local codes and licensed practice.",
)
CAUTION_LINE = ("line level only; start monitoring low; never connect to mains; mains-powered supplies "
                "by local codes and licensed practice")
PICTURES = {"response": "response.png", "tolerance": "tolerance.png"}
_CSS = """
body { font-family: system-ui, sans-serif; max-width: 60rem; margin: 2rem auto; padding: 0 1rem;
       color: #1d2733; line-height: 1.45; }
h1 { border-bottom: 2px solid #1f5fa8; padding-bottom: .3rem; }
h2 { margin-top: 2rem; color: #1f5fa8; }
table { border-collapse: collapse; margin: .8rem 0; }
th, td { border: 1px solid #c9d1d9; padding: .3rem .7rem; text-align: left; }
th { background: #eef3f8; }
img { max-width: 100%; border: 1px solid #e3e7eb; }
.caution { background: #fff4e5; border-left: 4px solid #d9822b; padding: .5rem 1rem; }
"""


@dataclass(frozen=True)
class Block:
    """One piece of a sheet: ``kind`` is h1, h2, p, list, table, image or caution."""

    kind: str
    content: object


# --- 2. compose ---------------------------------------------------------------

def part_type(name: str, value: float, tolerance: float) -> str:
    """The part to buy for a designator (common practice, no source).

    Example
    -------
    >>> part_type("c1", 10e-9, 0.05)
    'polypropylene (PP) film, or polyester (PET) film; not high-k ceramic'
    """
    if part_kind(name) == "resistance":
        return f"metal film, {parts.format_tolerance(tolerance)}, 0.25 W"
    if value <= C0G_LIMIT_FARADS:
        return "C0G/NP0 ceramic (small value), or polypropylene film"
    return "polypropylene (PP) film, or polyester (PET) film; not high-k ceramic"


STOCKED_SERIES = ("E6", "E12", "E24", "E48", "E96", "E192")  # E3 is rarely stocked (common practice)


def preferred_series(value: float) -> str:
    """The coarsest stocked IEC 60063 series holding ``value`` (E6 .. E192), or ``"not preferred"``."""
    for series in STOCKED_SERIES:
        if any(math.isclose(value, v, rel_tol=1e-6) for v in parts.series_values(series, value * 0.99,
                                                                               value * 1.01)):
            return series
    return "not preferred"


def _pair_text(value: float, partner: float, kind: str, ratio: float) -> str | None:
    """'2 x 12k in parallel' where a shunt part that is no preferred value is a pair of its partner."""
    if preferred_series(value) != "not preferred" or not math.isclose(value, ratio * partner, rel_tol=1e-6):
        return None
    return f"2 x {parts.format_value(partner, kind)} in parallel"


def parts_rows(network: TwinT, tolerances, design=None, trim=None) -> list[list[str]]:
    """Designator, value, series, tolerance, part type for each part (R3 split when trimmed)."""
    fractions = dict(zip(PART_NAMES, tolerances.fractions()))
    shunt_text = ({"r3": _pair_text(network.r3, network.r1, "resistance", 0.5),
                   "c3": _pair_text(network.c3, network.c1, "capacitance", 2.0)}
                  if design is None else {"r3": design.r3_build, "c3": design.c3_build})
    rows = []
    for name, value in network.parts().items():
        written = shunt_text.get(name) or parts.format_value(value, part_kind(name))
        if name == "r3" and trim is not None:
            rows.append(["R3a (fixed)", parts.format_value(trim.fixed_ohms, "resistance"),
                         preferred_series(trim.fixed_ohms), parts.format_tolerance(fractions[name]),
                         part_type(name, value, fractions[name])])
            rows.append(["R3b (trimmer)", parts.format_value(trim.trimmer_ohms, "resistance"), "trimmer",
                         f"{parts.format_tolerance(0.2)} track", "multi-turn cermet trimmer, in series with R3a"])
            continue
        rows.append([name.upper(), written, preferred_series(value), parts.format_tolerance(fractions[name]),
                     part_type(name, value, fractions[name])])
    if design is not None and design.divider is not None:
        for label, value in zip(("RK top", "RK bottom"), design.divider):
            rows.append([label, parts.format_value(value, "resistance"), design.series, "1 %",
                         "metal film, 1 %, 0.25 W (bootstrap divider)"])
    return rows


def depth_control_text(network: TwinT) -> list[str]:
    """How to wire the depth control, with values."""
    mix = network.mix
    rf = parts.format_value(MIXER_FEEDBACK_OHMS, "resistance")
    lines = [f"Real potentiometer: buffer the network output (op-amp follower), wire a {parts.format_value(DEPTH_POT_OHMS, 'resistance')} "
             "linear pot from the network input (driven from a buffer) to that buffered output, and take the "
             "wiper through a second follower. Wiper at the output end is the full notch; the track must not "
             "load the passive network itself."]
    if 0.0 < mix < 1.0:
        dry = parts.format_value(parts.nearest_preferred(MIXER_FEEDBACK_OHMS / (1 - mix), "E96"), "resistance")
        wet = parts.format_value(parts.nearest_preferred(MIXER_FEEDBACK_OHMS / mix, "E96"), "resistance")
        lines.append(f"Ideal mix as an op-amp mixer at mix {mix:.2f}: inverting summer with feedback {rf}, dry "
                     f"input {dry} (Rf/(1-mix)), wet input {wet} (Rf/mix), then a unity inverter ({rf}/{rf}) "
                     f"to restore polarity; the null is then {-20 * math.log10(1 - mix):.1f} dB deep.")
    else:
        lines.append(f"Ideal mix as an op-amp mixer: inverting summer with feedback {rf}, dry input Rf/(1-mix), "
                     f"wet input Rf/mix, then a unity inverter; depth at the notch is 20 log10(1 - mix) dB.")
    return lines


def compose(network: TwinT, *, tolerances, design=None, tolerance_result=None, trim=None,
            title: str = DEFAULT_TITLE, notes=None) -> list[Block]:
    """The sheet as blocks (pictures named as in ``PICTURES``); ``notes`` maps a heading to lines."""
    metrics = measure(network.response)
    q = "no -3 dB band" if math.isnan(metrics.q) else f"{metrics.q:.3f}"
    depth = metrics.depth_below_passband_db
    blocks = [Block("h1", title),
              Block("caution", CAUTIONS),
              Block("h2", "Parts"),
              Block("table", (["part", "value", "series", "tolerance", "type"],
                              parts_rows(network, tolerances, design, trim))),
              Block("p", "Capacitors: film in the signal path; C0G/NP0 ceramics only for small values; "
                         "never high-k ceramics (X7R, Y5V). Match C1, C2 and C3 from one batch if you can.")]
    if design is not None:
        blocks.append(Block("p", f"Designed for {design.target_hz:.1f} Hz: as built "
                                 f"{100 * design.notch_error:+.2f} % off target."))
    blocks += [Block("h2", "As built"),
               Block("table", (["notch", "depth below passband", "Q", "passband low / high"],
                               [[f"{metrics.notch_hz:.1f} Hz",
                                 "exact null" if depth > 150 else f"{depth:.1f} dB", q,
                                 f"{_signed(metrics.passband_low_db)} / {_signed(metrics.passband_high_db)} dB"]])),
               Block("image", (PICTURES["response"], "analog and digital response"))]
    if tolerance_result is not None:
        blocks += _tolerance_blocks(tolerance_result)
    if trim is not None:
        blocks += [Block("h2", "Trim"), Block("p", trim.describe()),
                   Block("p", f"Where: {trim.where}. Settings needed {trim.setting_range_ohms[0]:.0f}-"
                              f"{trim.setting_range_ohms[1]:.0f} ohms. Trim by ear or on a meter at the null "
                              "with a test tone. R3 restores the depth only: the notch frequency still "
                              f"spreads {trim.notch_hz['p5']:.0f}-{trim.notch_hz['p95']:.0f} Hz (p5-p95) "
                              "with the capacitor mismatch; re-centring it needs R1 and R2 trimmed together.")]
    for heading, lines in (notes or {}).items():  # level plan, noise, drift (emulate.cli.build)
        blocks += [Block("h2", heading), Block("list", tuple(lines))]
    blocks += [Block("h2", "Depth control"), Block("list", depth_control_text(network)),
               Block("h2", "Cautions"), Block("list", CAUTIONS)]
    return blocks


def _signed(value_db: float) -> str:
    return f"{value_db:.2f}".replace("-0.00", "0.00")


def _tolerance_blocks(result) -> list[Block]:
    notch, depth = result.percentiles(result.notch_hz), result.percentiles(result.depth_db)
    low, high = result.corners.notch_range_hz
    ranking = ", ".join(s.part for s in result.sensitivity())
    return [Block("h2", "Tolerances"),
            Block("p", f"{result.draws} builds, {result.tolerances.describe()}, seed {result.seed}."),
            Block("table", (["", "5 %", "median", "95 %"],
                            [["notch (Hz)", *(f"{notch[k]:.1f}" for k in ("p5", "p50", "p95"))],
                             ["depth (dB)", *(f"{depth[k]:.1f}" for k in ("p5", "p50", "p95"))]])),
            Block("p", f"Yield {result.yield_fraction:.1%} at {result.spec_db:g} dB below the passband. "
                       f"Worst corner {result.corners.worst_depth_db:.1f} dB; notch {low:.1f}-{high:.1f} Hz "
                       f"over all 64 corners. Parts by influence on depth: {ranking}."),
            Block("image", (PICTURES["tolerance"], "tolerance envelope"))]


# --- 4. render ------------------------------------------------------------------

def render_markdown(blocks: list[Block]) -> str:
    out = []
    for block in blocks:
        if block.kind in ("h1", "h2"):
            out.append(f"{'#' if block.kind == 'h1' else '##'} {block.content}")
        elif block.kind == "p":
            out.append(block.content)
        elif block.kind == "list":
            out.append("\n".join(f"- {item}" for item in block.content))
        elif block.kind == "caution":
            out.append("\n".join(["> **Caution.**", ">", *(f"> - {item}" for item in block.content)]))
        elif block.kind == "table":
            header, rows = block.content
            out.append("\n".join(["| " + " | ".join(header) + " |", "|" + "---|" * len(header),
                                  *("| " + " | ".join(row) + " |" for row in rows)]))
        elif block.kind == "image":
            name, alt = block.content
            out.append(f"![{alt}]({name})")
    return "\n\n".join(out) + "\n"


def render_html(blocks: list[Block], folder: Path) -> str:
    """One self-contained page; pictures read from ``folder`` and embedded as data URIs."""
    e = html.escape
    out = []
    for block in blocks:
        if block.kind in ("h1", "h2"):
            out.append(f"<{block.kind}>{e(block.content)}</{block.kind}>")
        elif block.kind == "p":
            out.append(f"<p>{e(block.content)}</p>")
        elif block.kind == "list":
            out.append("<ul>" + "".join(f"<li>{e(i)}</li>" for i in block.content) + "</ul>")
        elif block.kind == "caution":
            out.append('<div class="caution"><strong>Caution.</strong> ' + " ".join(e(i) for i in block.content)
                       + "</div>")
        elif block.kind == "table":
            header, rows = block.content
            out.append("<table><tr>" + "".join(f"<th>{e(h)}</th>" for h in header) + "</tr>"
                       + "".join("<tr>" + "".join(f"<td>{e(c)}</td>" for c in row) + "</tr>" for row in rows)
                       + "</table>")
        elif block.kind == "image":
            name, alt = block.content
            data = base64.b64encode((folder / name).read_bytes()).decode("ascii")
            out.append(f'<p><img alt="{e(alt)}" src="data:image/png;base64,{data}"></p>')
    title = e(next(b.content for b in blocks if b.kind == "h1"))
    return (f'<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8"><title>{title}</title>'
            f"<style>{_CSS}</style></head><body>\n" + "\n".join(out) + "\n</body></html>\n")


# --- 5. publish ------------------------------------------------------------------

def _check_out_dir(out_dir: Path, force: bool) -> None:
    if not out_dir.parent.is_dir():
        raise BadValueError(f"{out_dir}: folder {out_dir.parent} does not exist")
    if out_dir.exists() and not out_dir.is_dir():
        raise BadValueError(f"{out_dir}: exists and is not a folder")
    if out_dir.is_dir() and any(out_dir.iterdir()) and not force:
        raise BadValueError(f"{out_dir}: folder exists and is not empty; choose another folder or force the overwrite (--force)")


def write_sheet(out_dir, network: TwinT, *, tolerances, design=None, tolerance_result=None, trim=None,
                title: str = DEFAULT_TITLE, fs: float = 48000.0, force: bool = False, notes=None) -> Path:
    """Write the build sheet folder: sheet.md, sheet.html and the pictures.

    Parameters
    ----------
    out_dir : str or Path
        Folder to create (its parent must exist); refused when it exists and is
        not empty unless ``force``.
    network : TwinT
        The network as built (one value per part).
    tolerances : emulate.analog.tolerance.Tolerances
        The tolerances of the parts to buy.
    design : emulate.analog.design.Design, optional
        Adds the target and how R3/C3 are made up.
    tolerance_result : emulate.analog.tolerance.ToleranceResult, optional
        Adds percentiles, yield, corners and the envelope picture.
    trim : emulate.analog.tolerance.TrimSuggestion, optional
        Splits R3 into the fixed part and the trimmer.
    title : str
        The sheet's heading.
    fs : float
        Sample rate of the digital overlay, Hz.
    force : bool
        Replace a non-empty ``out_dir`` (only after the new sheet is complete).
    notes : dict, optional
        Heading -> lines of further sections (the real box: levels, noise, drift).

    Returns
    -------
    Path : ``out_dir``.

    Raises
    ------
    BadValueError : ``out_dir`` not allowed, or a bad value from the analysis.

    Example
    -------
    >>> import tempfile, pathlib
    >>> from emulate.analog.tolerance import Tolerances
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "sheet"
    >>> sorted(p.name for p in write_sheet(out, TwinT.balanced(6000.0, r_ohms=10e3),
    ...                                    tolerances=Tolerances(0.01, 0.05)).iterdir())
    ['response.png', 'sheet.html', 'sheet.md']
    """
    out_dir = Path(out_dir)
    _check_out_dir(out_dir, force)
    blocks = compose(network, tolerances=tolerances, design=design, tolerance_result=tolerance_result,
                     trim=trim, title=title, notes=notes)
    # the whole folder is written beside out_dir, then swapped in (an old one removed after)
    with atomic_path(out_dir, mode=0o755) as temporary:  # a sheet is for sharing
        temporary.mkdir()
        plots.plot_response(network, temporary / PICTURES["response"], fs=fs)
        if tolerance_result is not None:
            plots.plot_tolerance(tolerance_result, temporary / PICTURES["tolerance"])
        (temporary / "sheet.md").write_text(render_markdown(blocks), encoding="utf-8")
        (temporary / "sheet.html").write_text(render_html(blocks, temporary), encoding="utf-8")
    return out_dir
