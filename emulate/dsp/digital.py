"""Analog transfer function -> IIR second-order sections at a file's sample rate.

The stage reads top to bottom like the math:

1. validate    fs > 0, the notch below Nyquist, a proper and stable analog H(s).
2. bilinear    s = c (z-1)/(z+1), c = w_warp / tan(w_warp / (2 fs)), warped at the
               notch so the digital null lands exactly on the analog one
               (Oppenheim & Schafer, *Discrete-Time Signal Processing*, sec. 7.2).
3. check       the worst |dB| error against the analog over the band (20 Hz to
               20 kHz, or to 0.9 Nyquist below 44.1 kHz) wherever the analog
               response is above -30 dB.  If it meets the tolerance, stop here:
               method ``"bilinear"``.
4. correct     otherwise build a *matched* core, every analog root r mapped to
               exp(r / fs) (the impulse-invariant root map also used by Vicanek,
               "Matched Second Order Digital Filters", 2016), and multiply it by a
               small minimum-phase correction whose magnitude^2 is a rational
               cosine polynomial fitted (Sanathanan-Koerner iteration, relative
               least squares, then a few Lawson reweightings towards minimax) to
               |H_analog|^2 / |H_matched|^2; the correction is spectrally
               factorised into its minimum-phase roots.  Method ``"matched+fit<m>"``
               where m is the correction order (1 to 4).
5. convert     zpk -> sos, roots paired as scipy.signal.zpk2sos pairs them by
               default ("nearest"): the pole nearest the unit circle with its
               conjugate and its nearest zero, those sections last in the cascade.

Why the correction sits on a matched core and not on the bilinear one: the
bilinear map compresses frequency near the notch by g = 2x / sin(2x),
x = w0 / (2 fs) (1.44 for a 10 kHz notch at 44.1 kHz), so |H_a|^2 / |H_bilinear|^2
has features as narrow as the damping of each pole or off-axis zero; a low
order fit cannot follow them and becomes ill-conditioned.  The matched map keeps
every root's local shape (slope and width of the null and of resonant poles)
exactly, so the ratio is a smooth, zero-free function (a product of
|u / (exp(u) - 1)|^2 factors, u = (j W - r) / fs) that one or two biquads fit to
hundredths of a dB.  The on-axis zeros map onto the unit circle at exactly the
analog angle, so the notch frequency is kept.

Where the bilinear stage alone is used: low notches, where frequency warping is
tiny across the audible part of the response (at 44.1 kHz it is within 0.02 dB up
to about a 300 Hz notch; the passive Q 0.25 notch reaches 0.2 dB at 1 kHz).
The correction takes over as soon as the bilinear image misses the tolerance.

All designs are causal minimum-phase IIR sections at the base rate: no
oversampling, no look-ahead, so ``latency_samples`` is 0.

Only numpy is imported: the zpk -> sos pairing, the response evaluation of zpk
and sos on a frequency grid and the bounded null search are small module-private
routines here, so rendering does not load scipy.signal or scipy.optimize (about
50 MB of resident memory).  The tests check them against scipy.signal.zpk2sos,
freqs_zpk and sosfreqz.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from emulate.analog.roots import upper_and_real
from emulate.errors import BadValueError, CircuitError
from emulate.validate import check_range

__all__ = [
    "DigitalNotch",
    "analog_null_hz",
    "bilinear_prewarped_zpk",
    "check_sample_rate_hz",
    "design_sections",
    "fidelity_band_hz",
    "fidelity_error_db",
]

# Response level below which the fidelity target does not apply (dB).
FLOOR_DB = -30.0
# Lowest frequency of the checked band (Hz).
BAND_LO_HZ = 20.0
# Correction orders tried, lowest first.
_FIT_ORDERS = (1, 2, 3, 4)


@dataclass(frozen=True)
class DigitalNotch:
    """A digital design of an analog notch at one sample rate.

    Attributes
    ----------
    sos : ndarray, shape (n, 6)
        Second-order sections, float64, ``a0 == 1`` in every row.
    fs : float
        Sample rate in Hz.
    latency_samples : int
        Group delay the design adds on purpose (0: causal minimum-phase IIR).
    method : str
        ``"bilinear"`` or ``"matched+fit<m>"`` (m = correction order).
    fidelity_db : float
        Largest |dB| error found over ``band_hz`` where the analog is above -30 dB.
    band_hz : tuple of float
        (lo, hi) band checked, Hz.
    notch_hz : float
        Frequency of the digital null, Hz.
    """

    sos: np.ndarray
    fs: float
    latency_samples: int
    method: str
    fidelity_db: float
    band_hz: tuple[float, float]
    notch_hz: float


# --- validators (one per concept) -------------------------------------------


def check_sample_rate_hz(fs):
    """Return ``fs`` as float after checking it is a finite rate > 0 Hz.

    Parameters
    ----------
    fs : float
        Sample rate in Hz.

    Returns
    -------
    float

    Raises
    ------
    BadValueError
        If ``fs`` is not a finite number > 0.

    Example
    -------
    >>> check_sample_rate_hz(48000)
    48000.0
    """
    check_range("sample rate (Hz)", fs, 0.0, math.inf, low_open=True, high_open=True)
    return float(fs)


def _check_notch_hz(notch_hz, fs):
    """Return ``notch_hz`` as float if 0 < notch_hz < fs / 2 (Hz), else raise BadValueError."""
    try:
        value = float(notch_hz)
    except (TypeError, ValueError):
        raise BadValueError(f"notch {notch_hz!r} Hz is not a number") from None
    if not math.isfinite(value) or not 0.0 < value < fs / 2.0:
        raise BadValueError(
            f"notch {notch_hz!r} Hz is not allowed at {fs:g} Hz; allowed: 0 < notch < {fs / 2.0:g} Hz (Nyquist)"
        )
    return value


def _check_zpk(z, p, k):
    """Return (z, p, k) as complex arrays and float gain; the analog H(s) must be proper and stable."""
    z = np.atleast_1d(np.asarray(z, dtype=complex))
    p = np.atleast_1d(np.asarray(p, dtype=complex))
    k = float(np.real(k))
    if z.ndim != 1 or p.ndim != 1:
        raise BadValueError(f"zeros and poles must be 1-D; got shapes {z.shape} and {p.shape}")
    if not (np.all(np.isfinite(z)) and np.all(np.isfinite(p)) and math.isfinite(k)):
        raise BadValueError(f"zeros, poles and gain must be finite; got z={z}, p={p}, k={k}")
    if len(z) > len(p):
        raise CircuitError(f"analog H(s) has {len(z)} zeros but {len(p)} poles; allowed: zeros <= poles")
    if np.any(p.real >= 0.0):
        raise CircuitError(f"analog poles {p[p.real >= 0.0]} rad/s are not in the left half-plane; H(s) is unstable")
    return z, p, k


# --- stage 2: prewarped bilinear --------------------------------------------


def bilinear_prewarped_zpk(z, p, k, fs, warp_hz):
    """Map an analog zpk to the z-plane by the bilinear transform warped at ``warp_hz``.

    Uses s = c (z - 1) / (z + 1) with c = w / tan(w / (2 fs)), w = 2 pi warp_hz, so
    the analog response at ``warp_hz`` lands exactly at ``warp_hz`` in the digital
    one (Oppenheim & Schafer, Discrete-Time Signal Processing, sec. 7.2).  Zeros at
    infinity map to z = -1.  Does not check fidelity elsewhere.

    Parameters
    ----------
    z, p : array_like
        Analog zeros and poles in rad/s (scipy convention).
    k : float
        Analog gain.
    fs : float
        Sample rate in Hz.
    warp_hz : float
        Frequency in Hz kept exact, 0 < warp_hz < fs / 2.

    Returns
    -------
    z, p : ndarray
        Digital zeros and poles (z-plane).
    k : float
        Digital gain.

    Raises
    ------
    BadValueError
        If ``fs`` <= 0 or ``warp_hz`` is not below Nyquist.
    CircuitError
        If H(s) has more zeros than poles or a pole outside the left half-plane.

    Example
    -------
    >>> w0 = 2 * np.pi * 1000.0
    >>> zd, pd, kd = bilinear_prewarped_zpk([1j * w0, -1j * w0], [-2 * w0 + 1.7j * w0, -2 * w0 - 1.7j * w0], 1.0, 48000, 1000)
    >>> bool(np.allclose(np.angle(zd[0]) * 48000 / (2 * np.pi), 1000.0))
    True
    """
    fs = check_sample_rate_hz(fs)
    warp_hz = _check_notch_hz(warp_hz, fs)
    z, p, k = _check_zpk(z, p, k)
    w = 2.0 * np.pi * warp_hz
    c = w / math.tan(w / (2.0 * fs))
    # Each finite root r -> (c + r) / (c - r); zeros at infinity -> -1 (O&S eq. 7.26).
    z_d = (c + z) / (c - z)
    p_d = (c + p) / (c - p)
    z_d = np.concatenate([z_d, -np.ones(len(p) - len(z))])
    k_d = k * np.real(np.prod(c - z) / np.prod(c - p))
    return z_d, p_d, float(k_d)


# --- stage 4: matched core and fitted correction ----------------------------


def _root_ratio_log(w, roots, fs):
    """Sum over ``roots`` of log |u / expm1(u)|^2, u = (j w fs - r) / fs, at digital w (rad/sample).

    This is log |jW - r|^2 / |exp(jw) - exp(r/fs)|^2 without the constant
    fs^-2 exp(-2 Re r / fs); it is smooth and finite, including at the root.
    """
    u = (1j * w[:, None] * fs - roots[None, :]) / fs
    em = np.expm1(u)
    small = np.abs(u) < 1e-12
    ratio = np.where(small, 1.0, np.abs(u) / np.where(small, 1.0, np.abs(em)))
    return 2.0 * np.sum(np.log(ratio), axis=1)


def _matched_zpk(z, p, k, fs):
    """Map every analog root r to exp(r / fs); gain chosen so |H_a|^2 / |H_m|^2 -> 1 for low roots."""
    z_d = np.exp(z / fs)
    p_d = np.exp(p / fs)
    # |jW - r| = |exp(jw) - exp(r/fs)| * fs * exp(-Re r / fs) * |u / expm1(u)|.
    scale = np.prod(fs * np.exp(-z.real / fs)) / np.prod(fs * np.exp(-p.real / fs))
    z_d = np.concatenate([z_d, np.zeros(len(p) - len(z))])  # excess poles: delays only
    return z_d, p_d, k * float(np.real(scale))


def _fit_grid(fs, band_hz):
    """Digital frequencies (rad/sample) and weights for the correction fit."""
    lo, hi = band_hz
    f_band = np.unique(np.concatenate([np.geomspace(lo, hi, 160), np.linspace(lo, hi, 240)]))
    f_out = np.linspace(hi, 0.999 * fs / 2.0, 40)[1:]
    f = np.concatenate([f_band, f_out])
    weight = np.concatenate([np.ones(len(f_band)), np.full(len(f_out), 0.05)])
    return 2.0 * np.pi * f / fs, weight


def _cos_basis(w, order):
    """Columns cos(j w), j = 0..order (Chebyshev T_j of cos w)."""
    return np.cos(np.outer(w, np.arange(order + 1)))


def _fit_cos_rational(w, log_d, weight, order, iterations=12, lawson=8):
    """Fit D ~ P(w) / Q(w), P and Q cosine polynomials of ``order``, q0 = 1, relative error.

    Sanathanan-Koerner: minimise sum weight * ((P - D Q) / (D Q_prev))^2, a linear
    least-squares problem per iteration; then Lawson reweighting (weights grow
    with the error) pushes towards the minimax error in dB.
    """
    d = np.exp(log_d)
    basis = _cos_basis(w, order)
    q_prev = np.ones_like(w)
    wt = weight.copy()
    coeffs = None
    for it in range(iterations + lawson):
        scale = np.sqrt(wt) / q_prev
        a = np.hstack([basis * (scale / d)[:, None], -basis[:, 1:] * scale[:, None]])
        b = scale
        coeffs = np.linalg.lstsq(a, b, rcond=None)[0]
        p_val = basis @ coeffs[: order + 1]
        q_val = 1.0 + basis[:, 1:] @ coeffs[order + 1 :]
        if np.any(q_val <= 0.0) or np.any(p_val <= 0.0):
            return None
        q_prev = q_val
        if it >= iterations:
            err = np.abs(np.log(p_val / q_val) - log_d)
            wt = wt * (err / err.max() + 1e-3)
            wt = wt / wt.mean()
    return coeffs[: order + 1], np.concatenate([[1.0], coeffs[order + 1 :]])


def _spectral_factor(cos_coeffs):
    """Minimum-phase roots and gain g with g^2 |prod(1 - r e^{-jw})|^2 = sum c_j cos(j w).

    Returns None if the cosine polynomial is not strictly positive on the circle.
    """
    order = len(cos_coeffs) - 1
    if order == 0:
        return np.zeros(0, complex), math.sqrt(cos_coeffs[0]) if cos_coeffs[0] > 0 else None
    # z^m * sum c_j (z^j + z^-j) / 2, coefficients from the highest power down.
    half = np.asarray(cos_coeffs[1:], float)[::-1] / 2.0
    laurent = np.concatenate([half, [cos_coeffs[0]], half[::-1]])
    roots = np.roots(laurent)
    inside = roots[np.abs(roots) < 1.0 - 1e-9]
    if len(inside) != order:
        return None  # roots on the unit circle: P touches zero
    gain_sq = np.sum(cos_coeffs) / np.abs(np.prod(1.0 - inside)) ** 2
    return inside, math.sqrt(gain_sq)


def _correction_zpk(z, p, fs, band_hz, order):
    """Minimum-phase correction (z, p, k) fitted to |H_a|^2 / |H_matched|^2, or None if the fit fails."""
    w, weight = _fit_grid(fs, band_hz)
    log_d = _root_ratio_log(w, z, fs) - _root_ratio_log(w, p, fs)
    fit = _fit_cos_rational(w, log_d, weight, order)
    if fit is None:
        return None
    num, den = (_spectral_factor(c) for c in fit)
    if num is None or den is None:
        return None
    return num[0], den[0], num[1] / den[1]


# --- stage 5 and the response evaluations (numpy only) ----------------------

def _take(roots, i):
    """(roots[i], roots without element i)."""
    return roots[i], np.delete(roots, i)


def _nearest(roots, to, real_only=False):
    """Index of the root nearest ``to`` (among the real ones if ``real_only``)."""
    distance = np.abs(roots - to)
    if real_only:
        distance = np.where(roots.imag == 0.0, distance, np.inf)
    return int(np.argmin(distance))


def _quadratic(r1, r2):
    """[1, -(r1 + r2), r1 r2] for a real root pair or a conjugate pair."""
    return [1.0, -(r1 + r2).real, (r1 * r2).real]


def _zpk_to_sos(z, p, k):
    """Digital zpk -> second-order sections, paired as scipy.signal.zpk2sos(pairing="nearest").

    Pads zeros or poles at z = 0 to equal, even counts; then, from the last
    section backwards, takes the remaining pole nearest the unit circle with
    its conjugate (a real one with the next real pole nearest the circle) and
    the zero nearest that pole with its conjugate (a real one with the next
    nearest real zero).  The gain goes into the first section.  With equal,
    even counts every section is second order.
    """
    z, p = np.asarray(z, complex), np.asarray(p, complex)
    n = max(len(z), len(p))
    n += n % 2
    z = upper_and_real(np.concatenate([z, np.zeros(n - len(z))]))
    p = upper_and_real(np.concatenate([p, np.zeros(n - len(p))]))
    sos = np.zeros((max(n // 2, 1), 6))
    sos[:, 0] = sos[:, 3] = 1.0
    for row in range(n // 2 - 1, -1, -1):
        p1, p = _take(p, int(np.argmin(np.abs(1.0 - np.abs(p)))))
        if p1.imag == 0.0:
            p2, p = _take(p, int(np.argmin(np.where(p.imag == 0.0, np.abs(1.0 - np.abs(p)), np.inf))))
        else:
            p2 = np.conj(p1)
        z1, z = _take(z, _nearest(z, p1))
        z2 = np.conj(z1) if z1.imag != 0.0 else None
        if z2 is None:
            z2, z = _take(z, _nearest(z, p1, real_only=True))
        sos[row] = _quadratic(z1, z2) + _quadratic(p1, p2)
    sos[0, :3] *= k
    return sos


def _zpk_response_s(z, p, k, w_rad_s):
    """Analog H(j w) = k prod(j w - z) / prod(j w - p) at ``w_rad_s`` (as scipy.signal.freqs_zpk)."""
    s = 1j * np.asarray(w_rad_s, float)[:, None]
    return k * np.prod(s - np.asarray(z)[None, :], axis=1) / np.prod(s - np.asarray(p)[None, :], axis=1)


def _sos_response_z(sos, f_hz, fs):
    """Digital H(exp(j 2 pi f / fs)) of cascaded sections at ``f_hz`` (as scipy.signal.sosfreqz)."""
    zm1 = np.exp(-2j * np.pi * np.asarray(f_hz, float) / fs)[:, None]
    sos = np.asarray(sos, float)
    num = sos[:, 0] + zm1 * (sos[:, 1] + zm1 * sos[:, 2])
    den = sos[:, 3] + zm1 * (sos[:, 4] + zm1 * sos[:, 5])
    return np.prod(num / den, axis=1)


# Golden-section ratio (3 - sqrt 5) / 2: the interior point's share of a bracket.
_GOLDEN = (3.0 - math.sqrt(5.0)) / 2.0


def _golden_min(fun, a, b, xtol):
    """Minimiser of a unimodal ``fun`` on [a, b] to within ``xtol`` (golden-section search).

    Keeps a bracket [a, b] with two interior points and drops the side of the
    worse one, shrinking the bracket by 0.618 per evaluation (Kiefer 1953;
    Press et al., Numerical Recipes, 3rd ed., sec. 10.2).
    """
    x1, x2 = a + _GOLDEN * (b - a), b - _GOLDEN * (b - a)
    f1, f2 = fun(x1), fun(x2)
    while b - a > xtol:
        if f1 <= f2:
            b, x2, f2 = x2, x1, f1
            x1 = a + _GOLDEN * (b - a)
            f1 = fun(x1)
        else:
            a, x1, f1 = x1, x2, f2
            x2 = b - _GOLDEN * (b - a)
            f2 = fun(x2)
    return x1 if f1 <= f2 else x2


# --- stage 3: checks ---------------------------------------------------------


def fidelity_band_hz(fs):
    """Band (lo, hi) in Hz where fidelity is checked at rate ``fs``.

    20 Hz to 20 kHz from 44.1 kHz up; below that, 20 Hz to 0.9 Nyquist.

    Parameters
    ----------
    fs : float
        Sample rate in Hz, > 0.

    Returns
    -------
    tuple of float

    Raises
    ------
    BadValueError
        If ``fs`` is not > 0.

    Example
    -------
    >>> fidelity_band_hz(32000)
    (20.0, 14400.0)
    """
    fs = check_sample_rate_hz(fs)
    hi = 20000.0 if fs >= 44100.0 else 0.45 * fs
    return (BAND_LO_HZ, hi)


def _check_grid_hz(p, z, band_hz):
    """Dense frequency grid (Hz) over the band, refined around every resonant root."""
    lo, hi = band_hz
    parts = [np.geomspace(lo, hi, 1200), np.linspace(lo, hi, 1200)]
    for r in np.concatenate([p, z]):
        if r.imag > 0.0:
            centre, half = r.imag, max(3.0 * abs(r.real), 1e-3 * r.imag)
            parts.append(np.linspace(centre - half, centre + half, 60) / (2.0 * np.pi))
    f = np.concatenate(parts)
    return np.unique(f[(f >= lo) & (f <= hi)])


def fidelity_error_db(z, p, k, sos, fs, band_hz):
    """Largest |dB| difference between analog zpk and digital sos where the analog is above -30 dB.

    Parameters
    ----------
    z, p : array_like
        Analog zeros and poles in rad/s.
    k : float
        Analog gain.
    sos : array_like, shape (n, 6)
        Digital second-order sections.
    fs : float
        Sample rate in Hz.
    band_hz : tuple of float
        (lo, hi) band checked, Hz, 0 < lo < hi <= fs / 2.

    Returns
    -------
    float
        Worst |dB| error (0.0 if the analog never rises above -30 dB in the band).

    Raises
    ------
    BadValueError
        If ``fs`` or the band is not allowed.
    CircuitError
        If the analog H(s) is improper or unstable.

    Example
    -------
    >>> w0 = 2 * np.pi * 100.0
    >>> z, p, k = [1j * w0, -1j * w0], np.roots([1, 4 * w0, w0 ** 2]), 1.0
    >>> sos = design_sections(z, p, k, 48000, notch_hz=100).sos
    >>> fidelity_error_db(z, p, k, sos, 48000, (20, 20000)) < 0.01
    True
    """
    fs = check_sample_rate_hz(fs)
    z, p, k = _check_zpk(z, p, k)
    lo, hi = (float(v) for v in band_hz)
    if not 0.0 < lo < hi <= fs / 2.0:
        raise BadValueError(f"band {band_hz!r} Hz is not allowed; allowed: 0 < lo < hi <= {fs / 2.0:g} Hz")
    f = _check_grid_hz(p, z, (lo, hi))
    h_a = _zpk_response_s(z, p, k, 2.0 * np.pi * f)
    h_d = _sos_response_z(sos, f, fs)
    with np.errstate(divide="ignore"):
        db_a = 20.0 * np.log10(np.abs(h_a))
        db_d = 20.0 * np.log10(np.abs(h_d))
    mask = db_a > FLOOR_DB
    if not np.any(mask):
        return 0.0
    return float(np.max(np.abs(db_d[mask] - db_a[mask])))


def _null_hz(magnitude, near_hz, hi_hz):
    """Frequency (Hz) of the smallest ``magnitude(f)`` within [0.8, 1.25] * near_hz, below ``hi_hz``."""
    lo, hi = 0.8 * near_hz, min(1.25 * near_hz, hi_hz)
    f = np.linspace(lo, hi, 801)
    i = int(np.argmin(magnitude(f)))
    step = f[1] - f[0]
    a, b = max(lo, f[i] - step), min(hi, f[i] + step)
    return float(_golden_min(lambda x: float(magnitude(np.array([x]))[0]), a, b, near_hz * 1e-9))


def _digital_null_hz(sos, fs, near_hz):
    """Frequency (Hz) of the digital null nearest ``near_hz``."""
    return _null_hz(lambda f: np.abs(_sos_response_z(sos, f, fs)), near_hz, 0.4999 * fs)


def analog_null_hz(z, p, k, near_hz):
    """Frequency (Hz) of the analog null nearest ``near_hz`` (searched within -20 % / +25 %).

    Parameters
    ----------
    z, p : array_like
        Analog zeros and poles in rad/s.
    k : float
        Analog gain.
    near_hz : float
        Where to look, Hz.

    Returns
    -------
    float

    Raises
    ------
    CircuitError
        If the analog H(s) is improper or unstable.

    Example
    -------
    >>> w0 = 2 * np.pi * 1000.0
    >>> round(analog_null_hz([1j * w0, -1j * w0], np.roots([1, 4 * w0, w0 ** 2]), 1.0, 990.0), 3)
    1000.0
    """
    z, p, k = _check_zpk(z, p, k)
    return _null_hz(lambda f: np.abs(_zpk_response_s(z, p, k, 2.0 * np.pi * f)), float(near_hz), np.inf)


# --- the design pipeline -----------------------------------------------------


def _candidates(z, p, k, fs, notch_hz, band_hz):
    """Yield (method, z_d, p_d, k_d) designs, cheapest first."""
    yield ("bilinear", *bilinear_prewarped_zpk(z, p, k, fs, notch_hz))
    z_m, p_m, k_m = _matched_zpk(z, p, k, fs)
    for order in _FIT_ORDERS:
        corr = _correction_zpk(z, p, fs, band_hz, order)
        if corr is not None:
            z_c, p_c, k_c = corr
            yield (f"matched+fit{order}", np.concatenate([z_m, z_c]), np.concatenate([p_m, p_c]), k_m * k_c)


def design_sections(z, p, k, fs, *, notch_hz, tolerance_db=0.1):
    """Design digital sections for an analog notch at rate ``fs`` within ``tolerance_db``.

    Tries the prewarped bilinear image first, then a matched core with a fitted
    minimum-phase correction of order 1, 2, 3, 4 (see the module notes), and
    returns the first design whose worst error over the band is within
    ``tolerance_db``; if none is, the most faithful design found.  Does not
    oversample, and does not warn when the tolerance is missed (read
    ``fidelity_db``).

    Parameters
    ----------
    z, p : array_like
        Analog zeros and poles in rad/s (scipy convention).
    k : float
        Analog gain.
    fs : float
        Sample rate in Hz, > 0.
    notch_hz : float
        Analog notch frequency in Hz (the bilinear warp point), 0 < notch_hz < fs / 2.
    tolerance_db : float, optional
        Largest |dB| error accepted where the analog is above -30 dB, > 0.

    Returns
    -------
    DigitalNotch

    Raises
    ------
    BadValueError
        If ``fs``, ``notch_hz`` or ``tolerance_db`` is not allowed.
    CircuitError
        If the analog H(s) is improper (more zeros than poles) or unstable.

    Example
    -------
    >>> w0 = 2 * np.pi * 10000.0
    >>> d = design_sections([1j * w0, -1j * w0], np.roots([1, 4 * w0, w0 ** 2]), 1.0, 44100, notch_hz=10000)
    >>> d.fidelity_db < 0.1, d.method
    (True, 'matched+fit2')
    """
    fs = check_sample_rate_hz(fs)
    notch_hz = _check_notch_hz(notch_hz, fs)
    check_range("tolerance (dB)", tolerance_db, 0.0, math.inf, low_open=True, high_open=True)
    tol = float(tolerance_db)
    z, p, k = _check_zpk(z, p, k)
    band = fidelity_band_hz(fs)
    best = None
    for method, z_d, p_d, k_d in _candidates(z, p, k, fs, notch_hz, band):
        if np.any(np.abs(p_d) >= 1.0):
            continue  # only stable designs
        sos = _zpk_to_sos(z_d, p_d, k_d)
        err = fidelity_error_db(z, p, k, sos, fs, band)
        if best is None or err < best[2]:
            best = (method, sos, err)
        if err <= tol:
            break
    method, sos, err = best
    return DigitalNotch(
        sos=np.ascontiguousarray(sos, dtype=np.float64),
        fs=fs,
        latency_samples=0,
        method=method,
        fidelity_db=err,
        band_hz=band,
        notch_hz=_digital_null_hz(sos, fs, notch_hz),
    )
