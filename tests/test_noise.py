"""Tests of emulate.analog.noise and emulate.analog.levels.

References: Johnson-Nyquist noise 4kTR (V^2/Hz) of a lone resistor (Nyquist, Phys.
Rev. 32, 1928); the RC low-pass's total noise kT/C (its closed form, the same
source); IEC 61672-1 A-weighting (analytic form, its tabulated values at 100 Hz
-19.1 dB, 1 kHz 0 dB, 10 kHz -2.5 dB); a sine's peak sqrt(2) times its RMS.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from emulate.analog.circuit import Circuit
from emulate.analog.levels import full_scale_dbu, level_plan
from emulate.analog.networks import TwinT
from emulate.analog.noise import BOLTZMANN, a_weighting, circuit_noise_power, output_noise
from emulate.analog.opamp import OpAmp, dbu_to_volts_rms
from emulate.errors import BadValueError


def lone_resistor(ohms):
    c = Circuit()
    c.drive("a")
    c.resistor("a", "out", ohms)
    return c


class TestAWeighting:
    @pytest.mark.parametrize("f_hz, expected_db", [(100.0, -19.1), (1000.0, 0.0), (10000.0, -2.5),
                                                   (10 ** 1.5, -39.4), (4000.0, 1.0), (20000.0, -9.3)])
    def test_iec_61672_table(self, f_hz, expected_db):
        # IEC 61672-1 table values are rounded to 0.1 dB and belong to the exact base-ten
        # frequencies (31.5 Hz nominal is 10^1.5 Hz)
        assert 10 * math.log10(a_weighting(f_hz)) == pytest.approx(expected_db, abs=0.05)


class TestCircuitNoisePower:
    @pytest.mark.parametrize("ohms", [100.0, 10e3, 1e6])
    def test_lone_resistor_is_4ktr(self, ohms):
        # open-circuit density 4kTR at every frequency (Nyquist 1928)
        f = np.geomspace(20, 20e3, 50)
        power = circuit_noise_power(lone_resistor(ohms), "out", f, kelvin=300.0)["R a-out"]
        assert np.allclose(power, 4 * BOLTZMANN * 300.0 * ohms, rtol=1e-9)

    @pytest.mark.parametrize("ohms, farads", [(1e3, 1e-9), (10e3, 10e-9)])
    def test_rc_total_is_kt_over_c(self, ohms, farads):
        # integral of 4kTR/(1+(wRC)^2) over all f = kT/C; the numerical integral spans 1e-6..1e6 corners
        corner = 1 / (2 * math.pi * ohms * farads)
        c = lone_resistor(ohms)
        c.capacitor("out", "gnd", farads)
        f = np.geomspace(corner * 1e-6, corner * 1e6, 20000)
        p = circuit_noise_power(c, "out", f, kelvin=300.0)["R a-out"]
        total = np.sum((p[1:] + p[:-1]) / 2 * np.diff(f))
        assert total == pytest.approx(BOLTZMANN * 300.0 / farads, rel=1e-5)  # trapezoid on 20k log points


class TestOutputNoise:
    def test_passive_network_is_4kt_re_z(self):
        # a passive network at one temperature: output density 4kT Re(Z_out) (Nyquist 1928), Z_out
        # the impedance at the output with the source shorted (a unit test current, by the engine)
        net = TwinT.balanced(1000.0, r_ohms=10e3)
        report = output_noise(net, None, kelvin=300.0)
        z = _output_impedance(net, report.f_hz)
        assert np.allclose(report.total ** 2, 4 * BOLTZMANN * 300.0 * z.real, rtol=1e-6)

    def test_opamps_add_noise_and_are_named(self):
        net = TwinT.balanced(5000.0, r_ohms=10e3, bootstrap=0.75)
        quiet = output_noise(net, None)
        loud = output_noise(net, OpAmp.parse("general-purpose"))
        assert loud.rms_a_v > quiet.rms_a_v
        assert "output follower e_n" in loud.shares_a
        assert sum(loud.shares_a.values()) == pytest.approx(1.0)

    def test_lone_resistor_band(self):
        # 4kTRB: 10k at 300 K over 19980 Hz is 1.82 uV rms
        report = output_noise(TwinT.balanced(1000.0, r_ohms=10e3), None, kelvin=300.0)
        c = lone_resistor(10e3)
        f = report.f_hz
        p = circuit_noise_power(c, "out", f, kelvin=300.0)["R a-out"]
        band = np.sum((p[1:] + p[:-1]) / 2 * np.diff(f))
        assert math.sqrt(band) == pytest.approx(math.sqrt(4 * BOLTZMANN * 300.0 * 10e3 * 19980.0), rel=1e-9)

    def test_snr(self):
        report = output_noise(TwinT.balanced(1000.0, r_ohms=10e3), OpAmp.parse("jfet"))
        assert report.snr_db(4.0) == pytest.approx(4.0 - report.dbu_a)


def _output_impedance(net, f_hz):
    """Z seen at the output with the source shorted: V(out) per ampere pushed into out."""
    c, out = net.circuit()
    rows = c.node_rows()
    y = c.compile(out).adjoint(f_hz)
    return y[:, rows[out]]


class TestFullScale:
    def test_alignment_18_db_below(self):
        # EBU R68 practice (from memory): alignment level 18 dB below full scale
        assert full_scale_dbu(4.0, None) == 22.0
        assert full_scale_dbu(4.0, 24.0) == 24.0

    def test_needs_one(self):
        with pytest.raises(BadValueError, match="--level"):
            full_scale_dbu(None, None)


class TestLevelPlan:
    def test_passive_peak_is_the_source_sine(self):
        # the driving stage carries the source sine itself: peak = sqrt(2) V_rms
        plan = level_plan(TwinT.balanced(1000.0, r_ohms=10e3), OpAmp.parse("jfet"), 4.0)
        src = next(s for s in plan.stages if s.node == "src")
        assert src.peak_v == pytest.approx(math.sqrt(2) * dbu_to_volts_rms(4.0))
        assert plan.headroom_db == pytest.approx(20 * math.log10(13.5 / src.peak_v))

    def test_headroom_falls_dB_for_dB(self):
        net = TwinT.balanced(5000.0, r_ohms=10e3, bootstrap=0.9)
        amp = OpAmp.parse("low-noise-bipolar")
        assert level_plan(net, amp, 0.0).headroom_db - level_plan(net, amp, 10.0).headroom_db == \
            pytest.approx(10.0)

    def test_slew_limits_a_slow_part(self):
        # 0.5 V/us: a +18 dBu sine (11 V peak, inside the 13.5 V swing) at 20 kHz needs
        # 2 pi 20e3 * 11 V = 1.4 V/us
        plan = level_plan(TwinT.balanced(5000.0, r_ohms=10e3, bootstrap=0.75), OpAmp.parse("general-purpose"), 18.0)
        assert plan.limiting.slew_headroom_db < 0 < plan.limiting.headroom_db

    def test_regression_a_heavy_load_takes_swing_from_the_output_follower(self):
        # issue 11: --load on an active network did nothing. The follower drives it: V = I R
        # (Ohm's law) caps the swing at the op-amp's output current times the load
        net = TwinT.balanced(5000.0, r_ohms=10e3, bootstrap=0.75)
        amp = OpAmp.parse("jfet")
        light = level_plan(net, amp, 4.0)
        heavy = level_plan(net.replace(load_ohms=100.0), amp, 4.0)
        buf = next(s for s in heavy.stages if s.node == "buf")
        assert "into 100 ohm" in buf.role and heavy.warnings and "current limit" in heavy.warnings[0]
        assert buf.headroom_db == pytest.approx(20 * math.log10(amp.max_current_a * 100.0 / buf.peak_v))
        assert heavy.headroom_db < light.headroom_db - 10

    def test_cmos_clips_at_studio_level(self):
        plan = level_plan(TwinT.balanced(5000.0, r_ohms=10e3), OpAmp.parse("rail-to-rail-cmos"), 22.0)
        assert plan.headroom_db < 0
