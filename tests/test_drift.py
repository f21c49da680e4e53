"""Tests of emulate.analog.drift.

References: a balanced twin-T's notch f0 = 1/(2 pi R C) (MT-225), so every R moving by
a and every C by b moves the notch by 1/((1+a)(1+b)) and keeps the null; the
tempcos are typical values from memory (said so in the module).
"""

from __future__ import annotations

import pytest

from emulate.analog.drift import (
    TEMPCOS,
    dielectric_warnings,
    parse_temperature_range,
    temperature_drift,
    x7r_voltage_shift,
)
from emulate.analog.networks import TwinT
from emulate.errors import BadValueError

NET = TwinT.balanced(1000.0, r_ohms=10e3)


class TestParseTemperatureRange:
    def test_range(self):
        assert parse_temperature_range("0..50") == (0.0, 50.0)

    @pytest.mark.parametrize("text", ["50..0", "0-50", "-60..20", "a..b"])
    def test_bad(self, text):
        with pytest.raises(BadValueError, match="LOW..HIGH"):
            parse_temperature_range(text)


class TestTemperatureDrift:
    @pytest.mark.parametrize("capacitor", ["polypropylene", "polyester"])
    def test_nominal_drift_is_the_rc_product(self, capacitor):
        tc = TEMPCOS[capacitor].nominal_ppm * 1e-6
        d = temperature_drift(NET, (0, 50), resistor_type="metal-film", capacitor_type=capacitor)
        for t, f in zip((0, 50), d.nominal_notch_hz):
            assert f == pytest.approx(1000.0 / (1 + tc * (t - 25)), rel=1e-9)

    def test_spread_loses_depth(self):
        d = temperature_drift(NET, (0, 50), capacitor_type="x7r")
        assert d.depth_loss_db > 50 and d.drift_pct > 3  # +-1500 ppm/K over 25 K: 3.75 % a part

    def test_c0g_moves_least(self):
        drift = {c: temperature_drift(NET, (0, 50), capacitor_type=c).drift_pct
                 for c in ("c0g", "polypropylene", "polyester", "x7r")}
        assert drift["c0g"] < drift["polypropylene"] < drift["polyester"] < drift["x7r"]

    def test_unknown_type(self):
        with pytest.raises(BadValueError, match="capacitor type"):
            temperature_drift(NET, (0, 50), capacitor_type="mica")


class TestDielectricWarnings:
    def test_narrow_notch_warns_against_x7r(self):
        found = dielectric_warnings(TwinT.balanced(1000.0, r_ohms=10e3, bootstrap=0.99))
        assert any("x7r" in line for line in found) and not any("c0g" in line for line in found)

    def test_passive_notch_is_wide(self):
        assert dielectric_warnings(NET) == []


class TestX7rVoltageShift:
    def test_quadratic(self):
        assert x7r_voltage_shift(50.0) == pytest.approx(-0.3)
        assert x7r_voltage_shift(25.0) == pytest.approx(-0.075)
