"""What a notch removes: the dry input minus the processed output, time-aligned.

A processor whose design adds latency (the phase all-pass of :mod:`emulate.dsp.digital`,
1-4 samples) delays its output; subtracting it from the undelayed input would leave
a comb of the whole programme, not what the notch takes out. :class:`RemovedPart`
delays the dry input by the processor's ``latency_samples`` before subtracting, and
reports the same latency, so a render (:func:`emulate.audio.stream.render_file`)
compensates it as for the processor alone: OUT lines up with IN.

What this module does *not* do: it does not read or write files, and it does not
rescale the difference (it can be very quiet: listen with care when turning it up).
"""

from __future__ import annotations

import numpy as np

__all__ = ["RemovedPart"]


class RemovedPart:
    """Wrap a block processor so it returns dry minus wet: what the processing removes.

    Parameters
    ----------
    processor : object
        A block processor: ``prepare(sample_rate, channels)``, ``process(block)``,
        ``reset()`` and ``latency_samples`` (read after ``prepare``; absent means 0),
        e.g. :class:`emulate.dsp.processor.NotchProcessor`.

    Example
    -------
    >>> class Half:
    ...     latency_samples = 0
    ...     def prepare(self, rate, channels): pass
    ...     def reset(self): pass
    ...     def process(self, block): return block / 2
    >>> part = RemovedPart(Half()); part.prepare(48000, 1)
    >>> part.process(np.ones((3, 1))).ravel().tolist()
    [0.5, 0.5, 0.5]
    """

    def __init__(self, processor):
        self._processor = processor
        self._held = np.zeros((0, 1))

    @property
    def latency_samples(self) -> int:
        """int: The wrapped processor's latency, in samples."""
        return int(getattr(self._processor, "latency_samples", 0) or 0)

    def prepare(self, sample_rate, channels):
        """Prepare the wrapped processor; the dry delay line holds its latency."""
        self._processor.prepare(sample_rate, channels)
        self._held = np.zeros((self.latency_samples, int(channels)))

    def reset(self):
        """Clear the wrapped processor's state and the dry delay line."""
        self._processor.reset()
        self._held[:] = 0.0

    def process(self, block):
        """``block`` delayed by the latency, minus the processed ``block`` (float64, same shape)."""
        block = np.asarray(block, dtype=np.float64)
        both = np.concatenate([self._held, block])  # a copy, taken before the processor sees the block
        dry, self._held = both[:len(block)], both[len(block):]
        return dry - self._processor.process(block)
