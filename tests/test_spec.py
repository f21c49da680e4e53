"""Tests of emulate.analog.spec: circuit and target tables <-> networks and designs.

References: the values as the trade writes them, IEC 60062 letter code (4k7, 2n2); the
balanced twin-T of Analog Devices MT-225 (R3 = R/2, C3 = 2C) for the round trips; the
TOML format through Python's tomllib (reference parser).
"""

from __future__ import annotations

import math

import pytest

from emulate.analog.design import design_twin_t
from emulate.errors import BadValueError
from emulate.analog.networks import TwinT
from emulate.analog.spec import (CIRCUIT_KEYS, design_from_table, network_from_document, network_from_table,
                          read_circuit_file, table_from_network)

BALANCED_TABLE = {"r1": "10k", "r2": "10k", "r3": "5k", "c1": "10n", "c2": "10n", "c3": "20n"}

ROUND_TRIP_NETWORKS = [
    TwinT(10e3, 10e3, 5e3, 10e-9, 10e-9, 20e-9),
    TwinT(4.7e3, 22e3, 1e3, 3.3e-9, 47e-9, 68e-9, source_ohms=600.0, load_ohms=100e3),
    TwinT(9.1e3, 9.1e3, 4.55e3, 2.7e-9, 2.7e-9, 5.6e-9, bootstrap=0.75, load_ohms=2.2e3),
    TwinT(1.02e3, 1.02e3, 510.0, 1e-6, 1e-6, 2e-6, depth_pot_ohms=100e3, mix=0.25),
    TwinT(1e6, 1e6, 470e3, 100e-12, 100e-12, 220e-12, source_ohms=0.47),
]


class TestTableFromNetwork:
    @pytest.mark.parametrize("network", ROUND_TRIP_NETWORKS)
    def test_round_trip(self, network):
        # three significant figures and K to 6 decimals hold every value above exactly
        back = network_from_table(table_from_network(network), mix=network.mix)
        assert back == network

    def test_trade_notation(self):
        # IEC 60062 letter code: the prefix letter is the decimal point
        table = table_from_network(ROUND_TRIP_NETWORKS[1])
        assert table == {"r1": "4k7", "r2": "22k", "r3": "1k", "c1": "3n3", "c2": "47n", "c3": "68n",
                         "source": "600R", "load": "100k"}

    def test_optional_keys_only_when_set(self):
        assert set(table_from_network(ROUND_TRIP_NETWORKS[0])) == set(BALANCED_TABLE)
        assert set(table_from_network(ROUND_TRIP_NETWORKS[3])) == set(BALANCED_TABLE) | {"depth_pot"}

    def test_design_round_trip(self):
        # a designed network (here R3, C3 as pairs: 2 x 9k1, 2 x 18n) survives its table
        built = design_twin_t(1000.0, series="E24").built
        assert network_from_table(table_from_network(built)) == built

    def test_bootstrap_kept_to_six_decimals(self):
        # K = 8200/8630 (a design's divider) is written to 6 decimals: K moves by under
        # 5e-7, so Q = 1/(4(1-K)) (MT-225) moves by under 5e-7/(1-K) = 1e-5 relative
        k = 8200 / 8630
        back = network_from_table(table_from_network(ROUND_TRIP_NETWORKS[0].replace(bootstrap=k)))
        assert abs(back.bootstrap - k) <= 5e-7
        assert 1 / (1 - back.bootstrap) == pytest.approx(1 / (1 - k), rel=1e-5)

    def test_round_trip_keeps_half_of_an_e96_value_bug(self):
        network = TwinT(9.53e3, 9.53e3, 9.53e3 / 2, 10e-9, 10e-9, 20e-9)
        back = network_from_table(table_from_network(network))
        assert back.r3 == network.r3


class TestNetworkFromTable:
    def test_balanced(self):
        net = network_from_table(BALANCED_TABLE)
        assert net == TwinT(10e3, 10e3, 5e3, 10e-9, 10e-9, 20e-9)

    def test_numbers_and_options(self):
        table = {"r1": 10e3, "r2": "10 kOhm", "r3": "5k", "c1": 1e-8, "c2": "10n", "c3": "20nF",
                 "source": "600", "load": "1M", "bootstrap": 0.8, "depth_pot": "100k"}
        net = network_from_table(table, mix=0.5)
        assert (net.r2, net.c3, net.source_ohms, net.load_ohms) == (10e3, 20e-9, 600.0, 1e6)
        assert (net.bootstrap, net.depth_pot_ohms, net.mix) == (0.8, 100e3, 0.5)

    def test_defaults(self):
        net = network_from_table(BALANCED_TABLE)
        assert (net.source_ohms, net.load_ohms, net.bootstrap, net.depth_pot_ohms, net.mix) == (
            0.0, math.inf, None, None, 1.0)

    def test_unknown_key(self):
        with pytest.raises(BadValueError, match=r"circuit: unknown key\(s\) r4; allowed: r1, r2"):
            network_from_table(BALANCED_TABLE | {"r4": "1k"})

    def test_missing_parts(self):
        with pytest.raises(BadValueError, match="circuit: missing R3, C2; give all of R1"):
            network_from_table({k: v for k, v in BALANCED_TABLE.items() if k not in ("r3", "c2")})

    @pytest.mark.parametrize("key, value, match", [
        ("r1", "10q", r"circuit\.r1: resistance '10q': not a value"),
        ("c1", "10k", r"circuit\.c1: capacitance '10k': 10000 F is outside"),
        ("r3", -5.0, r"circuit\.r3: .*must be positive"),
        ("load", "-1", r"circuit\.load: .*must be positive"),
        ("source", "10n", r"circuit\.source"),
        ("bootstrap", "x", r"circuit\.bootstrap: 'x' is not a number"),
        ("bootstrap", True, r"circuit\.bootstrap: True is not a number"),
        ("depth_pot", "abc", r"circuit\.depth_pot"),
    ])
    def test_bad_values_name_the_field(self, key, value, match):
        with pytest.raises(BadValueError, match=match):
            network_from_table(BALANCED_TABLE | {key: value})

    def test_where_prefix(self):
        with pytest.raises(BadValueError, match=r"take\.toml \[circuit\]\.r1"):
            network_from_table(BALANCED_TABLE | {"r1": "x"}, where="take.toml [circuit]")

    def test_not_a_table(self):
        with pytest.raises(BadValueError, match=r"circuit: expected a table of values, got \[1, 2\]"):
            network_from_table([1, 2])

    @pytest.mark.parametrize("key, value", [
        ("bootstrap", 1.5),
        ("bootstrap", -0.1),
    ])
    def test_range_errors_name_the_field_bug(self, key, value):
        with pytest.raises(BadValueError, match=rf"circuit\.{key}"):
            network_from_table(BALANCED_TABLE | {key: value})


class TestDesignFromTable:
    def test_same_as_design_twin_t(self):
        # the table is only another way of writing the arguments
        d = design_from_table({"notch": "6.3k", "series": "E96", "cap_series": "E12",
                               "impedance": "10k"}, load_ohms=1e6)
        expected = design_twin_t(6300.0, series="E96", cap_series="E12", impedance_ohms=10e3, load_ohms=1e6)
        assert d.built == expected.built and d.r3_build == expected.r3_build

    def test_q_and_capacitor(self):
        d = design_from_table({"notch": 1000, "q": "2", "capacitor": "22n"})
        assert d.target_q == 2.0 and d.ideal.c1 == 22e-9
        assert d.ideal.bootstrap == pytest.approx(1 - 1 / 8)  # MT-225: K = 1 - 1/(4Q)

    @pytest.mark.parametrize("table, match", [
        ({}, r"target: missing notch \(Hz\)"),
        ({"notch": "1k", "qq": 1}, r"target: unknown key\(s\) qq"),
        ({"notch": "1k", "q": "x"}, r"target\.q: 'x' is not a number"),
        ({"notch": "abc"}, r"target\.notch: value 'abc': not a value"),
        ({"notch": "1k", "capacitor": "10k"}, r"target\.capacitor: capacitance '10k'"),
        ({"notch": "1k", "impedance": "10n"}, r"target\.impedance"),
    ])
    def test_bad_tables(self, table, match):
        with pytest.raises(BadValueError, match=match):
            design_from_table(table)

    @pytest.mark.parametrize("table, field", [
        ({"notch": "1k", "q": 50}, "q"),
        ({"notch": "500k"}, "notch"),
        ({"notch": "1k", "series": "E5"}, "series"),
        ({"notch": "1k", "impedance": "1R"}, "impedance"),
    ])
    def test_range_errors_name_the_field_bug(self, table, field):
        with pytest.raises(BadValueError, match=rf"target\.{field}"):
            design_from_table(table)


def write(tmp_path, text, name="circuit.toml"):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


CIRCUIT_TOML = """
mix = 0.8
[circuit]
r1 = "10k"
r2 = "10k"
r3 = "5k"
c1 = "10n"
c2 = "10n"
c3 = "20n"
load = "100k"
"""


class TestReadCircuitFile:
    def test_reads(self, tmp_path):
        document = read_circuit_file(write(tmp_path, CIRCUIT_TOML))
        assert document["mix"] == 0.8 and document["circuit"]["r3"] == "5k"

    def test_missing_file(self, tmp_path):
        with pytest.raises(BadValueError, match="no such circuit file"):
            read_circuit_file(tmp_path / "absent.toml")

    def test_not_toml(self, tmp_path):
        with pytest.raises(BadValueError, match="not a readable TOML circuit file"):
            read_circuit_file(write(tmp_path, "r1 = = 3"))

    def test_no_tables(self, tmp_path):
        with pytest.raises(BadValueError, match=r"needs a \[circuit\] table of parts or a \[target\]"):
            read_circuit_file(write(tmp_path, "mix = 0.5\n"))


class TestNetworkFromDocument:
    def test_circuit_with_mix(self, tmp_path):
        net = network_from_document(read_circuit_file(write(tmp_path, CIRCUIT_TOML)), where="c.toml")
        assert net == TwinT(10e3, 10e3, 5e3, 10e-9, 10e-9, 20e-9, load_ohms=100e3, mix=0.8)

    def test_mix_argument_wins(self, tmp_path):
        document = read_circuit_file(write(tmp_path, CIRCUIT_TOML))
        assert network_from_document(document, where="c.toml", mix=0.3).mix == 0.3

    def test_target(self, tmp_path):
        document = read_circuit_file(write(tmp_path, '[target]\nnotch = "1k"\nseries = "E24"\n'))
        net = network_from_document(document, where="t.toml")
        assert net == design_twin_t(1000.0, series="E24").built

    def test_bad_mix(self):
        with pytest.raises(BadValueError, match=r"c\.toml\W+mix: 'lots' is not a number"):
            network_from_document({"mix": "lots", "circuit": BALANCED_TABLE}, where="c.toml")

    def test_table_is_a_valid_document(self):
        # a preset's [circuit] table is the same layout (module docstring)
        document = {"circuit": table_from_network(ROUND_TRIP_NETWORKS[2])}
        assert network_from_document(document, where="p") == ROUND_TRIP_NETWORKS[2]
        assert set(document["circuit"]) <= set(CIRCUIT_KEYS)
