"""The validators shared across modules: bounded numbers (:func:`check_range`) and counts (:func:`check_count`)."""

from __future__ import annotations

import math
import numbers

import numpy as np

from emulate.errors import BadValueError

__all__ = ["check_range", "check_count"]


def check_range(what: str, value, low: float, high: float, *,
                low_open: bool = False, high_open: bool = False) -> None:
    """Raise :class:`BadValueError` unless ``low <= value <= high`` (open ends as flagged).

    ``value`` may be a number or an array (every element is checked). The message
    shows the value and the allowed interval, e.g. ``mix 1.5: allowed [0, 1]``.

    Example
    -------
    >>> check_range("mix", 0.5, 0.0, 1.0)
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
