"""Nodal analysis of linear R-C networks with ideal controlled sources.

A :class:`Circuit` is a netlist of resistors, capacitors, potentiometers and
voltage-controlled voltage sources (an ideal unity-gain follower is one with gain
1), driven by one voltage source with an output resistance. Modified nodal
analysis (MNA) writes it as ``(G + s C) x = b u`` and the output as ``y = l x``,
so the transfer function from the source's open-circuit voltage ``u`` to a node
voltage ``y`` is ``H(s) = l (G + s C)^-1 b``.

Zeros, poles and gain come from generalized eigenvalue problems, never from
polynomial roots (which are ill-conditioned for these coefficient scales):

* poles are the finite eigenvalues of the pencil ``(-G, C)``;
* zeros are the finite eigenvalues of the Rosenbrock system pencil
  ``(-[[G, b], [l, 0]], [[C, 0], [0, 0]])``;
* the gain follows from one exact evaluation of ``H`` at a test point.

The pencils are scaled to unit conductance and unit frequency first and solved
with numpy (:mod:`emulate.analog.pencil`; scipy.linalg's QZ only where that route
cannot decide a rank). Pole-zero pairs that cancel (uncontrollable or
unobservable modes) are removed.

Element values may be arrays of one common length (a batch of builds, as a
Monte Carlo draw); :meth:`Circuit.response` then returns one row per build.
Nothing here knows about twin-T networks; see :mod:`emulate.analog.networks`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from emulate.errors import CircuitError
from emulate.analog.pencil import UntrustedPencil, finite_eigenvalues
from emulate.analog.roots import pair_conjugates

__all__ = ["GROUND", "SOURCE", "Circuit", "Compiled", "Rational"]

GROUND = "gnd"
SOURCE = "src"
#: Pole-zero pairs closer than this (relative) cancel: a pair that close moves the response by
#: under 1e-4 dB, and the pencils' eigenvalues are good to about 1e-6 only when the parts' scales
#: span many decades (100 pF with 5.6 uF and 17.7 Ohm with 1 MOhm left a pair 1.5e-6 apart).
_CANCEL_RTOL = 1e-5
_FINITE_RTOL = 1e-9


@dataclass
class _Element:
    kind: str
    nodes: tuple[str, ...]
    value: object


@dataclass
class Circuit:
    """A netlist driven from node ``"src"``, an ideal voltage source.

    Node ``"gnd"`` is the reference. :meth:`drive` connects the source through
    its output resistance to the first node of the network.

    Example
    -------
    >>> c = Circuit()
    >>> c.drive("in", ohms=0.0)
    >>> c.resistor("in", "out", 1e3)
    >>> c.capacitor("out", "gnd", 1e-6)
    >>> z, p, k = c.transfer_zpk("out")
    >>> round(float(-p[0].real), 3)
    1000.0
    """

    elements: list[_Element] = field(default_factory=list)

    # --- building -------------------------------------------------------
    def drive(self, node: str, ohms: float = 0.0) -> None:
        """Connect the source to ``node`` through ``ohms`` of output resistance (0 = ideal)."""
        if np.all(np.asarray(ohms) == 0):
            self.elements.append(_Element("short", (SOURCE, node), None))
        else:
            self.resistor(SOURCE, node, ohms)

    def resistor(self, a: str, b: str, ohms) -> None:
        """Add a resistor of ``ohms`` (> 0) between nodes ``a`` and ``b``."""
        self.elements.append(_Element("R", (a, b), _positive(ohms, "resistance (ohms)")))

    def capacitor(self, a: str, b: str, farads) -> None:
        """Add a capacitor of ``farads`` (> 0) between nodes ``a`` and ``b``."""
        self.elements.append(_Element("C", (a, b), _positive(farads, "capacitance (farads)")))

    def vcvs(self, out: str, ref: str, ctrl: str, ctrl_ref: str, gain) -> None:
        """Add an ideal source: ``V(out) - V(ref) = gain * (V(ctrl) - V(ctrl_ref))``."""
        self.elements.append(_Element("E", (out, ref, ctrl, ctrl_ref), np.asarray(gain, float)))

    def follower(self, inp: str, out: str, gain=1.0) -> None:
        """Add an ideal buffer: ``V(out) = gain * V(inp)``, infinite input impedance."""
        self.vcvs(out, GROUND, inp, GROUND, gain)

    def opamp(self, plus: str, minus: str, out: str, a0, gbw_hz) -> None:
        """Add a single-pole op-amp: ``V(out) = A(s) (V(plus) - V(minus))``, ``A(s) = A0 / (1 + s/w_p)``.

        ``gbw_hz = A0 * w_p / (2 pi)`` is the gain-bandwidth product. The inputs
        draw no current and the output is stiff; the pole is held on an internal
        node ``out + "#pole"`` whose state is ``V(out) / A0``.
        """
        a0 = _positive(a0, "open-loop gain")
        gbw_hz = _positive(gbw_hz, "gain-bandwidth (Hz)")
        self.elements.append(_Element("A", (plus, minus, out, out + "#pole"), (a0, gbw_hz)))

    def opamp_follower(self, inp: str, out: str, a0, gbw_hz) -> None:
        """Add a unity-gain follower made of a single-pole op-amp: ``A/(1+A)`` from ``inp`` to ``out``."""
        self.opamp(inp, out, out, a0, gbw_hz)

    def potentiometer(self, end_a: str, end_b: str, wiper: str, ohms, position) -> None:
        """Add a linear potentiometer of track ``ohms`` with its wiper at ``position``.

        ``position`` runs from 0 (wiper at ``end_a``) to 1 (wiper at ``end_b``).
        Each end keeps 1 ppm of the track as end resistance so that the
        extreme positions stay finite.
        """
        position = np.asarray(position, float)
        if np.any((position < 0) | (position > 1)):
            raise CircuitError(f"potentiometer position {position}: allowed 0 to 1")
        ohms = _positive(ohms, "potentiometer track (ohms)")
        end = 1e-6 * ohms
        self.resistor(end_a, wiper, end + ohms * position)
        self.resistor(wiper, end_b, end + ohms * (1 - position))

    # --- analysis -------------------------------------------------------
    def matrices(self, output: str):
        """Return MNA ``(G, C, b, l)``; ``G`` and ``C`` have shape ``(builds, n, n)``."""
        return _Assembly(self).matrices(output)

    def node_rows(self) -> dict[str, int]:
        """Row of each node (and op-amp pole node) in the matrices of :meth:`matrices`."""
        return dict(_Assembly(self).index)

    def compile(self, output: str) -> "Compiled":
        """The MNA matrices for ``output``, stamped once, ready to evaluate many times."""
        return Compiled(*self.matrices(output))

    def response(self, f_hz, output: str) -> np.ndarray:
        """Exact complex response from the source voltage to ``output`` at ``f_hz``.

        See :meth:`Compiled.response`; stamps the matrices on every call.
        """
        return self.compile(output).response(f_hz)

    def transfer_zpk(self, output: str):
        """Zeros, poles (rad/s) and gain from the source voltage to ``output``.

        Only for scalar part values. Raises :class:`CircuitError` when the network
        does not conduct from source to output or its equations are singular.
        """
        g, c, b, l = self.matrices(output)
        if g.shape[0] != 1:
            raise CircuitError("transfer_zpk needs scalar part values, not a batch")
        g, c = g[0], c[0]
        # frequency scale: a typical conductance over a typical capacitance (rad/s),
        # so the scaled eigenvalues are of order 1 and the tidying tolerances apply
        dynamic = np.abs(c).sum(axis=1) > 0
        w_ref = _typical(g[dynamic] if dynamic.any() else g) / _typical(c)
        gs, cs = g, c * w_ref
        poles = _finite_eigenvalues(-gs, cs)
        n = len(b)
        system_a = np.block([[gs, b[:, None]], [l[None, :], np.zeros((1, 1))]])
        system_b = np.zeros((n + 1, n + 1))
        system_b[:n, :n] = cs
        zeros = _finite_eigenvalues(-system_a, system_b)
        zeros, poles = _cancel_common(zeros, poles)
        zeros, poles = zeros * w_ref, poles * w_ref
        gain = _gain_at_test_point(self.compile(output), output, zeros, poles, w_ref)
        return zeros, poles, gain


@dataclass(frozen=True)
class Compiled:
    """Stamped MNA matrices ``(G, C, b, l)`` of one output; evaluates the exact response."""

    g: np.ndarray
    c: np.ndarray
    b: np.ndarray
    l: np.ndarray

    def response(self, f_hz) -> np.ndarray:
        """Solve the nodal equations at ``f_hz`` (Hz); no rational approximation.

        Returns shape ``(len(f_hz),)`` for scalar part values and 1-D ``f_hz``,
        else ``(builds, frequencies)``; a 2-D ``f_hz`` gives each build its own
        frequencies.
        """
        f_hz = np.asarray(f_hz, float)
        s = 2j * np.pi * np.atleast_2d(f_hz)
        system = self.g[:, None] + s[..., None, None] * self.c[:, None]
        try:  # the source column broadcast by solve itself (np.broadcast_to costs more than a small solve)
            x = np.linalg.solve(system, self.b[:, None])[..., 0]
        except np.linalg.LinAlgError:
            raise CircuitError("the network equations are singular: a node floats") from None
        h = x @ self.l
        return h[0] if h.shape[0] == 1 and f_hz.ndim < 2 else h

    def adjoint(self, f_hz) -> np.ndarray:
        """Transfer to the output from a unit current pushed into each row, shape (frequencies, rows).

        Solves ``(G + sC)^T y = l`` once per frequency: ``y[n]`` is the output
        voltage per ampere injected into node ``n`` (row ``n`` of the equations:
        for an op-amp pole node, per volt added at its input). Scalar parts only.
        """
        s = 2j * np.pi * np.asarray(f_hz, float)
        system = np.swapaxes(self.g[0][None] + s[:, None, None] * self.c[0][None], -1, -2)
        try:
            return np.linalg.solve(system, np.broadcast_to(self.l, system.shape[:-1])[..., None])[..., 0]
        except np.linalg.LinAlgError:
            raise CircuitError("the network equations are singular: a node floats") from None

    def rational(self, f_ref_hz: float) -> "Rational":
        """The same responses as polynomials N(s)/D(s) per build (fast to evaluate)."""
        return Rational(self, f_ref_hz)


class Rational:
    """Each build's exact H(s) = N(s) / D(s) as polynomials, from its nodal equations.

    D(s) = det(G + sC) and N(s) = -det([[G + sC, b], [l, 0]]) are polynomials of
    degree <= rank(C), so their values at rank(C) + 1 points on a circle of radius
    2 pi ``f_ref_hz`` give the coefficients exactly by a discrete Fourier transform
    (well conditioned: the points are equally spaced on the circle). Evaluating
    them is then far cheaper than solving the nodal equations at each frequency,
    which is what Monte Carlo over thousands of builds needs.

    Example
    -------
    >>> c = Circuit()
    >>> c.drive("in")
    >>> c.resistor("in", "out", 1e3)
    >>> c.capacitor("out", "gnd", 1e-6)
    >>> compiled = c.compile("out")
    >>> bool(np.allclose(compiled.rational(159.15).response([100.0]), compiled.response([100.0])))
    True
    """

    def __init__(self, compiled: "Compiled", f_ref_hz: float):
        g, c, b, l = compiled.g, compiled.c, compiled.b, compiled.l
        points = int(np.linalg.matrix_rank(c[0])) + 1
        # sigma_k = exp(j pi (2k + 1) / points): off the real and j axes but for k = (points - 1) / 2
        # (sigma = -1); sigma_(points-1-k) = conj(sigma_k), and the matrices are real, so only
        # the first half (with the middle one) is solved and the rest are conjugates
        half = (points + 1) // 2
        sigma = np.exp(1j * np.pi * (2 * np.arange(half) + 1) / points)
        system = g[:, None] + (2 * np.pi * f_ref_hz * sigma)[None, :, None, None] * c[:, None]
        n = g.shape[-1]
        bordered = np.zeros(system.shape[:2] + (n + 1, n + 1), complex)
        bordered[..., :n, :n] = system
        bordered[..., :n, n] = b
        bordered[..., n, :n] = l
        den = _conjugate_completed(np.linalg.det(system), points)
        num = _conjugate_completed(-np.linalg.det(bordered), points)
        scale = np.max(np.abs(den), axis=1, keepdims=True)
        powers = np.exp(-1j * np.pi * np.arange(points) / points)  # undo the half-step rotation
        self.num = (np.fft.fft(num / scale, axis=1) / points * powers).real  # (builds, degree + 1)
        self.den = (np.fft.fft(den / scale, axis=1) / points * powers).real
        self.f_ref_hz = float(f_ref_hz)

    def response(self, f_hz) -> np.ndarray:
        """Complex response at ``f_hz``: (builds, m) for 1-D or per-build (builds, m) ``f_hz``."""
        w = np.atleast_2d(np.asarray(f_hz, float)) / self.f_ref_hz
        num_re, num_im = _on_j_axis(self.num, w)
        den_re, den_im = _on_j_axis(self.den, w)
        return (num_re + 1j * num_im) / (den_re + 1j * den_im)

    def magnitude(self, f_hz) -> np.ndarray:
        """``|H|`` at ``f_hz``, shaped as :meth:`response` (real arithmetic only: the cheaper call)."""
        w = np.atleast_2d(np.asarray(f_hz, float)) / self.f_ref_hz
        ratio = _squared_magnitude(self.num, w)
        ratio /= _squared_magnitude(self.den, w)
        return np.sqrt(ratio, out=ratio)

    def head(self, builds: int) -> "Rational":
        """The first ``builds`` builds' polynomials (a copy: keeping it does not keep the batch)."""
        part = object.__new__(Rational)
        part.num, part.den = self.num[:builds].copy(), self.den[:builds].copy()
        part.f_ref_hz = self.f_ref_hz
        return part


def _conjugate_completed(values: np.ndarray, points: int) -> np.ndarray:
    """Values at all ``points`` circle points from the first half: the rest are conjugates, in reverse."""
    mirrored = np.conj(values[:, : points // 2][:, ::-1])
    return np.concatenate([values, mirrored], axis=1)


def _on_j_axis(coefficients: np.ndarray, w: np.ndarray):
    """Real and imaginary parts of ``sum_j c[:, j] (j w)^j`` per build (coefficients lowest power first).

    On the j axis the even powers are real and the odd ones imaginary, so both
    parts are real polynomials in ``-w^2``, evaluated by Horner's rule in real
    arithmetic (the same operations as a complex Horner at ``j w``, a quarter of
    the work). ``w`` broadcasts against ``(builds, 1)``.
    """
    x = -w * w
    even, odd = coefficients[:, 0::2], coefficients[:, 1::2]
    real = _horner(even, x)
    imag = w * _horner(odd, x) if odd.shape[1] else np.zeros_like(real)
    return real, imag


def _squared_magnitude(coefficients: np.ndarray, w: np.ndarray) -> np.ndarray:
    """``|sum_j c[:, j] (j w)^j|^2`` per build (no overflow: the coefficients are scaled to ~1
    and ``w`` is a frequency over the reference, so even ``w = 1e6`` at degree 20 stays finite)."""
    real, imag = _on_j_axis(coefficients, w)
    real *= real
    imag *= imag
    real += imag
    return real


def _horner(coefficients: np.ndarray, x: np.ndarray) -> np.ndarray:
    """sum_j c[:, j] x^j per build, real (coefficients lowest power first; ``x`` broadcasts)."""
    total = coefficients[:, -1:] + 0.0 * x
    for j in range(coefficients.shape[1] - 2, -1, -1):
        total *= x
        total += coefficients[:, j:j + 1]
    return total


class _Assembly:
    """Stamps a :class:`Circuit` into MNA matrices (one concept: the bookkeeping)."""

    def __init__(self, circuit: Circuit):
        self.circuit = circuit
        self.index = self._number_nodes()
        self.sources = [e for e in circuit.elements if e.kind in ("E", "short", "A")]
        self.builds = self._batch_length()

    def _number_nodes(self) -> dict[str, int]:
        index: dict[str, int] = {}
        for element in self.circuit.elements:
            for node in element.nodes:
                if node != GROUND and node not in index:
                    index[node] = len(index)
        if SOURCE not in index:
            raise CircuitError("the circuit has no source: call drive(node, ohms) first")
        return index

    def _batch_length(self) -> int:
        lengths = {np.size(v) for e in self.circuit.elements if e.value is not None
                   for v in (e.value if e.kind == "A" else (e.value,))}
        lengths.discard(1)
        if len(lengths) > 1:
            raise CircuitError(f"batched part values have different lengths {sorted(lengths)}")
        return lengths.pop() if lengths else 1

    def matrices(self, output: str):
        if output not in self.index:
            raise CircuitError(f"output node '{output}' is not in the circuit")
        nodes, n_src = len(self.index), len(self.sources) + 1
        size = nodes + n_src
        g = np.zeros((self.builds, size, size))
        c = np.zeros((self.builds, size, size))
        for element in self.circuit.elements:
            if element.kind == "R":
                self._stamp_admittance(g, element.nodes, 1.0 / _batch(element.value))
            elif element.kind == "C":
                self._stamp_admittance(c, element.nodes, _batch(element.value))
            elif element.kind == "A":
                self._stamp_pole(g, c, element)
        self._stamp_sources(g, nodes)
        b = np.zeros(size)
        b[nodes] = 1.0  # the input source row: V(src) = u
        l = np.zeros(size)
        l[self.index[output]] = 1.0
        return g, c, b, l

    def _stamp_admittance(self, m, nodes, y) -> None:
        a, b = (self.index.get(node) for node in nodes)
        for i, j, sign in ((a, a, 1), (b, b, 1), (a, b, -1), (b, a, -1)):
            if i is not None and j is not None:
                m[:, i, j] += sign * y

    def _stamp_pole(self, g, c, element) -> None:
        """The op-amp's internal node x: x (1 + s/w_p) = V+ - V-, so V(out) = A0 x = A(s) (V+ - V-)."""
        plus, minus, _, pole = (self.index.get(node) for node in element.nodes)
        a0, gbw_hz = (_batch(v) for v in element.value)
        w_p = 2 * np.pi * gbw_hz / a0
        g[:, pole, pole] += 1.0
        c[:, pole, pole] += 1.0 / w_p
        for node, sign in ((plus, -1.0), (minus, 1.0)):
            if node is not None:
                g[:, pole, node] += sign

    def _stamp_sources(self, g, nodes: int) -> None:
        self._stamp_branch(g, nodes, SOURCE, GROUND, ())
        for row, element in enumerate(self.sources, start=nodes + 1):
            if element.kind == "short":
                self._stamp_branch(g, row, *element.nodes, ())
            elif element.kind == "A":
                _, _, out, pole = element.nodes
                self._stamp_branch(g, row, out, GROUND, ((pole, -_batch(element.value[0])),))
            else:
                out, ref, ctrl, ctrl_ref = element.nodes
                gain = _batch(element.value)
                self._stamp_branch(g, row, out, ref, ((ctrl, -gain), (ctrl_ref, gain)))

    def _stamp_branch(self, g, row, plus, minus, controls) -> None:
        """A voltage branch plus-minus with current unknown ``row``: V+ - V- + sum(k V) = rhs."""
        for node, sign in ((plus, 1.0), (minus, -1.0)):
            i = self.index.get(node)
            if i is not None:
                g[:, i, row] += sign
                g[:, row, i] += sign
        for node, gain in controls:
            i = self.index.get(node)
            if i is not None:
                g[:, row, i] += gain


def _batch(value) -> np.ndarray:
    return np.atleast_1d(np.asarray(value, float))


def _positive(value, what: str):
    array = np.asarray(value, float)
    if not np.all(np.isfinite(array)) or np.any(array <= 0):
        raise CircuitError(f"{what} {value!r}: must be finite and greater than 0")
    return array


def _finite_eigenvalues(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Finite generalized eigenvalues of ``a v = lambda b v`` (pencil scaled to ~1).

    numpy's deflation (:func:`emulate.analog.pencil.finite_eigenvalues`) first; QZ
    (``scipy.linalg.eig``, about 0.2 s to import) only where that route cannot
    decide the pencil's structure.
    """
    try:
        return _tidy(finite_eigenvalues(a, b))
    except UntrustedPencil:
        return _finite_eigenvalues_qz(a, b)


def _finite_eigenvalues_qz(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """:func:`_finite_eigenvalues` by the QZ algorithm (scipy.linalg)."""
    import scipy.linalg  # about 0.2 s of start-up: loaded only when the numpy route gives up

    try:
        alpha, beta = scipy.linalg.eig(a, b, right=False, homogeneous_eigvals=True)
    except (np.linalg.LinAlgError, ValueError) as exc:
        raise CircuitError(f"the network equations are singular ({exc})") from None
    scale = max(np.max(np.abs(alpha)), 1.0)
    finite = np.abs(beta) > _FINITE_RTOL * np.abs(alpha)
    finite &= np.abs(alpha) < scale / _FINITE_RTOL
    return _tidy(alpha[finite] / beta[finite])


def _tidy(roots: np.ndarray) -> np.ndarray:
    """Snap numerically imaginary roots to the j axis; pair conjugates (:func:`pair_conjugates`)."""
    roots = np.asarray(roots, complex)
    scale = np.maximum(np.abs(roots), 1e-2 * np.max(np.abs(roots), initial=1e-300))
    roots = np.where(np.abs(roots.real) < 1e-12 * scale, 1j * roots.imag, roots)
    return pair_conjugates(roots)


def _cancel_common(zeros: np.ndarray, poles: np.ndarray):
    """Remove pole-zero pairs that coincide (modes the output cannot see)."""
    zeros, poles = list(zeros), list(poles)
    for z in list(zeros):
        if not poles:
            break
        distance = [abs(z - p) for p in poles]
        j = int(np.argmin(distance))
        if distance[j] <= _CANCEL_RTOL * max(abs(z), abs(poles[j]), 1e-12):
            zeros.remove(z)
            poles.pop(j)
    return _tidy(np.array(zeros, complex)), _tidy(np.array(poles, complex))


def _typical(m: np.ndarray) -> float:
    """Geometric mean of the non-zero magnitudes (a scale, not a statistic)."""
    values = np.abs(m[m != 0])
    return float(np.exp(np.mean(np.log(values)))) if len(values) else 1.0


def _gain_at_test_point(compiled: "Compiled", output: str, zeros, poles, w_ref) -> float:
    f_test = 0.37 * w_ref / (2 * np.pi)
    h = compiled.response([f_test])[0]
    s = 2j * np.pi * f_test
    if h == 0:
        raise CircuitError(f"no signal reaches node '{output}' from the source")
    k = h * np.prod(s - poles) / np.prod(s - zeros)
    return float(k.real)
