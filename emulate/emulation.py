"""Hear a network: the analog model handed to the plugin-style processor.

The one place where :mod:`emulate.networks` meets :mod:`emulate.processor`:

* an ideal wet/dry mix is emulated as the processor's own mix around the
  full-notch network (the same ``(1-mix) + mix*H`` as the analog model);
* a real depth potentiometer changes the network itself, so the whole network
  (pot included) is emulated at mix 1.

The digital notch is prewarped at the analog network's measured notch.
"""

from __future__ import annotations

from emulate import audio
from emulate.networks import TwinT
from emulate.processor import NotchProcessor
from emulate.response import measure


def processor_for(network: TwinT, *, tolerance_db: float = 0.1, smoothing_ms: float = 20.0) -> NotchProcessor:
    """A :class:`NotchProcessor` that emulates ``network`` (not yet prepared).

    Example
    -------
    >>> proc = processor_for(TwinT.balanced(6000.0, r_ohms=10e3))
    >>> proc.prepare(48000, 2); proc.latency_samples
    0
    """
    emulated, mix = _emulated(network)
    notch_hz = measure(emulated.response).notch_hz
    z, p, k = emulated.zpk()
    return NotchProcessor(z, p, k, notch_hz=notch_hz, mix=mix,
                          tolerance_db=tolerance_db, smoothing_ms=smoothing_ms)


def digital_for(network: TwinT, fs: float, *, tolerance_db: float = 0.1):
    """The digital sections that emulate ``network`` at ``fs`` Hz (a prepared processor's design)."""
    processor = processor_for(network, tolerance_db=tolerance_db)
    processor.prepare(fs, 1)
    return processor.design


def _emulated(network: TwinT) -> tuple[TwinT, float]:
    if network.depth_pot_ohms is not None:
        return network, 1.0
    return network.wet(), network.mix


def render_take(in_path, out_path, network: TwinT, **options) -> audio.RenderReport:
    """Render one take through ``network``; ``options`` go to :func:`emulate.audio.render_file`."""
    return audio.render_file(in_path, out_path, processor_for(network), **options)
