"""The real box around an emulation: rails, slew rate and hiss, used only when a level is given.

:class:`RealBoxProcessor` wraps any plugin-style processor (the linear emulation
of :mod:`emulate.dsp.emulation`). Samples become volts through the studio level
(``volts_per_unit``: the peak volts of a full-scale sample), and per block:

1. input      the driving stage: held within the op-amp's swing (a take hotter
              than the rails clips before the network);
2. network    the wrapped linear emulation;
3. noise      the box's own output noise, white Gaussian noise shaped by a
              linear-phase FIR to the output noise density (optional);
4. output     the output stage: slew-limited to the op-amp's slew rate, then
              held within its swing (into ``load_ohms``, the swing its output
              current allows there); samples held at a rail and samples slowed
              by the slew limit are counted.

The network's inner op-amps (the bootstrap follower, the wet buffer) carry no
more than the output stage at any frequency for the shipped topologies (see the
level plan, :mod:`emulate.analog.levels`), so limiting the input and the output
stages is where the real box clips first. The slew limit acts per sample at the
take's rate, a first-order picture of slewing, not a transistor model.

Without a level none of this runs: the linear path stays as it is.
"""

from __future__ import annotations

import math

import numpy as np

from emulate.analog.opamp import OpAmp, dbu_to_volts_rms
from emulate.dsp import rail_kernels
from emulate.validate import check_count

__all__ = ["NOISE_TAPS", "RealBoxProcessor", "volts_per_unit"]

NOISE_TAPS = 4096
_LOWEST_NOISE_HZ = 20.0  # the density is held flat below this (its 1/f part would not converge)


def volts_per_unit(full_scale_dbu: float) -> float:
    """Peak volts of a full-scale sample: a 0 dBFS sine is ``full_scale_dbu`` rms.

    Example
    -------
    >>> round(volts_per_unit(22.0), 3)
    13.791
    """
    return math.sqrt(2) * dbu_to_volts_rms(full_scale_dbu)


class RealBoxProcessor:
    """A processor with the real stage's rails, slew rate and noise around ``inner``.

    Parameters
    ----------
    inner : processor
        The linear emulation (``prepare``, ``process``, ``latency_samples``).
    opamp : OpAmp
        The op-amp class of the input and output stages.
    full_scale_dbu : float
        What 0 dBFS of the take is, dBu.
    noise_density : callable or None
        ``f_hz -> V/sqrt(Hz)`` of the box's output noise; None: no noise added.
    load_ohms : float
        The load the output stage drives (inf: none beyond its rated load).
    seed : int
        Seed of the noise generator (the noise does not depend on the block size).

    Example
    -------
    >>> from emulate.dsp.emulation import processor_for
    >>> from emulate.analog.networks import TwinT
    >>> box = RealBoxProcessor(processor_for(TwinT.balanced(1000.0, r_ohms=10e3)),
    ...                        OpAmp.parse("rail-to-rail-cmos"), 18.0)
    >>> box.prepare(48000, 1)
    >>> y = box.process(np.full((8, 1), 0.5)); box.hits()["rail_hits"] > 0
    True
    """

    def __init__(self, inner, opamp: OpAmp, full_scale_dbu: float, *, noise_density=None, seed: int = 0,
                 load_ohms: float = math.inf):
        self.inner = inner
        self.opamp = opamp
        self.load_ohms = float(load_ohms)
        self.volts_per_unit = volts_per_unit(full_scale_dbu)
        self.noise_density = noise_density
        self.seed = check_count("noise seed", seed, 0)
        self._fs = None

    def __getattr__(self, name):  # fidelity_db, design ... of the wrapped emulation
        if name == "inner":
            raise AttributeError(name)
        return getattr(self.inner, name)

    @property
    def latency_samples(self) -> int:
        return self.inner.latency_samples

    def prepare(self, sample_rate, channels) -> None:
        """Prepare the wrapped processor and the stages at ``sample_rate`` Hz."""
        self.inner.prepare(sample_rate, channels)
        self._fs, self._channels = float(sample_rate), int(channels)
        high, low = self.opamp.swing_v
        self._high, self._low = high / self.volts_per_unit, low / self.volts_per_unit
        into = self.opamp.peak_into(self.load_ohms) / self.volts_per_unit
        self._high_out, self._low_out = min(self._high, into), max(self._low, -into)
        self._step = self.opamp.slew_v_per_s / self._fs / self.volts_per_unit
        self.reset_stages()
        self._fir = None if self.noise_density is None else self._noise_fir()
        self._fir_spectra = {}

    def reset_stages(self) -> None:
        """Clear the stages' state, the counters and the noise generator."""
        self._last_in = np.zeros(self._channels)
        self._last_out = np.zeros(self._channels)
        self._hits_in = np.zeros(2, np.int64)
        self._hits_out = np.zeros(2, np.int64)
        self._rng = np.random.default_rng(self.seed)
        self._white_tail = np.zeros((NOISE_TAPS - 1, self._channels))

    def process(self, block):
        """Input stage, the linear emulation, the box's noise, the output stage."""
        x = np.array(block, float)
        rail_kernels.rail_stage(x, math.inf, self._high, self._low, self._last_in, x, self._hits_in)
        y = self.inner.process(x)
        if self._fir is not None:
            y += self._noise(len(y))
        rail_kernels.rail_stage(y, self._step, self._high_out, self._low_out, self._last_out, y, self._hits_out)
        return y

    def hits(self) -> dict:
        """Samples held at a rail (input and output stage) and slowed by the slew limit."""
        return {"rail_hits": int(self._hits_in[0] + self._hits_out[0]),
                "input_rail_hits": int(self._hits_in[0]), "output_rail_hits": int(self._hits_out[0]),
                "slew_limited": int(self._hits_out[1]), "full_scale_dbu": round(20 * math.log10(
                    self.volts_per_unit / math.sqrt(2) / dbu_to_volts_rms(0.0)), 3),
                "opamp": self.opamp.name, "noise_added": self._fir is not None}

    # --- noise -------------------------------------------------------------------------
    def _noise_fir(self) -> np.ndarray:
        """Linear-phase FIR whose response is the density scaled for unit white noise.

        White noise of unit variance has a one-sided density of 2/fs per Hz, so a
        gain ``D(f) sqrt(fs/2)`` gives an output density ``D(f)`` V/sqrt(Hz).
        """
        f_hz = np.fft.rfftfreq(NOISE_TAPS, 1 / self._fs)
        density = self.noise_density(np.maximum(f_hz, _LOWEST_NOISE_HZ))
        gain = density * math.sqrt(self._fs / 2) / self.volts_per_unit
        return np.roll(np.fft.irfft(gain, NOISE_TAPS), NOISE_TAPS // 2) * np.hanning(NOISE_TAPS)

    def _noise(self, frames: int) -> np.ndarray:
        white = np.concatenate([self._white_tail, self._rng.standard_normal((frames, self._channels))])
        self._white_tail = white[frames:]
        n = _fft_size(len(white))
        spectrum = np.fft.rfft(white, n, axis=0)
        if n not in self._fir_spectra:
            self._fir_spectra[n] = np.fft.rfft(self._fir, n)
        fir = self._fir_spectra[n]
        return np.fft.irfft(spectrum * fir[:, None], n, axis=0)[NOISE_TAPS - 1:NOISE_TAPS - 1 + frames]


def _fft_size(n: int) -> int:
    return 1 << max(int(n - 1).bit_length(), 1)
