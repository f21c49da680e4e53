"""Tests of emulate.analog.circuit: the nodal-analysis engine on circuits with known answers.

References: first-order RC and voltage-divider formulas (any circuit-theory handbook,
e.g. Horowitz & Hill, The Art of Electronics, 3rd ed., ch. 1), ideal controlled sources
by definition, and scipy.signal.freqs_zpk as a general-purpose evaluator of a zpk.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.signal

from emulate.analog.circuit import GROUND, Circuit
from emulate.errors import BadValueError, CircuitError

# (R ohms, C farads) across the decades a twin-T uses
RC_VALUES = [(10e3, 10e-9), (1e3, 1e-6), (470.0, 2.2e-9), (1e6, 100e-12)]


def rc_lowpass(r_ohms, c_farads, source_ohms=0.0) -> Circuit:
    """Source -> R -> out, C from out to ground."""
    c = Circuit()
    c.drive("in", source_ohms)
    c.resistor("in", "out", r_ohms)
    c.capacitor("out", GROUND, c_farads)
    return c


def divider(top_ohms, bottom_ohms, source_ohms=0.0) -> Circuit:
    c = Circuit()
    c.drive("in", source_ohms)
    c.resistor("in", "out", top_ohms)
    c.resistor("out", GROUND, bottom_ohms)
    return c


def test_example_in_docstring():
    # Circuit's docstring example: a 1 kOhm / 1 uF low-pass has its pole at -1000 rad/s
    z, p, k = rc_lowpass(1e3, 1e-6).transfer_zpk("out")
    assert z.size == 0 and p[0].real == pytest.approx(-1000.0, rel=1e-12)


class TestTransferZpk:
    @pytest.mark.parametrize("r_ohms, c_farads", RC_VALUES)
    def test_rc_lowpass_pole(self, r_ohms, c_farads):
        # handbook: H(s) = (1/RC) / (s + 1/RC); one real pole at -1/(RC), no zero.
        # Tolerance 1e-12: one 2x2 eigenproblem scaled to ~1, a few ulps of error.
        z, p, k = rc_lowpass(r_ohms, c_farads).transfer_zpk("out")
        assert z.size == 0 and p.size == 1
        assert p[0] == pytest.approx(-1.0 / (r_ohms * c_farads), rel=1e-12)
        assert k == pytest.approx(1.0 / (r_ohms * c_farads), rel=1e-12)

    @pytest.mark.parametrize("top, bottom", [(1e3, 1e3), (9e3, 1e3), (10.0, 1e6)])
    def test_divider_is_pure_gain(self, top, bottom):
        # handbook: a resistive divider is bottom / (top + bottom) at every frequency
        z, p, k = divider(top, bottom).transfer_zpk("out")
        assert z.size == 0 and p.size == 0
        assert k == pytest.approx(bottom / (top + bottom), rel=1e-12)

    def test_source_resistance_joins_the_divider(self):
        # handbook: the source's output resistance is in series with the top resistor
        z, p, k = divider(4e3, 5e3, source_ohms=1e3).transfer_zpk("out")
        assert k == pytest.approx(0.5, rel=1e-12)

    @pytest.mark.parametrize("gain", [1.0, 0.5, -2.0, 10.0])
    def test_follower_buffers_a_lowpass(self, gain):
        # ideal buffer by definition: V(out) = gain * V(in); the heavy load behind it
        # (100 ohms against 10 kOhm) changes nothing
        c = rc_lowpass(10e3, 10e-9)
        c.follower("out", "buf", gain)
        c.resistor("buf", GROUND, 100.0)
        z, p, k = c.transfer_zpk("buf")
        assert p[0] == pytest.approx(-1e4, rel=1e-12)
        assert k == pytest.approx(gain * 1e4, rel=1e-12)

    def test_vcvs_floating_reference(self):
        # ideal VCVS by definition: V(out) - V(ref) = gain (V(ctrl) - V(ctrl_ref));
        # with ref at a divider tap of 1/2 and ctrl at the input: 0.5 + 3 * 1
        c = divider(1e3, 1e3)
        c.vcvs("y", "out", "in", GROUND, 3.0)
        z, p, k = c.transfer_zpk("y")
        assert z.size == 0 and p.size == 0
        assert k == pytest.approx(3.5, rel=1e-12)

    def test_zpk_agrees_with_the_nodal_solution(self):
        # a third-order ladder: scipy.signal.freqs_zpk of the engine's zpk must equal
        # the engine's direct nodal solve (two independent routes; 1e-10 covers the
        # eigenvalue error of a well-scaled 3x3 pencil)
        c = Circuit()
        c.drive("in", 50.0)
        c.resistor("in", "a", 1e3)
        c.capacitor("a", GROUND, 100e-9)
        c.resistor("a", "b", 4.7e3)
        c.capacitor("b", GROUND, 22e-9)
        c.capacitor("b", "out", 1e-9)
        c.resistor("out", GROUND, 33e3)
        z, p, k = c.transfer_zpk("out")
        f_hz = np.geomspace(1.0, 1e6, 61)
        _, h_zpk = scipy.signal.freqs_zpk(z, p, k, worN=2 * np.pi * f_hz)
        np.testing.assert_allclose(h_zpk, c.response(f_hz, "out"), rtol=1e-10, atol=1e-14)

    def test_no_signal_reaches_output(self):
        c = Circuit()
        c.drive("in")
        c.resistor("in", GROUND, 1e3)
        c.resistor("out", GROUND, 1e3)
        with pytest.raises(CircuitError, match="no signal reaches node 'out'"):
            c.transfer_zpk("out")

    def test_floating_node(self):
        c = rc_lowpass(1e3, 1e-9)
        c.capacitor("x", "y", 1e-9)  # an island joined to nothing
        with pytest.raises(CircuitError, match="singular"):
            c.transfer_zpk("out")

    def test_batch_raises_circuit_error_not_type_error_bug(self):
        # the docstring promises a CircuitError for batched part values
        c = rc_lowpass([1e3, 2e3], 1e-9)
        with pytest.raises(CircuitError, match="scalar part values"):
            c.transfer_zpk("out")


class TestResponse:
    @pytest.mark.parametrize("r_ohms, c_farads", RC_VALUES)
    def test_rc_lowpass_magnitude_and_phase(self, r_ohms, c_farads):
        # handbook: H(jw) = 1 / (1 + j w R C); -3 dB and -45 degrees at 1/(2 pi R C)
        f_c = 1.0 / (2 * math.pi * r_ohms * c_farads)
        f_hz = f_c * np.array([0.01, 0.1, 1.0, 10.0, 100.0])
        expected = 1.0 / (1.0 + 1j * f_hz / f_c)
        np.testing.assert_allclose(rc_lowpass(r_ohms, c_farads).response(f_hz, "out"),
                                   expected, rtol=1e-12)

    def test_divider(self):
        # handbook divider: 1 k over 3 k -> 0.75, flat
        h = divider(1e3, 3e3).response([1.0, 1e3, 1e6], "out")
        np.testing.assert_allclose(h, 0.75, rtol=1e-13)

    def test_follower_and_vcvs(self):
        c = divider(1e3, 1e3)
        c.follower("out", "buf")
        c.vcvs("amp", GROUND, "buf", GROUND, -4.0)
        np.testing.assert_allclose(c.response([100.0], "buf"), 0.5, rtol=1e-13)
        np.testing.assert_allclose(c.response([100.0], "amp"), -2.0, rtol=1e-13)

    def test_batch_equals_row_by_row(self):
        # a batch of builds (as a Monte Carlo draw) must give each build's own response
        r = np.array([1e3, 2.2e3, 4.7e3, 10e3])
        cap = np.array([1e-6, 10e-9, 33e-9, 1e-9])
        f_hz = np.geomspace(10.0, 1e5, 17)
        batch = rc_lowpass(r, cap, source_ohms=100.0).response(f_hz, "out")
        assert batch.shape == (4, 17)
        for i in range(4):
            row = rc_lowpass(r[i], cap[i], source_ohms=100.0).response(f_hz, "out")
            np.testing.assert_allclose(batch[i], row, rtol=1e-14)

    def test_batch_with_own_frequencies(self):
        # a 2-D f_hz gives each build its own frequencies: each at its own corner
        r = np.array([1e3, 10e3])
        f_c = 1.0 / (2 * np.pi * r * 1e-6)
        h = rc_lowpass(r, 1e-6).response(f_c[:, None], "out")
        np.testing.assert_allclose(h[:, 0], 1 / (1 + 1j), rtol=1e-12)

    def test_scalar_parts_give_one_dimensional_result(self):
        assert rc_lowpass(1e3, 1e-6).response(np.geomspace(1, 10, 5), "out").shape == (5,)

    def test_floating_node(self):
        c = rc_lowpass(1e3, 1e-9)
        c.resistor("x", "y", 1e3)
        with pytest.raises(CircuitError, match="a node floats"):
            c.response([100.0], "out")

    def test_no_source(self):
        c = Circuit()
        c.resistor("in", "out", 1e3)
        with pytest.raises(CircuitError, match="no source"):
            c.response([100.0], "out")

    def test_output_not_in_circuit(self):
        with pytest.raises(CircuitError, match="output node 'nowhere' is not in the circuit"):
            divider(1e3, 1e3).response([100.0], "nowhere")

    def test_batches_of_different_lengths(self):
        c = rc_lowpass([1e3, 2e3], [1e-9, 2e-9, 3e-9])
        with pytest.raises(CircuitError, match=r"different lengths \[2, 3\]"):
            c.response([100.0], "out")


class TestResistor:
    @pytest.mark.parametrize("ohms", [-1.0, 0.0, math.inf, math.nan, [1e3, -5.0]])
    def test_bad_values(self, ohms):
        with pytest.raises(CircuitError, match=r"resistance \(ohms\) .*greater than 0"):
            Circuit().resistor("a", "b", ohms)

    def test_errors_are_value_errors(self):
        # CircuitError subclasses ValueError, so callers catching ValueError see it
        with pytest.raises(ValueError):
            Circuit().resistor("a", "b", -1.0)


class TestCapacitor:
    @pytest.mark.parametrize("farads", [-1e-9, 0.0, math.inf, math.nan])
    def test_bad_values(self, farads):
        with pytest.raises(CircuitError, match=r"capacitance \(farads\) .*greater than 0"):
            Circuit().capacitor("a", "b", farads)


class TestPotentiometer:
    @pytest.mark.parametrize("position", [0.0, 0.25, 0.5, 1.0])
    def test_wiper_divides(self, position):
        # a linear pot across the source: V(wiper) = position of the way from end_a (at
        # the source) to end_b (at ground), i.e. 1 - position, apart from 1 ppm of end
        # resistance at each end (documented), hence atol 2e-6
        c = Circuit()
        c.drive("in")
        c.potentiometer("in", GROUND, "w", 10e3, position)
        assert c.response([1e3], "w")[0].real == pytest.approx(1 - position, abs=2e-6)

    @pytest.mark.parametrize("position", [-0.01, 1.01])
    def test_position_out_of_range(self, position):
        with pytest.raises(CircuitError, match="allowed 0 to 1"):
            Circuit().potentiometer("a", "b", "w", 10e3, position)

    def test_bad_track(self):
        with pytest.raises(CircuitError, match="potentiometer track"):
            Circuit().potentiometer("a", "b", "w", 0.0, 0.5)


class TestMatrices:
    def test_shapes(self):
        # MNA: one row per non-ground node plus one per voltage branch (source + short)
        g, c, b, l = rc_lowpass([1e3, 2e3, 3e3], 1e-9).matrices("out")
        assert g.shape == c.shape == (3, 5, 5)
        assert b.shape == l.shape == (5,)

    def test_missing_output_is_a_circuit_error(self):
        # the engine's own failures are CircuitError, not BadValueError
        with pytest.raises(CircuitError, match="output node 'missing'") as info:
            divider(1e3, 1e3).matrices("missing")
        assert not isinstance(info.value, BadValueError)
