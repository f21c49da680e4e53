"""The streamed averaged spectrum (emulate.audio.spectrum) against scipy.signal.welch.

Reference: scipy.signal.welch with its defaults (periodic Hann window, half overlap,
constant detrend, one-sided density, mean average), averaged over channels. Both sum the
same squares in a different order: 1e-10 relative is rounding.
"""

import numpy as np
import pytest
import soundfile as sf
from scipy import signal

from emulate.audio import spectrum
from emulate.audio.spectrum import average_power_density
from emulate.errors import BadValueError

SAME_REL = 1e-10


def reference(x, fs, nperseg):
    x = x[:, None] if x.ndim == 1 else x
    f, p = signal.welch(x, fs=fs, nperseg=min(nperseg, len(x)), axis=0)
    return f, np.mean(p, axis=1)


class TestAveragePowerDensity:
    @pytest.mark.parametrize("frames, channels, nperseg", [
        (5000, 2, 256),   # many segments, several chunks, a remainder dropped as welch drops it
        (4096, 1, 256),   # mono, ends on a segment boundary
        (1000, 2, 255),   # odd segment: no Nyquist bin
        (100, 1, 256),    # shorter than a segment: one segment of the whole take
    ])
    def test_array_equals_welch(self, monkeypatch, frames, channels, nperseg):
        monkeypatch.setattr(spectrum, "SEGMENTS_PER_CHUNK", 3)  # many chunks even on a short take
        x = np.random.default_rng(frames).normal(size=(frames, channels)) + 0.1
        f, p = average_power_density(x, 8000.0, nperseg)
        f_ref, p_ref = reference(x, 8000.0, nperseg)
        np.testing.assert_allclose(f, f_ref)
        np.testing.assert_allclose(p, p_ref, rtol=SAME_REL)

    def test_file_streamed_equals_welch(self, tmp_path, monkeypatch):
        monkeypatch.setattr(spectrum, "SEGMENTS_PER_CHUNK", 4)
        x = np.random.default_rng(1).uniform(-0.5, 0.5, size=(7777, 2))
        sf.write(tmp_path / "t.wav", x, 16000, subtype="FLOAT")
        f, p = average_power_density(tmp_path / "t.wav", nperseg=512)
        f_ref, p_ref = reference(x.astype(np.float32).astype(float), 16000, 512)
        np.testing.assert_allclose(f, f_ref)
        np.testing.assert_allclose(p, p_ref, rtol=SAME_REL)

    @pytest.mark.parametrize("take, fs", [(np.zeros(10), 8000.0), (np.zeros((100, 2)), None),
                                          (np.zeros((100, 2)), -1.0), (np.zeros((4, 4, 4)), 8000.0)])
    def test_refuses(self, take, fs):
        with pytest.raises(BadValueError):
            average_power_density(take, fs)
