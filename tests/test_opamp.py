"""Tests of emulate.analog.opamp and the single-pole op-amp of the nodal engine.

References: the follower with finite gain-bandwidth, closed loop A/(1+A) with
A(s) = A0/(1+s/w_p), GBW = A0 w_p (any op-amp textbook; the derivation is one line
of algebra); the bootstrapped twin-T Q = 1/(4(1-K)) (Analog Devices MT-225) as the
ideal limit; dBu reference 0.7746 V rms (common practice, 1 mW in 600 ohms).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from emulate.analog.circuit import Circuit
from emulate.analog.networks import TwinT
from emulate.analog.opamp import CLASSES, OpAmp, dbu_to_volts_rms, volts_rms_to_dbu
from emulate.analog.response import measure_network
from emulate.errors import BadValueError, CircuitError


class TestDbu:
    @pytest.mark.parametrize("dbu, volts", [(0.0, 0.774597), (4.0, 1.227653), (-10.0, 0.244949)])
    def test_reference_levels(self, dbu, volts):
        # 0 dBu = sqrt(0.6) V (common practice); 6 decimals of the reference
        assert dbu_to_volts_rms(dbu) == pytest.approx(volts, rel=1e-6)
        assert volts_rms_to_dbu(volts) == pytest.approx(dbu, abs=1e-5)


class TestOpAmpParse:
    @pytest.mark.parametrize("name", list(CLASSES))
    def test_every_class_parses(self, name):
        amp = OpAmp.parse(name)
        assert amp.pole_hz == pytest.approx(amp.gbw_hz / amp.a0)
        assert amp.peak_v < amp.rail_v

    def test_overrides(self):
        amp = OpAmp.parse("jfet,gbw=8M,a0=110dB,slew=20,rails=12,swing=1,en=9n")
        assert (amp.gbw_hz, amp.slew_v_per_s, amp.rail_v, amp.swing_v, amp.en_v) == (
            8e6, 20e6, 12.0, (11.0, -11.0), pytest.approx(9e-9))
        assert amp.a0 == pytest.approx(10 ** 5.5)

    def test_output_current_caps_the_swing_into_a_heavy_load(self):
        # Ohm's law: 40 mA into 100 ohm is 4 V peak, under the 13.5 V swing; a light load keeps the swing
        amp = OpAmp.parse("jfet,imax=40m")
        assert amp.max_current_a == pytest.approx(0.04)
        assert amp.peak_into(100.0) == pytest.approx(4.0) and amp.peak_into(10e3) == amp.peak_v

    def test_custom_starts_from_general_purpose(self):
        assert OpAmp.parse("custom,en=4n").gbw_hz == CLASSES["general-purpose"].gbw_hz

    @pytest.mark.parametrize("text, match", [("tl0x", "op-amp class"), ("jfet,foo=1", "op-amp figure"),
                                             ("jfet,gbw=fast", "engineering suffix"),
                                             ("jfet,swing=20", "swing")])
    def test_bad_text(self, text, match):
        with pytest.raises(BadValueError, match=match):
            OpAmp.parse(text)

    def test_one_over_f_corner(self):
        # e_n^2 (1 + fc/f): at the corner the density is sqrt(2) times the white floor (by definition)
        amp = OpAmp.parse("general-purpose")
        assert amp.en_density(amp.en_corner_hz) == pytest.approx(math.sqrt(2) * amp.en_v)


class TestOpAmpFollower:
    @pytest.mark.parametrize("a0, gbw_hz", [(1e5, 1e6), (2e5, 10e6), (1e4, 3e6)])
    def test_closed_form(self, a0, gbw_hz):
        # A/(1+A), A(s) = A0/(1+s/w_p): exact to round-off
        c = Circuit()
        c.drive("in")
        c.opamp_follower("in", "out", a0, gbw_hz)
        f = np.geomspace(1.0, 1e8, 60)
        s = 2j * np.pi * f
        a = a0 / (1 + s / (2 * np.pi * gbw_hz / a0))
        assert np.allclose(c.response(f, "out"), a / (1 + a), rtol=1e-10, atol=0)

    def test_pole_at_gain_bandwidth(self):
        # the follower's closed-loop pole is (1 + A0) w_p, about 2 pi GBW
        c = Circuit()
        c.drive("in")
        c.opamp_follower("in", "out", 1e5, 1e6)
        _, p, _ = c.transfer_zpk("out")
        assert p[0].real == pytest.approx(-2 * np.pi * 1e6 * (1 + 1e-5), rel=1e-9)

    def test_bad_gain(self):
        with pytest.raises(CircuitError, match="open-loop gain"):
            Circuit().opamp("a", "b", "b", 0.0, 1e6)


class TestFiniteGbwInTheTwinT:
    @pytest.mark.parametrize("k", [0.75, 0.9])
    def test_ideal_limit_as_gbw_grows(self, k):
        # MT-225: Q = 1/(4(1-K)); the error shrinks as GBW grows (A0 held high so only GBW limits)
        ideal = 1 / (4 * (1 - k))
        errors = []
        for gbw in (1e6, 1e7, 1e8, 1e9):
            amp = OpAmp.parse(f"general-purpose,gbw={gbw},a0=1e9")
            q = measure_network(TwinT.balanced(5000.0, r_ohms=10e3, bootstrap=k, opamp=amp)).q
            errors.append(abs(q / ideal - 1))
        assert all(later < earlier for earlier, later in zip(errors, errors[1:]))
        assert errors[-1] < 1e-3  # 1 GHz: the closed-loop poles are 2e5 notches away

    def test_slow_opamp_moves_q(self):
        # at 1 MHz GBW and a 5 kHz notch, Q = 2.5 already moves by more than 0.5 % (the loop's phase)
        amp = OpAmp.parse("general-purpose")
        q = measure_network(TwinT.balanced(5000.0, r_ohms=10e3, bootstrap=0.9, opamp=amp)).q
        assert abs(q / 2.5 - 1) > 0.005

    def test_notch_depth_stays_with_followers(self):
        # the null is between the network's input and output nodes: a follower after it does not fill it
        amp = OpAmp.parse("jfet")
        m = measure_network(TwinT.balanced(1000.0, r_ohms=10e3, bootstrap=0.75, opamp=amp))
        assert m.depth_below_passband_db > 150
