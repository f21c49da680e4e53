"""Tests for emulate.report.plots: real PNG files of the right size, refusals, the digital overlay."""

import struct

import numpy as np
import pytest

from emulate.report import plots
from emulate.analog import tolerance
from emulate.dsp.digital import worst_error_db
from emulate.errors import BadValueError
from emulate.analog.networks import TwinT

NET = TwinT.balanced(6000.0, r_ohms=10e3)
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # ISO/IEC 15948 (PNG) file signature and IHDR layout


def png_size(path):
    """(width, height) from the IHDR chunk (ISO/IEC 15948 sec. 11.2.2)."""
    data = path.read_bytes()
    assert data[:8] == PNG_SIGNATURE and data[12:16] == b"IHDR"
    return struct.unpack(">II", data[16:24])


def assert_picture(path):
    assert png_size(path) == plots.FIG_SIZE_PX
    assert path.stat().st_size > 20_000  # a chart with curves and text, not an empty canvas
    assert not list(path.parent.glob(".*"))  # no temporary file left


def sweep_rows():
    return [{"notch_hz": f, "sibilance_reduction_db": f / 1000, "loudness_change_db": -0.2,
             "intelligibility_cost": 0.01, "pick": f == 6000} for f in (5000, 6000, 7000)]


class TestPlotResponse:
    @pytest.mark.parametrize("fs", [None, 48000])
    def test_writes_png(self, tmp_path, fs):
        assert_picture(plots.plot_response(NET, tmp_path / "r.png", fs=fs))

    def test_refuses_missing_folder(self, tmp_path):
        with pytest.raises(BadValueError, match="does not exist"):
            plots.plot_response(NET, tmp_path / "no" / "r.png")


class TestDigitalResponse:
    def test_full_notch_error_matches_the_design_figure(self):
        # Reference: the worst |dB| error where the analog is above -30 dB, worked out here
        # from scipy.signal.freqs_zpk (the analog zpk) and scipy.signal.sosfreqz (the
        # design's sections), against the design's own fidelity figure. 0.01 dB: the
        # design checks its own ~2500-point grid, this one has 3000 log-spaced points.
        from scipy import signal
        from emulate.dsp.emulation import processor_for

        f = np.geomspace(20, 20000, 3000)
        processor = processor_for(NET)
        processor.prepare(48000, 1)
        _, h_analog = signal.freqs_zpk(*NET.zpk(), worN=2 * np.pi * f)
        _, h_digital = signal.sosfreqz(processor.design.sos, worN=f, fs=48000)
        level = 20 * np.log10(np.abs(h_analog))
        keep = level > -30.0
        reference_db = np.max(np.abs(20 * np.log10(np.abs(h_digital[keep])) - level[keep]))
        assert processor.fidelity_db == pytest.approx(reference_db, abs=0.01)
        # and the picture's caption measure gives the same on the same points
        h_d, fidelity = plots.digital_response(NET, 48000, f)
        assert worst_error_db(h_analog, h_d) == pytest.approx(reference_db, abs=1e-9)

    @pytest.mark.parametrize("network", [NET, NET.replace(mix=0.6)])
    def test_slow_plot_bug_same_values_as_the_impulse_response(self, network):
        # the plot used to read the response off 2 s of the rendered impulse response, point
        # by point (about 20 s a plot); the vectorised sections must give the same values.
        # Reference: scipy.signal.freqz of that impulse response (the old method). 1e-12:
        # the impulse response decays below 1e-16 well within 2 s at this Q (0.25), so
        # only rounding of ~1e5 summed terms separates the two.
        from scipy import signal
        from emulate.dsp.emulation import processor_for

        f = np.geomspace(20, 20000, 40)
        processor = processor_for(network)
        processor.prepare(48000, 1)
        impulse = np.zeros((96000, 1))
        impulse[0, 0] = 1.0
        _, h_ref = signal.freqz(processor.process(impulse)[:, 0], worN=f, fs=48000)
        h_d, _ = plots.digital_response(network, 48000, f)
        # the plot takes the whole-sample latency out, as every render does
        unlag = np.exp(2j * np.pi * f * processor.latency_samples / 48000)
        assert np.max(np.abs(h_d - h_ref * unlag)) < 1e-12


class TestPlotTolerance:
    def test_writes_png(self, tmp_path):
        result = tolerance.monte_carlo(NET, tolerance.Tolerances(0.01, 0.05), draws=300)
        assert_picture(plots.plot_tolerance(result, tmp_path / "t.png"))


class TestPlotTakeSpectrum:
    def test_writes_png(self, tmp_path):
        x = np.random.default_rng(0).normal(size=(24000, 2)) * 0.1
        path = plots.plot_take_spectrum(x, 0.5 * x, 48000, tmp_path / "s.png", notch_hz=6000,
                                        band_hz=(4000, 9000))
        assert_picture(path)

    @pytest.mark.parametrize("take, fs, match", [(np.zeros((4, 1)), 48000, "frames"),
                                                 (np.zeros((100, 1)), 0, "sample rate")])
    def test_refuses_bad_input(self, tmp_path, take, fs, match):
        with pytest.raises(BadValueError, match=match):
            plots.plot_take_spectrum(take, take, fs, tmp_path / "s.png")


class TestPlotSweep:
    def test_writes_png(self, tmp_path):
        assert_picture(plots.plot_sweep(sweep_rows(), tmp_path / "w.png"))

    @pytest.mark.parametrize("rows, match", [([], "at least one"), ([{"notch_hz": 5000}], "missing")])
    def test_refuses_bad_rows(self, tmp_path, rows, match):
        with pytest.raises(BadValueError, match=match):
            plots.plot_sweep(rows, tmp_path / "w.png")


class TestPictureFormats:
    def test_svg_is_svg(self, tmp_path):
        # regression: --plot x.svg wrote PNG bytes
        from emulate.analog.networks import TwinT

        out = plots.plot_response(TwinT.balanced(1000.0, r_ohms=10e3), tmp_path / "r.svg")
        assert out.read_text()[:200].lstrip().startswith("<?xml") and "<svg" in out.read_text()[:2000]

    @pytest.mark.parametrize("name", ["r.jpg", "r", "r.pdf"])
    def test_other_suffixes_are_refused(self, tmp_path, name):
        from emulate.analog.networks import TwinT

        with pytest.raises(BadValueError, match=r"\.png or \.svg"):
            plots.plot_response(TwinT.balanced(1000.0, r_ohms=10e3), tmp_path / name)
        assert list(tmp_path.iterdir()) == []


class TestShallowFloor:
    @pytest.mark.parametrize("depth, bottom", [(7.9, -13.9), (3.0, -12.0), (300.0, plots.FLOOR_DB)])
    def test_fits_the_dip(self, depth, bottom):
        # the y range shows a shallow dip with 6 dB below it (common practice, no source)
        assert plots._shallow_floor(depth) == pytest.approx(bottom)


class TestCircuitWords:
    def test_names_circuit_and_mix(self):
        from emulate.analog.networks import TwinT

        net = TwinT.balanced(1000.0, r_ohms=10e3)
        assert plots.circuit_words(net) == "passive twin-T, full notch"
        assert plots.circuit_words(net.replace(bootstrap=0.75, mix=0.6)) == "active twin-T (K 0.75), mix 0.60"
