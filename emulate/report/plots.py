"""Pictures: PNG or SVG charts (by the file's suffix) for the build sheet and the command line.

Every chart is drawn on a bare :class:`matplotlib.figure.Figure` with the Agg
canvas (headless, no global pyplot state), in one house style: white ground,
light grid, log frequency axes in Hz, levels in dB, ``FIG_SIZE_PX`` pixels.
Each function writes one PNG atomically (a temporary file beside ``path``,
then a rename) and returns the path.  Nothing here measures anything new: the
numbers come from :mod:`emulate.analog.response`, :mod:`emulate.analog.tolerance`,
:mod:`emulate.dsp.emulation` and the caller's rows.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from emulate.audio.spectrum import average_power_density
from emulate.errors import BadValueError
from emulate.files import atomic_path, check_picture_path
from emulate.analog.parts import format_value
from emulate.analog.response import db, measure
from emulate.dsp.digital import worst_error_db
from emulate.report.summary import cut_text

__all__ = ["FIG_SIZE_PX", "DPI", "FLOOR_DB", "SWEEP_KEYS", "circuit_words", "digital_response",
           "plot_response", "plot_tolerance", "plot_take_spectrum", "plot_sweep", "plot_measured",
           "plot_finding"]

FIG_SIZE_PX = (1200, 800)
DPI = 100
FLOOR_DB = -120.0  # charts stop here; deeper nulls are drawn at the floor
SWEEP_KEYS = ("notch_hz", "sibilance_reduction_db", "loudness_change_db", "intelligibility_cost")
_INK, _ANALOG, _DIGITAL, _BAND, _MARK = "#1d2733", "#1f5fa8", "#d9822b", "#9ab7d9", "#b8323c"
_STYLE = {
    "font.size": 12, "axes.titlesize": 14, "axes.labelsize": 12, "axes.edgecolor": "#8a939c",
    "axes.grid": True, "grid.color": "#e3e7eb", "grid.linewidth": 0.8, "axes.spines.top": False,
    "axes.spines.right": False, "lines.linewidth": 2.0, "legend.frameon": False,
    "text.color": _INK, "axes.labelcolor": _INK, "xtick.color": _INK, "ytick.color": _INK,
}


# --- shared drawing -------------------------------------------------------------

def _figure(rows: int = 1) -> tuple[Figure, list]:
    import matplotlib

    with matplotlib.rc_context(_STYLE):
        figure = Figure(figsize=(FIG_SIZE_PX[0] / DPI, FIG_SIZE_PX[1] / DPI), dpi=DPI)
        FigureCanvasAgg(figure)
        axes = figure.subplots(rows, 1, sharex=True, squeeze=False)[:, 0].tolist()
    return figure, axes


def _frequency_axis(ax, band_hz) -> None:
    """Log frequency in Hz, ticks written as the trade writes them (100, 1k, 6k)."""
    from matplotlib.ticker import FuncFormatter

    ax.set_xscale("log")
    ax.set_xlim(*band_hz)
    ax.set_xlabel("frequency (Hz)")
    ax.xaxis.set_major_formatter(FuncFormatter(_hz_label))
    if band_hz[1] / band_hz[0] < 30:
        ax.xaxis.set_minor_formatter(FuncFormatter(_hz_label))


def _hz_label(value: float, _position=None) -> str:
    return format_value(float(value), None, 2) if value > 0 else ""


def _save(figure: Figure, path) -> Path:
    """Write the picture atomically as PNG or SVG (by the suffix); refuses anything else."""
    import matplotlib

    path = check_picture_path(path)
    with atomic_path(path, mode=0o644) as temporary, matplotlib.rc_context(_STYLE):  # for reading by all
        figure.savefig(temporary, format=path.suffix.lower().lstrip("."), dpi=DPI, facecolor="white")
    return path


def circuit_words(network) -> str:
    """e.g. ``passive twin-T, full notch`` or ``active twin-T (K 0.75), mix 0.60``."""
    kind = "passive twin-T" if not network.is_active else f"active twin-T (K {network.bootstrap:.4g})"
    if network.depth_pot_ohms is not None:
        return f"{kind}, depth pot at {network.mix:.2f}"
    return f"{kind}, " + ("full notch" if network.mix >= 1.0 else f"mix {network.mix:.2f}")


def _shallow_floor(depth_db: float) -> float:
    """The y axis bottom: 6 dB under the dip, at least 12 dB down, at most the chart floor."""
    return max(FLOOR_DB, min(-12.0, -depth_db - 6.0))


def _legend_away_from(ax, notch_hz: float, band_hz) -> None:
    """Legend in the lower corner away from the notch marker."""
    centre = math.sqrt(band_hz[0] * band_hz[1])
    ax.legend(loc="lower left" if notch_hz > centre else "lower right")


def _level_db(h) -> np.ndarray:
    return np.maximum(db(h), FLOOR_DB)


# --- response ---------------------------------------------------------------------

def digital_response(network, fs: float, f_hz) -> tuple[np.ndarray, float]:
    """The emulation's complex response at ``f_hz`` (Hz) and its fidelity figure (dB).

    What :func:`emulate.dsp.emulation.processor_for` renders (mix and depth control
    included), evaluated from its second-order sections in one vectorised call
    (:meth:`emulate.dsp.processor.NotchProcessor.frequency_response`), with its
    whole samples of latency taken out as every render takes them out (else its
    phase would trail the analog one by 360 f N / fs degrees).
    """
    from emulate.dsp.emulation import processor_for

    processor = processor_for(network)
    processor.prepare(fs, 1)
    f_hz = np.asarray(f_hz, float)
    unlag = np.exp(2j * np.pi * f_hz * processor.latency_samples / fs)
    return processor.frequency_response(f_hz) * unlag, processor.fidelity_db


def plot_response(network, path, fs: float | None = None, label: str | None = None) -> Path:
    """Analog magnitude and phase of ``network``, with the digital emulation at ``fs`` overlaid.

    The title names the circuit (``label``, e.g. a preset) and its mix; the
    fidelity caption sits under the chart, clear of the legend and the notch marker.

    Parameters
    ----------
    network : TwinT
        The network (one value per part).
    path : str or Path
        PNG or SVG to write (by the suffix; its folder must exist).
    fs : float, optional
        Sample rate, Hz; None draws the analog response alone.
    label : str, optional
        What the circuit is (a preset or circuit name) for the title.

    Raises
    ------
    BadValueError : the folder does not exist, or ``fs`` is not allowed.

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> import tempfile, pathlib
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "r.png"
    >>> plot_response(TwinT.balanced(1000.0, r_ohms=10e3), out).stat().st_size > 10000
    True
    """
    check_picture_path(path)
    metrics = measure(network.response)
    top = 20000.0 if fs is None else min(20000.0, 0.49 * fs)
    f = np.unique(np.concatenate([np.geomspace(10.0, top, 1500),
                                  metrics.notch_hz * np.geomspace(0.9, 1.1, 300)]))
    f = f[(f >= 10.0) & (f <= top)]
    h = network.response(f)
    figure, (mag, phase) = _figure(2)
    mag.plot(f, _level_db(h), color=_ANALOG, label="analog (exact)")
    phase.plot(f, np.degrees(np.angle(h)), color=_ANALOG)
    title = (f"{label + ': ' if label else ''}{circuit_words(network)}\n"
             f"notch {metrics.notch_hz:.1f} Hz, {cut_text(metrics.depth_below_passband_db)}")
    if fs is not None:
        h_d, fidelity = digital_response(network, fs, f)
        mag.plot(f, _level_db(h_d), color=_DIGITAL, linestyle="--", label=f"digital at {fs:g} Hz")
        phase.plot(f, np.degrees(np.angle(h_d)), color=_DIGITAL, linestyle="--")
        figure.text(0.01, 0.005, f"digital worst error {worst_error_db(h[f >= 20.0], h_d[f >= 20.0]):.3f} dB (20 Hz-{top:.0f} Hz, "
                    f"where analog above -30 dB); wet path {fidelity:.3f} dB", color=_DIGITAL, fontsize=11,
                    va="bottom")
    mag.axvline(metrics.notch_hz, color=_MARK, linewidth=1.0, linestyle=":")
    mag.set_ylabel("gain (dB)")
    mag.set_ylim(_shallow_floor(metrics.depth_below_passband_db), 3.0)
    mag.set_title(title)
    _legend_away_from(mag, metrics.notch_hz, (10.0, top))
    phase.set_ylabel("phase (degrees)")
    phase.set_ylim(-100, 100)
    _frequency_axis(phase, (10.0, top))
    return _save(figure, path)


# --- tolerance ----------------------------------------------------------------------

def plot_tolerance(result, path, label: str | None = None) -> Path:
    """Percentile envelope (5-95 %, median) of the built responses around the nominal.

    Parameters
    ----------
    result : emulate.analog.tolerance.ToleranceResult
    path : str or Path
        PNG to write.

    Raises
    ------
    BadValueError : the folder does not exist.

    Example
    -------
    >>> from emulate.analog import tolerance
    >>> from emulate.analog.networks import TwinT
    >>> import tempfile, pathlib
    >>> r = tolerance.monte_carlo(TwinT.balanced(1000.0, r_ohms=10e3), tolerance.Tolerances(0.01, 0.05), draws=200)
    >>> plot_tolerance(r, pathlib.Path(tempfile.mkdtemp()) / "t.png").suffix
    '.png'
    """
    check_picture_path(path)
    f0 = result.nominal_notch_hz
    # 600 points (about 100 a third of an octave, five times as many near the notch) draw the
    # band as smoothly as twice as many; the envelope's cost is builds x points
    f = np.unique(np.concatenate([np.geomspace(f0 / 8, f0 * 8, 450), f0 * np.geomspace(0.9, 1.1, 150)]))
    envelope = result.envelope(f)
    nominal = result.nominal.response(f)
    figure, (ax,) = _figure(1)
    ax.fill_between(f, envelope["p5"], envelope["p95"], color=_BAND, alpha=0.7, label="5-95 % of builds")
    ax.plot(f, envelope["p50"], color=_ANALOG, label="median (per frequency)")
    ax.plot(f, _level_db(nominal), color=_INK, linewidth=1.0, linestyle="--", label="nominal parts")
    depth = result.percentiles(result.depth_db)
    ax.set_title(f"{label + ': ' if label else ''}{circuit_words(result.nominal)}, {result.draws} builds, "
                 f"{result.tolerances.describe()}\ndepth {depth['p5']:.0f} / {depth['p50']:.0f} / "
                 f"{depth['p95']:.0f} dB of cut (5/50/95 %), yield {result.yield_fraction:.1%} at "
                 f"{result.spec_db:g} dB", fontsize=12)
    ax.set_ylabel("gain (dB)")
    ax.set_ylim(_shallow_floor(depth["p95"]), 3.0)
    ax.legend(loc="lower left")
    _frequency_axis(ax, (f[0], f[-1]))
    return _save(figure, path)


# --- takes ----------------------------------------------------------------------------

def _average_spectrum_db(take, fs: float):
    """Welch-averaged level per band of a take (an array or a file, streamed), dB re full scale."""
    f, density = average_power_density(take, fs)
    return f[1:], 10 * np.log10(np.maximum(density[1:] * fs / 2, 1e-20))


def plot_take_spectrum(dry, wet, fs: float, path, notch_hz=None, band_hz=None, label: str | None = None) -> Path:
    """A take's averaged spectrum before (dry) and after (wet) the notch.

    Parameters
    ----------
    dry, wet : ndarray, (frames, channels) float, or str or Path
        The take before and after, as samples or as sound files at ``fs`` (read a
        chunk at a time: memory does not grow with their length); channels are
        averaged (Welch, 8192-point Hann; :mod:`emulate.audio.spectrum`).
        ``wet`` may be None: the take alone (e.g. where its sibilance sits).
    fs : float
        Sample rate, Hz (> 0).
    path : str or Path
        PNG to write.
    notch_hz : float, optional
        Marked with a line.
    band_hz : (lo, hi), optional
        A band (the sibilance band) shaded, Hz.
    label : str, optional
        The take and the circuit and mix it went through, for the title.

    Raises
    ------
    BadValueError : a bad take, rate or folder.

    Example
    -------
    >>> import tempfile, pathlib
    >>> x = np.random.default_rng(0).normal(size=(48000, 1)) * 0.1
    >>> plot_take_spectrum(x, 0.5 * x, 48000, pathlib.Path(tempfile.mkdtemp()) / "s.png").suffix
    '.png'
    """
    if not (isinstance(fs, (int, float)) and math.isfinite(fs) and fs > 0):
        raise BadValueError(f"sample rate {fs!r} Hz: allowed a finite rate > 0")
    check_picture_path(path)
    f, before = _average_spectrum_db(dry, fs)
    figure, (ax,) = _figure(1)
    if band_hz is not None:
        ax.axvspan(*band_hz, color=_BAND, alpha=0.35, label=f"band {band_hz[0]:.0f}-{band_hz[1]:.0f} Hz")
    ax.plot(f, before, color=_INK, linewidth=1.4, label="the take" if wet is None else "before (dry)")
    if wet is not None:
        ax.plot(f, _average_spectrum_db(wet, fs)[1], color=_DIGITAL, linewidth=1.6, label="after (wet)")
    if notch_hz is not None:
        ax.axvline(notch_hz, color=_MARK, linewidth=1.2, linestyle=":", label=f"notch {notch_hz:.0f} Hz")
    ax.set_ylabel("level (dB re full scale, per band)")
    ax.set_title(f"averaged spectrum: {label}" if label else "averaged spectrum of the take")
    ax.legend(loc="lower left")
    _frequency_axis(ax, (max(20.0, f[0]), min(20000.0, fs / 2)))
    return _save(figure, path)


# --- sweep ------------------------------------------------------------------------------

def _check_rows(rows) -> list[dict]:
    rows = list(rows)
    if not rows:
        raise BadValueError("sweep rows: need at least one row")
    for i, row in enumerate(rows):
        missing = [key for key in SWEEP_KEYS if key not in row]
        if missing:
            raise BadValueError(f"sweep row {i}: missing {', '.join(missing)}; each row needs {', '.join(SWEEP_KEYS)}")
    return sorted(rows, key=lambda row: float(row["notch_hz"]))


def plot_sweep(rows, path, *, x: str = "notch_hz") -> Path:
    """Sweep summary: per setting, sibilance-band reduction, loudness change and intelligibility cost.

    Parameters
    ----------
    rows : iterable of dict
        Keys ``notch_hz`` (Hz), ``sibilance_reduction_db`` (dB), ``loudness_change_db``
        (dB) and ``intelligibility_cost`` (0..1, SII-weighted); a row with
        ``pick=True`` is marked.
    path : str or Path
        PNG to write.
    x : str
        What the sweep stepped, the row key on the horizontal axis: ``notch_hz`` (log
        frequency axis), ``mix`` or ``q`` (linear and log axes).

    Raises
    ------
    BadValueError : no rows, a row without a key, or a bad folder.

    Example
    -------
    >>> import tempfile, pathlib
    >>> rows = [{"notch_hz": f, "sibilance_reduction_db": 3.0, "loudness_change_db": -0.5,
    ...          "intelligibility_cost": 0.01, "pick": f == 6000} for f in (5000, 6000, 7000)]
    >>> plot_sweep(rows, pathlib.Path(tempfile.mkdtemp()) / "w.png").suffix
    '.png'
    """
    rows = _check_rows(rows)
    check_picture_path(path)
    f = np.array([float(row[x]) for row in rows])
    figure, (levels, cost) = _figure(2)
    levels.plot(f, [row["sibilance_reduction_db"] for row in rows], "o-", color=_ANALOG,
                label="sibilance-band cut (dB, positive = quieter)")
    levels.plot(f, [row["loudness_change_db"] for row in rows], "s--", color=_DIGITAL,
                label="loudness change (gain, dB)")
    cost.plot(f, [100.0 * row["intelligibility_cost"] for row in rows], "d-", color=_INK, label="speech cost")
    for row in rows:
        if row.get("pick"):
            for ax in (levels, cost):
                ax.axvline(float(row[x]), color=_MARK, linewidth=1.2, linestyle=":")
            levels.annotate(f"pick: {_SWEEP_AXES[x][1].format(float(row[x]))}", (float(row[x]),
                            row["sibilance_reduction_db"]), textcoords="offset points", xytext=(8, 8),
                            color=_MARK)
    levels.set_ylabel("dB")
    levels.set_title(f"{_SWEEP_AXES[x][0]} sweep: what each setting does to the take")
    levels.legend(loc="best")
    cost.set_ylabel("speech cost (%, SII-weighted)")
    cost.legend(loc="best")
    if x == "notch_hz":
        _frequency_axis(cost, (f.min() / 1.1, f.max() * 1.1))
    elif x == "q":
        cost.set_xscale("log")
    cost.set_xlabel(_SWEEP_AXES[x][2])
    return _save(figure, path)


_SWEEP_AXES = {"notch_hz": ("notch", "{:.0f} Hz", "notch frequency (Hz)"),
               "mix": ("mix", "mix {:.2f}", "mix (wet share, 0..1)"),
               "q": ("Q", "Q {:g}", "Q")}


def plot_measured(f_hz, measured_db, model_db, fitted_db, path, *, title: str = "measured and model") -> Path:
    """Overlay of a measured response (gain fitted out), the model and the fitted build, in dB.

    Parameters
    ----------
    f_hz : array_like
        Frequencies, Hz (rising).
    measured_db, model_db, fitted_db : array_like
        The measurement, the model of the build as designed, and the model with
        the fitted part values (None to leave it out), dB at ``f_hz``.
    path : str or Path
        PNG to write (its folder must exist).

    Raises
    ------
    BadValueError : the folder does not exist.

    Example
    -------
    >>> import tempfile, pathlib
    >>> out = pathlib.Path(tempfile.mkdtemp()) / "m.png"
    >>> f = np.geomspace(50, 15000, 50)
    >>> plot_measured(f, -f / 1e3, -f / 1e3, None, out).stat().st_size > 10000
    True
    """
    figure, (ax,) = _figure(1)
    ax.plot(f_hz, np.maximum(measured_db, FLOOR_DB), color=_INK, label="measured")
    ax.plot(f_hz, np.maximum(model_db, FLOOR_DB), color=_ANALOG, linestyle="--", label="model as designed")
    if fitted_db is not None:
        ax.plot(f_hz, np.maximum(fitted_db, FLOOR_DB), color=_DIGITAL, linestyle=":", label="model, fitted parts")
    _frequency_axis(ax, (float(f_hz[0]), float(f_hz[-1])))
    ax.set_ylabel("gain (dB)")
    ax.set_title(title)
    ax.legend(loc="lower left")
    return _save(figure, path)


# --- finders ------------------------------------------------------------------------------

def plot_finding(curves, path, *, title: str, ylabel: str, band_hz=None, marks=(), f_range_hz=None) -> Path:
    """What a finder saw: spectra (or lines) against frequency, the band and the notches marked.

    Parameters
    ----------
    curves : dict
        ``label -> (f_hz, values)``; a label starting with ``"*"`` is drawn as points.
    path : str or Path
        PNG to write.
    title, ylabel : str
    band_hz : (lo, hi), optional
        Shaded.
    marks : iterable of (float, str)
        Frequencies (Hz) marked with a dotted line and a legend entry.
    f_range_hz : (lo, hi), optional
        Frequency axis range; default the curves' positive range.

    A finder that found nothing passes curves of no finite points (labelled, e.g.
    ``"(no hum)"``): the chart is drawn empty with that label, over ``f_range_hz``.

    Raises
    ------
    BadValueError : a bad folder.

    Example
    -------
    >>> import tempfile, pathlib
    >>> f = np.geomspace(100, 10000, 50)
    >>> plot_finding({"take": (f, -f / 1000)}, pathlib.Path(tempfile.mkdtemp()) / "f.png",
    ...              title="t", ylabel="dB", marks=[(1000.0, "notch")]).suffix
    '.png'
    """
    curves = {label: (np.asarray(f, float), np.asarray(y, float)) for label, (f, y) in curves.items()}
    shown = [f[(f > 0) & np.isfinite(y)] for f, y in curves.values()]
    figure, (ax,) = _figure(1)
    if not any(s.size for s in shown):  # the finder found nothing: an empty frame that says so
        ax.text(0.5, 0.5, " / ".join(curves) or "nothing found", transform=ax.transAxes, ha="center")
        shown = [np.array(f_range_hz or (20.0, 20000.0))]
    if band_hz is not None:
        ax.axvspan(*band_hz, color=_BAND, alpha=0.35, label=f"band {band_hz[0]:.0f}-{band_hz[1]:.0f} Hz")
    for (label, (f, y)), colour in zip(curves.items(), (_INK, _DIGITAL, _ANALOG, "#6c7a89")):
        keep = (f > 0) & np.isfinite(y)
        if label.startswith("*"):
            ax.plot(f[keep], y[keep], "o", color=colour, label=label[1:])
        else:
            ax.plot(f[keep], y[keep], color=colour, linewidth=1.4, label=label)
    for f_mark, label in marks:
        ax.axvline(f_mark, color=_MARK, linewidth=1.2, linestyle=":", label=label)
    ax.set_ylabel(ylabel)
    ax.set_title(title)
    if ax.get_legend_handles_labels()[0]:
        ax.legend(loc="best")
    every = np.concatenate([s for s in shown if s.size])
    _frequency_axis(ax, f_range_hz or (float(every.min()), float(every.max())))
    return _save(figure, path)
