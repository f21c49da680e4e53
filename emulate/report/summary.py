"""Human-readable text and JSON payloads for what the commands measured.

Only formatting lives here: every number comes from the analysis modules.
"""

from __future__ import annotations

import json
import math

import numpy as np

from emulate.analog.design import HUM_MIN_CUT_DB
from emulate.analog.networks import part_kind
from emulate.analog.parts import format_value
from emulate.analog.response import EXACT_NULL_DB, db, is_exact_null

__all__ = ["TABLE_HZ", "IDEAL_NULL_DB", "finite_or_null", "json_text", "network_line", "SEARCH_TEXT",
           "db_text", "cut_text", "depth_text", "metrics_lines", "warning_lines", "table_lines",
           "response_text", "metrics_payload", "table_rows", "design_payload", "design_text",
           "unmeasured_lines", "corner_line", "render_text", "shortfall_lines", "fidelity_payload",
           "digital_payload", "digital_text", "sibilance_payload", "suggestion_line", "sibilance_text",
           "hum_payload", "hum_text", "resonance_payload", "resonance_text", "sweep_text", "preset_payload",
           "preset_list_text", "preset_text", "LISTENING_CAUTION", "demo_payload", "demo_text"]

# ISO 266 preferred octave-band centres, plus the audio band's ends
TABLE_HZ = (20.0, 31.5, 63.0, 125.0, 250.0, 500.0, 1000.0, 2000.0, 4000.0, 8000.0, 16000.0, 20000.0)
IDEAL_NULL_DB = -EXACT_NULL_DB  # table floor: deeper is an exact null


def finite_or_null(value):
    """``value`` with every non-finite float (nan, +-inf) made ``None``, recursively.

    JSON has no nan or inf; an open load or an exact null gives them, so they are
    written as null (``json_text``), never as invalid JSON.

    Example
    -------
    >>> finite_or_null({"depth_db": float("-inf"), "rows": [1.0, float("nan")]})
    {'depth_db': None, 'rows': [1.0, None]}
    """
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {key: finite_or_null(item) for key, item in value.items()}
    if isinstance(value, (list, tuple)):
        return [finite_or_null(item) for item in value]
    return value


def json_text(payload) -> str:
    """The one JSON writer: indented, non-finite numbers as null, other objects as text."""
    return json.dumps(finite_or_null(payload), indent=2, allow_nan=False, default=str)


def rows_as_csv(rows: list[dict]) -> str:
    """A table as CSV text: a header line, one line per row (floats to 6 digits, None empty).

    Cells holding a comma, a quote or a line break are quoted (RFC 4180).

    Example
    -------
    >>> print(rows_as_csv([{"take": "a, b", "db": -1.23456789, "peak": None}]), end="")
    take,db,peak
    "a, b",-1.23457,
    """
    columns = list(rows[0])
    lines = [",".join(columns)]
    lines += [",".join(_csv_cell(row[c]) for c in columns) for row in rows]
    return "\n".join(lines) + "\n"


def _csv_cell(value) -> str:
    text = "" if value is None else f"{value:.6g}" if isinstance(value, float) else str(value)
    return '"' + text.replace('"', '""') + '"' if any(c in text for c in ',"\n\r') else text


def network_line(network) -> str:
    kind = "passive" if not network.is_active else f"active, bootstrap K = {network.bootstrap:.4g}"
    source = format_value(network.source_ohms, "resistance") if network.source_ohms else "ideal"
    load = format_value(network.load_ohms, "resistance") if math.isfinite(network.load_ohms) else "none"
    mix = "" if network.mix == 1.0 else (
        f", depth pot {format_value(network.depth_pot_ohms, 'resistance')} at {network.mix:.2f}"
        if network.depth_pot_ohms else f", wet/dry mix {network.mix:.2f}")
    values = "  ".join(f"{name.upper()} {format_value(v, part_kind(name), 6)}"
                       for name, v in network.parts().items())
    return f"twin-T ({kind}), source {source}, load {load}{mix}\n  {values}"


SEARCH_TEXT = "1 Hz - 200 kHz"  # the band response.measure searches by default


def db_text(value_db: float) -> str:
    """A level or gain in dB with two decimals, never a negative zero (the one dB formatter).

    Example
    -------
    >>> db_text(-0.001), db_text(-3.0103)
    ('0.00', '-3.01')
    """
    return f"{value_db:.2f}".replace("-0.00", "0.00")


def cut_text(depth_below_passband_db: float) -> str:
    """How deep a notch cuts, in words: dB of cut below the passband, or an exact null.

    Example
    -------
    >>> cut_text(42.04), cut_text(300.0)
    ('42.0 dB of cut below the passband', 'exact null (more than 200 dB of cut)')
    """
    if is_exact_null(depth_below_passband_db):
        return f"exact null (more than {EXACT_NULL_DB:.0f} dB of cut)"
    return f"{depth_below_passband_db:.1f} dB of cut below the passband"


def depth_text(metrics) -> str:
    if is_exact_null(metrics.depth_below_passband_db):
        return cut_text(metrics.depth_below_passband_db)
    return f"{cut_text(metrics.depth_below_passband_db)} (gain at the notch {metrics.depth_db:.1f} dB)"


def metrics_lines(metrics) -> list[str]:
    if not metrics.in_range:
        return [f"  notch      no notch in range {SEARCH_TEXT} (the response is lowest at the edge, "
                f"{metrics.notch_hz:.4g} Hz, gain {metrics.depth_db:.1f} dB)",
                f"  passband   {db_text(metrics.passband_low_db)} dB low, {db_text(metrics.passband_high_db)} dB high"]
    width = ("not 3 dB deep: no -3 dB band" if math.isnan(metrics.q) else
             f"-3 dB from {metrics.lower_hz:.1f} Hz to {metrics.upper_hz:.1f} Hz, Q {metrics.q:.3f}")
    return [
        f"  notch      {metrics.notch_hz:.2f} Hz",
        f"  depth      {depth_text(metrics)}",
        f"  width      {width}",
        f"  passband   {db_text(metrics.passband_low_db)} dB low, {db_text(metrics.passband_high_db)} dB high",
    ]


def warning_lines(found) -> list[str]:
    return [f"  ! {item}" for item in found] or ["  no warnings"]


def table_lines(network, notch_hz) -> list[str]:
    rows = ["  f (Hz)      gain (dB)   phase (deg)"]
    for row in table_rows(network, notch_hz):
        mark = "  <- notch" if row["notch"] else ""
        rows.append(f"  {row['f_hz']:>9.1f}   {row['gain_db']:>9.2f}   {row['phase_deg']:>9.1f}{mark}")
    return rows


def response_text(network, metrics, found, stability=None) -> str:
    """The response report; an unstable network gets its oscillation instead of a response."""
    if stability is not None and not stability.stable:
        return "\n".join([network_line(network), f"  {stability.describe()}: it has no steady response; "
                          "lower the bootstrap K or balance the parts", "warnings", *warning_lines(found)])
    lines = [network_line(network), *metrics_lines(metrics), "warnings", *warning_lines(found),
             *table_lines(network, metrics.notch_hz if metrics.in_range else None)]
    return "\n".join(lines)


def metrics_payload(network, metrics, found, stability=None) -> dict:
    payload = metrics.as_dict()  # non-finite numbers become null where JSON is written
    if not metrics.in_range:
        payload["notch"] = f"no notch in range {SEARCH_TEXT}"
    if stability is not None:
        payload["stable"], payload["oscillation_hz"] = stability.stable, stability.oscillation_hz
    payload["warnings"] = [str(item) for item in found]
    payload["active"] = network.is_active
    payload["bootstrap"] = network.bootstrap
    payload["mix"] = network.mix
    payload["parts"] = {name.upper(): format_value(v, part_kind(name), 4) for name, v in network.parts().items()}
    payload["source_ohms"] = float(network.source_ohms)
    payload["load_ohms"] = float(network.load_ohms)  # inf (no load) becomes null
    payload["depth_pot_ohms"] = network.depth_pot_ohms
    payload["exact_null"] = is_exact_null(metrics.depth_below_passband_db)
    payload["table"] = table_rows(network, metrics.notch_hz if metrics.in_range else None)
    return payload


def table_rows(network, notch_hz) -> list[dict]:
    """The response at the ISO 266 octave centres and the notch (None: no notch row): Hz, gain dB
    (floored), phase degrees."""
    f = np.array(sorted({*TABLE_HZ, *([] if notch_hz is None else [notch_hz])}))
    h = network.response(f)
    return [{"f_hz": float(fi), "gain_db": float(max(db(hi), IDEAL_NULL_DB)),
             "phase_deg": float(np.degrees(np.angle(hi))), "notch": bool(fi == notch_hz)} for fi, hi in zip(f, h)]


def design_payload(design, found) -> dict:
    payload = metrics_payload(design.built, design.built_metrics, found)
    payload.update(
        target_hz=design.target_hz, target_q=design.target_q, series=design.series,
        cap_series=design.cap_series, parts=design.parts_as_written(),
        r3_build=design.r3_build, c3_build=design.c3_build,
        notch_error_percent=100 * design.notch_error, target_cut_db=design.target_cut_db,
        parts_per_position=design.parts_per_position, part_count=design.part_count,
        impedance_range_ohms=list(design.impedance_ohms),
        hum_target=design.is_hum, meets_hum_cut=design.meets_hum_cut,
        fix=None if design.fix is None else design.fix.lines(),
        ideal={"parts": {k.upper(): v for k, v in design.ideal.parts().items()},
               "notch_hz": design.ideal_metrics.notch_hz, "q": design.ideal_metrics.q})
    return payload


def design_text(design, found) -> str:
    built, ideal = design.built_metrics, design.ideal_metrics
    q = "passive (Q 0.25)" if design.built.bootstrap is None else f"Q {design.target_q:g}"
    lines = [f"design for a {design.target_hz:.1f} Hz notch, {q}, resistors {design.series}, "
             f"capacitors {design.cap_series}",
             "  part   ideal        as built"]
    written = design.parts_as_written()
    for name, value in design.ideal.parts().items():
        build = written[name.upper()]
        lines.append(f"  {name.upper():<5}  {format_value(value, part_kind(name), 4):<12} {build}")
    if design.divider is not None:
        top, bottom = (format_value(v, "resistance") for v in design.divider)
        k = design.built.bootstrap
        lines.append(f"  bootstrap divider: {top} over {bottom} from the output buffer, K = {k:.4f} "
                     f"(ideal {1 - 1 / (4 * design.target_q):.4f})")
    lines += ["as built", *metrics_lines(built),
              f"  error      notch {100 * design.notch_error:+.3f} % from target "
              f"(ideal parts: {ideal.notch_hz:.2f} Hz, Q {ideal.q:.3f})",
              f"  at target  {design.target_cut_db:.1f} dB of cut at {design.target_hz:.2f} Hz "
              f"(nominal parts, {design.part_count} parts in the network)",
              *_hum_lines(design),
              "warnings", *warning_lines(found)]
    return "\n".join(lines)


def unmeasured_lines(d) -> list[str]:
    """Tolerance run: the oscillating builds and the builds with no notch in range, if any (from ``as_dict``)."""
    lines = []
    if d.get("oscillating_share"):
        low, high = d["oscillation_hz_range"]
        lines.append(f"  ! {d['oscillating_share']:.2%} of builds oscillate ({low:.4g}-{high:.4g} Hz): "
                     "counted as failures; lower the bootstrap K")
    if d.get("no_notch_share"):
        lines.append(f"  ! {d['no_notch_share']:.2%} of builds have no notch in the search band: counted as "
                     "failures and left out of the percentiles")
    return lines


def corner_line(corner) -> str:
    """Tolerance run: the worst corner (of 2^6, or 2^8 with a divider; from ``Corners.as_dict``)."""
    if corner.get("oscillating_corners"):
        return (f"  worst corner oscillates at {corner['worst_oscillation_hz']:.4g} Hz "
                f"({corner['oscillating_corners']} of {corner['corners']} corners oscillate)")
    return (f"  worst corner {corner['worst_depth_below_passband_db']:.1f} dB of cut; notch "
            f"{corner['notch_low_hz']:.1f}-{corner['notch_high_hz']:.1f} Hz over {corner['corners']} corners")


def _hum_lines(design) -> list[str]:
    if not design.is_hum:
        return []
    if design.meets_hum_cut:
        return [f"  hum        cut at the hum frequency is at least {HUM_MIN_CUT_DB:g} dB: met"]
    return [f"  ! hum      only {design.target_cut_db:.1f} dB of cut at {design.target_hz:g} Hz (a hum notch "
            f"needs {HUM_MIN_CUT_DB:g} dB): no combination of {design.parts_per_position} part(s) a position reaches it",
            "    nearest fix:", *(f"      {line}" for line in design.fix.lines())]


def render_text(report, processor) -> str:
    """What a render wrote, with the clip count and the emulation's fidelity."""
    clip = (f"{report.clipped_samples} samples clipped" if report.clipped_samples
            else "no samples clipped")
    if report.over_full_scale_samples:
        clip = f"{report.over_full_scale_samples} samples over 0 dBFS (float, kept unclipped)"
    peak = "silence" if report.peak_dbfs == float("-inf") else f"{report.peak_dbfs:.2f} dBFS"
    dither = ", TPDF dither" if report.dithered else ""
    design = processor.design
    return "\n".join([
        f"wrote {report.out_path}: {report.frames} frames, {report.samplerate} Hz, "
        f"{report.channels} ch, {report.format} {report.subtype}{dither}",
        f"  peak {peak}; {clip}",
        f"  emulation: {design.method}, within {processor.fidelity_db:.3f} dB of the "
        f"analog model over {design.band_hz[0]:.0f}-{design.band_hz[1]:.0f} Hz, "
        f"phase within {design.phase_error_deg:.1f} degrees up to {design.phase_band_hz[1]:.0f} Hz",
        *shortfall_lines(design),
        f"  took {report.elapsed_s:.2f} s",
    ])


def shortfall_lines(digital) -> list[str]:
    """The warning line of a design that misses the fidelity target (none if it meets it)."""
    missed = digital.shortfall()
    return [f"warning: {missed}"] if missed else []


def fidelity_payload(digital) -> dict:
    """The fidelity figures of a design, for JSON (``fidelity_met`` false where a warning was shown)."""
    return {"fidelity_db": digital.fidelity_db, "phase_error_deg": digital.phase_error_deg,
            "phase_band_hz": list(digital.phase_band_hz), "fidelity_met": digital.meets_target,
            "fidelity_warning": digital.shortfall()}


def digital_payload(digital) -> dict:
    return {"fs": digital.fs, "method": digital.method, "sections": len(digital.sos),
            "band_hz": list(digital.band_hz), "notch_hz": digital.notch_hz,
            "latency_samples": digital.latency_samples} | fidelity_payload(digital)


def digital_text(digital) -> str:
    notch = ("notch at or above Nyquist: the part below it is emulated" if digital.notch_hz != digital.notch_hz
             else f"digital notch {digital.notch_hz:.2f} Hz")
    return "\n".join([
        f"digital emulation at {digital.fs:g} Hz: {digital.method}, {len(digital.sos)} biquads, "
        f"within {digital.fidelity_db:.3f} dB of the analog model over "
        f"{digital.band_hz[0]:.0f}-{digital.band_hz[1]:.0f} Hz, phase within {digital.phase_error_deg:.1f} "
        f"degrees up to {digital.phase_band_hz[1]:.0f} Hz; {notch}", *shortfall_lines(digital)])


# --- speakers ------------------------------------------------------------------

def _class_fields(c) -> dict:
    return {"usable": c.usable, "reason": c.reason, "sibilant_seconds": c.sibilant_seconds,
            "peak_hz": c.peak_hz, "band_hz": list(c.band_hz), "sibilant_level_db": c.sibilant_level_db,
            "vowel_level_db": c.vowel_level_db, "confidence": c.confidence,
            "suggested_notch_hz": c.suggested_notch_hz, "suggested_q": c.suggested_q,
            "suggested_mix": c.suggested_mix, "suggested_depth_db": c.suggested_depth_db}


def _sibilance_fields(report) -> dict:
    return {"usable": report.usable, "reason": report.reason, "target": report.target,
            "peak_hz": report.peak_hz, "band_hz": list(report.band_hz),
            "sibilant_fraction": report.sibilant_fraction,
            "confidence": report.confidence, "suggested_notch_hz": report.suggested_notch_hz,
            "suggested_q": report.suggested_q, "suggested_mix": report.suggested_mix,
            "suggested_depth_db": report.suggested_depth_db,
            "classes": {kind: _class_fields(c) for kind, c in report.classes.items()},
            "set_aside": list(report.set_aside)}


def sibilance_payload(takes, reports, combined) -> dict:
    payload = _sibilance_fields(combined)
    payload["takes"] = [{"take": str(t)} | _sibilance_fields(r) for t, r in zip(takes, reports)]
    return payload


def _class_text(c) -> str:
    if not c.usable:
        return f"/{c.kind}/ none ({c.reason})"
    lo, hi = c.band_hz
    return f"/{c.kind}/ peak {c.peak_hz:.0f} Hz, band {lo:.0f}-{hi:.0f} Hz, {c.sibilant_seconds:.2f} s"


def _sibilance_line(label, report) -> str:
    if not report.classes:
        return f"  {label}: no usable sibilance ({report.reason})"
    kinds = "; ".join(_class_text(report.classes[k]) for k in sorted(report.classes))
    if not report.usable:
        return f"  {label}: {kinds}"
    return (f"  {label}: {kinds}; /{report.target}/ {report.sibilant_fraction:.0%} of the take, "
            f"confidence {report.confidence:.2f}")


def suggestion_line(report) -> str:
    if not report.usable:
        return (f"  no suggestion: the takes hold no usable /{report.target}/ sibilance" if report.classes
                else f"  no suggestion: {report.reason}")
    kind = "passive (Q 0.25)" if report.suggested_q <= 0.25 else f"active, Q {report.suggested_q:.2f}"
    return (f"  suggested notch for /{report.target}/ {report.suggested_notch_hz:.0f} Hz, {kind}, "
            f"mix {report.suggested_mix:.2f} (about {report.suggested_depth_db:.1f} dB of cut at the notch)")


def sibilance_text(takes, reports, combined) -> str:
    lines = ["sibilance per take", *(_sibilance_line(t, r) for t, r in zip(takes, reports))]
    if len(reports) > 1:
        lines += ["all takes together", _sibilance_line("speaker", combined)]
        lines += [f"  set aside {why}" for why in combined.set_aside]
    lines.append(suggestion_line(combined))
    return "\n".join(lines)


# --- hum and resonance ------------------------------------------------------------------

def _notch_fields(designed: dict) -> dict:
    return {key: designed[key] for key in ("label", "notch_hz", "q", "depth_db", "mix", "built_notch_hz",
                                           "parts", "circuit", "options")}


def _notch_lines(designed) -> list[str]:
    return [f"  {d['label']}: notch {d['notch_hz']:.2f} Hz, Q {d['q']:.2f}, {d['depth_db']:.0f} dB of cut "
            f"(built {d['built_notch_hz']:.2f} Hz)\n    {d['options']}" for d in designed]


def hum_payload(take, report, designed) -> dict:
    return {"take": str(take), "found": report.found, "reason": report.reason, "seconds": report.seconds,
            "mains_hz": report.mains_hz, "fundamental_hz": report.fundamental_hz, "drift_hz": report.drift_hz,
            "track": [list(point) for point in report.track],
            "lines": [{"k": line.k, "frequency_hz": line.frequency_hz, "level_dbfs": line.level_dbfs,
                       "above_programme_db": line.above_programme_db, "prominence_db": line.prominence_db}
                      for line in report.lines],
            "notches": [_notch_fields(d) for d in designed]}


def hum_text(take, report, designed) -> str:
    if not report.found:
        return f"{take}: no mains hum ({report.reason})"
    lines = [f"{take}: {report.mains_hz:.0f} Hz mains hum at {report.fundamental_hz:.3f} Hz, "
             f"drift {report.drift_hz:.3f} Hz over {report.seconds:.1f} s"]
    lines += [f"  harmonic {line.k}: {line.frequency_hz:.2f} Hz, {line.level_dbfs:.1f} dBFS, "
              f"{line.above_programme_db:+.1f} dB over the programme around it" for line in report.lines]
    return "\n".join(lines + _notch_lines(designed))


def resonance_payload(take, report, designed) -> dict:
    def peak(p):
        return None if p is None else {"frequency_hz": p.frequency_hz, "q": p.q, "gain_db": p.gain_db,
                                       "persistence": p.persistence, "frequency_spread": p.frequency_spread,
                                       "q_spread": p.q_spread, "from_ring": p.from_ring}

    return {"take": str(take), "found": report.found, "reason": report.reason, "seconds": report.seconds,
            "peak": peak(report.peak), "others": [peak(p) for p in report.others],
            "steady_tones_hz": list(report.steady_tones_hz), "takes_read": report.takes_read,
            "more_takes_to_aim": report.more_takes_to_aim, "notches": [_notch_fields(d) for d in designed]}


def resonance_text(take, report, designed, pooled: bool = False) -> str:
    tones = ([f"  steady tones between the words, not resonances: {', '.join(f'{f:.1f} Hz' for f in report.steady_tones_hz)}"
              " (a whine or a mains line: `hum` reads mains hum)"] if report.steady_tones_hz else [])
    if not report.found:
        return "\n".join([f"{take}: no resonance ({report.reason})", *tones])
    p = report.peak
    lines = [f"{take}: resonance at {p.frequency_hz:.1f} Hz, Q {p.q:.1f}, {p.gain_db:+.1f} dB over its "
             f"neighbourhood, in {p.persistence:.0%} of the take{'s' if pooled else ''}"]
    if math.isfinite(p.frequency_spread) and math.isfinite(p.q_spread):
        how = ("read from its ring after the words, which scatter" if p.from_ring else
               "the room's noise it was read on pins it at best to")
        lines.append(f"  {how} +-{p.frequency_spread:.1%} in frequency and +-{p.q_spread:.0%} in Q "
                     f"(one standard deviation); {_aim_words(report, pooled)}")
    lines += [f"  also {o.frequency_hz:.1f} Hz, Q {o.q:.1f}, {o.gain_db:+.1f} dB" for o in report.others]
    return "\n".join(lines + tones + _notch_lines(designed))


def _aim_words(report, pooled: bool) -> str:
    """Whether the reading is pinned well enough to aim a notch, or how many more takes would pin it."""
    from emulate.voice.resonance.spread import AIM_FREQ_REL, AIM_Q_REL

    aim = f"within {AIM_FREQ_REL:.0%} in frequency and {AIM_Q_REL:.0%} in Q (19 times in 20)"
    more = report.more_takes_to_aim
    if not more:
        return f"enough to aim a notch {aim}"
    like = "like these" if pooled else "like this one"
    return f"about {more} more take{'s' if more > 1 else ''} {like}, pooled, would pin it {aim}"


def sweep_text(result, csv_path, json_path, page_path=None) -> str:
    """The sweep table; cuts are positive dB (quieter), the loudness change a signed gain."""
    rows = ["  setting                      asked      as built   sibilance cut  loudness  relative cut  speech cost"]
    for row in result.rows:
        mark = "  <- pick" if row["setting"] == result.pick["setting"] else ""
        rows.append(f"  {row['setting']:<28} {row['notch_target_hz']:>6.0f} Hz  {row['notch_hz']:>6.0f} Hz "
                    f"({row.get('notch_error_percent', 0.0):+.2f} %) {row['sibilance_reduction_db']:>6.1f} dB"
                    f" {row['loudness_change_db']:>+6.1f} dB {row['relative_reduction_db']:>8.1f} dB"
                    f" {row['intelligibility_cost']:>9.1%}{mark}")
    reels = [f"  {reel.path} (cues: {reel.cues_path})" + (f"; {reel.note()}" if reel.note() else "")
             for reel in result.reels.values()]
    removed = [f"what {result.pick['setting']} removes (dry minus wet):", *(f"  {p}" for p in result.removed.values())]
    return "\n".join([f"swept {len(result.plan.settings)} settings x {len(result.reels)} takes "
                      f"({len(result.jobs)} renders), stepping the {result.plan.axis_words}", *rows,
                      f"pick: {result.pick['setting']}: {result.pick['reason']}",
                      "listening reels (dry first, then each setting in order"
                      + (", loudness-matched):" if all(r.matched for r in result.reels.values()) else ", raw levels):"),
                      *reels, *(removed if result.removed else []),
                      f"summary: {csv_path}, {json_path}",
                      *([f"listening page: {page_path}"] if page_path else [])])


def preset_payload(preset) -> dict:
    return {"name": preset.name, "speaker": preset.speaker, "mix": preset.mix, "circuit": preset.circuit,
            "target": preset.target, "notes": preset.notes, "created": preset.created,
            "made_by": preset.made_by}


def preset_list_text(folder, found) -> str:
    if not found:
        return f"no presets in {folder}"
    lines = [f"presets in {folder}"]
    for item in found:
        what = "circuit" if item.circuit else f"target {item.target.get('notch')} Hz"
        lines.append(f"  {item.name:<24} {item.speaker:<40} {what}, mix {item.mix:.2f}")
    return "\n".join(lines)


def preset_text(path, preset, network, metrics) -> str:
    lines = [f"preset '{preset.name}' ({path})", f"  speaker: {preset.speaker}",
             f"  made: {preset.created}, {preset.made_by}", network_line(network), *metrics_lines(metrics)]
    if preset.notes:
        lines += ["  notes:", *(f"    {line}" for line in preset.notes.strip().splitlines())]
    return "\n".join(lines)


# --- the demo --------------------------------------------------------------------

LISTENING_CAUTION = ("Protect your hearing: start with the monitor level low, then raise it; "
                     "a deep notch swept through a loud take can surprise you.")


def demo_payload(takes) -> dict:
    return {"takes": [{
        "speaker": t.speaker.key, "take": str(t.path), "preset": str(t.preset_path),
        "notch_hz": t.notch_hz, "sibilance": _sibilance_fields(t.report),
        "bursts_s": list(t.burst_times_s), "pictures": [str(p) for p in t.pictures],
        "more_takes": [str(p) for p in t.more_takes],
        "renders": [{"path": str(r.path), "mix": r.mix, "sibilance_reduction_db": r.sibilance_reduction_db,
                     "loudness_change_db": r.loudness_change_db, "fidelity_db": r.fidelity_db,
                     "digital_method": r.method} for r in t.renders]} for t in takes]}


def demo_text(out_dir, takes) -> str:
    lines = ["Low Tide Notes (an invented podcast): two invented hosts, three synthetic takes each,",
             f"written to {out_dir}/", ""]
    for t in takes:
        bursts = ", ".join(f"{b:.1f}" for b in t.burst_times_s[:5])
        lines += [f"{t.speaker.key}: {t.path}",
                  _sibilance_line("sibilance", t.report), suggestion_line(t.report),
                  f"  preset {t.preset_path.stem} ({t.preset_path}): as-built notch {t.notch_hz:.0f} Hz"]
        for r in t.renders:
            lines.append(f"  rendered {r.path.name}: sibilance band {r.sibilance_reduction_db:.1f} dB of cut, "
                         f"loudness {r.loudness_change_db:+.1f} dB; emulation within {r.fidelity_db:.3f} dB "
                         f"of the analog circuit ({r.method})")
        lines += [f"  pictures: {', '.join(str(p) for p in t.pictures)}",
                  f"  more takes to try: {', '.join(str(p) for p in t.more_takes)}",
                  f"  listen: play the take, then each render; the /s/ bursts start at {bursts} s ... "
                  "should lose their hiss while the vowels keep their body.", ""]
    lines += ["Next, per host (see the README's walk-through): emulate sibilance on the takes, "
              "emulate sweep them, listen to the reels, emulate preset save NAME --from-sweep DIR, "
              "then emulate render a new take --preset NAME.",
              LISTENING_CAUTION]
    return "\n".join(lines)
