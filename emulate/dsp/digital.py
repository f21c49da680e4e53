"""Analog transfer function -> IIR second-order sections at a file's sample rate.

The stage reads top to bottom like the math:

1. validate    fs > 0, a notch frequency > 0 (at or above Nyquist allowed: the
               part of the response below Nyquist is what is heard, so it is
               emulated), a proper and stable analog H(s).
2. bilinear    s = c (z-1)/(z+1), c = w_warp / tan(w_warp / (2 fs)), warped at the
               notch so the digital null lands exactly on the analog one
               (Oppenheim & Schafer, *Discrete-Time Signal Processing*, sec. 7.2);
               for a notch above the band it is warped at the band's top and
               tried last, as the design that exists for every stable H(s).
3. check       the worst |dB| error against the analog over the band (20 Hz to
               min(20 kHz, 0.45 fs)) wherever the analog response is above
               -30 dB.  If it meets the tolerance, stop here: method ``"bilinear"``.
4. correct     otherwise build a *matched* core, every analog root r mapped to
               exp(r / fs) (the impulse-invariant root map also used by Vicanek,
               "Matched Second Order Digital Filters", 2016), and multiply it by a
               small minimum-phase correction whose magnitude^2 is a rational
               cosine polynomial fitted (Sanathanan-Koerner iteration, relative
               least squares, then a few Lawson reweightings towards minimax) to
               |H_analog|^2 / |H_matched|^2; the correction is spectrally
               factorised into its minimum-phase roots.  Method ``"matched+fit<m>"``
               where m is the correction order (1 to 4).  A root above
               Nyquist (or farther out than 30 fs) would alias under exp(r / fs):
               it gets a stand-in (a real root, or a resonant one held at 0.98 of
               Nyquist with its own damping; both are tried) and the correction
               carries the rest of its in-band effect.  The fit is scaled (log
               ratio centred, columns normalised), any solver failure means "no
               fit", and the bilinear image remains: the design never throws for
               a stable network.
5. phase       the phase error (latency removed) is measured up to 0.35 fs.  The
               magnitude designs are nearly all off by a constant fraction of a
               sample (the matched map's delay error grows as -Re(r) / (12 fs) per
               root) plus a smooth bend near the top; where the error exceeds
               4 degrees (the 5 degree target less a margin), an all-pass of order
               N = 1..4 fitted by equation-error least squares (Lang & Laakso 1994)
               turns it into N whole samples of latency, which the processor
               reports and a render compensates.  Method suffix ``"+allpass<N>"``.
6. convert     zpk -> sos, roots paired as scipy.signal.zpk2sos pairs them by
               default ("nearest"): the pole nearest the unit circle with its
               conjugate and its nearest zero, those sections last in the cascade.
               Conjugate pairs are tidied by the package's one pairing routine
               (:func:`emulate.analog.roots.pair_conjugates`).

Where a design still misses the target (0.1 dB, 5 degrees), it is returned
anyway with the figures it reaches; ``DigitalNotch.shortfall()`` gives the
warning line the commands print and ``meets_target`` the JSON flag.

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

All designs are causal IIR sections at the base rate, no oversampling; the
latency is 0 except where the phase all-pass is used (1 to 4 samples).

Only numpy is imported: the zpk -> sos pairing, the response evaluation of zpk
and sos on a frequency grid are small module-private routines here and the bounded
null search is the package's one golden-section search (:mod:`emulate.search`), so rendering does not load scipy.signal or scipy.optimize (about
50 MB of resident memory).  The tests check them against scipy.signal.zpk2sos,
freqs_zpk and sosfreqz.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from emulate.analog.roots import upper_and_real
from emulate.errors import BadValueError, CircuitError
from emulate.search import golden_section_min
from emulate.validate import check_range, check_sample_rate_hz

__all__ = [
    "DigitalNotch",
    "analog_null_hz",
    "bilinear_prewarped_zpk",
    "check_sample_rate_hz",
    "design_sections",
    "fidelity_band_hz",
    "fidelity_error_db",
    "phase_band_hz",
    "phase_error_deg",
    "worst_error_db",
]

# Response level below which the fidelity target does not apply (dB).
FLOOR_DB = -30.0
# Lowest frequency of the checked band (Hz).
BAND_LO_HZ = 20.0
# Top of the magnitude band: 20 kHz, or this share of fs where that is lower.
BAND_SHARE = 0.45
# Top of the phase band, share of fs.
PHASE_SHARE = 0.35
# The fidelity target: magnitude (dB) and phase (degrees).
TARGET_DB = 0.1
TARGET_DEG = 5.0
# Phase error above which the fractional-delay trim is tried (1 degree of margin).
PHASE_TRIM_DEG = 4.0
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
        Frequency of the digital null, Hz (NaN for a notch at or above Nyquist).
    phase_error_deg : float
        Largest |phase| error over ``phase_band_hz`` where the analog is above
        -30 dB, degrees, the latency removed.
    phase_band_hz : tuple of float
        (lo, hi) band where the phase is checked, Hz.
    """

    sos: np.ndarray
    fs: float
    latency_samples: int
    method: str
    fidelity_db: float
    band_hz: tuple[float, float]
    notch_hz: float
    phase_error_deg: float = 0.0
    phase_band_hz: tuple[float, float] = (BAND_LO_HZ, BAND_LO_HZ)

    @property
    def meets_target(self) -> bool:
        """bool: Within 0.1 dB over ``band_hz`` and 5 degrees over ``phase_band_hz``."""
        return self.fidelity_db <= TARGET_DB and self.phase_error_deg <= TARGET_DEG

    def shortfall(self) -> str | None:
        """One line saying how far the design misses the fidelity target, or None if it meets it."""
        if self.meets_target:
            return None
        return (f"the digital emulation at {self.fs:g} Hz reaches only {self.fidelity_db:.2f} dB / "
                f"{self.phase_error_deg:.1f} degrees of the analog model (target {TARGET_DB:g} dB over "
                f"{self.band_hz[0]:g}-{self.band_hz[1]:g} Hz, {TARGET_DEG:g} degrees up to "
                f"{self.phase_band_hz[1]:g} Hz); rendered anyway")


# --- validators (one per concept) -------------------------------------------


def _check_notch_hz(notch_hz, fs, *, below_nyquist=True):
    """Return ``notch_hz`` as float if 0 < notch_hz (< fs / 2 if ``below_nyquist``), else raise BadValueError."""
    try:
        value = float(notch_hz)
    except (TypeError, ValueError):
        raise BadValueError(f"notch {notch_hz!r} Hz is not a number") from None
    top = fs / 2.0 if below_nyquist else math.inf
    if not math.isfinite(value) or not 0.0 < value < top:
        allowed = f"0 < notch < {fs / 2.0:g} Hz (Nyquist)" if below_nyquist else "a finite notch > 0 Hz"
        raise BadValueError(f"notch {notch_hz!r} Hz is not allowed at {fs:g} Hz; allowed: {allowed}")
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


# A root whose frequency |Im r| lies above Nyquist is not mapped by exp(r / fs) (it
# would alias into the band): it gets a stand-in (_high_roots) and the fitted
# correction carries the rest of its in-band effect.  A resonant stand-in sits at
# this share of Nyquist.
ALIAS_SHARE = 0.98


# A root this far out (|r| / fs) is also left to the correction: exp(r / fs) is 0 to
# double precision and its ratio term would overflow.
FAR_ROOT = 30.0


def _is_high(roots, fs):
    """Roots whose frequency lies above Nyquist, or farther out than FAR_ROOT fs.

    A root at Nyquist itself maps to z = -1 exactly: it is kept.
    """
    roots = np.asarray(roots)
    return (np.abs(roots.imag) > np.pi * fs * (1.0 + 1e-9)) | (np.abs(roots) > FAR_ROOT * fs)


def _root_ratio_log(w, roots, fs, clamp=False):
    """Sum over ``roots`` of log |jW - r|^2 / |exp(jw) - m(r)|^2, scale of each root removed.

    For a mapped root, m(r) = exp(r / fs) and the term is log |u / expm1(u)|^2,
    u = (j w fs - r) / fs, smooth and finite, including at the root (the constant
    fs^2 exp(2 Re r / fs) is left out).  For a high root, m(r) = exp(-|r| / fs)
    and the term is normalised to 0 at DC.
    """
    roots = np.asarray(roots, complex)
    high = _is_high(roots, fs)
    u = (1j * w[:, None] * fs - roots[None, ~high]) / fs
    em = np.expm1(u)
    small = np.abs(u) < 1e-12
    ratio = np.where(small, 1.0, np.abs(u) / np.where(small, 1.0, np.abs(em)))
    total = 2.0 * np.sum(np.log(ratio), axis=1)
    r = roots[high]
    if len(r):
        m = _high_roots(r, fs, clamp)
        analog = np.abs(1j * w[:, None] * fs - r[None, :]) / np.abs(r)[None, :]
        digital = np.abs(np.exp(1j * w)[:, None] - m[None, :]) / np.abs(1.0 - m)[None, :]
        total += 2.0 * np.sum(np.log(np.maximum(analog, 1e-300) / np.maximum(digital, 1e-300)), axis=1)
    return total


def _high_roots(roots, fs, clamp):
    """Digital stand-ins for high roots: exp(-|r| / fs) (real), or with ``clamp`` a resonant one at ALIAS_SHARE of Nyquist.

    With ``clamp``, a complex root closer to the j axis than its own frequency
    (Q above 1/2) becomes exp((Re r + j ALIAS_SHARE pi fs sign(Im r)) / fs), so the
    digital response still rises or falls towards Nyquist as the analog one does
    beyond it.  Which stand-in the correction fits better depends on the network;
    the design tries both.
    """
    roots = np.asarray(roots, complex)
    resonant = clamp & _is_resonant(roots, fs)
    clamped = roots.real + 1j * np.sign(roots.imag) * ALIAS_SHARE * np.pi * fs
    return np.where(resonant, np.exp(clamped / fs), np.exp(-np.abs(roots) / fs))


def _is_resonant(roots, fs):
    """Complex roots closer to the j axis than their own frequency, not far out."""
    roots = np.asarray(roots, complex)
    return (np.abs(roots.real) < np.abs(roots.imag)) & (np.abs(roots) <= FAR_ROOT * fs)


def _matched_roots(roots, fs, clamp=False):
    """exp(r / fs) for every root, :func:`_high_roots` for the high ones; and the gain factor."""
    roots = np.asarray(roots, complex)
    high = _is_high(roots, fs)
    mapped = np.zeros(len(roots), complex)
    mapped[~high] = np.exp(roots[~high] / fs)
    mapped[high] = _high_roots(roots[high], fs, clamp)
    # |jW - r| = |exp(jw) - exp(r/fs)| * fs * exp(-Re r / fs) * |u / expm1(u)|  (mapped);
    # |jW - r| = |exp(jw) - m| * |r| / |1 - m| * (the normalised ratio)         (high).
    scale = np.abs(roots) / np.abs(1.0 - mapped)
    scale[~high] = fs * np.exp(-roots[~high].real / fs)
    return mapped, float(np.prod(np.real(scale)))


def _matched_zpk(z, p, k, fs, clamp=False):
    """Map every analog root r to exp(r / fs) (high roots to exp(-|r| / fs)); gain so the ratio -> 1."""
    z_d, z_scale = _matched_roots(z, fs, clamp)
    p_d, p_scale = _matched_roots(p, fs, clamp)
    z_d = np.concatenate([z_d, np.zeros(len(p) - len(z))])  # excess poles: delays only
    return z_d, p_d, k * z_scale / p_scale


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
    with the error) pushes towards the minimax error in dB.  An iteration whose
    P or Q is not positive on the grid ends the loop: the last positive iterate is
    returned (None if there is none).
    """
    # log_d is shifted to mean 0 (a constant factor of D is a factor of P), so the
    # columns stay of order 1; each column is also scaled to unit norm, and any
    # failure of the solver means "no fit" (the caller has designs that cannot fail).
    shift = float(np.mean(log_d))
    d = np.exp(log_d - shift)
    if not np.all(np.isfinite(d)) or np.any(d <= 0.0):
        return None
    basis = _cos_basis(w, order)
    q_prev = np.ones_like(w)
    wt = weight.copy()
    kept = None
    for it in range(iterations + lawson):
        scale = np.sqrt(wt) / q_prev
        a = np.hstack([basis * (scale / d)[:, None], -basis[:, 1:] * scale[:, None]])
        b = scale
        norms = np.linalg.norm(a, axis=0)
        if not (np.all(np.isfinite(a)) and np.all(norms > 0.0)):
            return None
        try:
            coeffs = np.linalg.lstsq(a / norms, b, rcond=1e-12)[0] / norms
        except np.linalg.LinAlgError:
            return None
        p_val = basis @ coeffs[: order + 1]
        q_val = 1.0 + basis[:, 1:] @ coeffs[order + 1 :]
        if np.any(q_val <= 0.0) or np.any(p_val <= 0.0):
            break
        kept = coeffs
        q_prev = q_val
        if it >= iterations:
            err = np.abs(np.log(p_val / q_val) - log_d)
            wt = wt * (err / err.max() + 1e-3)
            wt = wt / wt.mean()
    if kept is None:
        return None
    return kept[: order + 1] * math.exp(shift), np.concatenate([[1.0], kept[order + 1 :]])


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
    if not np.all(np.isfinite(laurent)):
        return None
    try:
        roots = np.roots(laurent)
    except np.linalg.LinAlgError:
        return None
    inside = roots[np.abs(roots) < 1.0 - 1e-9]
    if len(inside) != order:
        return None  # roots on the unit circle: P touches zero
    gain_sq = np.sum(cos_coeffs) / np.abs(np.prod(1.0 - inside)) ** 2
    return inside, math.sqrt(gain_sq)


def _correction_zpk(z, p, fs, band_hz, order, clamp=False):
    """Minimum-phase correction (z, p, k) fitted to |H_a|^2 / |H_matched|^2, or None if the fit fails."""
    w, weight = _fit_grid(fs, band_hz)
    log_d = _root_ratio_log(w, z, fs, clamp) - _root_ratio_log(w, p, fs, clamp)
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


# --- stage 3: checks ---------------------------------------------------------


def fidelity_band_hz(fs):
    """Band (lo, hi) in Hz where fidelity is checked at rate ``fs``.

    20 Hz to min(20 kHz, 0.45 fs).

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
    return (BAND_LO_HZ, min(20000.0, BAND_SHARE * fs))


def phase_band_hz(fs):
    """Band (lo, hi) in Hz where the phase is checked at rate ``fs``: 20 Hz to min(20 kHz, 0.35 fs).

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
    >>> phase_band_hz(48000)
    (20.0, 16800.0)
    """
    fs = check_sample_rate_hz(fs)
    return (BAND_LO_HZ, min(20000.0, PHASE_SHARE * fs))


def _check_grid_hz(p, z, band_hz):
    """Dense frequency grid (Hz) over the band, refined around every resonant root."""
    lo, hi = band_hz
    parts = [np.geomspace(lo, hi, 2000), np.linspace(lo, hi, 2000)]
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
    return _errors(z, p, k, sos, fs, band_hz, 0)[0]


def phase_error_deg(z, p, k, sos, fs, band_hz, latency_samples=0):
    """Largest |phase| difference (degrees) between analog zpk and digital sos where the analog is above -30 dB.

    The digital phase is taken with its latency removed (what a latency
    compensated render hears).

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
    latency_samples : int, optional
        The design's latency, samples.

    Returns
    -------
    float
        Worst |phase| error in degrees (0.0 if the analog never rises above -30 dB in the band).

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
    >>> d = design_sections(z, p, k, 48000, notch_hz=100)
    >>> phase_error_deg(z, p, k, d.sos, 48000, (20, 16800), d.latency_samples) < 1.0
    True
    """
    return _errors(z, p, k, sos, fs, band_hz, latency_samples)[1]


def worst_error_db(h_analog, h_digital, floor_db: float = FLOOR_DB) -> float:
    """Largest |dB| difference between two responses wherever the analog is above ``floor_db``.

    The package's one worst-error measure: the design's fidelity figure and the
    pictures' caption both come from it.  The caller picks the frequencies (the
    fidelity band, a picture's grid from 20 Hz up).

    Parameters
    ----------
    h_analog, h_digital : array_like of complex
        The two responses on the same frequencies.
    floor_db : float, optional
        Analog level (dB) at or below which a point is not compared (default -30 dB).

    Returns
    -------
    float
        Worst |dB| error, 0.0 where the analog never rises above ``floor_db``.

    Example
    -------
    >>> round(worst_error_db([1.0, 0.5, 1e-3], [1.0, 0.25, 1.0]), 3)  # 1e-3 is -60 dB: not compared
    6.021
    """
    h_analog, h_digital = np.asarray(h_analog), np.asarray(h_digital)
    with np.errstate(divide="ignore"):
        level = 20.0 * np.log10(np.abs(h_analog))
        keep = level > floor_db
        if not np.any(keep):
            return 0.0
        return float(np.max(np.abs(20.0 * np.log10(np.abs(h_digital[keep])) - level[keep])))


def _errors(z, p, k, sos, fs, band_hz, latency_samples):
    """(worst |dB| error, worst |phase| error in degrees) where the analog is above -30 dB."""
    fs = check_sample_rate_hz(fs)
    z, p, k = _check_zpk(z, p, k)
    lo, hi = (float(v) for v in band_hz)
    if not 0.0 < lo < hi <= fs / 2.0:
        raise BadValueError(f"band {band_hz!r} Hz is not allowed; allowed: 0 < lo < hi <= {fs / 2.0:g} Hz")
    return _Reference(z, p, k, fs, (lo, hi)).errors(sos, latency_samples)


class _Reference:
    """The analog response on the check grid of a band, computed once per design."""

    def __init__(self, z, p, k, fs, band_hz, phase_top_hz=math.inf):
        self.fs = fs
        self.f = _check_grid_hz(p, z, band_hz)
        self.h = _zpk_response_s(z, p, k, 2.0 * np.pi * self.f)
        with np.errstate(divide="ignore"):
            self.db = 20.0 * np.log10(np.abs(self.h))
        self.keep = self.db > FLOOR_DB
        self.phase_keep = self.keep & (self.f <= phase_top_hz)

    def digital(self, sos, latency_samples=0):
        """The design's response on the grid, latency removed."""
        return _sos_response_z(sos, self.f, self.fs) * np.exp(2j * np.pi * self.f * latency_samples / self.fs)

    def magnitude_error_db(self, sos):
        """Worst |dB| error where the analog is above -30 dB (0.0 where it never is)."""
        return worst_error_db(self.h, self.digital(sos))

    def phase_error_rad(self, sos, latency_samples=0):
        """Digital w (rad/sample) and phase(H_d / H_a) (rad) over the phase part of the grid."""
        keep = self.phase_keep
        with np.errstate(divide="ignore", invalid="ignore"):
            phase = np.angle(self.digital(sos, latency_samples)[keep] / self.h[keep])
        finite = np.isfinite(phase)
        return 2.0 * np.pi * self.f[keep][finite] / self.fs, phase[finite]

    def phase_error_deg(self, sos, latency_samples=0):
        """Worst |phase| error in degrees over the phase part of the grid (0.0 where it is empty)."""
        phase = self.phase_error_rad(sos, latency_samples)[1]
        return float(np.degrees(np.max(np.abs(phase)))) if len(phase) else 0.0

    def errors(self, sos, latency_samples=0):
        """(worst |dB| error, worst |phase| error in degrees)."""
        return self.magnitude_error_db(sos), self.phase_error_deg(sos, latency_samples)


def _null_hz(magnitude, near_hz, hi_hz):
    """Frequency (Hz) of the smallest ``magnitude(f)`` within [0.8, 1.25] * near_hz, below ``hi_hz``."""
    lo, hi = 0.8 * near_hz, min(1.25 * near_hz, hi_hz)
    f = np.linspace(lo, hi, 801)
    i = int(np.argmin(magnitude(f)))
    step = f[1] - f[0]
    a, b = max(lo, f[i] - step), min(hi, f[i] + step)
    return golden_section_min(magnitude, a, b, near_hz * 1e-9)


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
    """Yield (method, z_d, p_d, k_d) designs, cheapest first; the last one cannot fail.

    The bilinear image is warped at the notch where the notch lies in the band,
    else at the top of the band (a notch at or above Nyquist, or none); it exists
    for every stable H(s), so it closes the list as the design that cannot fail.
    """
    warp_hz = notch_hz if notch_hz is not None and notch_hz < band_hz[1] else band_hz[1]
    bilinear = ("bilinear", *bilinear_prewarped_zpk(z, p, k, fs, warp_hz))
    if warp_hz == notch_hz:
        yield bilinear
    roots = np.concatenate([z, p])
    clamps = (False, True) if np.any(_is_high(roots, fs) & _is_resonant(roots, fs)) else (False,)
    for clamp in clamps:
        z_m, p_m, k_m = _matched_zpk(z, p, k, fs, clamp)
        for order in _FIT_ORDERS:
            corr = _correction_zpk(z, p, fs, band_hz, order, clamp)
            if corr is not None:
                z_c, p_c, k_c = corr
                yield (f"matched+fit{order}", np.concatenate([z_m, z_c]), np.concatenate([p_m, p_c]), k_m * k_c)
    if warp_hz != notch_hz:
        yield bilinear


# All-pass orders tried for the phase trim, lowest first.
_ALLPASS_ORDERS = (1, 2, 3, 4)


def _allpass_sos(w, phase_error, order):
    """All-pass of ``order`` N whose phase makes phase_error(w) + phase_A(w) = -N w, or None.

    A(z) = z^-N D(1/z) / D(z), D(z) = 1 + sum a_i z^-i, has phase -N w - 2 arg D;
    the condition arg D = phase_error / 2 =: g is linear in the a_i,
    sum a_i sin(i w + g) = -sin g, solved by least squares (the equation-error
    all-pass design, Lang & Laakso, IEEE Trans. Circuits Syst. II 41(1), 1994).
    None if the solution is not stable.
    """
    g = phase_error / 2.0
    i = np.arange(1, order + 1)
    a = np.sin(np.outer(w, i) + g[:, None])
    try:
        coeffs = np.linalg.lstsq(a, -np.sin(g), rcond=1e-12)[0]
    except np.linalg.LinAlgError:
        return None
    poles = np.roots(np.concatenate([[1.0], coeffs]))
    if not (np.all(np.isfinite(poles)) and np.all(np.abs(poles) < 1.0 - 1e-6)):
        return None
    zeros = np.conj(1.0 / poles)
    return _zpk_to_sos(zeros, poles, float(coeffs[-1]))


def _phase_trimmed(reference, sos):
    """The least-error (sos, latency_samples, phase error) with an all-pass trim of order 1 to 4.

    Nearly all of the phase error of the magnitude designs is a constant group
    delay of a fraction of a sample (the matched map's delay error grows as
    -Re(r) / (12 fs) per root) plus a smooth bend near the band's top; an
    all-pass of order N is fitted so the total becomes N whole samples, which
    the processor reports as latency and a render compensates.  Stops at the
    first order within the trim threshold; the magnitude is untouched.
    """
    w, error = reference.phase_error_rad(sos)
    best = (sos, 0, reference.phase_error_deg(sos))
    if len(w) == 0:
        return best
    for order in _ALLPASS_ORDERS:
        allpass = _allpass_sos(w, error, order)
        if allpass is None:
            continue
        trial = np.vstack([sos, allpass])
        phase = reference.phase_error_deg(trial, order)
        if phase < best[2]:
            best = (trial, order, phase)
        if phase <= PHASE_TRIM_DEG:
            break
    return best


def design_sections(z, p, k, fs, *, notch_hz, tolerance_db=0.1):
    """Design digital sections for an analog notch at rate ``fs`` within ``tolerance_db``.

    Tries the prewarped bilinear image first, then a matched core with a fitted
    minimum-phase correction of order 1, 2, 3, 4 (see the module notes), and
    takes the first design whose worst magnitude error over the band is within
    ``tolerance_db``; if none is, the most faithful design found.  Where the
    phase then misses the 5 degree target less 1 degree of margin, a fitted
    all-pass of order N (1 to 4) turns the design's phase error into a latency
    of N whole samples (kept if it helps).  Never raises for a stable, proper H(s): the bilinear image exists
    for all of them.  Does not oversample, and does not warn when the target
    is missed (read ``fidelity_db``, ``phase_error_deg``, ``shortfall()``).

    Parameters
    ----------
    z, p : array_like
        Analog zeros and poles in rad/s (scipy convention).
    k : float
        Analog gain.
    fs : float
        Sample rate in Hz, > 0.
    notch_hz : float or None
        Analog notch frequency in Hz (the bilinear warp point), > 0; at or above
        the band's top (Nyquist included) the part of the response below
        Nyquist is emulated; None for a network with no notch.
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
    >>> d.fidelity_db < 0.1, d.phase_error_deg < 5.0, d.method.startswith("matched+fit")
    (True, True, True)
    """
    fs = check_sample_rate_hz(fs)
    if notch_hz is not None:
        notch_hz = _check_notch_hz(notch_hz, fs, below_nyquist=False)
    check_range("tolerance (dB)", tolerance_db, 0.0, math.inf, low_open=True, high_open=True)
    tol = float(tolerance_db)
    z, p, k = _check_zpk(z, p, k)
    band, phase_band = fidelity_band_hz(fs), phase_band_hz(fs)
    reference = _Reference(z, p, k, fs, band, phase_band[1])
    best = None
    for method, z_d, p_d, k_d in _candidates(z, p, k, fs, notch_hz, band):
        if not (np.all(np.abs(p_d) < 1.0) and np.all(np.isfinite(z_d)) and math.isfinite(k_d)):
            continue  # only stable, finite designs
        sos = _zpk_to_sos(z_d, p_d, k_d)
        err = reference.magnitude_error_db(sos)
        if best is None or err < best[2]:
            best = (method, sos, err)
        if err <= tol:
            break
    method, sos, err = best
    latency, phase = 0, reference.phase_error_deg(sos)
    if phase > PHASE_TRIM_DEG:
        sos, latency, phase = _phase_trimmed(reference, sos)
        method += f"+allpass{latency}" if latency else ""
    in_band = notch_hz is not None and notch_hz < 0.4999 * fs
    return DigitalNotch(
        sos=np.ascontiguousarray(sos, dtype=np.float64),
        fs=fs,
        latency_samples=latency,
        method=method,
        fidelity_db=err,
        band_hz=band,
        notch_hz=_digital_null_hz(sos, fs, notch_hz) if in_band else math.nan,
        phase_error_deg=phase,
        phase_band_hz=phase_band,
    )
