"""Layouts of the small state arrays the kernels carry across blocks.

Plain constants (no numba), so that code which only designs or evaluates a filter
(``response --rate``, the pictures) can name the fields without loading the kernels.
:mod:`emulate.dsp.kernels` re-exports them.
"""

from __future__ import annotations

__all__ = ["RAMP_VALUE", "RAMP_STEP", "RAMP_TARGET", "TALLY_TOP", "TALLY_BOTTOM", "TALLY_CLIPPED",
           "TALLY_NON_FINITE"]

# Layout of a ramp state array (float64[3]).
RAMP_VALUE = 0
RAMP_STEP = 1
RAMP_TARGET = 2

# Layout of an encoder tally array (float64[4]), carried across blocks.
TALLY_TOP = 0  # largest scaled sample so far (-inf before any)
TALLY_BOTTOM = 1  # smallest scaled sample so far (+inf before any)
TALLY_CLIPPED = 2  # samples whose nearest code lay outside the code range
TALLY_NON_FINITE = 3  # NaN/Inf samples met
