"""The validators shared across modules, one per concept.

Bounded numbers (:func:`check_range`), counts (:func:`check_count`), sample rates
(:func:`check_sample_rate_hz`), frequency bands (:func:`check_band_hz`), durations
(:func:`check_seconds`) and random seeds (:func:`check_seed`). Each message shows the
bad value and what is allowed; modules bind their own limits (a finder's rates, a
generator's bands) but keep no checks of their own.
"""

from __future__ import annotations

import math
import numbers

import numpy as np

from emulate.errors import BadValueError

__all__ = ["check_range", "check_count", "check_sample_rate_hz", "check_band_hz", "check_seconds", "check_seed"]


def check_range(what: str, value, low: float, high: float, *,
                low_open: bool = False, high_open: bool = False):
    """Raise :class:`BadValueError` unless ``low <= value <= high`` (open ends as flagged).

    ``value`` may be a number or an array (every element is checked). The message
    shows the value and the allowed interval, e.g. ``mix 1.5: allowed [0, 1]``.
    Returns the value as a float (a number) or a float array.

    Example
    -------
    >>> check_range("mix", 0.5, 0.0, 1.0)
    0.5
    """
    try:
        array = np.asarray(value, float)
    except (TypeError, ValueError):
        array = np.array(np.nan)
    below = array <= low if low_open else array < low
    above = array >= high if high_open else array > high
    if np.any(np.isnan(array)) or np.any(below) or np.any(above):
        left, right = "(" if low_open else "[", ")" if high_open else "]"
        raise BadValueError(f"{what} {value!r}: allowed {left}{low:g}, {high:g}{right}",
                            what=what, value=value, allowed=(low, high))
    return float(array) if array.ndim == 0 else array


def check_count(what: str, value, low: int = 1, high: float = math.inf) -> int:
    """Return ``value`` as int if it is a whole number with ``low <= value <= high``.

    A whole number is an int, a numpy integer or an integral float (2.0); bools,
    strings and fractions are refused. The message shows the value and the
    allowed range, e.g. ``channels 0: allowed a whole number from 1 to 8``.

    Parameters
    ----------
    what : str
        Name shown in the message (with its unit, if any).
    value : object
        The count to check.
    low : int, optional
        Smallest allowed value (default 1), included.
    high : int or float, optional
        Largest allowed value, included (default ``inf``: no upper bound).

    Returns
    -------
    int

    Raises
    ------
    BadValueError
        If ``value`` is not a whole number in ``[low, high]``.

    Example
    -------
    >>> check_count("channels", 2.0, 1, 8)
    2
    """
    whole = (isinstance(value, (numbers.Integral, float)) and not isinstance(value, bool)
             and math.isfinite(value) and value % 1 == 0)
    if not whole or not low <= value <= high:
        allowed = f"from {low} to {high}" if math.isfinite(high) else f">= {low}"
        raise BadValueError(f"{what} {value!r}: allowed a whole number {allowed}",
                            what=what, value=value, allowed=(low, high))
    return int(value)


def check_sample_rate_hz(fs, low_hz: float = 0.0, high_hz: float = math.inf) -> float:
    """Return ``fs`` as float after checking it is a finite rate above 0 Hz, within [low_hz, high_hz].

    With the defaults any finite rate > 0 Hz is allowed; a module that analyses only
    some rates passes its limits (endpoints included).

    Raises
    ------
    BadValueError
        If ``fs`` is not a number in the allowed range.

    Example
    -------
    >>> check_sample_rate_hz(48000), check_sample_rate_hz(16000, 16000, 384000)
    (48000.0, 16000.0)
    """
    return check_range("sample rate (Hz)", fs, low_hz, high_hz, low_open=low_hz <= 0.0,
                       high_open=math.isinf(high_hz))


def check_band_hz(band_hz, fs: float, name: str = "band_hz") -> tuple[float, float]:
    """Validate a band ``(lo, hi)`` in Hz with ``0 < lo < hi``; clip ``hi`` to Nyquist.

    After clipping, ``lo`` must still lie below Nyquist (``fs / 2``).

    Raises
    ------
    BadValueError
        Not a pair of numbers, or out of order, or ``lo`` at or above Nyquist.

    Example
    -------
    >>> check_band_hz((2000, 30000), 48000)
    (2000.0, 24000.0)
    """
    try:
        lo, hi = (float(v) for v in band_hz)
    except (TypeError, ValueError):
        raise BadValueError(f"{name} = {band_hz!r} is not a (lo, hi) pair of frequencies in Hz",
                            what=name, value=band_hz) from None
    nyquist = fs / 2.0
    if not (0.0 < lo < hi and lo < nyquist):
        raise BadValueError(
            f"{name} = ({lo:g}, {hi:g}) Hz is not allowed; need 0 < lo < hi and lo < {nyquist:g} Hz (Nyquist)",
            what=name, value=band_hz, allowed=(0.0, nyquist))
    return lo, min(hi, nyquist)


def check_seconds(seconds, name: str) -> float:
    """Validate a positive finite duration in seconds.

    Raises
    ------
    BadValueError
        Not finite or not above 0.

    Example
    -------
    >>> check_seconds(2, "seconds")
    2.0
    """
    seconds = float(seconds)
    if not (np.isfinite(seconds) and seconds > 0.0):
        raise BadValueError(f"{name} = {seconds!r} s is not allowed; need a finite duration > 0 s",
                            what=name, value=seconds, allowed=(0.0, math.inf))
    return seconds


def check_seed(seed) -> int:
    """Return ``seed`` as an int after checking it is an integer 0 <= seed < 2**63.

    Raises
    ------
    BadValueError : anything else.

    Example
    -------
    >>> check_seed(7)
    7
    """
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or not 0 <= int(seed) < 2**63:
        raise BadValueError(f"seed {seed!r}: allowed an integer 0 .. 2**63 - 1", what="seed", value=seed,
                            allowed=(0, 2**63 - 1))
    return int(seed)
