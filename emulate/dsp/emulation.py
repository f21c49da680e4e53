"""Hear a network: the analog model handed to the plugin-style processor.

The one place where :mod:`emulate.analog.networks` meets :mod:`emulate.dsp.processor`:

the whole network, its depth control included, is emulated as one transfer
function and the processor runs at mix 1. An ideal wet/dry mix is part of the
analog model (``(1-mix) + mix*H``, built in :mod:`emulate.analog.networks`), and so is a
real depth potentiometer.

Why not mix in the processor: the fitted digital sections match the analog
*magnitude* within the fidelity target, not its phase, and a wet/dry sum depends
on the phase of the wet path. Measured on the shipped passive preset at 48 kHz:
0.08 dB off with the whole network emulated, 0.55 dB off when the processor
mixed dry with the emulated wet path at mix 0.7. The processor's own smoothed
mix (``set_mix``) stays available for live changes, with that caveat.

The digital notch is prewarped at the analog network's measured notch.

With real op-amps (``network.opamp``) the network has poles near each op-amp's
gain-bandwidth, megahertz away from the audio band; those beyond
``FAR_ROOT_HZ`` are folded into the gain (a root r contributes ``1 - s/r``, about
1 in the band: at most 0.007 dB at 20 kHz), so the digital design sees only what
the audio band can hear.
"""

from __future__ import annotations

import numpy as np

from emulate.analog.networks import TwinT
from emulate.dsp.processor import NotchProcessor
from emulate.analog.response import measure_notch
from emulate.analog.stability import check_stability
from emulate.errors import CircuitError

__all__ = ["DESIGN_TOLERANCE_DB", "FAR_ROOT_HZ", "processor_for", "digital_for", "audio_band_zpk"]


DESIGN_TOLERANCE_DB = 0.05  # half the 0.1 dB fidelity target: margin for the worst grid cases
FAR_ROOT_HZ = 500e3


def processor_for(network: TwinT, *, tolerance_db: float = DESIGN_TOLERANCE_DB,
                  smoothing_ms: float = 20.0) -> NotchProcessor:
    """A :class:`NotchProcessor` that emulates ``network`` (not yet prepared).

    The notch is the measured one (None where no notch lies in 1 Hz - 200 kHz).

    Raises
    ------
    CircuitError
        If the network is unstable (it oscillates; the message names the frequency).

    Example
    -------
    >>> proc = processor_for(TwinT.balanced(6000.0, r_ohms=10e3))
    >>> proc.prepare(48000, 2); proc.design.meets_target
    True
    """
    reading = measure_notch(network.response)
    notch_hz = reading.notch_hz if reading.in_range else None
    stability = check_stability(network)
    if not stability.stable:
        raise CircuitError(f"the network is {stability.describe()}; there is no steady response to emulate")
    z, p, k = audio_band_zpk(*network.zpk())
    return NotchProcessor(z, p, k, notch_hz=notch_hz, mix=1.0,
                          tolerance_db=tolerance_db, smoothing_ms=smoothing_ms)


def digital_for(network: TwinT, fs: float, *, tolerance_db: float = DESIGN_TOLERANCE_DB):
    """The digital sections that emulate ``network`` at ``fs`` Hz (a prepared processor's design)."""
    processor = processor_for(network, tolerance_db=tolerance_db)
    processor.prepare(fs, 1)
    return processor.design


def audio_band_zpk(z, p, k, far_hz: float = FAR_ROOT_HZ):
    """``(z, p, k)`` without roots beyond ``far_hz``, each folded into the gain as ``1 - s/r``.

    Example
    -------
    >>> z, p, k = audio_band_zpk([], [-1e3, -2 * np.pi * 10e6], 2 * np.pi * 10e6)
    >>> p.tolist(), round(k, 6)
    ([(-1000+0j)], 1.0)
    """
    z, p = np.asarray(z, complex), np.asarray(p, complex)
    limit = 2 * np.pi * far_hz
    far_z, far_p = np.abs(z) > limit, np.abs(p) > limit
    # keep H(s) proper: the nearest far poles stay while the near zeros outnumber the near poles
    for i in np.argsort(np.abs(p)):
        if np.sum(~far_z) <= np.sum(~far_p):
            break
        far_p[i] = False
    k = float((k * np.prod(-z[far_z]) / np.prod(-p[far_p])).real)
    return z[~far_z], p[~far_p], k
