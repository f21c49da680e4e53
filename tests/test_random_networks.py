"""Every circuit a user can type: random networks rendered and compared with the exact analog model.

Random unbalanced passive and bootstrapped (active) twin-Ts with random part spreads,
wet/dry mix or depth pot, source and load, at random sample rates from 8 kHz to
384 kHz (fixed seed).  For each stable network:

* the processor is built and prepared without refusal or traceback;
* its rendered impulse response (the real numba kernel) is the design's sections
  (scipy.signal.sosfilt as the reference);
* the design's response (DTFT of its sections, latency removed) is compared with the
  exact nodal response (``TwinT.response``): magnitude within 0.1 dB over 20 Hz to
  min(20 kHz, 0.45 fs) where the analog is above -30 dB, phase within 5 degrees up to
  0.35 fs (issue 10's target), on a 4000-point grid independent of the design's own.

A few networks also go through ``emulate render`` (CliRunner) as an impulse WAV.
Unstable draws (a bootstrapped network with unlucky parts) are counted, not rendered:
they must be refused with the oscillation named.
"""

import json
import math

import numpy as np
import pytest
import soundfile as sf
from click.testing import CliRunner
from scipy import signal

from emulate.analog.networks import TwinT
from emulate.analog.stability import check_stability
from emulate.cli import main
from emulate.dsp.emulation import processor_for
from emulate.errors import CircuitError

SEED = 20261202
DEFAULT_COUNT = 12  # the default run's share (about 0.08 s each; issue 8: the CPU budget); the rest are slow
SLOW_COUNT = 300
TARGET_DB, TARGET_DEG, FLOOR_DB = 0.1, 5.0, -30.0  # issue 10
IMPULSE_AT = 16  # room for the compensated latency (an all-pass of order <= 4)


def random_network(rng) -> TwinT:
    """One random twin-T: notch 20 Hz - 100 kHz, parts off balance by up to a factor 2.2."""
    r = 10 ** rng.uniform(2.5, 5.5)
    c = 1 / (2 * np.pi * 10 ** rng.uniform(1.3, 5.0) * r)

    def spread():  # half the parts far off balance, half within 7 %
        return 10 ** rng.uniform(-0.35, 0.35) if rng.random() < 0.5 else 10 ** rng.uniform(-0.03, 0.03)

    options = {"mix": float(rng.choice([1.0, rng.uniform(0, 1), 0.5]))}
    if rng.random() < 0.5:
        options["source_ohms"] = float(10 ** rng.uniform(1, 4))
    if rng.random() < 0.5:
        options["load_ohms"] = float(10 ** rng.uniform(3, 6))
    if rng.random() < 0.4:
        options["bootstrap"] = float(rng.uniform(0, 0.97))
    if rng.random() < 0.25:
        options["depth_pot_ohms"] = float(10 ** rng.uniform(3, 5.5))
    return TwinT(r * spread(), r * spread(), r / 2 * spread(), c * spread(), c * spread(), 2 * c * spread(),
                 **options)


def cases(count):
    rng = np.random.default_rng(SEED)
    return [(i, random_network(rng), float(np.exp(rng.uniform(np.log(8000), np.log(384000)))))
            for i in range(count)]


def errors(net, design, fs):
    """Worst magnitude (dB) and phase (degrees) error of the design against the exact analog."""
    hi = min(20000.0, 0.45 * fs)
    f = np.unique(np.concatenate([np.geomspace(20.0, hi, 2000), np.linspace(20.0, hi, 2000)]))
    _, h_d = signal.sosfreqz(design.sos, worN=f, fs=fs)
    h_d = h_d * np.exp(2j * np.pi * f * design.latency_samples / fs)
    h_a = np.ravel(net.response(f))
    db_a = 20 * np.log10(np.abs(h_a))
    keep = db_a > FLOOR_DB
    if not np.any(keep):
        return 0.0, 0.0
    mag = np.max(np.abs(20 * np.log10(np.abs(h_d[keep])) - db_a[keep]))
    phase = keep & (f <= 0.35 * fs)
    deg = np.max(np.degrees(np.abs(np.angle(h_d[phase] / h_a[phase])))) if np.any(phase) else 0.0
    return float(mag), float(deg)


def check(net, fs):
    if not check_stability(net).stable:
        with pytest.raises(CircuitError, match="oscillates at"):
            processor_for(net).prepare(fs, 1)
        return
    proc = processor_for(net)
    proc.prepare(fs, 1)
    design = proc.design
    x = np.zeros((4096, 1))
    x[0] = 1.0
    rendered = proc.process(x)[:, 0]
    np.testing.assert_allclose(rendered, signal.sosfilt(design.sos, x[:, 0]), rtol=0, atol=1e-12)
    mag, deg = errors(net, design, fs)
    assert mag <= TARGET_DB, f"{net} at {fs:.0f} Hz: {mag:.3f} dB ({design.method})"
    assert deg <= TARGET_DEG, f"{net} at {fs:.0f} Hz: {deg:.2f} degrees ({design.method})"
    assert design.meets_target and design.shortfall() is None


class TestRandomNetworks:
    @pytest.mark.parametrize("i, net, fs", cases(DEFAULT_COUNT), ids=lambda v: None)
    def test_no_refusal_and_within_target(self, i, net, fs):
        check(net, fs)

    @pytest.mark.slow
    @pytest.mark.parametrize("i, net, fs", cases(SLOW_COUNT)[DEFAULT_COUNT:], ids=lambda v: None)
    def test_no_refusal_and_within_target_slow(self, i, net, fs):
        check(net, fs)


def circuit_args(net):
    args = [arg for name, value in net.parts().items() for arg in (f"--{name}", repr(value))]
    for option, value in (("--bootstrap", net.bootstrap), ("--source", net.source_ohms or None),
                          ("--load", net.load_ohms if math.isfinite(net.load_ohms) else None),
                          ("--depth-pot", net.depth_pot_ohms)):
        if value is not None:
            args += [option, repr(value)]
    return args + ["--mix", repr(net.mix)]


class TestThroughTheCli:
    # Networks whose impulse response decays within 2**15 frames (checked below), rendered by
    # the real command; the FFT of the rendered impulse (rotated by IMPULSE_AT: the render
    # compensates the latency) against the exact analog response.
    NETWORKS = [
        (TwinT(10e3, 12e3, 4.7e3, 10e-9, 8.2e-9, 22e-9, source_ohms=600.0, load_ohms=10e3, mix=0.5), 44100),
        (TwinT(3.3e3, 3.3e3, 1.8e3, 4.7e-9, 4.7e-9, 10e-9, bootstrap=0.8, mix=0.7), 11025),
        (TwinT(1e3, 1.2e3, 560.0, 10e-9, 10e-9, 18e-9, load_ohms=47e3, depth_pot_ohms=10e3, mix=0.9), 192000),
        (TwinT(1e3, 1e3, 500.0, 10e-9, 10e-9, 20e-9), 32000),  # 15.9 kHz notch, above Nyquist
    ]

    @pytest.mark.parametrize("net, fs", NETWORKS)
    def test_render_impulse(self, tmp_path, net, fs):
        frames = 1 << 15
        x = np.zeros(frames)
        x[IMPULSE_AT] = 1.0
        sf.write(tmp_path / "in.wav", x, fs, subtype="FLOAT")
        result = CliRunner().invoke(main, ["render", str(tmp_path / "in.wav"), str(tmp_path / "out.wav"),
                                           *circuit_args(net), "--float", "--json"])
        assert result.exit_code == 0, result.output
        assert json.loads(result.stdout)["fidelity_met"] is True
        h = np.roll(sf.read(tmp_path / "out.wav", dtype="float64")[0], -IMPULSE_AT)
        assert np.max(np.abs(h[frames // 2 : -IMPULSE_AT])) < 1e-7  # decayed: the FFT is the response
        f = np.fft.rfftfreq(frames, 1 / fs)
        band = (f >= 20.0) & (f <= min(20000.0, 0.45 * fs))
        h_d, h_a = np.fft.rfft(h)[band], np.ravel(net.response(f[band]))
        db_a = 20 * np.log10(np.abs(h_a))
        keep = db_a > FLOOR_DB
        # 2e-3 dB / 0.05 degree on top: the float32 file (2**-24 relative a sample)
        assert np.max(np.abs(20 * np.log10(np.abs(h_d[keep])) - db_a[keep])) <= TARGET_DB + 2e-3
        phase = keep & (f[band] <= 0.35 * fs)
        assert np.max(np.degrees(np.abs(np.angle(h_d[phase] / h_a[phase])))) <= TARGET_DEG + 0.05


class TestIssueCases:
    @pytest.mark.parametrize("net, fs", [
        (TwinT.balanced(19000.0, r_ohms=10e3, source_ohms=600.0, load_ohms=10e3), 44100.0),
        (TwinT.balanced(0.45 * 44100, r_ohms=10e3), 44100.0),
        (TwinT.balanced(0.49 * 44100, r_ohms=10e3), 44100.0),
        (TwinT.balanced(0.42 * 96000, r_ohms=10e3, source_ohms=600.0, load_ohms=10e3), 96000.0),
        (TwinT.balanced(16300.0, r_ohms=10e3), 32000.0),
        (TwinT.balanced(6500.0, r_ohms=10e3), 8000.0),
    ])
    def test_fidelity_misses_with_no_warning(self, net, fs):
        # Regression (issue 10, defect 3): passive Q 0.25 notches at 0.40-0.45 fs were 0.7-0.9 dB
        # off (at 96 kHz in the 20-40 Hz passband), 19.6 dB at 0.49 fs, and notches above Nyquist
        # were refused.  Now within 0.1 dB / 5 degrees, checked against the exact analog model.
        check(net, fs)
