"""Tests of emulate.dsp.realstage and its kernel emulate.dsp.rail_kernels.

References: a clipped stage holds its output at the swing and a slew-limited one
changes by at most SR/fs per sample (by definition); white noise of unit variance
has a one-sided density 2/fs (common practice, no source); Welch's method through
scipy.signal as a general-purpose density estimate.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.signal

from emulate.analog.networks import TwinT
from emulate.analog.opamp import OpAmp
from emulate.dsp.emulation import audio_band_zpk, processor_for
from emulate.dsp.rail_kernels import rail_stage
from emulate.dsp.realstage import RealBoxProcessor, volts_per_unit

NET = TwinT.balanced(1000.0, r_ohms=10e3)


class TestRailStage:
    def test_block_split_equals_whole(self):
        rng = np.random.default_rng(0)
        x = rng.standard_normal((1000, 2)) * 3
        whole, hits = np.empty_like(x), np.zeros(2, np.int64)
        rail_stage(x, 0.5, 1.0, -1.2, np.zeros(2), whole, hits)
        parts, last, hits2 = [], np.zeros(2), np.zeros(2, np.int64)
        for block in np.split(x, [1, 333, 334, 900]):
            out = np.empty_like(block)
            rail_stage(block, 0.5, 1.0, -1.2, last, out, hits2)
            parts.append(out)
        assert np.array_equal(np.concatenate(parts), whole) and np.array_equal(hits, hits2)
        assert whole.max() <= 1.0 and whole.min() >= -1.2 and np.abs(np.diff(whole, axis=0)).max() <= 0.5 + 1e-12


class TestVoltsPerUnit:
    def test_full_scale_sine(self):
        # a 0 dBFS sine at +18 dBu: 7.75 V rms, 10.96 V peak
        assert volts_per_unit(18.0) == pytest.approx(math.sqrt(2) * 0.7745967 * 10 ** 0.9, rel=1e-6)


class TestRealBoxProcessor:
    def test_quiet_take_passes_as_linear(self):
        # well inside the rails and the slew rate, without noise: the wrapped emulation exactly
        x = 0.01 * np.sin(2 * np.pi * 300 * np.arange(4800) / 48000)[:, None]
        linear = processor_for(NET)
        linear.prepare(48000, 1)
        box = RealBoxProcessor(processor_for(NET), OpAmp.parse("jfet"), 18.0)
        box.prepare(48000, 1)
        assert np.array_equal(box.process(x), linear.process(x))
        assert box.hits()["rail_hits"] == 0

    def test_hot_take_clips_at_the_swing(self):
        amp = OpAmp.parse("rail-to-rail-cmos")
        box = RealBoxProcessor(processor_for(NET), amp, 18.0)
        box.prepare(48000, 1)
        y = box.process(0.9 * np.sin(2 * np.pi * 100 * np.arange(4800) / 48000)[:, None])
        # the input stage clips at the swing; the network passes 100 Hz at -0.004 dB, the output
        # stage holds whatever exceeds the swing
        assert np.max(np.abs(y)) * box.volts_per_unit == pytest.approx(amp.peak_v, rel=1e-3)
        assert box.hits()["rail_hits"] > 0

    def test_output_stage_into_a_heavy_load(self):
        # 20 mA into 150 ohm: 3 V peak (Ohm's law), below the 13.5 V swing; the input stage keeps its swing
        amp = OpAmp.parse("jfet")
        box = RealBoxProcessor(processor_for(NET), amp, 18.0, load_ohms=150.0)
        box.prepare(48000, 1)
        y = box.process(0.9 * np.sin(2 * np.pi * 100 * np.arange(4800) / 48000)[:, None])
        assert np.max(np.abs(y)) * box.volts_per_unit == pytest.approx(3.0, rel=1e-3)
        assert box.hits()["output_rail_hits"] > 0 and box.hits()["input_rail_hits"] == 0

    def test_noise_density(self):
        # the added noise has the density asked for: 20 nV/rtHz flat, Welch estimate within 0.5 dB
        density = 20e-9
        box = RealBoxProcessor(processor_for(NET), OpAmp.parse("jfet"), 0.0,
                               noise_density=lambda f: np.full(np.shape(f), density))
        box.prepare(48000, 1)
        y = box.process(np.zeros((480000, 1)))[:, 0] * box.volts_per_unit
        f, p = scipy.signal.welch(y, 48000, nperseg=4096)
        band = (f > 200) & (f < 18000)
        assert 10 * math.log10(np.mean(p[band]) / density ** 2) == pytest.approx(0.0, abs=0.5)

    def test_noise_block_size_does_not_matter(self):
        box = RealBoxProcessor(processor_for(NET), OpAmp.parse("jfet"), 0.0,
                               noise_density=lambda f: 1e-8 * np.ones(np.shape(f)))
        box.prepare(48000, 2)
        whole = box.process(np.zeros((20000, 2)))
        box.prepare(48000, 2)
        parts = np.concatenate([box.process(np.zeros((n, 2))) for n in (7, 9000, 10993)])
        assert np.allclose(parts, whole, atol=1e-15)


class TestAudioBandZpk:
    def test_far_pole_folded(self):
        # 1 - s/r at |s| << |r| is about 1: the reduced and the full responses agree in the band
        z, p, k = [], [-2e3, -2 * np.pi * 5e6], 2 * np.pi * 5e6 * 2e3
        _, pr, kr = audio_band_zpk(z, p, k)
        s = 2j * np.pi * np.geomspace(20, 20e3, 20)
        full = k / ((s - p[0]) * (s - p[1]))
        reduced = kr / (s - pr[0])
        assert np.max(np.abs(20 * np.log10(np.abs(full / reduced)))) < 1e-4  # (20k/5M)^2 scale
