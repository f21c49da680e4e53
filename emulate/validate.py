"""The one range validator: every bounded number goes through :func:`check_range`."""

from __future__ import annotations

import numpy as np

from emulate.errors import BadValueError


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
        raise BadValueError(f"{what} {value!r}: allowed {left}{low:g}, {high:g}{right}")
