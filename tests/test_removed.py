"""Tests of what a notch removes (emulate.dsp.removed.RemovedPart): dry minus wet, time-aligned.

Reference: the definition (the removed part plus the wet render gives back the dry take, sample
for sample) with both renders through :func:`emulate.audio.stream.render_file`, which compensates
the latency of the phase all-pass (1-4 samples, :mod:`emulate.dsp.digital`).
"""

from __future__ import annotations

import numpy as np
import pytest

from emulate.audio import stream as audio
from emulate.dsp import emulation
from emulate.dsp.removed import RemovedPart
from emulate.voice import synth
from emulate.work import sweep

FS = 48000


@pytest.fixture
def take(tmp_path):
    x = synth.voice_like_take(FS, 1.0, pitch_hz=120.0, sibilance_hz=6000.0, seed=3, channels=2)
    audio.write_array(tmp_path / "take.wav", x, FS, subtype="FLOAT")
    return tmp_path / "take.wav"


def processor(mix=1.0):
    # 6 kHz passive twin-T at 48 kHz: its design has 2 samples of latency (a phase all-pass)
    return emulation.processor_for(sweep.SweepPlan(notches_hz=(6000.0,), mix=mix).network(6000.0))


class TestRemovedPart:
    def test_latency_is_the_wrapped_processors(self):
        inner, part = processor(), RemovedPart(processor())
        inner.prepare(FS, 2)
        part.prepare(FS, 2)
        assert part.latency_samples == inner.latency_samples > 0  # the case the alignment is for

    def test_removed_plus_wet_is_the_dry_take(self, take, tmp_path):
        audio.render_file(take, tmp_path / "wet.wav", processor(), subtype="FLOAT")
        audio.render_file(take, tmp_path / "removed.wav", RemovedPart(processor()), subtype="FLOAT")
        dry, _ = audio.read_all(take)
        wet, _ = audio.read_all(tmp_path / "wet.wav")
        removed, _ = audio.read_all(tmp_path / "removed.wav")
        assert removed.shape == dry.shape
        # float32 files: each sample rounded to 2^-24 relative, so 1e-6 absolute at these levels
        np.testing.assert_allclose(removed + wet, dry, atol=1e-6)

    def test_regression_unaligned_difference_misses_the_dry_take(self, take, tmp_path):
        # without the delay, dry minus the processor's raw output is off by the latency: adding the
        # (aligned) wet render back does not give the dry take, by far more than rounding
        audio.render_file(take, tmp_path / "wet.wav", processor(), subtype="FLOAT")
        wet, _ = audio.read_all(tmp_path / "wet.wav")
        dry, _ = audio.read_all(take)
        inner = processor()
        inner.prepare(FS, 2)
        unaligned = dry - inner.process(dry.copy())
        assert np.max(np.abs(unaligned + wet - dry)) > 1e-2

    def test_no_mix_removes_nothing(self, take, tmp_path):
        audio.render_file(take, tmp_path / "removed.wav", RemovedPart(processor(mix=0.0)), subtype="FLOAT")
        removed, _ = audio.read_all(tmp_path / "removed.wav")
        assert np.max(np.abs(removed)) < 1e-6

    def test_block_by_block_equals_whole(self, take):
        dry, _ = audio.read_all(take)
        whole, blocks = RemovedPart(processor()), RemovedPart(processor())
        whole.prepare(FS, 2)
        blocks.prepare(FS, 2)
        pieces = [blocks.process(dry[i:i + 517]) for i in range(0, len(dry), 517)]
        np.testing.assert_allclose(np.concatenate(pieces), whole.process(dry), atol=1e-12)

    def test_reset_clears_the_delay(self, take):
        dry, _ = audio.read_all(take)
        part = RemovedPart(processor())
        part.prepare(FS, 2)
        first = part.process(dry)
        part.reset()
        np.testing.assert_allclose(part.process(dry), first, atol=1e-12)
