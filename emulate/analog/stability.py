"""Does a network oscillate? Poles of one build or of a batch, and the bootstrap margin.

A passive twin-T is always stable; a bootstrapped one feeds a fraction K of its
output back into the foot of the T, and with unbalanced parts (a real build)
its poles can cross into the right half-plane below K = 1.  An unstable network
has no meaningful frequency response: it oscillates at about the frequency of
its rightmost poles, |Im p| / (2 pi), growing at Re p per second until the
op-amps clip.

* :func:`check_stability` reads one network's poles (``TwinT.zpk``);
* :func:`batch_stability` reads every build of a batch from the poles of its
  exact denominator D(s) (``TwinT.rational``), for the tolerance runs;
* :func:`bootstrap_margin` is how much K may rise before the network oscillates
  (bisection on the rightmost pole's real part).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from emulate.errors import BadValueError

__all__ = ["Stability", "batch_stability", "bootstrap_margin", "check_stability", "margin_warning"]

# K searched up to this for the margin: a follower with gain above 1 is buildable,
# and a balanced network crosses at exactly K = 1 (MT-225: Q = 1/(4(1-K))).
K_SEARCH_TOP = 2.0
_MARGIN_XTOL = 1e-7


@dataclass(frozen=True)
class Stability:
    """Whether a network is stable, and if not how it oscillates.

    Attributes
    ----------
    stable : bool
        All poles in the open left half-plane.
    oscillation_hz : float
        |Im p| / (2 pi) of the rightmost pole, Hz (NaN when stable).
    growth_per_s : float
        Re p of the rightmost pole, 1/s (negative when stable).
    """

    stable: bool
    oscillation_hz: float
    growth_per_s: float

    def describe(self) -> str:
        """One line: "stable" or "oscillates at ... Hz"."""
        if self.stable:
            return "stable"
        return (f"unstable: oscillates at {self.oscillation_hz:.4g} Hz (a pole at "
                f"{self.growth_per_s:+.4g} {'+-' if self.oscillation_hz else ''}"
                f"j{2 * math.pi * self.oscillation_hz:.6g} rad/s, right half-plane)")


def _rightmost(poles: np.ndarray) -> Stability:
    if len(poles) == 0:
        return Stability(True, math.nan, -math.inf)
    p = poles[int(np.argmax(poles.real))]
    stable = bool(p.real < 0.0)
    return Stability(stable, math.nan if stable else abs(p.imag) / (2 * math.pi), float(p.real))


def check_stability(network) -> Stability:
    """The stability of one network (scalar parts) from its poles.

    Parameters
    ----------
    network : emulate.analog.networks.TwinT

    Returns
    -------
    Stability

    Raises
    ------
    CircuitError
        If the network's equations are singular.

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> check_stability(TwinT(10e3, 10e3, 5e3, 3.3e-9, 3.3e-9, 6.6e-9, bootstrap=0.9)).stable
    True
    """
    f_ref = float(np.ravel(network.null_hz())[0])
    return _rightmost(_companion_poles(network.rational(f_ref))[0])


def batch_stability(rational) -> tuple[np.ndarray, np.ndarray]:
    """Per build of a batch: (unstable mask, oscillation frequency in Hz, NaN where stable).

    The poles are the roots of each build's exact denominator D(s) (the
    eigenvalues of its companion matrix, batched).

    Parameters
    ----------
    rational : emulate.analog.circuit.Rational
        The batch's N(s)/D(s) (``TwinT.rational``).

    Returns
    -------
    (ndarray of bool, ndarray of float)

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> unstable, hz = batch_stability(TwinT(10e3, 10e3, 5e3, 3.3e-9, 3.3e-9, 6.6e-9).rational(4823.0))
    >>> bool(unstable[0])
    False
    """
    poles = _companion_poles(rational)
    builds = poles.shape[0]
    if poles.shape[1] == 0:
        return np.zeros(builds, bool), np.full(builds, np.nan)
    right = np.argmax(poles.real, axis=1)
    rightmost = poles[np.arange(builds), right]
    unstable = rightmost.real >= 0.0
    return unstable, np.where(unstable, np.abs(rightmost.imag) / (2 * np.pi), np.nan)


def _companion_poles(rational) -> np.ndarray:
    """Each build's poles (rad/s), shape (builds, degree): the eigenvalues of the companion
    matrix of its exact denominator D(s), batched (numpy only: no scipy start-up)."""
    den = np.asarray(rational.den, float)  # lowest power first, in sigma = s / (2 pi f_ref)
    builds = den.shape[0]
    # drop leading (highest) coefficients that vanish for every build
    top = den.shape[1] - 1
    while top > 0 and np.all(np.abs(den[:, top]) <= 1e-12 * np.max(np.abs(den), axis=1)):
        top -= 1
    if top == 0:
        return np.zeros((builds, 0), complex)
    monic = den[:, :top] / den[:, top:top + 1]
    companion = np.zeros((builds, top, top))
    companion[:, 0, :] = -monic[:, ::-1]
    companion[:, np.arange(1, top), np.arange(top - 1)] = 1.0
    return np.linalg.eigvals(companion) * 2 * np.pi * rational.f_ref_hz


def bootstrap_margin(network) -> float:
    """How much the bootstrap K may rise before the network oscillates (K_crit - K).

    Bisection on K between the network's own K and ``K_SEARCH_TOP`` for the
    first K whose rightmost pole reaches the j axis, to 1e-7.  For a balanced
    network K_crit = 1 (Q = 1/(4(1-K)), Analog Devices MT-225), so the margin is
    1 - K; an unbalanced one may cross earlier.

    Parameters
    ----------
    network : emulate.analog.networks.TwinT
        A bootstrapped (active) network.

    Returns
    -------
    float
        K_crit - K (0 if the network already oscillates; inf if it stays stable
        up to K = 2).

    Raises
    ------
    BadValueError
        If the network is passive (no K).

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> round(bootstrap_margin(TwinT(10e3, 10e3, 5e3, 3.3e-9, 3.3e-9, 6.6e-9, bootstrap=0.9875)), 5)
    0.0125
    """
    if network.bootstrap is None:
        raise BadValueError("bootstrap margin: the network is passive (no bootstrap K)")
    k = float(network.bootstrap)

    def stable_at(value):
        return check_stability(_with_k(network, value)).stable

    if not stable_at(k):
        return 0.0
    if stable_at(K_SEARCH_TOP):
        return math.inf
    lo, hi = k, K_SEARCH_TOP
    while hi - lo > _MARGIN_XTOL:
        middle = (lo + hi) / 2
        lo, hi = (middle, hi) if stable_at(middle) else (lo, middle)
    return (lo + hi) / 2 - k


def margin_warning(network) -> str:
    """One warning line on how far the bootstrap K is from oscillation (for the build sheet).

    Raises
    ------
    BadValueError
        If the network is passive.

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> margin_warning(TwinT(10e3, 10e3, 5e3, 3.3e-9, 3.3e-9, 6.6e-9, bootstrap=0.9875))[:60]
    'Warning: stability margin: K may rise by only 0.0125 (from 0'
    """
    margin = bootstrap_margin(network)
    k = float(network.bootstrap)
    if margin == 0.0:
        return f"Warning: this build oscillates at K = {k:.4f}: {check_stability(network).describe()}."
    if math.isinf(margin):
        return f"Stability: K = {k:.4f} stays stable up to K = {K_SEARCH_TOP:g}."
    return (f"Warning: stability margin: K may rise by only {margin:.4g} (from {k:.4f} to {k + margin:.4f}, "
            f"{100 * margin / k:.2g} % of K) before the network oscillates; part tolerances eat into it, "
            "so check the tolerance results for oscillating builds.")


def _with_k(network, k):
    """The network with bootstrap K (K >= 1 allowed here: a follower with gain, for the search)."""
    import dataclasses

    copy = dataclasses.replace(network, bootstrap=0.0)
    object.__setattr__(copy, "bootstrap", float(k))
    copy.__dict__.pop("_compiled", None)
    return copy
