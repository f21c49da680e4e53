"""Tests for emulate.dsp.depth: the ideal wet/dry mix, the mix around a real null, the depth pot."""

import math

import numpy as np
import pytest
from scipy import signal

from emulate.dsp.depth import (
    check_depth_db,
    check_mix,
    depth_db_to_mix,
    mix_for_depth,
    mix_to_depth_db,
    pot_depth_db,
    pot_position_for_depth,
)
from emulate.dsp.digital import design_sections
from emulate.errors import BadValueError
from emulate.analog.networks import TwinT
from emulate.analog.response import measure
from helpers_lean import slow_except

POT_OHMS = 100e3
# Each end of a potentiometer track keeps 1 ppm of it (emulate.analog.circuit.Circuit.potentiometer).
END = 1e-6


def balanced(kind="passive", **options):
    """Balanced twin-T at 1 kHz, R = 10 kohm; bootstrapped with K = 1 - 1/(4Q) (Analog Devices MT-225)."""
    q = {"passive": None, "Q1": 1.0, "Q5": 5.0}[kind]
    return TwinT.balanced(1000.0, r_ohms=10e3, bootstrap=None if q is None else 1 - 1 / (4 * q), **options)


def unbalanced(r3_scale):
    """R3 off balance: x0.98 puts the zeros in the right half-plane (H at the notch real < 0),
    x1.02 in the left (real > 0), both about -52 dB deep (measured with response.measure)."""
    net = balanced()
    return net.replace(r3=net.r3 * r3_scale)


def level_at_notch(net, mix):
    """|H| of the network with its own ideal mixer (TwinT's VCVS mixer model) at the wet notch."""
    f = measure(net.wet().response).notch_hz
    return abs(net.replace(mix=mix).response(np.array([f]))[0])


def divider_level_db(position):
    """Buffered wiper on a linear track over an exact null (input 1, output 0), with 1 ppm
    end resistances: (1 + e - p) / (1 + 2e) (voltage-divider arithmetic)."""
    return 20 * math.log10((1 + END - position) / (1 + 2 * END))


class TestCheckMix:
    @pytest.mark.parametrize("good", [0, 0.0, 0.5, 1, 1.0])
    def test_accepts_endpoints(self, good):
        assert check_mix(good) == float(good)

    @pytest.mark.parametrize("bad", [-0.01, 1.01, float("nan"), None, "half"])
    def test_rejects(self, bad):
        with pytest.raises(BadValueError, match=r"mix .*: allowed \[0, 1\]"):
            check_mix(bad)


class TestCheckDepthDb:
    @pytest.mark.parametrize("good", [0, -20.0, -math.inf])
    def test_accepts(self, good):
        assert check_depth_db(good) == float(good)

    @pytest.mark.parametrize("bad", [0.5, float("nan"), "deep", math.inf])
    def test_rejects(self, bad):
        with pytest.raises(BadValueError, match=r"depth \(dB\) .*: allowed \[-inf, 0\]"):
            check_depth_db(bad)


class TestMixToDepthDb:
    # depth = 20 log10(1 - mix) for an ideal null (common practice, no source).
    @pytest.mark.parametrize("mix, depth", [(0.0, 0.0), (0.5, -6.020599913), (0.9, -20.0), (0.99, -40.0)])
    def test_values(self, mix, depth):
        assert mix_to_depth_db(mix) == pytest.approx(depth, abs=1e-9)

    def test_full_mix_is_infinite_depth(self):
        assert mix_to_depth_db(1.0) == -math.inf

    @pytest.mark.parametrize("mix", [0.25, 0.5, 0.9, 0.999])
    def test_depth_at_digital_notch(self, mix):
        # H_mix = (1 - m) + m H; the digital zeros sit on the unit circle, so at the notch
        # |H_mix| = 1 - m exactly; 1e-8 in linear magnitude allows for the residual of the
        # null search and rounding (about 1e-9 measured).
        w0 = 2 * np.pi * 6000.0
        design = design_sections([1j * w0, -1j * w0], np.roots([1, 4 * w0, w0**2]), 1.0, 48000, notch_hz=6000.0)
        _, h = signal.sosfreqz(design.sos, worN=[design.notch_hz], fs=48000)
        assert abs((1 - mix) + mix * h[0]) == pytest.approx(10 ** (mix_to_depth_db(mix) / 20), abs=1e-8)

    @pytest.mark.parametrize("bad", [-0.5, 2.0, float("nan")])
    def test_rejects(self, bad):
        with pytest.raises(BadValueError, match="mix"):
            mix_to_depth_db(bad)


class TestDepthDbToMix:
    @pytest.mark.parametrize("depth, mix", [(0.0, 0.0), (-20.0, 0.9), (-40.0, 0.99), (-math.inf, 1.0)])
    def test_values(self, depth, mix):
        # 1 - 10^(depth/20), the inverse of the ideal relation (common practice, no source).
        assert depth_db_to_mix(depth) == pytest.approx(mix, abs=1e-12)

    @pytest.mark.parametrize("mix", [0.0, 0.3, 0.75, 0.999])
    def test_round_trip(self, mix):
        assert depth_db_to_mix(mix_to_depth_db(mix)) == pytest.approx(mix, abs=1e-12)

    @pytest.mark.parametrize("bad", [0.5, float("nan"), "deep"])
    def test_rejects(self, bad):
        with pytest.raises(BadValueError, match=r"depth \(dB\)"):
            depth_db_to_mix(bad)


class TestMixForDepth:
    # by default each depth once, the kinds in turn (every kind at least once); the other ten slow
    @pytest.mark.parametrize("kind, depth", slow_except(
        [(kind, depth) for depth in (0.0, -3.0, -20.0, -60.0, -math.inf) for kind in ("passive", "Q1", "Q5")],
        keep=[0, 4, 8, 9, 13], ids=lambda pair: f"{pair[0]}-{pair[1]}"))
    def test_exact_null_is_the_ideal_relation(self, kind, depth):
        # A balanced network nulls exactly (MT-225), |H| ~ 1e-17 there: the ideal relation
        # 20 log10(1 - mix) (common practice, no source); 1e-9 covers that residual.
        assert mix_for_depth(balanced(kind), depth) == pytest.approx(depth_db_to_mix(depth), abs=1e-9)

    @pytest.mark.parametrize("r3_scale", [0.98, 1.02])
    @pytest.mark.parametrize("depth", [-1.0, -20.0, -45.0])
    def test_round_trip_through_the_mixer_model(self, r3_scale, depth):
        # Reference: TwinT's own mixer (a VCVS summing (1 - m) dry and m wet, solved by the
        # circuit engine), independent of the closed form; 1e-9 relative is rounding.
        net = unbalanced(r3_scale)
        assert level_at_notch(net, mix_for_depth(net, depth)) == pytest.approx(10 ** (depth / 20), rel=1e-9)

    def test_residual_in_phase_opposition_is_cancelled(self):
        # R3 low: H at the notch is real and negative (about -0.0025), so a little dry
        # cancels it: m = 1 / (1 - H0) < 1 gives a null far deeper than the network's own.
        net = unbalanced(0.98)
        h0 = -10 ** (-measure(net.wet().response).depth_below_passband_db / 20)
        mix = mix_for_depth(net, -120.0)
        assert mix == pytest.approx(1 / (1 - h0), rel=1e-6)
        assert mix < 1.0

    @pytest.mark.slow
    def test_in_phase_residual_limits_the_depth(self):
        # R3 high: H at the notch is real and positive, so the mix only reaches |H0| at m = 1.
        net = unbalanced(1.02)
        own_db = -measure(net.wet().response).depth_below_passband_db
        assert mix_for_depth(net, own_db + 1e-9) == pytest.approx(1.0, abs=1e-6)
        with pytest.raises(BadValueError, match=r"deeper than this network reaches.*allowed 0 to 52.\d\d dB of cut"):
            mix_for_depth(net, own_db - 1.0)

    @pytest.mark.parametrize("bad", [1.0, float("nan"), "deep"])
    def test_rejects(self, bad):
        with pytest.raises(BadValueError, match=r"depth \(dB\)"):
            mix_for_depth(balanced(), bad)


class TestPotDepthDb:
    # by default each position once, the kinds in turn (each kind twice); the other twelve slow
    @pytest.mark.parametrize("kind, position", slow_except(
        [(kind, position) for position in (0.0, 0.1, 0.5, 0.9, 0.99, 1.0) for kind in ("passive", "Q1", "Q5")],
        keep=[0, 4, 8, 9, 13, 17], ids=lambda pair: f"{pair[0]}-{pair[1]}"))
    def test_exact_null_is_the_divider(self, kind, position):
        # At an exact null the buffered wiper divides input (1) and output (0): the ideal
        # relation 20 log10(1 - p) (common practice) up to the 1 ppm ends; 1e-6 dB covers
        # the notch search (the minimum is exactly at w0 here, see test_depth.py notes).
        assert pot_depth_db(balanced(kind), position, pot_ohms=POT_OHMS) == pytest.approx(
            divider_level_db(position), abs=1e-6)

    @pytest.mark.parametrize("kind", ["passive", "Q5"])
    def test_full_position_is_the_notch_within_the_end_resistance(self, kind):
        # Position 1: the wiper sits 1 ppm of the track from the output, so an exact null
        # reads 20 log10(1e-6 / (1 + 2e-6)) = -120.0000 dB, not the network's own (~ -290 dB).
        assert pot_depth_db(balanced(kind), 1.0, pot_ohms=POT_OHMS) == pytest.approx(
            20 * math.log10(END / (1 + 2 * END)), abs=1e-6)

    def test_full_position_on_a_shallow_null_is_the_network(self):
        # A -52 dB null, H0 real and positive: the wiper reads H0 + e'(1 - H0), e' = e / (1 + 2e),
        # i.e. 20 log10(1 + e'(1 - H0) / H0) = 3.5e-3 dB above the network's own notch
        # (divider arithmetic); 1e-5 dB covers the notch search and Im H0 (~1e-10).
        net = unbalanced(1.02)
        own_db = -measure(net.wet().response).depth_below_passband_db
        h0, e = 10 ** (own_db / 20), END / (1 + 2 * END)
        expected = own_db + 20 * math.log10(1 + e * (1 - h0) / h0)
        assert pot_depth_db(net, 1.0, pot_ohms=POT_OHMS) == pytest.approx(expected, abs=1e-5)

    def test_uses_the_network_pot(self):
        net = balanced(depth_pot_ohms=50e3)
        assert pot_depth_db(net, 0.9) == pytest.approx(divider_level_db(0.9), abs=1e-6)

    @pytest.mark.parametrize("kind, options", [("passive", {}), ("Q5", {}),
                                               ("Q1", {"source_ohms": 600.0, "load_ohms": 10e3})],
                             ids=["passive", "Q5", "Q1-600R-10k"])
    def test_monotonic(self, kind, options):
        # Documented: the level falls monotonically with position (for a source resistance
        # checked from position 0.3 on; near 0 the dry end is itself frequency dependent).
        levels = [pot_depth_db(balanced(kind, **options), p, pot_ohms=POT_OHMS)
                  for p in np.linspace(0.3 if options else 0.0, 1.0, 8)]
        assert np.all(np.diff(levels) < 0)

    @pytest.mark.parametrize("position, pot, match", [
        (1.5, POT_OHMS, r"pot position 1.5: allowed \[0, 1\]"),
        (-0.1, POT_OHMS, r"pot position -0.1"),
        (0.5, None, "no depth pot"),
        (0.5, -5.0, r"depth pot \(ohms\) -5.0"),
    ])
    def test_rejects(self, position, pot, match):
        with pytest.raises(BadValueError, match=match):
            pot_depth_db(balanced(), position, pot_ohms=pot)


class TestPotPositionForDepth:
    # the shallowest and the deepest by default, the middle one slow
    @pytest.mark.parametrize("depth", slow_except([-0.5, -20.0, -100.0], keep=[0, 2], one_name=True))
    def test_exact_null_inverts_the_divider(self, depth):
        # (1 + e - p) / (1 + 2e) = 10^(depth/20) solved for p (divider arithmetic).
        expected = 1 + END - 10 ** (depth / 20) * (1 + 2 * END)
        assert pot_position_for_depth(balanced(), depth, pot_ohms=POT_OHMS) == pytest.approx(expected, abs=1e-9)

    # by default each network and each depth once; the two other pairs are slow (the CPU budget)
    @pytest.mark.parametrize("depth, net", slow_except(
        [(d, net) for net in (balanced("Q5", source_ohms=600.0, load_ohms=10e3), unbalanced(1.02)) for d in (-3.0, -40.0)],
        keep=[0, 3], ids=["-3.0-Q5-600R-10k", "-40.0-Q5-600R-10k", "-3.0-unbalanced", "-40.0-unbalanced"]))
    def test_round_trip(self, depth, net):
        position = pot_position_for_depth(net, depth, pot_ohms=POT_OHMS)
        # 1e-6 dB: the position is solved to 1e-10 of the track.
        assert pot_depth_db(net, position, pot_ohms=POT_OHMS) == pytest.approx(depth, abs=1e-6)

    @pytest.mark.parametrize("depth, match", [
        (-150.0, r"150 dB of cut is outside what this depth pot reaches; allowed -?0.00 to 120.00 dB of cut"),
        (1.0, r"depth \(dB\) 1.0: allowed \[-inf, 0\]"),
        (float("nan"), r"depth \(dB\) nan"),
    ])
    def test_rejects(self, depth, match):
        with pytest.raises(BadValueError, match=match):
            pot_position_for_depth(balanced(), depth, pot_ohms=POT_OHMS)

    def test_needs_a_pot(self):
        with pytest.raises(BadValueError, match="no depth pot"):
            pot_position_for_depth(balanced(), -20.0)


class TestPotRefusalDryEnd:
    def test_dry_end_artefact_with_source(self):
        # Regression (issue 10, defect 9): with a source resistance the refusal's dry end was the
        # minimum of a flat response somewhere in the search band ("+6.45 dB"); it is the level at
        # the full notch's frequency against the passband: within 1 dB of 0 dB for a 600 ohm source
        # on a 10 kohm network (source loss about 20 log10(1 + 600 / 10k) = 0.5 dB, common practice).
        from emulate.analog.networks import TwinT
        from emulate.dsp.depth import pot_position_for_depth

        net = TwinT.balanced(1000.0, r_ohms=10e3, source_ohms=600.0, depth_pot_ohms=10e3)
        with pytest.raises(BadValueError, match=r"allowed -0\.\d\d to 1\d\d\.\d\d dB of cut"):
            pot_position_for_depth(net, -300.0)


class TestMixForDepthMixedMinimum:
    # A strongly unbalanced bootstrapped network with a heavy source (drawn at random): its
    # mixed response's minimum moves away from the wet notch as the mix changes.
    NET = TwinT(732.6263469449661, 2497.4436006847786, 601.7947064860366, 2.168381946026993e-06,
                3.9915795286887635e-06, 8.152899798602651e-06, source_ohms=6811.583720323703,
                load_ohms=245833.004820745, bootstrap=0.7530978006528237)

    @pytest.mark.slow
    @pytest.mark.parametrize("depth", [-6.0, -20.0, -30.0])
    def test_depth_set_at_wet_notch_not_resulting_notch(self, depth):
        # Regression (issue 10, defect 6): --depth set the level at the wet network's notch, so
        # the mixed response dipped deeper than asked (here 2.2 dB at -20 dB); the level of the
        # mixed response's own minimum (measure(), the reference) is now the one asked for;
        # 1e-6 dB is far inside what brentq's 1e-10 mix tolerance gives.
        mix = mix_for_depth(self.NET, depth)
        assert measure(self.NET.replace(mix=mix).response).depth_db == pytest.approx(depth, abs=1e-6)
