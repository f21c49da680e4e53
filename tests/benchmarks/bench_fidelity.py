"""Benchmark: fidelity and cost of the digital stage, and filter throughput.

Prints, for the grid notch x Q x fs x network (passive/active, with/without load),
the worst dB error of plain prewarped bilinear and of ``design_sections``, its
phase error (degrees, latency removed, up to 0.35 fs), latency, the design time
(median of several runs) and the section count; the worst magnitude and phase
figures per rate over that grid and over random networks (unbalanced, active,
mix, pot, source, load: the generator of tests/test_random_networks.py); then the numba
kernel throughput (stereo samples/s) for 1, 2 and 3 sections and a streaming
render (read -> NotchProcessor -> write) against a bare soundfile streaming copy
of a 24-bit stereo 48 kHz file.  Writes everything as JSON.

Run: ``python tests/benchmarks/bench_fidelity.py [--json PATH] [--repeats N] [--seconds S]``
"""

from __future__ import annotations

import argparse
import json
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import soundfile as sf
from scipy import signal

from emulate.dsp import kernels
from emulate.analog.stability import check_stability
from emulate.dsp.digital import bilinear_prewarped_zpk, design_sections, fidelity_band_hz, fidelity_error_db
from emulate.dsp.emulation import DESIGN_TOLERANCE_DB, digital_for  # what rendering asks for
from emulate.dsp.processor import NotchProcessor

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # tests/: the random network generator
from test_random_networks import random_network  # noqa: E402

RATES = (8000, 16000, 22050, 32000, 44100, 48000, 96000, 192000, 384000)
NOTCHES_HZ = (50.0, 300.0, 1000.0, 3000.0, 5000.0, 8000.0, 10000.0, 12000.0, 16000.0, 19000.0, 30000.0)
RANDOM_NETWORKS = 120  # per rate
QS = (0.25, 1.0, 5.0)  # 0.25 passive; > 0.25 bootstrapped (active), Q = 1/(4(1-K)) (MT-225)


def notch_zpk(f0_hz, q, load):
    """(s^2 + w0^2)/(s^2 + (w0/q) s + w0^2), times 0.7 (s + 0.5 w0)/(s + 0.8 w0) with a load."""
    w0 = 2 * np.pi * f0_hz
    z, p, k = np.array([1j * w0, -1j * w0]), np.roots([1, w0 / q, w0**2]), 1.0
    if load:
        z, p, k = np.append(z, -0.5 * w0), np.append(p, -0.8 * w0), 0.7
    return z, p, k


def median_time(fn, repeats):
    times = []
    for _ in range(repeats):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def fidelity_grid(repeats):
    rows = []
    for fs in RATES:
        band = fidelity_band_hz(fs)
        for f0 in NOTCHES_HZ:  # notches at and above Nyquist included: the part below it is emulated
            for q in QS:
                for load in (False, True):
                    z, p, k = notch_zpk(f0, q, load)
                    warp = min(f0, band[1])
                    plain = signal.zpk2sos(*bilinear_prewarped_zpk(z, p, k, fs, warp))
                    design = design_sections(z, p, k, fs, notch_hz=f0, tolerance_db=DESIGN_TOLERANCE_DB)
                    seconds = median_time(lambda: design_sections(z, p, k, fs, notch_hz=f0,
                                                                  tolerance_db=DESIGN_TOLERANCE_DB), repeats)
                    rows.append({
                        "fs_hz": fs, "notch_hz": f0, "q": q, "load": load, "band_hz": list(band),
                        "bilinear_db": fidelity_error_db(z, p, k, plain, fs, band),
                        "design_db": design.fidelity_db, "phase_deg": design.phase_error_deg,
                        "latency_samples": design.latency_samples, "method": design.method,
                        "sections": int(design.sos.shape[0]), "design_ms": 1e3 * seconds,
                        "notch_error_rel": abs(design.notch_hz - f0) / f0 if f0 < 0.4999 * fs else None,
                    })
    return rows


def random_grid(count):
    """Worst magnitude / phase error per rate over ``count`` random stable networks a rate."""
    rng = np.random.default_rng(7)
    rows = []
    for fs in RATES:
        worst_db = worst_deg = 0.0
        unstable = sections = 0
        for _ in range(count):
            net = random_network(rng)
            if not check_stability(net).stable:
                unstable += 1
                continue
            design = digital_for(net, fs)
            worst_db, worst_deg = max(worst_db, design.fidelity_db), max(worst_deg, design.phase_error_deg)
            sections = max(sections, int(design.sos.shape[0]))
        rows.append({"fs_hz": fs, "networks": count - unstable, "unstable_skipped": unstable,
                     "worst_db": worst_db, "worst_deg": worst_deg, "max_sections": sections})
    return rows


def kernel_throughput(repeats, frames=480000):
    x = np.random.default_rng(0).standard_normal((frames, 2))
    out = np.empty_like(x)
    result = {}
    for n in (1, 2, 3):
        sos = np.tile([[0.9, -1.2, 0.9, 1.0, -1.1, 0.8]], (n, 1))
        state = np.zeros((n, 2, 2))
        kernels.sos_filter(sos, x[:16], state, out[:16])  # compile / load cache
        seconds = median_time(lambda: kernels.sos_filter(sos, x, state, out), repeats)
        result[f"{n}_sections_samples_per_s"] = 2 * frames / seconds
    return result


def render_vs_copy(repeats, seconds_audio, block=65536):
    """Bare soundfile streaming copy vs streaming render through a 3-section design."""
    fs = 48000
    with tempfile.TemporaryDirectory() as tmp:
        src, dst = Path(tmp) / "in.wav", Path(tmp) / "out.wav"
        rng = np.random.default_rng(1)
        sf.write(src, 0.3 * rng.standard_normal((fs * seconds_audio, 2)), fs, subtype="PCM_24")

        def stream(proc):
            with sf.SoundFile(src) as fin, sf.SoundFile(dst, "w", fs, 2, "PCM_24") as fout:
                for data in fin.blocks(blocksize=block, dtype="float64", always_2d=True):
                    fout.write(proc.process(data) if proc else data)

        z, p, k = notch_zpk(10000.0, 0.25, True)
        proc = NotchProcessor(z, p, k, notch_hz=10000.0, mix=0.8)
        proc.prepare(fs, 2)
        copy_s = median_time(lambda: stream(None), repeats)
        render_s = median_time(lambda: (proc.reset(), stream(proc)), repeats)
        return {
            "audio_seconds": seconds_audio, "copy_s": copy_s, "render_s": render_s,
            "render_over_copy": render_s / copy_s, "render_x_realtime": seconds_audio / render_s,
            "sections": int(proc.design.sos.shape[0]), "method": proc.design.method,
        }


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--json", default="bench-out/fidelity.json", help="where to write the figures")
    parser.add_argument("--repeats", type=int, default=5, help="runs per timing (median quoted)")
    parser.add_argument("--seconds", type=int, default=60, help="length of the render test file, s")
    args = parser.parse_args()

    rows = fidelity_grid(args.repeats)
    print(f"{'fs':>6} {'notch':>7} {'Q':>5} {'load':>5} {'bilinear dB':>11} {'design dB':>9} {'deg':>5} "
          f"{'lat':>3} {'sections':>8} {'ms':>6}  method")
    for r in rows:
        print(f"{r['fs_hz']:>6} {r['notch_hz']:>7.0f} {r['q']:>5} {r['load']!s:>5} {r['bilinear_db']:>11.3f} "
              f"{r['design_db']:>9.4f} {r['phase_deg']:>5.2f} {r['latency_samples']:>3} {r['sections']:>8} "
              f"{r['design_ms']:>6.1f}  {r['method']}")
    for fs in RATES:
        sub = [r for r in rows if r["fs_hz"] == fs]
        notch_errors = [r["notch_error_rel"] for r in sub if r["notch_error_rel"] is not None]
        print(f"fs {fs}: worst bilinear {max(r['bilinear_db'] for r in sub):.3f} dB, worst design "
              f"{max(r['design_db'] for r in sub):.4f} dB / {max(r['phase_deg'] for r in sub):.2f} deg, "
              f"worst notch error {max(notch_errors):.2e}, max sections {max(r['sections'] for r in sub)}, "
              f"max latency {max(r['latency_samples'] for r in sub)}, "
              f"design ms median {statistics.median(r['design_ms'] for r in sub):.1f} / "
              f"max {max(r['design_ms'] for r in sub):.1f}")
    randoms = random_grid(RANDOM_NETWORKS)
    for r in randoms:
        print(f"random networks at {r['fs_hz']}: {r['networks']} stable ({r['unstable_skipped']} unstable skipped), "
              f"worst {r['worst_db']:.4f} dB / {r['worst_deg']:.2f} deg, max sections {r['max_sections']}")
    throughput = kernel_throughput(args.repeats)
    for name, value in throughput.items():
        print(f"kernel {name}: {value / 1e6:.1f} M")
    render = render_vs_copy(args.repeats, args.seconds)
    print(f"render {render['render_s']:.3f} s vs copy {render['copy_s']:.3f} s: "
          f"{render['render_over_copy']:.2f}x the copy, {render['render_x_realtime']:.0f}x real time "
          f"({render['sections']} sections, {render['method']})")

    out = Path(args.json)
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps({"grid": rows, "random": randoms, "kernel": throughput, "render": render},
                              indent=2))
    print(f"wrote {out}")


if __name__ == "__main__":
    main()
