"""Human-readable text and JSON payloads for what the commands measured.

Only formatting lives here: every number comes from the analysis modules.
"""

from __future__ import annotations

import json
import math

import numpy as np

from emulate.analog.networks import part_kind
from emulate.analog.parts import format_value
from emulate.analog.response import db

# ISO 266 preferred octave-band centres, plus the audio band's ends
TABLE_HZ = (20.0, 31.5, 63.0, 125.0, 250.0, 500.0, 1000.0, 2000.0, 4000.0, 8000.0, 16000.0, 20000.0)
IDEAL_NULL_DB = -200.0  # deeper than this is an exact null in floating point


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


def network_line(network) -> str:
    kind = "passive" if not network.is_active else f"active, bootstrap K = {network.bootstrap:.4g}"
    source = format_value(network.source_ohms, "resistance") if network.source_ohms else "ideal"
    load = format_value(network.load_ohms, "resistance") if math.isfinite(network.load_ohms) else "none"
    mix = "" if network.mix == 1.0 else (
        f", depth pot {format_value(network.depth_pot_ohms, 'resistance')} at {network.mix:.2f}"
        if network.depth_pot_ohms else f", wet/dry mix {network.mix:.2f}")
    values = "  ".join(f"{name.upper()} {format_value(v, part_kind(name))}"
                       for name, v in network.parts().items())
    return f"twin-T ({kind}), source {source}, load {load}{mix}\n  {values}"


def depth_text(metrics) -> str:
    if metrics.depth_db < IDEAL_NULL_DB:
        return f"below {IDEAL_NULL_DB:.0f} dB (an exact null)"
    return f"{metrics.depth_db:.1f} dB ({metrics.depth_below_passband_db:.1f} dB below the passband)"


def metrics_lines(metrics) -> list[str]:
    width = ("not 3 dB deep: no -3 dB band" if math.isnan(metrics.q) else
             f"-3 dB from {metrics.lower_hz:.1f} Hz to {metrics.upper_hz:.1f} Hz, Q {metrics.q:.3f}")
    return [
        f"  notch      {metrics.notch_hz:.2f} Hz",
        f"  depth      {depth_text(metrics)}",
        f"  width      {width}",
        f"  passband   {_signed(metrics.passband_low_db)} dB low, {_signed(metrics.passband_high_db)} dB high",
    ]


def _signed(value_db: float) -> str:
    """Two decimals without a negative zero."""
    return f"{value_db:.2f}".replace("-0.00", "0.00")


def warning_lines(found) -> list[str]:
    return [f"  ! {item}" for item in found] or ["  no warnings"]


def table_lines(network, notch_hz) -> list[str]:
    f = np.array(sorted({*TABLE_HZ, notch_hz}))
    h = network.response(f)
    rows = ["  f (Hz)      gain (dB)   phase (deg)"]
    for fi, hi in zip(f, h):
        mark = "  <- notch" if fi == notch_hz else ""
        rows.append(f"  {fi:>9.1f}   {max(db(hi), IDEAL_NULL_DB):>9.2f}   {np.degrees(np.angle(hi)):>9.1f}{mark}")
    return rows


def response_text(network, metrics, found) -> str:
    lines = [network_line(network), *metrics_lines(metrics), "warnings", *warning_lines(found),
             *table_lines(network, metrics.notch_hz)]
    return "\n".join(lines)


def metrics_payload(network, metrics, found) -> dict:
    payload = metrics.as_dict()  # non-finite numbers become null where JSON is written
    payload["warnings"] = [str(item) for item in found]
    payload["active"] = network.is_active
    payload["bootstrap"] = network.bootstrap
    payload["mix"] = network.mix
    return payload


def design_payload(design, found) -> dict:
    payload = metrics_payload(design.built, design.built_metrics, found)
    payload.update(
        target_hz=design.target_hz, target_q=design.target_q, series=design.series,
        cap_series=design.cap_series, parts=design.parts_as_written(),
        r3_build=design.r3_build, c3_build=design.c3_build,
        notch_error_percent=100 * design.notch_error,
        ideal={"parts": {k.upper(): v for k, v in design.ideal.parts().items()},
               "notch_hz": design.ideal_metrics.notch_hz, "q": design.ideal_metrics.q})
    return payload


def design_text(design, found) -> str:
    built, ideal = design.built_metrics, design.ideal_metrics
    q = "passive (Q 0.25)" if design.target_q is None else f"Q {design.target_q:g}"
    lines = [f"design for a {design.target_hz:.1f} Hz notch, {q}, resistors {design.series}, "
             f"capacitors {design.cap_series}",
             "  part   ideal        as built"]
    written = design.parts_as_written()
    for name, value in design.ideal.parts().items():
        build = {"r3": design.r3_build, "c3": design.c3_build}.get(name, written[name.upper()])
        lines.append(f"  {name.upper():<5}  {format_value(value, part_kind(name), 4):<12} {build}")
    if design.divider is not None:
        top, bottom = (format_value(v, "resistance") for v in design.divider)
        k = design.built.bootstrap
        lines.append(f"  bootstrap divider: {top} over {bottom} from the output buffer, K = {k:.4f} "
                     f"(ideal {1 - 1 / (4 * design.target_q):.4f})")
    lines += ["as built", *metrics_lines(built),
              f"  error      notch {100 * design.notch_error:+.2f} % from target "
              f"(ideal parts: {ideal.notch_hz:.2f} Hz, Q {ideal.q:.3f})",
              "warnings", *warning_lines(found)]
    return "\n".join(lines)


def render_text(report, processor) -> str:
    """What a render wrote, with the clip count and the emulation's fidelity."""
    clip = (f"{report.clipped_samples} samples clipped" if report.clipped_samples
            else "no samples clipped")
    if report.over_full_scale_samples:
        clip = f"{report.over_full_scale_samples} samples over 0 dBFS (float, kept unclipped)"
    peak = "silence" if report.peak_dbfs == float("-inf") else f"{report.peak_dbfs:.2f} dBFS"
    dither = ", TPDF dither" if report.dithered else ""
    return "\n".join([
        f"wrote {report.out_path}: {report.frames} frames, {report.samplerate} Hz, "
        f"{report.channels} ch, {report.format} {report.subtype}{dither}",
        f"  peak {peak}; {clip}",
        f"  emulation: {processor.design.method}, within {processor.fidelity_db:.3f} dB of the "
        f"analog model over {processor.design.band_hz[0]:.0f}-{processor.design.band_hz[1]:.0f} Hz",
        f"  took {report.elapsed_s:.2f} s",
    ])


def digital_payload(digital) -> dict:
    return {"fs": digital.fs, "method": digital.method, "sections": len(digital.sos),
            "fidelity_db": digital.fidelity_db, "band_hz": list(digital.band_hz),
            "notch_hz": digital.notch_hz, "latency_samples": digital.latency_samples}


def digital_text(digital) -> str:
    return (f"digital emulation at {digital.fs:g} Hz: {digital.method}, {len(digital.sos)} biquads, "
            f"within {digital.fidelity_db:.3f} dB of the analog model over "
            f"{digital.band_hz[0]:.0f}-{digital.band_hz[1]:.0f} Hz; digital notch {digital.notch_hz:.2f} Hz")


# --- speakers ------------------------------------------------------------------

def _sibilance_fields(report) -> dict:
    return {"usable": report.usable, "reason": report.reason, "peak_hz": report.peak_hz,
            "band_hz": list(report.band_hz), "sibilant_fraction": report.sibilant_fraction,
            "confidence": report.confidence, "suggested_notch_hz": report.suggested_notch_hz,
            "suggested_q": report.suggested_q, "suggested_mix": report.suggested_mix,
            "suggested_depth_db": report.suggested_depth_db}


def sibilance_payload(takes, reports, combined) -> dict:
    payload = _sibilance_fields(combined)
    payload["takes"] = [{"take": str(t)} | _sibilance_fields(r) for t, r in zip(takes, reports)]
    return payload


def _sibilance_line(label, report) -> str:
    if not report.usable:
        return f"  {label}: no usable sibilance ({report.reason})"
    lo, hi = report.band_hz
    return (f"  {label}: peak {report.peak_hz:.0f} Hz, band {lo:.0f}-{hi:.0f} Hz, "
            f"{report.sibilant_fraction:.0%} of the take sibilant, confidence {report.confidence:.2f}")


def suggestion_line(report) -> str:
    if not report.usable:
        return "  no suggestion: the takes hold no usable sibilance"
    kind = "passive (Q 0.25)" if report.suggested_q <= 0.25 else f"active, Q {report.suggested_q:.2f}"
    return (f"  suggested notch {report.suggested_notch_hz:.0f} Hz, {kind}, mix {report.suggested_mix:.2f} "
            f"(about {report.suggested_depth_db:.0f} dB at the notch)")


def sibilance_text(takes, reports, combined) -> str:
    lines = ["sibilance per take", *(_sibilance_line(t, r) for t, r in zip(takes, reports))]
    if len(reports) > 1:
        lines += ["all takes together", _sibilance_line("speaker", combined)]
    lines.append(suggestion_line(combined))
    return "\n".join(lines)


def sweep_text(result, csv_path, json_path) -> str:
    rows = ["  setting                      as built  sibilance  loudness  relative  speech cost"]
    for row in result.rows:
        mark = "  <- pick" if row["setting"] == result.pick["setting"] else ""
        rows.append(f"  {row['setting']:<28} {row['notch_hz']:>6.0f} Hz {-row['sibilance_reduction_db']:>+6.1f} dB"
                    f" {row['loudness_change_db']:>+6.1f} dB {-row['relative_reduction_db']:>+6.1f} dB"
                    f" {row['intelligibility_cost']:>9.1%}{mark}")
    reels = [f"  {reel}" for reel in result.reels.values()]
    return "\n".join([f"swept {len(result.plan.notches_hz)} settings x {len(result.reels)} takes "
                      f"({len(result.jobs)} renders)", *rows,
                      f"pick: {result.pick['setting']}: {result.pick['reason']}",
                      "listening reels (dry first, then each setting in order):", *reels,
                      f"summary: {csv_path}, {json_path}"])


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
            lines.append(f"  rendered {r.path.name}: sibilance band {-r.sibilance_reduction_db:+.1f} dB, "
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
