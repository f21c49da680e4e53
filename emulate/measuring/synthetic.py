"""Synthetic builds: the stimulus played through a model of a box with known faults.

For the tests, the benchmark and anyone checking the analysis before a real
measurement: the stimulus of a :class:`~emulate.measuring.stimulus.SweepPlan` is
played through a network (parts as built), then delayed by a latency, scaled by
a gain, and white Gaussian noise is added.

``through="analog"`` (default) filters with the exact analog response: the
stimulus, zero-padded to a power of two at least twice its length, is
multiplied by ``H(j 2 pi f)`` at every FFT bin (the circular wrap of the
network's ring-out is below -200 dB after a second of silence for any audio-band
notch). ``through="emulation"`` renders it through the digital emulation
(:mod:`emulate.dsp.emulation`) instead, as ``emulate render`` would.
"""

from __future__ import annotations

import numpy as np

from emulate.dsp.emulation import processor_for
from emulate.errors import BadValueError
from emulate.validate import check_count, check_range

__all__ = ["perturbed", "synthetic_recording"]


def perturbed(network, errors: dict):
    """``network`` with each named part scaled by ``1 + error`` (``{"c3": 0.04}`` = C3 4 % high).

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> round(perturbed(TwinT.balanced(1000.0, r_ohms=10e3), {"r3": -0.1}).r3)
    4500
    """
    return network.replace(**{name: getattr(network, name) * (1 + e) for name, e in errors.items()})


def synthetic_recording(plan, network, *, latency_samples: int = 0, gain_db: float = 0.0,
                        noise_dbfs: float | None = None, seed: int = 0, through: str = "analog") -> np.ndarray:
    """The stimulus of ``plan`` through ``network``, delayed, scaled and with noise, mono.

    Parameters
    ----------
    plan : SweepPlan
    network : TwinT
        The box as built.
    latency_samples : int
        Leading samples of silence (the playback-record loop).
    gain_db : float
        Overall gain of the loop, dB.
    noise_dbfs : float or None
        RMS level of added white noise, dBFS; None for none.
    seed : int
    through : str
        ``"analog"`` (exact response) or ``"emulation"`` (the digital emulation).

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> from emulate.measuring.stimulus import SweepPlan
    >>> plan = SweepPlan(48000.0, seconds=1.0)
    >>> len(synthetic_recording(plan, TwinT.balanced(1000.0, r_ohms=10e3), latency_samples=100)) - plan.total_frames
    100
    """
    latency_samples = check_count("latency (samples)", latency_samples, 0)
    check_range("gain (dB)", gain_db, -60.0, 60.0)
    if through not in ("analog", "emulation"):
        raise BadValueError(f"through {through!r}: allowed analog, emulation")
    y = _played(plan, network, through) * 10 ** (gain_db / 20)
    y = np.concatenate([np.zeros(latency_samples), y])
    if noise_dbfs is not None:
        check_range("noise (dBFS)", noise_dbfs, -200.0, 0.0)
        y = y + 10 ** (noise_dbfs / 20) * np.random.default_rng(seed).standard_normal(len(y))
    return y


def _played(plan, network, through: str) -> np.ndarray:
    x = plan.signal()
    if through == "emulation":
        processor = processor_for(network)
        processor.prepare(plan.fs, 1)
        return processor.process(x[:, None])[:, 0]
    n = 1 << int(2 * len(x) - 1).bit_length()
    f = np.fft.rfftfreq(n, 1 / plan.fs)
    return np.fft.irfft(np.fft.rfft(x, n) * network.response(f), n)[:len(x)]
