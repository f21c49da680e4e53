"""Depth control: how far the notch goes down for a setting of the variable attenuation.

Two controls, as :class:`emulate.analog.networks.TwinT` models them:

* the ideal wet/dry mix ``(1 - m) + m H``, the processor's own mix (dry = the
  source voltage). At an exact null (H = 0) the level there is 1 - m, so
  depth = 20 log10(1 - m) (common practice, no source): :func:`mix_to_depth_db`,
  :func:`depth_db_to_mix`. When the network's own null is not exact (parts that
  miss the balance, source and load), :func:`mix_for_depth` solves the mix for
  the level of the mixed response's own minimum (which moves away from the wet
  notch on an unbalanced network).
* a real linear potentiometer wired from the network input to its (buffered)
  output with its wiper buffered, position 0 = dry, 1 = full notch:
  :func:`pot_depth_db`, :func:`pot_position_for_depth`. Each end of the track
  keeps 1 ppm of end resistance (:meth:`emulate.analog.circuit.Circuit.potentiometer`),
  so position 1 reaches about -120 dB, not the network's own null.

Every ``depth_db`` here is a level at the notch in dB, 0 or below (-20 means the
notch is 20 dB down); which level it is relative to is stated per function.
"""

from __future__ import annotations

import math

import numpy as np

from emulate.errors import BadValueError
from emulate.analog.response import db, measure, measure_notch
from emulate.validate import check_range

__all__ = [
    "check_mix",
    "check_depth_db",
    "mix_to_depth_db",
    "depth_db_to_mix",
    "mix_for_depth",
    "pot_depth_db",
    "pot_position_for_depth",
]

# Position tolerance of the potentiometer search (1e-10 of the track: far below any
# real pot's setting accuracy, and a few brentq steps more than 1e-6).
_POSITION_XTOL = 1e-10
# Relative rounding allowed at the deepest point the ideal mix reaches.
_ROUNDING = 1e-12
# A closed-form mix whose mixed minimum lies this close to the target (dB) is kept.
_LEVEL_TOL_DB = 1e-9


# --- validators (one per concept) -------------------------------------------


def check_mix(mix) -> float:
    """Return ``mix`` as float after checking 0 <= mix <= 1.

    Parameters
    ----------
    mix : float
        Wet/dry mix, 0 (dry, no notch) to 1 (full notch), endpoints included.

    Returns
    -------
    float

    Raises
    ------
    BadValueError
        If ``mix`` is not a number in [0, 1].

    Example
    -------
    >>> check_mix(0.5)
    0.5
    """
    check_range("mix", mix, 0.0, 1.0)
    return float(mix)


def check_depth_db(depth_db) -> float:
    """Return ``depth_db`` as float after checking -inf <= depth_db <= 0 dB.

    Parameters
    ----------
    depth_db : float
        Level at the notch, dB, 0 (no notch) down to -inf (exact null).

    Returns
    -------
    float

    Raises
    ------
    BadValueError
        If ``depth_db`` is NaN, not a number or above 0 dB.

    Example
    -------
    >>> check_depth_db(-20)
    -20.0
    """
    check_range("depth (dB)", depth_db, -math.inf, 0.0)
    return float(depth_db)


def _check_position(position) -> float:
    check_range("pot position", position, 0.0, 1.0)
    return float(position)


# --- the ideal mix at an exact null ------------------------------------------


def mix_to_depth_db(mix) -> float:
    """Depth in dB of an ideal null under a wet/dry mix: 20 log10(1 - mix) (common practice).

    Parameters
    ----------
    mix : float
        0 (dry) to 1 (full notch), endpoints included.

    Returns
    -------
    float
        Depth in dB, 0 at mix 0, ``-inf`` at mix 1.

    Raises
    ------
    BadValueError
        If ``mix`` is not in [0, 1].

    Example
    -------
    >>> round(mix_to_depth_db(0.9), 6)
    -20.0
    """
    mix = check_mix(mix)
    return -math.inf if mix == 1.0 else 20.0 * math.log10(1.0 - mix)


def depth_db_to_mix(depth_db) -> float:
    """Mix giving ``depth_db`` at an ideal null: 1 - 10^(depth_db / 20) (common practice).

    Parameters
    ----------
    depth_db : float
        Depth in dB, -inf to 0 (endpoints included).

    Returns
    -------
    float
        Mix in [0, 1].

    Raises
    ------
    BadValueError
        If ``depth_db`` is NaN or above 0 dB.

    Example
    -------
    >>> round(depth_db_to_mix(-20.0), 6)
    0.9
    """
    return 1.0 - 10.0 ** (check_depth_db(depth_db) / 20.0)


# --- the ideal mix around a real network ---------------------------------------


def mix_for_depth(network, depth_db) -> float:
    """The ideal wet/dry mix that puts the mixed response's own minimum at ``depth_db``.

    The level asked for is the deepest point of the mixed response
    (1 - m) + m H(f), wherever it falls: on an unbalanced network the mixed
    minimum moves away from the wet network's notch and can lie far deeper than
    the level there.  The closed form at the wet notch (:func:`_mix_at_wet_notch`,
    exact for an exact null) gives the first guess and the bracket; the level of
    the mixed minimum (``measure(...).depth_db``, read by ``measure_notch``) is then solved for the mix by
    bracketed root finding (scipy.optimize.brentq) to 1e-10, starting from the dry
    end (m = 0, 0 dB), so the smallest mix that reaches the level is returned.
    ``depth_db`` is relative to the dry (source) level, the scale of
    ``NotchMetrics.depth_db``; it equals "below the passband" when the passband
    gain is 1 (ideal source, no passive load).

    Parameters
    ----------
    network : emulate.analog.networks.TwinT
        The network; its own ``mix`` and depth pot are ignored.
    depth_db : float
        Level of the mixed response's minimum relative to the dry signal, dB, -inf to 0.

    Returns
    -------
    float
        Mix in [0, 1].

    Raises
    ------
    BadValueError
        If ``depth_db`` is not in [-inf, 0] dB, or is deeper than this network's
        mixed response reaches with any mix (the message gives the deepest level).

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> round(mix_for_depth(TwinT.balanced(1000.0, r_ohms=10e3), -20.0), 6)
    0.9
    """
    target_db = check_depth_db(depth_db)
    wet = network.wet()
    if target_db == 0.0:
        return 0.0
    guess = _mix_at_wet_notch(wet, depth_db, refuse=math.isinf(target_db))
    if math.isinf(target_db):
        return guess  # only an exact null reaches -inf, and only at the wet notch

    def miss(mix):
        return measure_notch(wet.replace(mix=float(mix)).response).depth_db - target_db

    if guess is not None and abs(miss(guess)) <= _LEVEL_TOL_DB:
        return guess  # the wet notch is the mixed minimum (an exact or nearly exact null)
    top = guess if guess is not None and miss(guess) < 0.0 else _first_reaching(miss, target_db, depth_db)
    from scipy import optimize  # imported here: rendering never solves a mix

    return float(optimize.brentq(miss, 0.0, top, xtol=_POSITION_XTOL))


def _first_reaching(miss, target_db, depth_db) -> float:
    """The first mix on a 1/64 grid whose mixed minimum reaches the target; refuses if none does."""
    grid = np.linspace(0.0, 1.0, 65)[1:]
    misses = np.array([miss(m) for m in grid])
    reached = np.flatnonzero(misses <= 0.0)
    if len(reached) == 0:
        _unreachable(depth_db, float(np.min(misses)) + target_db)
    return float(grid[reached[0]])


def _mix_at_wet_notch(wet, depth_db, *, refuse) -> float | None:
    """The mix that puts the level at the wet network's own notch at ``depth_db``; None (or, if ``refuse``, BadValueError) if none does.

    With H0 the complex response of the full-notch network ``wet`` at its
    measured notch, the mixer gives (1 - m) + m H0 = 1 + m d, d = H0 - 1, there.
    Setting |1 + m d| = A = 10^(depth_db / 20) is the quadratic
    |d|^2 m^2 + 2 Re(d) m + (1 - A^2) = 0; its smaller root (written as
    (1 - A^2) / (-Re d + sqrt(Re(d)^2 - |d|^2 (1 - A^2))) so it stays accurate as
    A -> 1) is the mix on the branch that deepens from m = 0.  At an exact null
    (H0 = 0) this is :func:`depth_db_to_mix`.  The deepest level reached there is
    |H0| at m = 1 when Re(H0) >= |H0|^2, and |Im H0| / |1 - H0| at
    m = -Re(d) / |d|^2 < 1 otherwise (a residual in phase opposition to the dry
    signal is cancelled by a little dry).
    """
    target = 10.0 ** (check_depth_db(depth_db) / 20.0)
    h0 = complex(np.ravel(wet.response(np.array([measure_notch(wet.response).notch_hz])))[0])
    d = h0 - 1.0
    c = 1.0 - target**2
    if c == 0.0:
        return 0.0
    disc = d.real**2 - abs(d) ** 2 * c
    denominator = -d.real + math.sqrt(max(disc, 0.0))
    mix = c / denominator if denominator > 0.0 else math.inf  # Re(H0) >= 1: no notch to deepen
    if disc < -_ROUNDING * abs(d) ** 2 or not mix <= 1.0 + _ROUNDING:
        if refuse:
            _unreachable(depth_db, _deepest_db(d))
        return None
    return min(mix, 1.0)


def _deepest_db(d: complex) -> float:
    """Lowest 20 log10 |1 + m d| over 0 <= m <= 1, dB."""
    m = min(max(-d.real / abs(d) ** 2, 0.0), 1.0) if d else 0.0
    return 20.0 * math.log10(max(abs(1.0 + m * d), 1e-300))


def _unreachable(depth_db, deepest_db) -> None:
    raise BadValueError(
        f"depth {-depth_db:g} dB of cut is deeper than this network reaches with a wet/dry mix; "
        f"allowed 0 to {-deepest_db:.2f} dB of cut")


# --- a real depth potentiometer ------------------------------------------------


def _pot_ohms(network, pot_ohms):
    ohms = network.depth_pot_ohms if pot_ohms is None else pot_ohms
    if ohms is None:
        raise BadValueError("no depth pot: give pot_ohms or a network with depth_pot_ohms (ohms, > 0)")
    return ohms


def pot_depth_db(network, position, *, pot_ohms=None) -> float:
    """Level at the notch, dB relative to the passband, with the depth pot at ``position``.

    Measures ``network.replace(depth_pot_ohms=pot_ohms, mix=position)`` with
    :func:`emulate.analog.response.measure_notch` (the value :func:`~emulate.analog.response.measure`
    gives, without its -3 dB edges) and returns ``-depth_below_passband_db``
    (the notch against the lower of the two passband gains). Position 1 is the
    full notch through the track's 1 ppm end resistance: about
    20 log10(1e-6) = -120 dB for an exact null. Does not cache.

    Parameters
    ----------
    network : emulate.analog.networks.TwinT
        The network; its ``mix`` is replaced by ``position``.
    position : float
        Wiper position, 0 (at the network input: dry) to 1 (at its output: full notch).
    pot_ohms : float, optional
        Track resistance, ohms, > 0; default the network's ``depth_pot_ohms``.

    Returns
    -------
    float
        dB, 0 or below for every position of a network with a notch.

    Raises
    ------
    BadValueError
        If ``position`` is not in [0, 1], or no track resistance is given or it is not > 0.

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> round(pot_depth_db(TwinT.balanced(1000.0, r_ohms=10e3), 0.9, pot_ohms=100e3), 3)
    -20.0
    """
    position = _check_position(position)
    pot = network.replace(depth_pot_ohms=_pot_ohms(network, pot_ohms), mix=position)
    return -measure_notch(pot.response).depth_below_passband_db


def _dry_end_db(network, ohms) -> float:
    """Level with the wiper at the dry end, dB against the passband, at the full notch's frequency.

    At the dry end there is no dip to measure: the smallest |H| over the search
    band is wherever a source resistance makes the response lowest, not the
    notch.  The level that matters is the one at the notch the pot moves away
    from, against the same passband (the lower of the two passband gains).
    """
    full = measure(network.replace(depth_pot_ohms=ohms, mix=1.0).response)
    dry = network.replace(depth_pot_ohms=ohms, mix=0.0)
    level = db(np.abs(np.atleast_1d(dry.response([full.notch_hz])).ravel()[0]))
    return float(level - min(full.passband_low_db, full.passband_high_db))


def pot_position_for_depth(network, depth_db, *, pot_ohms=None) -> float:
    """The depth pot position that puts the notch at ``depth_db`` below the passband.

    Solves :func:`pot_depth_db` ``(position) = depth_db`` by bracketed root finding
    on [0, 1] (scipy.optimize.brentq: bisection steps mixed with secant/inverse
    quadratic ones, always keeping the bracket), to 1e-10 of the track.

    Monotonic? With the wiper buffered, the level at the notch is
    (1 - p') + p' H0 with p' the wiper's share of the track, so it falls
    monotonically from 0 dB at position 0 to the full notch at position 1 for an
    ideal source (checked on a grid in tests/test_depth.py). A source resistance
    makes the dry end itself frequency dependent (the network loads the source),
    so within about 0.01 dB of position 0 the measured level is not strictly
    monotonic; any target inside the bracket still has a root, and brentq finds one.

    Parameters
    ----------
    network : emulate.analog.networks.TwinT
        The network; its ``mix`` is ignored.
    depth_db : float
        Target level at the notch relative to the passband, dB, between the
        levels at positions 0 and 1 (about 0 and -120 dB).
    pot_ohms : float, optional
        Track resistance, ohms, > 0; default the network's ``depth_pot_ohms``.

    Returns
    -------
    float
        Position in [0, 1].

    Raises
    ------
    BadValueError
        If ``depth_db`` is not in [-inf, 0] dB or outside the range the pot reaches
        (the message gives that range), or the track resistance is missing or not > 0.

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> round(pot_position_for_depth(TwinT.balanced(1000.0, r_ohms=10e3), -20.0, pot_ohms=100e3), 4)
    0.9
    """
    target = check_depth_db(depth_db)
    ohms = _pot_ohms(network, pot_ohms)

    def miss(position):
        return pot_depth_db(network, position, pot_ohms=ohms) - target

    dry, full = miss(0.0), miss(1.0)
    if dry == 0.0 or full == 0.0:
        return 0.0 if dry == 0.0 else 1.0
    if dry * full > 0.0:
        raise BadValueError(
            f"depth {-depth_db:g} dB of cut is outside what this depth pot reaches; "
            f"allowed {-_dry_end_db(network, ohms):.2f} to {-(full + target):.2f} dB of cut")
    # imported here, not at the top: rendering never solves a pot position
    from scipy import optimize

    return float(optimize.brentq(miss, 0.0, 1.0, xtol=_POSITION_XTOL))
