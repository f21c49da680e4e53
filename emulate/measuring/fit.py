"""Which part is off: fit the model's part values, within tolerance, to a measured response.

A build that misses its model usually has one or two parts off. For every set
of one or two parts the fit moves only those parts (bounded by their
tolerances, bounded least squares on the gain in dB with the overall gain
free, and on the phase where the measurement holds it), and the sets are
compared by their RMS misfit: a two-part explanation
is taken only when it fits clearly better than the best single part
(``PAIR_GAIN`` times lower misfit, and more than ``FLOOR_DB`` apart), and "no
part off" only when no single part improves on the nominal values as clearly.
Only where the measurement stands above ``DEPTH_FLOOR_DB`` below its peak is
used, so noise in the bottom of the null does not steer the fit.

Why the phase: the gain alone cannot tell some explanations apart. An
unbalanced twin-T's pair of zeros sits just left or just right of the
j-omega axis depending on which way the balance tipped, and the two give
the same gain; the input-side and output-side halves (R1 C1 against R2 C2)
move the gain almost alike. The phase tells both apart. The measured phase
is first freed of the loop's leftover delay and polarity (a straight line in
frequency fitted against the nominal model where the gain is within
``FULL_WEIGHT_DB`` of its peak); a measurement whose phase still strays more
than ``PHASE_TRUST_RAD`` from the model after that (an analyser that writes
its phase another way) is fitted on the gain alone. The phase residual is
counted in the gain's units (1 rad = 20/ln 10 dB: the real and imaginary
parts of ln H), so noise weighs the same in both.

The fix: the R3 that restores the null with the fitted values, from the null
condition R1 R2 C3 = R3 (R1 + R2)(C1 + C2) (it holds for the bootstrapped
network too: at the null the output, and so the foot, is at rest).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass

import numpy as np

from emulate.analog.networks import PART_NAMES
from emulate.analog.parts import format_value
from emulate.errors import BadValueError

__all__ = ["DEPTH_FLOOR_DB", "FLOOR_DB", "FULL_WEIGHT_DB", "PAIR_GAIN", "PHASE_TRUST_RAD", "Diagnosis", "diagnose"]

PAIR_GAIN = 2.0
FLOOR_DB = 0.005  # dB RMS: below this two fits are equally good (noise of a -80 dBFS floor)
MISMATCH_DB = 0.5  # a misfit above this means the model is not the circuit measured
DEPTH_FLOOR_DB = 50.0
FULL_WEIGHT_DB = 20.0
PHASE_TRUST_RAD = 0.3  # rms, after the delay and polarity are taken out
_DB_PER_NEPER = 20 / np.log(10)
_POINTS = 160
_SMALL = 0.005  # a fitted part within 0.5 % is not "off"
_GRID = 11  # grid points per part across its tolerance


@dataclass(frozen=True)
class Diagnosis:
    """The most likely explanation of a measurement.

    Attributes
    ----------
    parts_off : dict part -> fitted relative error (0.04 = 4 % high).
    fitted : the network with the fitted values.
    gain_db : the overall gain that was fitted out, dB.
    rms_db : the remaining misfit, dB RMS.
    nominal_rms_db : the misfit of the nominal values, dB RMS.
    ranking : (parts, rms_db) of every set tried, best first.
    alternatives : other sets of the same size that fit within ``PAIR_GAIN`` of
        the chosen one (the measurement cannot tell them apart well).
    trim_r3_ohms : the R3 that restores the null with the fitted values.
    used_phase : whether the measured phase was fitted too (else the gain alone).
    """

    parts_off: dict
    fitted: object
    gain_db: float
    rms_db: float
    nominal_rms_db: float
    ranking: tuple
    trim_r3_ohms: float
    alternatives: tuple = ()
    used_phase: bool = False

    def text(self) -> str:
        if not self.parts_off and self.rms_db > MISMATCH_DB:
            return (f"no one or two parts within tolerance explain the measurement ({self.rms_db:.2f} dB RMS "
                    "left): check the wiring, the source and load, the depth setting, and that the model "
                    "given is the circuit built")
        if not self.parts_off:
            return (f"the build matches the model within {self.rms_db:.3f} dB RMS: no part stands out")
        said = "; ".join(f"{name.upper()} reads about {abs(100 * e):.0f} % {'high' if e > 0 else 'low'}"
                         for name, e in self.parts_off.items())
        text = (f"{said}; set the R3 trimmer to {format_value(self.trim_r3_ohms, 'resistance')} "
                f"to restore the null (fit {self.rms_db:.3f} dB RMS, nominal parts {self.nominal_rms_db:.3f})")
        if self.alternatives:
            text += "; nearly as likely: " + ", ".join("+".join(p.upper() for p in parts)
                                                       for parts in self.alternatives)
        return text

    def as_dict(self) -> dict:
        return {"parts_off": {k.upper(): v for k, v in self.parts_off.items()}, "gain_db": self.gain_db,
                "rms_db": self.rms_db, "nominal_rms_db": self.nominal_rms_db,
                "trim_r3_ohms": self.trim_r3_ohms, "explanation": self.text(), "used_phase": self.used_phase,
                "alternatives": [[p.upper() for p in parts] for parts in self.alternatives],
                "ranking": [{"parts": [p.upper() for p in parts], "rms_db": r} for parts, r in self.ranking[:6]]}


def diagnose(network, measured, tolerances: dict, *, max_parts: int = 2, progress=None) -> Diagnosis:
    """Fit one or two part values of ``network`` to ``measured`` and name the likely culprit(s).

    Parameters
    ----------
    network : TwinT
        The model of the build (nominal values, source, load, depth control as built).
    measured : MeasuredResponse
        The measurement (:mod:`emulate.measuring.analyse`).
    tolerances : dict
        Part name (``"r1"`` .. ``"c3"``) -> tolerance fraction; a fit stays within it.
    max_parts : int
        1 or 2: the largest set of parts moved together.
    progress : callable or None
        Called with 1 after each set of parts is fitted (a progress bar's ``update``).

    Raises
    ------
    BadValueError
        If the measurement holds too few points in the band.

    Example
    -------
    >>> from emulate.analog.networks import TwinT
    >>> from emulate.measuring.analyse import MeasuredResponse
    >>> net = TwinT.balanced(1000.0, r_ohms=10e3)
    >>> f = np.geomspace(50, 15000, 400)
    >>> built = net.replace(c3=net.c3 * 1.04)
    >>> m = MeasuredResponse(f, 20 * np.log10(np.abs(built.response(f))) + 3.0)
    >>> d = diagnose(net, m, {n: 0.1 for n in ("r1", "r2", "r3", "c1", "c2", "c3")})
    >>> {k: round(v, 3) for k, v in d.parts_off.items()}, round(d.gain_db, 2)
    ({'c3': 0.04}, 3.0)
    """
    f, target, weight = _fit_data(measured)
    for name in PART_NAMES:
        if not 0 < tolerances.get(name, 0) < 1:
            raise BadValueError(f"tolerance of {name.upper()} {tolerances.get(name)!r}: allowed (0, 1)")
    phase = _phase_target(network, measured, f, weight)
    model = _Model(network, f, target, weight, tolerances, phase)
    nominal = model.fit(())
    fits = {}
    for size in range(1, max_parts + 1):
        for parts in itertools.combinations(PART_NAMES, size):
            fits[parts] = model.fit(parts)
            if progress is not None:
                progress(1)
    ranking = sorted(((parts, fit[1]) for parts, fit in fits.items()), key=lambda item: item[1])
    parts = _choose(nominal[1], ranking)
    errors, rms = (fits[parts][0], fits[parts][1]) if parts else ({}, nominal[1])
    errors = {name: e for name, e in errors.items() if abs(e) >= _SMALL}
    fitted = network.replace(**{name: getattr(network, name) * (1 + e) for name, e in errors.items()})
    alternatives = tuple(p for p, r in ranking if len(p) == len(parts) and p != parts and r < PAIR_GAIN * rms)
    return Diagnosis(errors, fitted, model.gain_db(errors), rms, nominal[1], tuple(ranking), _trim_r3(fitted),
                     alternatives[:3] if parts else (), phase is not None)


def _fit_data(measured):
    """Fit frequencies, the measurement there (interpolated in log frequency), and weights.

    The weights fall below ``FULL_WEIGHT_DB`` under the peak in proportion to
    the gain, as the noise in a dB reading grows there in inverse proportion.
    """
    band = measured.band_hz
    f = np.geomspace(band[0], band[1], _POINTS)
    target = measured.on(f)
    keep = target >= np.max(target) - DEPTH_FLOOR_DB
    if keep.sum() < 20:
        raise BadValueError(f"the measurement holds {keep.sum()} usable points: allowed at least 20 "
                            f"within {DEPTH_FLOOR_DB:g} dB of its peak")
    below = np.max(target) - target[keep]
    weight = 10 ** (-np.maximum(below - FULL_WEIGHT_DB, 0.0) / 20)
    return f[keep], target[keep], weight


def _phase_target(network, measured, f, weight):
    """The measured phase on ``f`` (rad) without the loop's leftover delay and polarity, or None.

    None where the measurement holds no phase or where, after a straight line in
    frequency is taken out against the nominal model, it still strays more than
    ``PHASE_TRUST_RAD`` rms from the model where the gain is within
    ``FULL_WEIGHT_DB`` of its peak.
    """
    if measured.phase_deg is None:
        return None
    phase = np.interp(np.log(f), np.log(measured.f_hz), np.unwrap(np.radians(measured.phase_deg)))
    apart = np.unwrap(phase - np.angle(network.response(f)))
    full = weight >= 1.0
    if full.sum() < 3:
        return None
    line = np.polyfit(f[full], apart[full], 1)
    if _rms(apart[full] - np.polyval(line, f[full])) > PHASE_TRUST_RAD:
        return None
    return phase - np.polyval(line, f)


def _choose(nominal_rms: float, ranking) -> tuple:
    """The smallest set no larger set fits clearly better than (nominal, one part, two parts)."""
    chosen, chosen_rms = (), nominal_rms
    for size in (1, 2):
        best = next(((parts, r) for parts, r in ranking if len(parts) == size), None)
        if best is not None and _clearly_better(best[1], chosen_rms):
            chosen, chosen_rms = best
    return chosen


def _clearly_better(rms: float, than: float) -> bool:
    return rms * PAIR_GAIN < than and than - rms > FLOOR_DB


def _trim_r3(net) -> float:
    return net.r1 * net.r2 * net.c3 / ((net.r1 + net.r2) * (net.c1 + net.c2))


class _Model:
    """The network's gain in dB (and phase) with some parts scaled, against the measurement
    (the overall gain, and the delay and polarity, fitted out)."""

    def __init__(self, network, f, target, weight, tolerances, phase=None):
        self.network, self.f, self.target, self.weight, self.phase = network, f, target, weight, phase
        self.bounds = {name: float(tolerances[name]) for name in PART_NAMES}

    def _response(self, errors: dict) -> np.ndarray:
        """The response with ``errors`` (each a value or an array of values: one build a row)."""
        values = {name: getattr(self.network, name) * (1 + e) for name, e in errors.items()}
        return self.network.replace(**values).response(self.f)

    def _residual(self, h: np.ndarray) -> np.ndarray:
        """Weighted misfit of responses ``h`` (..., points): gain in dB, then phase in dB units."""
        w2 = self.weight ** 2
        r = 20 * np.log10(np.maximum(np.abs(h), 1e-15)) - self.target
        parts = [self.weight * (r - np.average(r, axis=-1, weights=w2)[..., None])]
        if self.phase is not None:
            p = np.angle(h * np.exp(-1j * self.phase))
            parts.append(self.weight * _DB_PER_NEPER * (p - self._line(p)))
        return np.concatenate(parts, axis=-1)

    def _line(self, p: np.ndarray) -> np.ndarray:
        """The weighted least-squares straight line in frequency through ``p`` (..., points):
        the loop's delay and polarity, fitted for every explanation afresh."""
        w2, x = self.weight ** 2, self.f / self.f[-1]
        sw, sx, sxx = np.sum(w2), np.sum(w2 * x), np.sum(w2 * x * x)
        sy, sxy = np.sum(w2 * p, axis=-1), np.sum(w2 * x * p, axis=-1)
        slope = (sw * sxy - sx * sy) / (sw * sxx - sx * sx)
        return ((sy - slope * sx) / sw)[..., None] + slope[..., None] * x

    def misfit(self, errors: dict) -> np.ndarray:
        """Weighted misfit in dB, the best overall gain (and delay and polarity) removed."""
        return self._residual(self._response(errors))

    def gain_db(self, errors: dict) -> float:
        r = self.target - 20 * np.log10(np.maximum(np.abs(self._response(errors)), 1e-15))
        return float(np.average(r, weights=self.weight ** 2))

    def fit(self, parts: tuple) -> tuple[dict, float]:
        """Bounded least squares from the best point of a grid (the misfit has false minima)."""
        if not parts:
            return {}, _rms(self.misfit({}))
        from scipy.optimize import least_squares

        bound = np.array([self.bounds[p] for p in parts])
        start = self._grid_start(parts, bound)
        result = least_squares(lambda x: self.misfit(dict(zip(parts, x))), start,
                               bounds=(-bound, bound), x_scale=bound, diff_step=1e-4)
        return dict(zip(parts, result.x.tolist())), _rms(result.fun)

    def _grid_start(self, parts, bound) -> np.ndarray:
        """The best of a grid over the tolerance box, every point in one batched solve."""
        axis = np.linspace(-1, 1, _GRID)
        points = np.array(list(itertools.product(axis, repeat=len(parts)))) * bound * 0.999
        r = self.misfit({name: points[:, i] for i, name in enumerate(parts)})
        return points[int(np.argmin(np.mean(r ** 2, axis=1)))]


def _rms(r) -> float:
    return float(np.sqrt(np.mean(np.square(r))))
