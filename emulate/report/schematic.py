"""The schematic of the whole circuit, drawn by our own code: SVG for the sheet, PNG beside it.

The drawing follows :func:`emulate.report.netlist.whole_circuit` part for part
(the same designators and values) in a fixed left-to-right layout:

* input: the source terminal, then the assumed source resistance RS or the
  input buffer;
* the twin-T: R1, R2 along the top row, C1, C2 along the row below, C3 and R3
  down to the common foot (ground for the passive network; a wire that crosses a
  row without a dot does not connect, as on any schematic);
* active: the output follower, the bootstrap divider R4/R5 and the follower that
  drives the foot;
* the assumed load RL, the output buffer where the sheet needs one;
* the depth control: the op-amp mixer (inverting summer fed from the input and
  the notched signal, then a unity inverter) or the pot RV1 with its wiper
  follower; then the output terminal.

Trade symbols (IEC-style rectangles for resistors, two plates for capacitors,
triangles for op-amps, the three-bar earth), values as the trade writes them
(4k7, 2n2).  Drawn with matplotlib primitives on an Agg/SVG canvas; sized so the
labels are about 8 pt when the picture is printed across an A4 page.
"""

from __future__ import annotations

import io

import matplotlib
from pathlib import Path

from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.patches import Circle, Polygon, Rectangle

from emulate.analog import parts
from emulate.analog.networks import TwinT
from emulate.errors import BadValueError
from emulate.files import atomic_path
from emulate.report import netlist

__all__ = ["draw_schematic", "schematic_figure", "write_schematic", "svg_text"]

UNIT_INCHES = 0.5  # one layout unit
FONT_PT = 11
_INK = "#1d2733"
_ASSUMED = "#6b7785"
_LINE = 1.6
_SVG_TEXT = {"svg.fonttype": "none", "font.family": "DejaVu Sans"}  # text stays text: searchable, crisp


class _Pen:
    """Drawing primitives on one axes, in layout units."""

    def __init__(self, ax):
        self.ax = ax

    def wire(self, *points, color=_INK):
        xs, ys = zip(*points)
        self.ax.plot(xs, ys, color=color, linewidth=_LINE, solid_capstyle="round", zorder=2)

    def dot(self, x, y):
        self.ax.add_patch(Circle((x, y), 0.09, color=_INK, zorder=4))

    def terminal(self, x, y, text):
        self.ax.add_patch(Circle((x, y), 0.14, facecolor="white", edgecolor=_INK, linewidth=_LINE, zorder=4))
        self.text(x, y - 0.45, text, weight="bold")

    def text(self, x, y, text, ha="center", va="center", color=_INK, weight="normal", size=FONT_PT):
        self.ax.text(x, y, text, ha=ha, va=va, color=color, fontsize=size, fontweight=weight, zorder=5)

    def resistor(self, a, b, label, color=_INK):
        """A rectangle body between points a and b (horizontal or vertical), label beside it."""
        self._two_terminal(a, b, label, color, body="R")

    def capacitor(self, a, b, label, color=_INK, below=False):
        self._two_terminal(a, b, label, color, body="C", below=below)

    def _two_terminal(self, a, b, label, color, body, below=False):
        (xa, ya), (xb, yb) = a, b
        horizontal = ya == yb
        xm, ym = (xa + xb) / 2, (ya + yb) / 2
        half = 0.45 if body == "R" else 0.09
        if horizontal:
            sign = 1 if xb > xa else -1
            self.wire((xa, ya), (xm - sign * half, ym), color=color)
            self.wire((xm + sign * half, ym), (xb, yb), color=color)
        else:
            sign = 1 if yb > ya else -1
            self.wire((xa, ya), (xm, ym - sign * half), color=color)
            self.wire((xm, ym + sign * half), (xb, yb), color=color)
        if body == "R":
            w, h = (0.9, 0.32) if horizontal else (0.32, 0.9)
            self.ax.add_patch(Rectangle((xm - w / 2, ym - h / 2), w, h, facecolor="white", edgecolor=color,
                                        linewidth=_LINE, zorder=3))
        else:
            for offset in (-0.09, 0.09):
                if horizontal:
                    self.wire((xm + offset, ym - 0.3), (xm + offset, ym + 0.3), color=color)
                else:
                    self.wire((xm - 0.3, ym + offset), (xm + 0.3, ym + offset), color=color)
        if horizontal and below:
            self.text(xm, ym - 0.45, label, va="top", color=color)
        elif horizontal:
            self.text(xm, ym + 0.55, label, va="bottom", color=color)
        else:
            self.text(xm + 0.38, ym, label, ha="left", color=color)

    def ground(self, x, y):
        self.wire((x, y), (x, y - 0.25))
        for i, half in enumerate((0.3, 0.19, 0.08)):
            self.wire((x - half, y - 0.25 - 0.1 * i), (x + half, y - 0.25 - 0.1 * i))

    def opamp(self, x, y, label, *, direction=1, inverting_on_signal=False):
        """Triangle with pins at x (signal pin at row y), apex at x + 1.4 direction.

        Returns (apex, other_pin): the output point and the second input pin.
        The signal pin is '+' (a follower) or '-' (an inverting stage).
        """
        d = direction
        other_y = y + 0.5 if not inverting_on_signal else y - 0.5
        top, bottom = max(y, other_y) + 0.35, min(y, other_y) - 0.35
        apex = (x + 1.4 * d, (y + other_y) / 2)
        self.ax.add_patch(Polygon([(x, top), (x, bottom), apex], closed=True, facecolor="white",
                                  edgecolor=_INK, linewidth=_LINE, zorder=3))
        signal_sign, other_sign = ("-", "+") if inverting_on_signal else ("+", "-")
        self.text(x + 0.2 * d, y, signal_sign, size=FONT_PT + 1)
        self.text(x + 0.2 * d, other_y, other_sign, size=FONT_PT + 1)
        self.text(x + 0.55 * d, top + 0.3, label, va="bottom")
        return apex, (x, other_y)

    def follower(self, x, y, label, *, direction=1):
        """A unity follower: output tied back to '-'; returns the output point on row y."""
        d = direction
        apex, minus = self.opamp(x, y, label, direction=d)
        out_x = apex[0] + 0.35 * d
        self.wire(apex, (out_x, apex[1]), (out_x, y))
        loop_y = minus[1] + 0.55
        self.wire((out_x, apex[1]), (out_x, loop_y), (x - 0.3 * d, loop_y), (x - 0.3 * d, minus[1]), minus)
        self.dot(out_x, apex[1])
        return out_x, y


def _label(element: netlist.Element, makeup_text: str | None = None) -> str:
    value = makeup_text or element.written
    return f"{element.designator}\n{value}"


def schematic_figure(network: TwinT, makeup: dict | None = None, divider=None, title: str = "") -> Figure:
    """The schematic as a matplotlib figure (nothing written).

    Example
    -------
    >>> fig = schematic_figure(TwinT.balanced(1000.0, r_ohms=10e3))
    >>> bool(fig.get_figwidth() > 5)
    True
    """
    elements = {e.designator: e for e in netlist.whole_circuit(network, makeup, divider)}
    made = makeup or {}
    figure = Figure()
    FigureCanvasAgg(figure)
    ax = figure.add_axes((0, 0, 1, 1))
    ax.set_aspect("equal")
    ax.axis("off")
    pen = _Pen(ax)
    x = _input_stage(pen, elements, network)
    x = _twin_t(pen, elements, made, network, x)
    x, wet = _after_network(pen, elements, network, x)
    x = _depth_control(pen, elements, network, x, wet)
    pen.terminal(x + 0.6, 1.0, "OUT")
    pen.wire((x, 1.0), (x + 0.6, 1.0))
    packages = sum(e.kind == "opamp" for e in elements.values())
    pen.text(-3.6, -4.5, f"U: unity-gain-stable op-amps, {(packages + 1) // 2} dual package(s), "
             f"+-{netlist.SUPPLY_VOLTS:g} V rails; 100n ceramic from each rail to ground at each package\n"
             f"(C{_decoupling_range(elements)}, not drawn). A || B: two parts in parallel; A+B: in series. "
             "Grey: what the figures assume (not built).", ha="left", va="top", size=FONT_PT - 1)
    if title:
        pen.text(-3.4, 6.6, title, ha="left", weight="bold", size=FONT_PT + 2)
    ax.autoscale_view()
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    y0 = min(y0, -5.4)  # the note under the drawing
    y1 = max(y1, 7.0) if title else y1
    ax.set_xlim(x0 - 0.6, x1 + 0.8)
    ax.set_ylim(y0 - 0.6, y1 + 0.6)
    figure.set_size_inches((x1 - x0 + 1.4) * UNIT_INCHES, (y1 - y0 + 1.2) * UNIT_INCHES)
    return figure


def _decoupling_range(elements) -> str:
    names = [e.designator for e in elements.values() if e.role.startswith("decoupling")]
    return f"{names[0][1:]}-C{names[-1][1:]}" if names else ""


def _text_of(made: dict, name: str) -> str | None:
    m = made.get(name)
    if m is None or m.count == 1:
        return None
    joint = "||" if m.wiring == "parallel" else "+"
    return joint.join(parts.format_value(v, m.kind) for v in m.parts)


def _input_stage(pen: _Pen, elements, network) -> float:
    """IN terminal, then RS (assumed) or the input buffer; returns the network's input x."""
    pen.terminal(-3.6, 1.0, "IN")
    if "RS" in elements:
        pen.resistor((-3.6, 1.0), (-0.8, 1.0), _label(elements["RS"]) + "\n(source, assumed)", color=_ASSUMED)
        pen.wire((-0.8, 1.0), (0.0, 1.0))
    else:
        buffer = next(e for e in elements.values() if e.role.startswith("input buffer"))
        pen.wire((-3.6, 1.0), (-3.0, 1.0))
        out_x, _ = pen.follower(-3.0, 1.0, buffer.designator)
        pen.wire((out_x, 1.0), (0.0, 1.0))
    return 0.0


def _twin_t(pen: _Pen, elements, made, network, x) -> float:
    """The two T's between the input bar at x and the output bar at x + 6."""
    rc, cr, out = x + 3.6, x + 4.4, x + 8.0
    pen.wire((x, 0.0), (x, 2.0))
    pen.dot(x, 1.0)
    pen.resistor((x, 2.0), (rc, 2.0), _position_label(elements, made, "r1"))
    pen.resistor((rc, 2.0), (out, 2.0), _position_label(elements, made, "r2"))
    pen.capacitor((x, 0.0), (cr, 0.0), _position_label(elements, made, "c1"), below=True)
    pen.capacitor((cr, 0.0), (out, 0.0), _position_label(elements, made, "c2"))
    pen.dot(rc, 2.0)
    pen.dot(cr, 0.0)
    # C3 from the R junction down to the foot (crossing the C row: no dot, no connection)
    pen.capacitor((rc, 2.0), (rc, 0.6), "")
    pen.text(rc - 0.4, 1.3, _position_label(elements, made, "c3"), ha="right")
    pen.wire((rc, 0.6), (rc, -1.6))
    pen.resistor((cr, -0.1), (cr, -1.6), _position_label(elements, made, "r3"))
    pen.wire((rc, -1.6), (cr, -1.6))
    pen.dot((rc + cr) / 2, -1.6)
    if not network.is_active:
        pen.wire(((rc + cr) / 2, -1.6), ((rc + cr) / 2, -1.9))
        pen.ground((rc + cr) / 2, -1.9)
    pen.wire((out, 0.0), (out, 2.0))
    pen.dot(out, 1.0)
    return out


def _position_label(elements, made, name: str) -> str:
    designator = name.upper()
    if designator in elements:
        return _label(elements[designator])
    return f"{designator}A/B\n{_text_of(made, name)}"


def _after_network(pen: _Pen, elements, network, x) -> tuple[float, str]:
    """Output follower and bootstrap (active), the assumed load, the output buffer; returns (x, node)."""
    if network.is_active:
        follower = next(e for e in elements.values() if e.role.startswith("output follower"))
        pen.wire((x, 1.0), (x + 0.5, 1.0))
        out_x, _ = pen.follower(x + 0.5, 1.0, follower.designator)
        node_x = out_x + 0.8
        pen.wire((out_x, 1.0), (node_x, 1.0))
        pen.dot(node_x, 1.0)
        pen.resistor((node_x, 1.0), (node_x, -1.85), _label(elements["R4"]))
        pen.resistor((node_x, -1.85), (node_x, -3.6), _label(elements["R5"]))
        pen.ground(node_x, -3.6)
        pen.dot(node_x, -1.85)
        boot = next(e for e in elements.values() if e.role.startswith("bootstrap follower"))
        pin_x = node_x - 1.0
        pen.wire((node_x, -1.85), (pin_x, -1.85))
        apex_x, _ = pen.follower(pin_x, -1.85, boot.designator, direction=-1)
        foot = 4.0
        pen.wire((apex_x, -1.85), (foot, -1.85), (foot, -1.6))
        pen.text(foot + 0.15, -2.15, "foot (K x output)", ha="left", size=FONT_PT - 1)
        x = node_x
    x = _load(pen, elements, x)
    wet = "buf" if network.is_active else "net"
    buffer = next((e for e in elements.values() if e.role.startswith("output buffer")), None)
    if buffer is not None:
        pen.wire((x, 1.0), (x + 0.5, 1.0))
        out_x, _ = pen.follower(x + 0.5, 1.0, buffer.designator)
        x, wet = out_x, "wetbuf"
    return x, wet


def _load(pen: _Pen, elements, x) -> float:
    if "RL" not in elements:
        return x
    node_x = x + 1.7
    pen.wire((x, 1.0), (node_x, 1.0))
    pen.dot(node_x, 1.0)
    pen.resistor((node_x, 1.0), (node_x, -1.0), _label(elements["RL"]) + "\n(load, assumed)", color=_ASSUMED)
    pen.ground(node_x, -1.0)
    pen.wire((node_x, 1.0), (node_x + 1.4, 1.0))  # room for the label before the next stage
    return node_x + 1.4


def _depth_control(pen: _Pen, elements, network, x, wet) -> float:
    if "RV1A" in elements:
        return _pot(pen, elements, network, x)
    mixer = [e for e in elements.values() if e.role.startswith(("mixer", "inverter"))]
    if not mixer:
        pen.text(x + 0.3, 2.2, "full notch\n(no depth control)", ha="left", size=FONT_PT - 1)
        pen.wire((x, 1.0), (x + 1.2, 1.0))
        return x + 1.2
    dry, wet_r, feedback, summer, inverter_in, inverter_fb, inverter = mixer
    sum_x = x + 2.4
    pen.resistor((x, 1.0), (sum_x, 1.0), _label(wet_r))
    # the dry signal, taken at the input terminal, along the top
    pen.wire((-3.6, 1.0), (-3.6, 5.2), (x, 5.2), (x, 3.2))
    pen.dot(-3.6, 1.0)
    pen.resistor((x, 3.2), (sum_x, 3.2), _label(dry))
    pen.wire((sum_x, 3.2), (sum_x, 1.0))
    pen.dot(sum_x, 1.0)
    x_out = _inverting_stage(pen, sum_x, feedback, summer)
    node = x_out + 0.3
    pen.wire((x_out, 1.0), (node, 1.0))
    end = node + 2.2
    pen.resistor((node, 1.0), (end, 1.0), _label(inverter_in))
    pen.dot(end, 1.0)
    return _inverting_stage(pen, end, inverter_fb, inverter)


def _inverting_stage(pen: _Pen, x, feedback, amplifier) -> float:
    """'-' on the signal row at x + 0.4, '+' to ground, feedback resistor above; returns the output x."""
    pen.wire((x, 1.0), (x + 0.4, 1.0))
    apex, plus = pen.opamp(x + 0.4, 1.0, amplifier.designator, inverting_on_signal=True)
    pen.wire(plus, (plus[0] - 0.25, plus[1]), (plus[0] - 0.25, plus[1] - 0.4))
    pen.ground(plus[0] - 0.25, plus[1] - 0.4)
    out_x = apex[0] + 0.4
    pen.wire(apex, (out_x, apex[1]), (out_x, 1.0))
    pen.wire((x, 1.0), (x, 2.6))
    pen.resistor((x, 2.6), (out_x, 2.6), _label(feedback))
    pen.wire((out_x, 2.6), (out_x, 1.0))
    pen.dot(out_x, 1.0)
    return out_x


def _pot(pen: _Pen, elements, network, x) -> float:
    """RV1 from the network input (top) to the notched signal (bottom), the wiper buffered."""
    a, b = elements["RV1A"], elements["RV1B"]
    pot_x = x + 1.8
    pen.wire((x, 1.0), (pot_x, 1.0))
    pen.wire((0.0, 2.0), (0.0, 5.2), (pot_x, 5.2), (pot_x, 4.6))
    pen.resistor((pot_x, 4.6), (pot_x, 1.0), "")
    ohms = network.depth_pot_ohms
    pen.text(pot_x - 0.35, 2.8, f"RV1\n{parts.format_value(ohms, 'resistance')} lin\nwiper {network.mix:.2f}",
             ha="right")
    wiper_x = pot_x + 0.8
    pen.ax.annotate("", xy=(pot_x + 0.18, 2.8), xytext=(wiper_x, 2.8),
                    arrowprops=dict(arrowstyle="-|>", color=_INK, linewidth=_LINE))
    buffer = next(e for e in elements.values() if e.role.startswith("wiper buffer"))
    out_x, _ = pen.follower(wiper_x, 2.8, buffer.designator)
    pen.wire((out_x, 2.8), (out_x + 0.4, 2.8), (out_x + 0.4, 1.0))
    del a, b
    return out_x + 0.4


def write_schematic(figure: Figure, path) -> Path:
    """Write the figure as SVG or PNG (by the suffix), atomically.

    Raises
    ------
    BadValueError : another suffix, or the folder does not exist.
    """
    path = Path(path)
    kind = path.suffix.lower().lstrip(".")
    if kind not in ("svg", "png"):
        raise BadValueError(f"{path}: write a schematic as .svg or .png")
    if not path.parent.is_dir():
        raise BadValueError(f"{path}: folder {path.parent} does not exist")
    with atomic_path(path, mode=0o644) as temporary, matplotlib.rc_context(_SVG_TEXT):
        figure.savefig(temporary, format=kind, dpi=150, facecolor="white")
    return path


def draw_schematic(network: TwinT, folder, *, makeup=None, divider=None, title: str = "",
                   stem: str = "schematic") -> tuple[Path, Path]:
    """Write ``stem.svg`` and ``stem.png`` into ``folder``; returns both paths.

    Example
    -------
    >>> import tempfile
    >>> svg, png = draw_schematic(TwinT.balanced(1000.0, r_ohms=10e3).replace(bootstrap=0.75), tempfile.mkdtemp())
    >>> svg.read_text().lstrip().startswith("<?xml"), png.stat().st_size > 10000
    (True, True)
    """
    figure = schematic_figure(network, makeup, divider, title)
    folder = Path(folder)
    return write_schematic(figure, folder / f"{stem}.svg"), write_schematic(figure, folder / f"{stem}.png")


def svg_text(network: TwinT, *, makeup=None, divider=None, title: str = "") -> str:
    """The schematic as SVG text (for embedding), without its XML prologue."""
    buffer = io.StringIO()
    with matplotlib.rc_context(_SVG_TEXT):
        schematic_figure(network, makeup, divider, title).savefig(buffer, format="svg", facecolor="white")
    text = buffer.getvalue()
    return text[text.index("<svg"):]


