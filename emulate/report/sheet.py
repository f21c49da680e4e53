"""The build sheet: one folder with sheet.md, a self-contained sheet.html and the PNG pictures.

The pipeline, top to bottom:

1. measure   the network as built (:func:`emulate.analog.response.measure`).
2. compose   the sheet as a list of blocks (title block, cautions once, schematic,
             every part of the whole circuit (:mod:`emulate.report.netlist`) with its
             series and tolerance, the assumed source and load, labelled depth
             figures, the divider's K and its tolerance effect, tolerances, trim,
             depth control, the netlist), written once and rendered twice, so the
             Markdown and the HTML always say the same thing.
3. draw      the pictures (:mod:`emulate.report.plots`, :mod:`emulate.report.schematic`)
             into a temporary folder beside ``out_dir``.
4. render    sheet.md (pictures as relative links) and sheet.html (inline CSS,
             pictures as base64 ``data:`` URIs, the schematic as inline SVG: the
             single file opens anywhere), beside them schematic.svg/.png and the
             netlist circuit.cir.
5. publish   rename the temporary folder onto ``out_dir``; on any error the
             temporary folder is removed and ``out_dir`` is untouched.

Part-type advice is common practice (no source): metal-film resistors; film
capacitors (polypropylene best, polyester acceptable) in the signal path, C0G/NP0
ceramics only for small values; never high-k ceramics (X7R, Y5V), whose
capacitance moves with voltage and which distort.
"""

from __future__ import annotations

import base64
import datetime
import html
import math
from dataclasses import dataclass
from pathlib import Path

from emulate import __version__
from emulate.analog import parts
from emulate.analog.stability import margin_warning
from emulate.analog.design import HUM_MIN_CUT_DB, divider_for
from emulate.analog.makeup import Makeup, buyable, coarsest_series
from emulate.analog.networks import TwinT, part_kind
from emulate.analog.response import measure
from emulate.analog.tolerance import TOL_PARTS, divider_k
from emulate.errors import BadValueError
from emulate import files
from emulate.files import atomic_path
from emulate.report.summary import cut_text, db_text
from emulate.report.netlist import MIXER_FEEDBACK_OHMS, SUPPLY_VOLTS, Element, netlist_text, whole_circuit

__all__ = ["write_sheet", "compose", "parts_rows", "trim_rows", "divider_of", "assumed_rows", "depth_control_text", "part_type",
           "preferred_series", "render_markdown", "render_html", "Block", "CAUTIONS", "CAUTION_LINE", "PARTS_HEADER"]

DEFAULT_TITLE = "Twin-T notch: build sheet"
C0G_LIMIT_FARADS = 1e-9  # C0G/NP0 ceramics up to about 1 nF (common practice, no source)
CAUTIONS = (
    "Line-level signals only: do not feed it loudspeaker outputs or microphone phantom power.",
    "Protect your hearing when auditioning: start with the monitor level low; a deep notch swept "
    "through a loud take can surprise you.",
    "Never connect it to mains.",
    "Anything mains-powered (power supplies) must follow local codes and licensed practice.",
)
CAUTION_LINE = ("line level only; start monitoring low; never connect to mains; mains-powered supplies "
                "by local codes and licensed practice")
PICTURES = {"response": "response.png", "tolerance": "tolerance.png", "schematic_svg": "schematic.svg",
            "schematic_png": "schematic.png"}
NETLIST_FILE = "circuit.cir"
PARTS_HEADER = ["part", "value", "series and tolerance", "type", "what it does"]
_CSS = """
body { font-family: system-ui, sans-serif; max-width: 72rem; margin: 2rem auto; padding: 0 1rem;
       color: #1d2733; line-height: 1.45; }
h1 { border-bottom: 2px solid #1f5fa8; padding-bottom: .3rem; }
h2 { margin-top: 2rem; color: #1f5fa8; }
table { border-collapse: collapse; margin: .8rem 0; }
th, td { border: 1px solid #c9d1d9; padding: .3rem .7rem; text-align: left; }
th { background: #eef3f8; }
td:first-child, td:nth-child(2):not(:last-child) { white-space: nowrap; }
img { max-width: 100%; border: 1px solid #e3e7eb; }
.caution { background: #fff4e5; border-left: 4px solid #d9822b; padding: .5rem 1rem; }
.note { background: #eef3f8; border-left: 4px solid #1f5fa8; padding: .5rem 1rem; }
.schematic svg { width: 100%; height: auto; }
pre { background: #f6f8fa; padding: .6rem; font-size: .85rem; overflow-x: auto; }
@media print { body { max-width: none; margin: 0; } h2 { break-after: avoid; } table, .schematic { break-inside: avoid; } }
"""


@dataclass(frozen=True)
class Block:
    """One piece of a sheet: ``kind`` is h1, h2, p, list, table, image, svg, pre, caution or note."""

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


def preferred_series(value: float) -> str:
    """The coarsest stocked IEC 60063 series holding ``value`` (E6 .. E192), or ``"not preferred"``."""
    return coarsest_series(value) or "not preferred"


def _series_and_tolerance(value: float, kind: str, tolerance: float) -> str:
    """What a buyer needs: the series and the tolerance with its letter (IEC 60062)."""
    letter = parts.tolerance_letter(tolerance)
    tol = parts.format_tolerance(tolerance) + (f" ({letter})" if letter else "")
    series = coarsest_series(value)
    if series is not None:
        return f"{series}, {tol}"
    near = parts.nearest_preferred(value, "E96")
    return f"not a preferred value: {tol} part, or E96 {parts.format_value(near, kind)}"


def _makeup_for(network: TwinT, design) -> dict[str, Makeup]:
    if design is not None:
        return design.makeup
    return {name: buyable(value, part_kind(name)) for name, value in network.parts().items()}


def parts_rows(network: TwinT, tolerances, design=None) -> list[list[str]]:
    """Designator, value, series and tolerance, part, what it does: every part to buy.

    The twin-T positions made of two parts appear as two rows (R3A, R3B); the
    divider, buffers, the depth control and the decoupling follow (the R3 trim
    is an alternative: :func:`trim_rows`).  What the figures assume (source
    resistance, load) is listed apart (:func:`assumed_rows`).
    """
    rows = []
    for element in _bought(network, design):
        rows += _rows_for(element, network, tolerances)
    return rows


def trim_rows(trim, tolerances) -> list[list[str]]:
    """R3 as a fixed part plus a trimmer: the parts that replace R3 when the null is trimmed."""
    t = tolerances.of("r3")
    return [["R3 (fixed)", parts.format_value(trim.fixed_ohms, "resistance"),
             _series_and_tolerance(trim.fixed_ohms, "resistance", t), part_type("r3", trim.fixed_ohms, t),
             "replaces R3: fixed part, in series with the trimmer"],
            ["R3 (trimmer)", parts.format_value(trim.trimmer_ohms, "resistance"), "trimmer, +-20 % track",
             "multi-turn cermet trimmer, wired as a variable resistor", "replaces R3: trims the null"]]


def _bought(network, design):
    return [e for e in _whole(network, design) if not e.assumed and e.kind not in ("supply", "source")]


def _whole(network, design) -> list[Element]:
    return whole_circuit(network, _makeup_for(network, design), divider_of(network, design))


def divider_of(network: TwinT, design=None) -> tuple[float, float] | None:
    """The bootstrap divider (top, bottom) ohms: the design's, else E24 parts that give K exactly
    (within 1 ppm), else a 10k top and the exact bottom."""
    if not network.is_active:
        return None
    if design is not None and design.divider is not None:
        return design.divider
    k = float(network.bootstrap)
    if 0 < k < 1:
        pair, built = divider_for(k, "E24")
        if abs(built / k - 1) < 1e-6:
            return pair
    return 10e3, 10e3 * k / (1 - k) if k > 0 else math.inf


def _rows_for(element: Element, network, tolerances) -> list[list[str]]:
    d = element.designator
    if element.kind == "opamp":
        return [[d, "op-amp", "-", f"1/2 of a dual op-amp (U{d[1:-1]}), unity-gain stable", element.role]]
    if d.startswith("RV1"):
        if d.endswith("B"):
            return []
        return [["RV1", parts.format_value(network.depth_pot_ohms, "resistance"), "pot, +-20 % track",
                 "linear (B) law, single gang", f"depth control; wiper at {network.mix:.2f} of the travel "
                 "from the input end"]]
    kind = "resistance" if element.kind == "R" else "capacitance"
    if element.role.startswith("decoupling"):
        return [[d, element.written, "E6, 20 %", "X7R ceramic, 50 V (supply only, never in the signal path)",
                 element.role]]
    position = d.rstrip("AB").lower()
    tolerance = tolerances.of(position) if position in TOL_PARTS else tolerances.resistors
    return [[d, element.written, _series_and_tolerance(element.value, kind, tolerance),
             part_type(position if position[0] in "rc" else "r", element.value, tolerance), element.role]]


def assumed_rows(network: TwinT) -> list[list[str]]:
    """What the figures assume about the surroundings."""
    source = (parts.format_value(network.source_ohms, "resistance") + " source resistance"
              if network.source_ohms else "0 ohm (an op-amp output): the input buffer provides it")
    if network.is_active:
        load = ("the output follower drives it: the load does not change the response; it takes swing "
                "where it would draw more than the op-amp's output current (the level plan, with --level)")
        load = (f"{parts.format_value(network.load_ohms, 'resistance')}; " if math.isfinite(network.load_ohms)
                else "none; ") + load
    elif math.isfinite(network.load_ohms):
        load = f"{parts.format_value(network.load_ohms, 'resistance')} on the network output (in the figures)"
    else:
        load = "none (an open output): the output buffer provides it"
    return [["source", source], ["load", load], ["supply", f"+-{SUPPLY_VOLTS:g} V, clean and regulated"]]


def _divider_text(network: TwinT, design, tolerances) -> list[str]:
    """R4/R5: the K they give and what their tolerance does to K and Q."""
    if not network.is_active:
        return []
    top, bottom = divider_of(network, design)
    k = bottom / (top + bottom)
    t4, t5 = tolerances.of("r4"), tolerances.of("r5")
    k_low, k_high = divider_k(k, t4, -t5), divider_k(k, -t4, t5)
    q = [1 / (4 * (1 - v)) for v in (k_low, k, k_high)]
    return [f"Bootstrap divider R4 {parts.format_value(top, 'resistance')} (top) and R5 "
            f"{parts.format_value(bottom, 'resistance')} (bottom) from the output follower give K = {k:.4f}, "
            f"so Q = 1/(4(1-K)) = {q[1]:.3f} for a balanced network (MT-225). With R4 at "
            f"{parts.format_tolerance(t4)} and R5 at {parts.format_tolerance(t5)}, K lies in {k_low:.4f}-{k_high:.4f}: "
            f"Q {q[0]:.3f}-{q[2]:.3f} (the null itself does not move: the foot carries no signal at the null)."]


def _figures_rows(network: TwinT, design) -> list[list[str]]:
    """Depth figures that say what they are: the network alone at full notch, and at the chosen mix."""
    wet = measure(network.wet().response)
    rows = [["network alone, full notch", f"{wet.notch_hz:.2f} Hz", cut_text(wet.depth_below_passband_db),
             "no -3 dB band" if math.isnan(wet.q) else f"{wet.q:.3f}",
             f"{db_text(wet.passband_low_db)} / {db_text(wet.passband_high_db)} dB"]]
    if network.mix < 1.0 or network.depth_pot_ohms is not None:
        at_mix = measure(network.response)
        how = f"pot at {network.mix:.2f}" if network.depth_pot_ohms is not None else f"mix {network.mix:.2f}"
        rows.append([f"whole circuit, {how}", f"{at_mix.notch_hz:.2f} Hz",
                     f"{at_mix.depth_below_passband_db:.1f} dB of cut at the notch", "-",
                     f"{db_text(at_mix.passband_low_db)} / {db_text(at_mix.passband_high_db)} dB"])
    if design is not None:
        rows.append([f"at the target {design.target_hz:.2f} Hz", f"{100 * design.notch_error:+.3f} % off",
                     f"{design.target_cut_db:.1f} dB of cut at the target (full notch)", "-", "-"])
    return rows


def depth_control_text(network: TwinT) -> list[str]:
    """How the depth control is wired, with its values (as on the schematic)."""
    if network.depth_pot_ohms is not None:
        return [f"RV1, a {parts.format_value(network.depth_pot_ohms, 'resistance')} linear (B law) pot, runs from "
                "the network input to the notched signal (buffered); its wiper feeds a follower (the output). "
                f"Wiper at the notched end is the full notch; the figures use {network.mix:.2f} of the travel."]
    mix = network.mix
    rf = parts.format_value(MIXER_FEEDBACK_OHMS, "resistance")
    if mix >= 1.0:
        return ["No depth control: the output is the full notch. For a variable depth, build the op-amp mixer "
                f"(inverting summer, feedback {rf}, dry input Rf/(1-mix), wet input Rf/mix, then a unity "
                "inverter) or a pot between the input and the buffered output (see the README)."]
    dry, wet = MIXER_FEEDBACK_OHMS / (1 - mix), MIXER_FEEDBACK_OHMS / mix
    near = [parts.nearest_preferred(v, "E96") for v in (dry, wet)]
    near_mix = MIXER_FEEDBACK_OHMS / near[1]
    return [f"Op-amp mixer at mix {mix:.3f}: an inverting summer with feedback {rf}, dry input "
            f"{parts.format_value(dry, 'resistance', 4)} (Rf/(1-mix)) fed from the input, wet input "
            f"{parts.format_value(wet, 'resistance', 4)} (Rf/mix) fed from the notched signal, then a unity "
            f"inverter ({rf}/{rf}) to restore the polarity; over an exact null the level at the notch is "
            f"{-20 * math.log10(1 - mix):.1f} dB down (20 log10(1 - mix)).",
            f"The mixer resistors are not preferred values: use 0.1 % parts of these values, or E96 "
            f"{parts.format_value(near[0], 'resistance')} and {parts.format_value(near[1], 'resistance')} "
            f"(mix about {near_mix:.3f})."]


def title_rows(title_block: dict | None) -> list[list[str]]:
    block = {"circuit": "(parts given on the command line)", "speaker": "-",
             "date": datetime.date.today().isoformat(), "emulate version": __version__} | (title_block or {})
    return [[key, str(value)] for key, value in block.items()]


def compose(network: TwinT, *, tolerances, design=None, tolerance_result=None, trim=None,
            title: str = DEFAULT_TITLE, title_block: dict | None = None, notes=None) -> list[Block]:
    """The sheet as blocks (pictures named as in ``PICTURES``); ``notes`` maps a heading to lines."""
    blocks = [Block("h1", title),
              Block("table", (["", ""], title_rows(title_block))),
              Block("caution", CAUTIONS),
              Block("h2", "Schematic"),
              Block("svg", PICTURES["schematic_svg"]),
              Block("p", f"Beside this sheet: {PICTURES['schematic_png']} (the same drawing) and "
                         f"{NETLIST_FILE} (the netlist, below)."),
              Block("h2", "Parts"),
              Block("table", (PARTS_HEADER, parts_rows(network, tolerances, design))),
              Block("p", "Two equal parts in parallel (or in series) are a normal way to make R3 = R/2 and "
                         "C3 = 2C. Capacitors: film in the signal path; C0G/NP0 ceramics only for small values; "
                         "never high-k ceramics (X7R, Y5V) in the signal path. Match C1, C2 and C3 from one "
                         "batch if you can."),
              Block("h2", "Assumed around it"),
              Block("table", (["", ""], assumed_rows(network))),
              Block("h2", "What it does"),
              Block("table", (["", "notch", "depth", "Q", "passband low / high"], _figures_rows(network, design))),
              Block("p", "Depths are dB of cut: how far the level at the notch lies below the passband "
                         "(positive = quieter)."),
              *([Block("p", line) for line in _divider_text(network, design, tolerances)]),
              *(_hum_blocks(design)),
              Block("image", (PICTURES["response"], "analog and digital response"))]
    if network.is_active:
        blocks.append(Block("p", margin_warning(network)))
    if tolerance_result is not None:
        blocks += _tolerance_blocks(tolerance_result)
    if trim is not None:
        blocks += [Block("h2", "Trim (optional)"), Block("p", trim.describe()),
                   Block("p", "To trim the null, build R3 from these two parts instead of the R3 above:"),
                   Block("table", (PARTS_HEADER, trim_rows(trim, tolerances))),
                   Block("p", f"Where: {trim.where}. Settings needed {trim.setting_range_ohms[0]:.0f}-"
                              f"{trim.setting_range_ohms[1]:.0f} ohms. Trim by ear or on a meter at the null "
                              "with a test tone. R3 restores the depth only: the notch frequency still "
                              f"spreads {trim.notch_hz['p5']:.0f}-{trim.notch_hz['p95']:.0f} Hz (p5-p95) "
                              "with the capacitor mismatch; re-centring it needs R1 and R2 trimmed together.")]
    for heading, lines in (notes or {}).items():  # level plan, noise, drift (emulate.cli.build)
        blocks += [Block("h2", heading), Block("list", tuple(lines))]
    blocks += [Block("h2", "Depth control"), Block("list", depth_control_text(network)),
               Block("h2", "Netlist"),
               Block("p", "One element a line (designator, nodes, value); op-amps as voltage-controlled "
                          "sources of high open-loop gain wired as drawn; paste it into any circuit simulator."),
               Block("pre", netlist_text(_whole(network, design), title))]
    return blocks


def _hum_blocks(design) -> list[Block]:
    if design is None or design.meets_hum_cut:
        return []
    return [Block("note", (f"Only {design.target_cut_db:.1f} dB of cut at the hum frequency "
                              f"{design.target_hz:g} Hz with these parts (a hum notch needs "
                              f"{HUM_MIN_CUT_DB:g} dB). Nearest fix:", *design.fix.lines()))]




def _tolerance_blocks(result) -> list[Block]:
    notch, depth = result.percentiles(result.notch_hz), result.percentiles(result.depth_db)
    low, high = result.corners.notch_range_hz
    ranking = ", ".join(s.part for s in result.sensitivity())
    return [Block("h2", "Tolerances"),
            Block("p", f"{result.draws} builds, {result.tolerances.describe()}, seed {result.seed}; every part "
                       "varies, the bootstrap divider included. Network alone at full notch."),
            Block("table", (["", "5 %", "median", "95 %"],
                            [["notch (Hz)", *(f"{notch[k]:.1f}" for k in ("p5", "p50", "p95"))],
                             ["depth (dB of cut)", *(f"{depth[k]:.1f}" for k in ("p5", "p50", "p95"))]])),
            Block("p", f"Yield {result.yield_fraction:.1%} at {result.spec_db:g} dB of cut. "
                       f"Worst corner {result.corners.worst_depth_db:.1f} dB of cut; notch {low:.1f}-{high:.1f} Hz "
                       f"over all {len(result.corners.signs)} corners. Parts by influence on depth: {ranking}."),
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
        elif block.kind in ("caution", "note"):
            head = "> **Caution.**" if block.kind == "caution" else "> **Design note.**"
            out.append("\n".join([head, ">", *(f"> - {item}" for item in block.content)]))
        elif block.kind == "table":
            header, rows = block.content
            out.append("\n".join(["| " + " | ".join(header) + " |", "|" + "---|" * len(header),
                                  *("| " + " | ".join(row) + " |" for row in rows)]))
        elif block.kind == "image":
            name, alt = block.content
            out.append(f"![{alt}]({name})")
        elif block.kind == "svg":
            out.append(f"![schematic]({PICTURES['schematic_png']})")
        elif block.kind == "pre":
            out.append("```\n" + block.content.rstrip() + "\n```")
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
        elif block.kind == "note":
            out.append('<div class="note"><strong>Design note.</strong><ul>'
                       + "".join(f"<li>{e(i)}</li>" for i in block.content) + "</ul></div>")
        elif block.kind == "table":
            header, rows = block.content
            head = "<tr>" + "".join(f"<th>{e(h)}</th>" for h in header) + "</tr>" if any(header) else ""
            out.append("<table>" + head
                       + "".join("<tr>" + "".join(f"<td>{e(c)}</td>" for c in row) + "</tr>" for row in rows)
                       + "</table>")
        elif block.kind == "image":
            name, alt = block.content
            data = base64.b64encode((folder / name).read_bytes()).decode("ascii")
            out.append(f'<p><img alt="{e(alt)}" src="data:image/png;base64,{data}"></p>')
        elif block.kind == "svg":
            svg = (folder / block.content).read_text(encoding="utf-8")
            out.append('<div class="schematic">' + svg[svg.index("<svg"):] + "</div>")
        elif block.kind == "pre":
            out.append(f"<pre>{e(block.content)}</pre>")
    title = e(next(b.content for b in blocks if b.kind == "h1"))
    return (f'<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8"><title>{title}</title>'
            f"<style>{_CSS}</style></head><body>\n" + "\n".join(out) + "\n</body></html>\n")


# --- 5. publish ------------------------------------------------------------------

def check_out_dir(out_dir, force: bool) -> None:
    """Raise BadValueError unless ``out_dir`` may be written: its parent exists; new, empty, or ``force``."""
    out_dir = Path(out_dir)
    if not out_dir.parent.is_dir():
        raise BadValueError(f"{out_dir}: folder {out_dir.parent} does not exist")
    files.check_new_folder(out_dir, force=force)


def write_sheet(out_dir, network: TwinT, *, tolerances, design=None, tolerance_result=None, trim=None,
                title: str = DEFAULT_TITLE, fs: float = 48000.0, force: bool = False,
                title_block: dict | None = None, notes=None) -> Path:
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
    trim : emulate.analog.trim.TrimSuggestion, optional
        Adds the R3 trim (fixed part and trimmer) as an alternative R3.
    title : str
        The sheet's heading.
    fs : float
        Sample rate of the digital overlay, Hz.
    force : bool
        Replace a non-empty ``out_dir`` (only after the new sheet is complete).
    title_block : dict, optional
        ``circuit`` (preset or circuit name), ``speaker``; the date and the
        emulate version are added.
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
    ['circuit.cir', 'response.png', 'schematic.png', 'schematic.svg', 'sheet.html', 'sheet.md']
    """
    out_dir = Path(out_dir)
    check_out_dir(out_dir, force)
    blocks = compose(network, tolerances=tolerances, design=design, tolerance_result=tolerance_result,
                     trim=trim, title=title, title_block=title_block, notes=notes)
    # the whole folder is written beside out_dir, then swapped in (an old one removed after)
    from emulate.report import plots, schematic  # matplotlib: loaded only when the pictures are drawn

    with atomic_path(out_dir, mode=0o755) as temporary:  # a sheet is for sharing
        temporary.mkdir()
        label = (title_block or {}).get("circuit")
        plots.plot_response(network, temporary / PICTURES["response"], fs=fs, label=label)
        drawing_title = f"{label}: {plots.circuit_words(network)}" if label else title
        schematic.draw_schematic(network, temporary, makeup=_makeup_for(network, design),
                                 divider=divider_of(network, design), title=drawing_title)
        (temporary / NETLIST_FILE).write_text(next(b.content for b in blocks if b.kind == "pre"), encoding="utf-8")
        if tolerance_result is not None:
            plots.plot_tolerance(tolerance_result, temporary / PICTURES["tolerance"], label=label)
        (temporary / "sheet.md").write_text(render_markdown(blocks), encoding="utf-8")
        (temporary / "sheet.html").write_text(render_html(blocks, temporary), encoding="utf-8")
    return out_dir
