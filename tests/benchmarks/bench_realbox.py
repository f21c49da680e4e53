"""Real-box benchmark: preset noise and headroom, render speed with --level, measurement accuracy.

1. noise    every shipped preset's output noise 20 Hz-20 kHz (dBu unweighted and
            A-weighted, IEC 61672-1) with each op-amp class, and its SNR at +4 dBu;
2. headroom every shipped preset's level plan at +4 dBu nominal, each class;
3. speed    ``emulate render`` of a 10-minute 48 kHz stereo file (float output) through
            the linear path, with ``--level 4`` (rails and slew), and with
            ``--level 4 --with-noise``: medians of --repeats runs, and the ratio to the
            linear render (target: at most 3x);
4. accuracy synthetic builds (the issue's test): the passive and the active preset
            network at full notch, one or two parts off by 2-10 % (random sign), random
            latency, gain +-6 dB and white noise at -80 dBFS rms under a -18 dBFS
            sweep; the response error where above -40 dB, the notch error, and
            whether the fit names exactly the perturbed parts.

Writes JSON (--json, default bench-out/realbox.json).

Run: python3 tests/benchmarks/bench_realbox.py [--cases 20] [--repeats 3] [--minutes 10]
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from emulate.analog import levels, noise, spec
from emulate.analog.networks import PART_NAMES
from emulate.analog.opamp import CLASSES, OpAmp
from emulate.measuring.analyse import band_metrics, deconvolve
from emulate.measuring.fit import diagnose
from emulate.measuring.stimulus import SweepPlan
from emulate.measuring.synthetic import perturbed, synthetic_recording

ROOT = Path(__file__).resolve().parents[2]
PRESETS = ("orrin-passive", "tamsin-active")
SPEED_TARGET = 3.0


def preset(name):
    return spec.network_from_document(spec.read_circuit_file(ROOT / "presets" / f"{name}.toml"), where=name)


def noise_and_headroom() -> list[dict]:
    rows = []
    for name in PRESETS:
        network = preset(name)
        for amp_name in CLASSES:
            amp = OpAmp.parse(amp_name)
            hiss = noise.output_noise(network, amp)
            plan = levels.level_plan(network, amp, 4.0)
            rows.append({"preset": name, "opamp": amp_name, "noise_dbu": hiss.dbu, "noise_dbu_a": hiss.dbu_a,
                         "snr_db_a_at_4dbu": hiss.snr_db(4.0), "headroom_db_at_4dbu": plan.headroom_db,
                         "limiting": plan.limiting.node, "largest": hiss.largest(2)})
            print(f"{name:14} {amp_name:18} noise {hiss.dbu:7.1f} dBu, {hiss.dbu_a:7.1f} dBu(A); "
                  f"headroom at +4 dBu {plan.headroom_db:5.1f} dB ({plan.limiting.node})")
    return rows


def render_speed(minutes: float, repeats: int) -> dict:
    fs, frames = 48000, int(minutes * 60 * 48000)
    env = dict(os.environ, PYTHONPATH=str(ROOT), EMULATE_PRESETS_DIR=str(ROOT / "presets"))
    with tempfile.TemporaryDirectory() as folder:
        take = Path(folder) / "take.wav"
        import soundfile as sf

        rng = np.random.default_rng(0)
        with sf.SoundFile(take, "w", fs, 2, "PCM_24") as out:
            for first in range(0, frames, fs * 10):
                n = min(fs * 10, frames - first)
                out.write(0.1 * rng.standard_normal((n, 2)))
        base = [sys.executable, "-m", "emulate", "render", str(take), str(Path(folder) / "out.wav"),
                "--preset", "tamsin-active", "--float"]
        ways = {"linear": [], "level": ["--level", "4"], "level_noise": ["--level", "4", "--with-noise"]}
        times = {}
        for way, extra in ways.items():
            runs = []
            for _ in range(repeats):
                start = time.perf_counter()
                subprocess.run(base + extra, check=True, env=env, capture_output=True)
                runs.append(time.perf_counter() - start)
                (Path(folder) / "out.wav").unlink()
            times[way] = statistics.median(runs)
    figures = {"minutes": minutes, "repeats": repeats, **{f"{k}_s": v for k, v in times.items()},
               "level_ratio": times["level"] / times["linear"],
               "level_noise_ratio": times["level_noise"] / times["linear"], "target_ratio": SPEED_TARGET}
    print(f"render {minutes:g} min stereo: linear {times['linear']:.2f} s, --level {times['level']:.2f} s "
          f"({figures['level_ratio']:.2f}x), --level --with-noise {times['level_noise']:.2f} s "
          f"({figures['level_noise_ratio']:.2f}x); target <= {SPEED_TARGET:g}x")
    return figures


def accuracy(cases: int, seconds: float, seed: int = 2026) -> dict:
    plan = SweepPlan(48000.0, seconds=seconds)
    rng = np.random.default_rng(seed)
    tolerances = {name: 0.1 for name in PART_NAMES}
    rows = []
    for name in PRESETS:
        network = preset(name).wet()
        for case in range(cases):
            size = 1 if case < cases // 2 else 2
            parts = rng.choice(PART_NAMES, size, replace=False)
            errors = {str(p): float(rng.choice([-1, 1]) * rng.uniform(0.02, 0.10)) for p in parts}
            built = perturbed(network, errors)
            gain = float(rng.uniform(-6, 6))
            x = synthetic_recording(plan, built, latency_samples=int(rng.integers(0, 48000)), gain_db=gain,
                                    noise_dbfs=-80.0, seed=case)
            measured = deconvolve(x, plan)
            truth = 20 * np.log10(np.abs(built.response(measured.f_hz))) + gain
            above = truth > -40
            notch = band_metrics(measured.f_hz, measured.gain_db).notch_hz / \
                band_metrics(measured.f_hz, truth).notch_hz - 1
            found = diagnose(network, measured, tolerances)
            rows.append({"preset": name, "errors": errors, "found": found.parts_off, "used_phase": found.used_phase,
                         "named": set(found.parts_off) == set(errors),
                         "response_error_db": float(np.max(np.abs(measured.gain_db[above] - truth[above]))),
                         "notch_error_pct": 100 * float(notch)})
    table = {}
    for name in PRESETS:
        for size in (1, 2):
            sel = [r for r in rows if r["preset"] == name and len(r["errors"]) == size]
            table[f"{name}, {size} part{'s' if size > 1 else ''} off"] = {
                "cases": len(sel), "named": sum(r["named"] for r in sel),
                "worst_response_error_db": max(r["response_error_db"] for r in sel),
                "worst_notch_error_pct": max(abs(r["notch_error_pct"]) for r in sel)}
    print("| builds | cases | parts named | worst response error (above -40 dB) | worst notch error |")
    print("| --- | --- | --- | --- | --- |")
    for key, t in table.items():
        print(f"| {key} | {t['cases']} | {t['named']} ({t['named'] / t['cases']:.0%}) | "
              f"{t['worst_response_error_db']:.3f} dB | {t['worst_notch_error_pct']:.3f} % |")
    named = sum(r["named"] for r in rows)
    print(f"overall: {named} of {len(rows)} named ({named / len(rows):.0%}); target 90 %")
    return {"sweep_s": seconds, "seed": seed, "table": table, "overall_named": named, "cases": len(rows),
            "rows": [r | {"errors": r["errors"], "found": r["found"]} for r in rows]}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cases", type=int, default=20, help="synthetic builds per preset")
    parser.add_argument("--sweep", type=float, default=2.0, help="sweep length of the synthetic builds, s")
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--minutes", type=float, default=10.0, help="length of the rendered take")
    parser.add_argument("--skip-render", action="store_true")
    parser.add_argument("--seed", type=int, default=2026, help="seed of the synthetic builds")
    parser.add_argument("--json", default="bench-out/realbox.json", help="where to write the figures")
    args = parser.parse_args()
    figures = {"noise_headroom": noise_and_headroom()}
    if not args.skip_render:
        figures["render"] = render_speed(args.minutes, args.repeats)
    figures["accuracy"] = accuracy(args.cases, args.sweep, args.seed)
    out = Path(args.json)
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps(figures, indent=2, default=str))
    print(f"wrote {out}")


if __name__ == "__main__":
    main()
