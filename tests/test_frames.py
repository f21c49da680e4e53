"""Tests of the framed analysis shared by the finders (emulate.voice.frames).

References: Parseval's theorem (a frame's bins sum to its windowed mean square); numpy's
own FFT and scipy.signal.welch as general-purpose references; AES17 (a full-scale sine has
mean square 1/2).
"""

import numpy as np
import pytest
from scipy import signal

from emulate.voice.frame_table import FrameTable
from emulate.voice.frames import (LOG_GRID_HZ, BandSummer, FrameGrid, band_floors, grid_band_power, grid_density,
                                  iter_frame_power, log_band_edges, peak_on_grid, runs, smooth_on_grid)
from emulate.voice.takes import TakeSource


class TestFrameGrid:
    @pytest.mark.parametrize("fs", [16000, 44100, 48000, 96000])
    def test_sizes_follow_the_rate(self, fs):
        g = FrameGrid.at(fs, 0.025, 0.0125, padded=True)
        assert g.size == round(0.025 * fs) and g.hop == round(0.0125 * fs)
        # padded: at least twice the frame, a power of two
        assert g.nfft >= 2 * g.size and g.nfft & (g.nfft - 1) == 0
        assert g.f_hz[-1] == pytest.approx(fs / 2) and g.hop_s == pytest.approx(0.0125, rel=0.01)


class TestIterFramePower:
    def test_full_scale_sine_frames_hold_half(self):
        # AES17: a full-scale sine has mean square 1/2; Parseval with the window's power
        fs = 48000
        x = np.sin(2 * np.pi * 997 * np.arange(fs) / fs)
        power = np.concatenate(list(iter_frame_power(TakeSource.from_array(x, fs), FrameGrid.at(fs, 0.025, 0.0125))))
        assert power.sum(axis=1) == pytest.approx(np.full(power.shape[0], 0.5), rel=0.01)

    def test_frames_match_a_direct_fft_and_block_size_does_not_matter(self):
        fs, rng = 16000, np.random.default_rng(1)
        x = rng.standard_normal(fs)
        g = FrameGrid.at(fs, 0.032, 0.016, padded=True)
        power = np.concatenate(list(iter_frame_power(TakeSource.from_array(x, fs), g)))
        assert power.shape[0] == 1 + (x.size - g.size) // g.hop  # a trailing part is not analysed
        i = 7
        frame = x[i * g.hop : i * g.hop + g.size] * np.hanning(g.size)
        direct = np.abs(np.fft.rfft(frame, g.nfft)) ** 2 / (g.nfft * np.sum(np.hanning(g.size) ** 2))
        direct[1:-1] *= 2
        assert power[i] == pytest.approx(direct, rel=1e-9, abs=1e-15)

    def test_mean_spectrum_agrees_with_welch(self):
        # scipy.signal.welch (Hann, density) integrated over a band equals our band power
        fs, rng = 48000, np.random.default_rng(2)
        x = signal.lfilter([1, 0.5], [1], rng.standard_normal(4 * fs))
        g = FrameGrid.at(fs, 2048 / fs, 1024 / fs)
        mean = np.concatenate(list(iter_frame_power(TakeSource.from_array(x, fs), g))).mean(axis=0)
        f, pxx = signal.welch(x, fs, window="hann", nperseg=2048, noverlap=1024)
        band = (f >= 2000) & (f < 6000)
        assert mean[band].sum() == pytest.approx(pxx[band].sum() * (f[1] - f[0]), rel=0.02)


class TestBandsAndFloors:
    def test_log_band_edges(self):
        assert log_band_edges(300, 2400, 1).tolist() == [300, 600, 1200, 2400]
        assert len(log_band_edges(300, 24000, 6)) == 1 + int(6 * np.log2(80))

    def test_band_summer_sums_bins(self):
        f = np.arange(16.0)
        s = BandSummer(f, np.array([0.0, 4.0, 10.0, 16.0]))
        p = np.arange(32.0).reshape(2, 16)
        assert s.sum(p).tolist() == [[6, 39, 75], [70, 135, 171]]

    def test_floors_are_per_band_percentiles(self):
        rng = np.random.default_rng(3)
        bands = np.stack([rng.uniform(0, 1, 1000), rng.uniform(10, 11, 1000)], axis=1)
        floors = band_floors(bands, 10)
        assert floors == pytest.approx([0.1, 10.1], abs=0.03)  # uniform: the 10th percentile

    def test_digital_silence_has_a_finite_floor(self):
        assert np.all(band_floors(np.zeros((5, 3)), 10) > 0)

    def test_runs(self):
        assert runs(np.array([1, 1, 0, 0, 1, 0, 1, 1, 1], bool)).tolist() == [[0, 2], [4, 5], [6, 9]]
        assert runs(np.zeros(4, bool)).shape == (0, 2)


class TestFrameTable:
    """The on-disk table of band powers the finders use instead of an array in memory."""

    def test_rows_come_back_as_written(self):
        rows = np.random.default_rng(3).random((20000, 5)).astype(np.float32)
        with FrameTable(5) as table:
            for start in range(0, 20000, 3000):
                table.append(rows[start : start + 3000])
            assert table.rows == 20000
            assert np.array_equal(np.concatenate([b for _, b in table.chunks(4096)]), rows)
            assert np.array_equal(table.read(19990, 30000), rows[19990:])

    @pytest.mark.parametrize("budget", [1, 4 * 20000 * 2, 2**30])
    def test_percentiles_equal_numpys_whatever_the_budget(self, budget):
        # reference: numpy.percentile on the whole array in memory (read one column, a few, or all at a time)
        rows = np.random.default_rng(4).lognormal(size=(20000, 5)).astype(np.float32)
        with FrameTable(5) as table:
            table.append(rows)
            assert np.array_equal(table.percentile(10.0, budget), np.percentile(rows, 10.0, axis=0))
            assert np.array_equal(band_floors(table, 10.0), band_floors(rows, 10.0))

    def test_the_file_has_no_name_and_closing_frees_it(self):
        with FrameTable(2) as table:
            table.append(np.ones((3, 2)))
            assert not isinstance(table._file.name, str) or not table._file.name.startswith("/")
        assert table._file.closed


class TestGrid:
    def test_grid_is_48_per_octave_from_20_hz(self):
        ratio = LOG_GRID_HZ[1:] / LOG_GRID_HZ[:-1]
        assert ratio == pytest.approx(np.full(ratio.size, 2 ** (1 / 48)))
        assert LOG_GRID_HZ[0] == 20.0 and LOG_GRID_HZ[-1] == pytest.approx(48000, rel=2 ** (1 / 48) - 1)  # the last point at or just past it

    def test_density_integrates_to_the_band_power(self):
        # white power spread evenly: the band power is the density times the width
        f = np.linspace(0, 24000, 4097)
        d = grid_density(f, np.full(f.size, 1e-3))
        assert grid_band_power(d, (3000, 5000)) == pytest.approx(1e-3 / (f[1] - f[0]) * 2000, rel=1e-6)

    def test_smoothing_keeps_a_flat_density(self):
        assert smooth_on_grid(np.full(LOG_GRID_HZ.size, 2.0), 1 / 3) == pytest.approx(2.0)

    @pytest.mark.parametrize("centre", [2500.0, 4000.0, 6100.0, 9000.0])
    def test_peak_is_found_and_lies_inside_its_band(self, centre):
        d = np.exp(-0.5 * (np.log2(LOG_GRID_HZ / centre) / 0.15) ** 2)
        peak, (lo, hi) = peak_on_grid(d, (2000, 12000), 6.0)
        assert peak == pytest.approx(centre, rel=0.002)  # the parabola refines between grid points
        # a Gaussian in log2(f) falls 6 dB at sqrt(2 ln(10**0.6)) sigma = 1.66 sigma octaves
        assert np.log2(hi / lo) == pytest.approx(2 * 1.66 * 0.15, abs=2 / 48)

    def test_peak_at_the_search_edge_stays_inside_the_band(self):
        # regression (issue 12): the reported peak could fall outside the reported band
        d = LOG_GRID_HZ ** 2.0  # rising to the top of the search band
        peak, (lo, hi) = peak_on_grid(d, (2000, 8000), 6.0)
        assert lo <= peak <= hi <= 8000
