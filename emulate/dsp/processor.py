"""The stateful, block-based notch processor (plugin-style prepare / process / reset).

Per block, top to bottom:

1. validate   shape (frames, channels) with the prepared channel count, finite samples.
2. wet        cascaded sections of the current design (:func:`emulate.dsp.kernels.sos_filter`).
3. crossfade  after :meth:`NotchProcessor.set_circuit`, the old design keeps running and
              its output fades linearly into the new one's over the smoothing time.
4. dry        the input, delayed by the design latency (0, or 1-4 samples where the phase all-pass is used).
5. mix        H_mix = (1 - m) + m H, m ramped linearly to its target over the
              smoothing time (no zipper noise, no clicks).

Every stage is a per-sample recurrence with its state carried across blocks,
so the output does not depend on the block size.
"""

from __future__ import annotations

import math

import numpy as np

from emulate.dsp import digital
from emulate.dsp.depth import check_mix
from emulate.dsp.digital import check_sample_rate_hz, design_sections
from emulate.dsp.state_layout import RAMP_STEP, RAMP_TARGET, RAMP_VALUE
from emulate.errors import BadValueError, EmulateError
from emulate.validate import check_count, check_range

__all__ = ["NotchProcessor"]

_CHUNK_FRAMES = 2048  # process_codes' float samples per kernel chunk: a few tens of kB, in cache


def _check_smoothing_ms(smoothing_ms):
    """Return ``smoothing_ms`` as float if finite and >= 0 ms, else raise BadValueError."""
    check_range("smoothing (ms)", smoothing_ms, 0.0, math.inf, high_open=True)
    return float(smoothing_ms)


def _kernels():
    """The kernels, loaded on the first block (compiled ahead of time, else numba's JIT):
    a design or a response needs neither."""
    from emulate.dsp.compiled import kernels

    return kernels()


class _Stage:
    """One digital design with its per-channel filter state."""

    def __init__(self, design, channels):
        self.design = design
        self.state = np.zeros((design.sos.shape[0], channels, 2))

    def run(self, x):
        out = np.empty_like(x)
        _kernels().sos_filter(self.design.sos, x, self.state, out)
        return out


class NotchProcessor:
    """Block processor emulating an analog notch with a smoothed wet/dry mix.

    Parameters
    ----------
    z, p : array_like
        Analog zeros and poles in rad/s (scipy convention).
    k : float
        Analog gain.
    notch_hz : float
        Analog notch frequency in Hz (at or above Nyquist: the part below it is emulated;
        None for a network with no notch).
    mix : float, optional
        Wet/dry mix, 0 (dry) to 1 (full notch).
    smoothing_ms : float, optional
        Time in ms for mix changes and circuit crossfades, >= 0 (0: jump).
    tolerance_db : float, optional
        Fidelity tolerance passed to :func:`emulate.dsp.digital.design_sections`, > 0 dB
        (default 0.1 dB, the fidelity target; :func:`emulate.dsp.emulation.processor_for`
        asks for 0.05 dB for margin: on the bench_fidelity grid that costs one more
        section in 20 of 246 designs, never more than 3 sections in all).

    Raises
    ------
    BadValueError
        If ``mix`` or ``smoothing_ms`` is not allowed (the circuit is checked in
        :meth:`prepare`, when the rate is known).

    Example
    -------
    >>> w0 = 2 * np.pi * 6000.0
    >>> proc = NotchProcessor([1j * w0, -1j * w0], np.roots([1, 4 * w0, w0 ** 2]), 1.0, notch_hz=6000)
    >>> proc.prepare(48000, 2)
    >>> proc.process(np.zeros((256, 2))).shape
    (256, 2)
    """

    def __init__(self, z, p, k, *, notch_hz, mix=1.0, smoothing_ms=20.0, tolerance_db=0.1):
        self._circuit = (z, p, k, notch_hz)
        self._mix = check_mix(mix)
        self._smoothing_ms = _check_smoothing_ms(smoothing_ms)
        self._tolerance_db = tolerance_db
        self._fs = None
        self._channels = None
        self._stage = None
        self._old = None  # stage being faded out
        self._pending = None  # circuit waiting for the current fade to finish
        self._fade = np.zeros(3)
        self._mix_ramp = np.array([self._mix, 1.0, self._mix])
        self._delay = None
        self._scratch = None  # process_codes' work space, (3, chunk, channels)

    # --- lifecycle -----------------------------------------------------------

    def prepare(self, sample_rate, channels):
        """Design the sections at ``sample_rate`` Hz for ``channels`` channels and clear all state.

        Parameters
        ----------
        sample_rate : float
            Sample rate in Hz, > 0.
        channels : int
            Channel count, >= 1.

        Raises
        ------
        BadValueError
            If the rate, channel count or notch (not below Nyquist) is not allowed.
        CircuitError
            If the analog H(s) is improper or unstable.

        Example
        -------
        >>> w0 = 2 * np.pi * 1000.0
        >>> proc = NotchProcessor([1j * w0, -1j * w0], np.roots([1, 4 * w0, w0 ** 2]), 1.0, notch_hz=1000)
        >>> proc.prepare(44100, 1); proc.latency_samples <= 4  # the phase all-pass order, if any
        True
        """
        self._fs = check_sample_rate_hz(sample_rate)
        self._channels = check_count("channels", channels, 1)
        self._scratch = None
        self._stage = _Stage(self._design(*self._circuit), self._channels)
        self.reset()

    def reset(self):
        """Clear filter and delay state, finish any crossfade and jump the mix to its target.

        Raises
        ------
        EmulateError
            If :meth:`prepare` has not been called.

        Example
        -------
        >>> w0 = 2 * np.pi * 1000.0
        >>> proc = NotchProcessor([1j * w0, -1j * w0], np.roots([1, 4 * w0, w0 ** 2]), 1.0, notch_hz=1000)
        >>> proc.prepare(44100, 1); proc.reset()
        """
        self._require_prepared()
        if self._pending is not None:
            self._stage = _Stage(self._design(*self._pending), self._channels)
            self._pending = None
        self._old = None
        self._stage.state[:] = 0.0
        self._mix_ramp[:] = (self._mix, 1.0, self._mix)
        latency = self._stage.design.latency_samples
        self._delay = (np.zeros((latency, self._channels)), np.zeros(1, np.int64)) if latency else None

    # --- properties ----------------------------------------------------------

    @property
    def latency_samples(self):
        """int: Latency in samples of the current design (0 before :meth:`prepare`)."""
        return 0 if self._stage is None else int(self._stage.design.latency_samples)

    @property
    def fidelity_db(self):
        """float: Worst |dB| error of the current design against the analog (NaN before :meth:`prepare`)."""
        return math.nan if self._stage is None else float(self._stage.design.fidelity_db)

    @property
    def design(self):
        """DigitalNotch or None: The current digital design."""
        return None if self._stage is None else self._stage.design

    # --- settings ------------------------------------------------------------

    def set_mix(self, mix):
        """Move the wet/dry mix to ``mix`` over the smoothing time (linear ramp, no clicks).

        Parameters
        ----------
        mix : float
            0 (dry) to 1 (full notch), endpoints included.

        Raises
        ------
        BadValueError
            If ``mix`` is not in [0, 1].

        Example
        -------
        >>> w0 = 2 * np.pi * 1000.0
        >>> proc = NotchProcessor([1j * w0, -1j * w0], np.roots([1, 4 * w0, w0 ** 2]), 1.0, notch_hz=1000)
        >>> proc.set_mix(0.5)
        """
        self._mix = check_mix(mix)
        if self._fs is None:
            self._mix_ramp[:] = (self._mix, 1.0, self._mix)
            return
        distance = abs(self._mix - self._mix_ramp[RAMP_VALUE])
        self._mix_ramp[RAMP_STEP] = max(distance, 1e-12) / self._ramp_samples()
        self._mix_ramp[RAMP_TARGET] = self._mix

    def set_circuit(self, z, p, k, notch_hz):
        """Switch to a new analog circuit, crossfading from the old filter over the smoothing time.

        If a crossfade is still running, the new circuit waits until it ends
        (the latest request wins).  Before :meth:`prepare`, it just replaces the circuit.

        Parameters
        ----------
        z, p : array_like
            Analog zeros and poles in rad/s.
        k : float
            Analog gain.
        notch_hz : float
            Analog notch frequency in Hz, below Nyquist.

        Raises
        ------
        BadValueError
            If the notch is not below Nyquist at the prepared rate.
        CircuitError
            If the analog H(s) is improper or unstable.

        Example
        -------
        >>> w0 = 2 * np.pi * 1000.0
        >>> proc = NotchProcessor([1j * w0, -1j * w0], np.roots([1, 4 * w0, w0 ** 2]), 1.0, notch_hz=1000)
        >>> proc.prepare(44100, 1); proc.set_circuit([2j * w0, -2j * w0], np.roots([1, 8 * w0, 4 * w0 ** 2]), 1.0, 2000)
        """
        circuit = (z, p, k, notch_hz)
        if self._fs is None:
            self._circuit = circuit
            return
        design = self._design(*circuit)  # validate now, whatever happens next
        self._circuit = circuit
        if self._old is not None:
            self._pending = circuit
            return
        self._start_fade(design)

    def frequency_response(self, f_hz):
        """Complex response at ``f_hz`` of what :meth:`process` does once settled.

        The current design's sections and the dry path delayed by the latency, mixed at
        the mix target: ``(1 - m) exp(-j w L) + m H(exp(j w))``, evaluated from the
        second-order sections in one vectorised call (no impulse response, no
        truncation). A crossfade or mix ramp in progress is not included.

        Parameters
        ----------
        f_hz : array_like
            Frequencies in Hz (any shape, 0 to Nyquist meaningful).

        Returns
        -------
        ndarray of complex
            The response, the shape of ``f_hz``.

        Raises
        ------
        EmulateError
            If :meth:`prepare` has not been called.

        Example
        -------
        >>> w0 = 2 * np.pi * 1000.0
        >>> proc = NotchProcessor([1j * w0, -1j * w0], np.roots([1, 4 * w0, w0 ** 2]), 1.0, notch_hz=1000)
        >>> proc.prepare(48000, 1); float(abs(proc.frequency_response(1000.0))) < 1e-6
        True
        """
        self._require_prepared()
        f = np.asarray(f_hz, dtype=float)
        wet = digital._sos_response_z(self._stage.design.sos, f.ravel(), self._fs).reshape(f.shape)
        dry = np.exp(-2j * np.pi * f * self.latency_samples / self._fs)
        return (1.0 - self._mix) * dry + self._mix * wet

    # --- processing ----------------------------------------------------------

    def process(self, block):
        """Process one block of samples.

        Parameters
        ----------
        block : array_like, shape (frames, channels)
            Float samples, any frames >= 0, the prepared channel count, finite.

        Returns
        -------
        ndarray, shape (frames, channels)
            float64, a new array (the input is not modified).

        Raises
        ------
        EmulateError
            If :meth:`prepare` has not been called.
        BadValueError
            If the block is not 2-D with the prepared channel count, or holds NaN/Inf.

        Example
        -------
        >>> w0 = 2 * np.pi * 1000.0
        >>> proc = NotchProcessor([1j * w0, -1j * w0], np.roots([1, 4 * w0, w0 ** 2]), 1.0, notch_hz=1000, mix=0.0)
        >>> proc.prepare(44100, 1); float(proc.process(np.ones((4, 1)))[3, 0])
        1.0
        """
        x = self._check_block(block)
        wet = self._stage.run(x)
        if self._old is not None:
            _kernels().ramp_blend(self._old.run(x), wet, self._fade, wet)
            if self._fade[RAMP_VALUE] >= 1.0:
                self._end_fade()
        if self._old is None and self._mix_settled_at(1.0):
            return wet  # what ramp_blend gives at g = 1 (0 * dry + 1 * wet), without the pass
        dry = self._dry(x)
        out = np.empty_like(x)
        _kernels().ramp_blend(dry, wet, self._mix_ramp, out)
        return out

    def process_codes(self, codes, in_scale, encoder, out, skip=0):
        """Filter a block of integer codes straight into integer codes (a render's one pass).

        The codes written are those of ``encoder.encode(self.process(codes * in_scale)[skip:])``
        (the same arithmetic per sample, the same dither sequence), but computed in one
        kernel pass (:func:`emulate.dsp.kernels.filter_codes`) with no float block in
        memory. During a crossfade it takes that float path itself.

        Parameters
        ----------
        codes : ndarray of int16 or int32, shape (frames, channels), C-contiguous
            Input codes, left-aligned in their container (as libsndfile reads them).
        in_scale : float
            ``2**-(container bits - 1)``: what a code is worth (full scale 1.0).
        encoder : emulate.audio.encode.Encoder
            The output's encoder, integer PCM (its ``code_args`` and ``count_codes``).
        out : ndarray of ``encoder.code_dtype``, shape (frames - skip, channels), C-contiguous
            The output codes.
        skip : int, optional
            Output frames at the start filtered but dropped (latency compensation).

        Raises
        ------
        EmulateError
            If :meth:`prepare` has not been called, or the output held NaN/Inf.
        BadValueError
            If the arrays are not as described.

        Example
        -------
        >>> from emulate.audio.encode import Encoder
        >>> w0 = 2 * np.pi * 1000.0
        >>> proc = NotchProcessor([1j * w0, -1j * w0], np.roots([1, 4 * w0, w0 ** 2]), 1.0, notch_hz=1000, mix=0.0)
        >>> proc.prepare(44100, 1); out = np.empty((4, 1), np.int16)
        >>> proc.process_codes(np.full((4, 1), 1000, np.int16), 2.0 ** -15, Encoder("PCM_16", False, 0), out)
        >>> out[:, 0].tolist(), proc.latency_samples  # mix 0: the dry path, delayed by the latency
        ([0, 1000, 1000, 1000], 1)
        """
        self._require_prepared()
        self._check_codes(codes, out, skip)
        if self._old is not None:  # a crossfade: the float path (rare: live circuit changes)
            out[:] = encoder.encode(self.process(codes * in_scale)[skip:])
            return
        blend = not self._mix_settled_at(1.0)
        dry_buffer, dry_position = self._delay or (np.zeros((0, self._channels)), np.zeros(1, np.int64))
        if self._scratch is None:
            self._scratch = np.empty((3, _CHUNK_FRAMES, self._channels))
        stage = self._stage
        _kernels().filter_codes(codes, float(in_scale), stage.design.sos, stage.state, blend, self._mix_ramp,
                                dry_buffer, dry_position, int(skip), *encoder.code_args(), self._scratch, out)
        encoder.count_codes()

    # --- helpers -------------------------------------------------------------

    def _design(self, z, p, k, notch_hz):
        return design_sections(z, p, k, self._fs, notch_hz=notch_hz, tolerance_db=self._tolerance_db)

    def _mix_settled_at(self, value):
        ramp = self._mix_ramp
        return ramp[RAMP_VALUE] == ramp[RAMP_TARGET] == value

    def _ramp_samples(self):
        return max(1.0, round(self._smoothing_ms * 1e-3 * self._fs))

    def _start_fade(self, design):
        self._old = self._stage
        self._stage = _Stage(design, self._channels)
        self._fade[:] = (0.0, 1.0 / self._ramp_samples(), 1.0)

    def _end_fade(self):
        self._old = None
        if self._pending is not None:
            pending, self._pending = self._pending, None
            self._start_fade(self._design(*pending))

    def _dry(self, x):
        if self._delay is None:
            return x
        out = np.empty_like(x)
        _kernels().delay_line(x, self._delay[0], self._delay[1], out)
        return out

    def _require_prepared(self):
        if self._stage is None:
            raise EmulateError("NotchProcessor is not prepared; call prepare(sample_rate, channels) first")

    def _check_codes(self, codes, out, skip):
        channels = self._channels
        for name, a, frames in (("codes", codes, None), ("out", out, len(codes) - skip)):
            if (not isinstance(a, np.ndarray) or a.dtype not in (np.int16, np.int32) or a.ndim != 2
                    or a.shape[1] != channels or not a.flags.c_contiguous
                    or (frames is not None and len(a) != frames)):
                raise BadValueError(
                    f"{name} of {getattr(a, 'dtype', type(a).__name__)} {getattr(a, 'shape', '')} is not "
                    f"allowed; allowed: C-contiguous int16/int32 ({frames if frames is not None else 'frames'}, "
                    f"{channels})")
        if not 0 <= skip <= len(codes):
            raise BadValueError(f"skip {skip} is not allowed; allowed: 0 to {len(codes)} frames")

    def _check_block(self, block):
        self._require_prepared()
        x = np.asarray(block)
        if x.ndim != 2 or x.shape[1] != self._channels:
            raise BadValueError(
                f"block shape {x.shape} is not allowed; allowed: (frames, {self._channels}) as prepared"
            )
        if not (np.issubdtype(x.dtype, np.floating) or np.issubdtype(x.dtype, np.integer)):
            raise BadValueError(f"block dtype {x.dtype} is not allowed; allowed: real float samples")
        x = np.ascontiguousarray(x, dtype=np.float64)
        # a sum of finite samples is finite unless values near 1e308 overflow; only then
        # (or on a real NaN/Inf) is the per-sample check run
        if not math.isfinite(x.sum()) and not np.all(np.isfinite(x)):
            bad = np.argwhere(~np.isfinite(x))[0]
            raise BadValueError(
                f"block holds NaN/Inf samples (first at frame {bad[0]}, channel {bad[1]}); allowed: finite samples"
            )
        return x
