"""Tests of emulate.dsp.compiled: the kernels compiled ahead of time give the JIT kernels' results.

The reference is :mod:`emulate.dsp.kernels` (the JIT kernels, themselves checked against
scipy.signal and closed forms in test_kernels.py): every export must give the same
samples bit for bit, since it is the same source compiled by the same compiler.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from emulate.dsp import compiled
from emulate.dsp import kernels as jit

ROOT = Path(__file__).resolve().parents[1]


class TestWithoutTheModule:
    def test_nothing_built_means_none(self):
        # conftest points $EMULATE_KERNELS_DIR at a fresh folder: nothing is built there
        assert os.environ[compiled.ENV_VAR] in str(compiled.kernels_folder())
        assert compiled.compiled_module() is None

    def test_folder_names_the_sources(self, monkeypatch, tmp_path):
        monkeypatch.setenv(compiled.ENV_VAR, str(tmp_path))
        folder = compiled.kernels_folder()
        assert folder.parent == tmp_path and len(folder.name) == 16

    def test_xdg_cache_home_when_unset(self, monkeypatch, tmp_path):
        monkeypatch.delenv(compiled.ENV_VAR)
        monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
        assert compiled.kernels_folder().parent == tmp_path / "emulate" / "kernels"


class TestBuildCommand:
    def test_failure_is_one_line(self, monkeypatch, capsys):
        def fails():
            raise RuntimeError("no C compiler found\nlong details")
        monkeypatch.setattr(compiled, "build", fails)
        assert compiled.main() == 1
        err = capsys.readouterr().err
        assert err.count("\n") == 1 and "no C compiler found" in err and "JIT" in err

    def test_interrupted_says_nothing_kept(self, monkeypatch, capsys):
        def interrupted():
            raise KeyboardInterrupt
        monkeypatch.setattr(compiled, "build", interrupted)
        assert compiled.main() == 130
        assert "nothing was kept" in capsys.readouterr().err

    def test_the_command_line_says_the_same(self, monkeypatch):
        # `emulate precompile` runs the same main(): one line and a non-zero exit on failure
        from click.testing import CliRunner

        from emulate.cli import main
        from helpers_cli import assert_one_line_error

        def fails():
            raise RuntimeError("no C compiler found\nlong details")
        monkeypatch.setattr(compiled, "build", fails)
        assert_one_line_error(CliRunner().invoke(main, ["precompile"]), "no C compiler found")


class Recorder:
    """Stands in for the compiled module: records which export was called."""

    def __init__(self):
        self.calls = []

    def __getattr__(self, name):
        return lambda *args: self.calls.append(name)


class TestArgumentsThatDoNotFit:
    def test_exact_types_go_to_the_export_others_to_the_jit(self):
        module = Recorder()
        kernels = compiled._Compiled(module)
        sos = np.array([[0.5, 0.0, 0.0, 1.0, 0.0, 0.0]])
        x = np.ones((8, 2))
        kernels.sos_filter(sos, x, np.zeros((1, 2, 2)), np.empty_like(x))
        assert module.calls == ["sos_filter"]
        strided, out = np.ones((8, 4))[:, ::2], np.empty((8, 2))
        kernels.sos_filter(sos, strided, np.zeros((1, 2, 2)), out)  # not C-contiguous: the JIT kernel
        assert module.calls == ["sos_filter"] and np.all(out == 0.5)
        kernels.codes_to_float(np.zeros((3, 1), np.int16), 1.0, np.empty((3, 1)))
        kernels.codes_to_float(np.zeros((3, 1), np.int64), 1.0, np.empty((3, 1)))  # no such export
        assert module.calls == ["sos_filter", "codes_to_float_i2"]


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    """The module built once into a temporary folder (about a minute)."""
    folder = tmp_path_factory.mktemp("kernels")
    env = {**os.environ, compiled.ENV_VAR: str(folder), "PYTHONPATH": str(ROOT)}
    run = subprocess.run([sys.executable, "-m", "emulate.dsp.compiled"], env=env, capture_output=True,
                         text=True, cwd=ROOT)
    assert run.returncode == 0, run.stderr
    return folder, env


def _noise(shape, seed):
    return np.random.default_rng(seed).standard_normal(shape) * 0.3


@pytest.mark.slow
class TestCompiledModule:
    def test_only_the_module_folder_is_left(self, built):
        folder, _ = built
        (key,) = folder.iterdir()
        assert [p.name for p in key.iterdir()] == [compiled._module_path(key).name]

    def test_loads_without_numba_and_releases_the_gil(self, built):
        _, env = built
        code = ("import sys, threading, numpy as np\n"
                "from emulate.dsp.compiled import kernels, _Compiled\n"
                "k = kernels(); assert isinstance(k, _Compiled), k\n"
                "assert 'numba' not in sys.modules\n"
                "ticks, done = [0], threading.Event()\n"
                "def spin():\n"
                "    while not done.is_set(): ticks[0] += 1\n"
                "t = threading.Thread(target=spin); t.start()\n"
                "x = np.ones((1 << 21, 2)); sos = np.array([[1.0, 0.1, 0.2, 1.0, -0.5, 0.1]] * 2)\n"
                "before = ticks[0]; k.sos_filter(sos, x, np.zeros((2, 2, 2)), np.empty_like(x))\n"
                "during = ticks[0] - before; done.set(); t.join()\n"
                "print(during)\n")
        run = subprocess.run([sys.executable, "-c", code], env=env, capture_output=True, text=True)
        assert run.returncode == 0, run.stderr
        assert int(run.stdout) > 1000  # the spinning thread ran while the kernel did

    def test_every_export_equals_the_jit_kernel(self, built, monkeypatch):
        folder, _ = built
        monkeypatch.setenv(compiled.ENV_VAR, str(folder))
        module = compiled.compiled_module()
        assert module is not None
        aot = compiled._Compiled(module)
        sos = np.array([[0.9, -1.2, 0.9, 1.0, -1.1, 0.8], [1.0, 0.3, 0.2, 1.0, -0.4, 0.1],
                        [0.7, 0.1, 0.0, 1.0, 0.2, 0.0]])
        x = _noise((3000, 2), 1)
        results = []
        for k in (aot, jit):
            out, state = np.empty_like(x), np.zeros((3, 2, 2))
            k.sos_filter(sos, x, state, out)
            blended, ramp = np.empty_like(x), np.array([0.1, 1e-3, 0.9])
            k.ramp_blend(x, out, ramp, blended)
            delayed, position = np.empty_like(x), np.zeros(1, np.int64)
            k.delay_line(x, np.zeros((3, 2)), position, delayed)
            parts = [out, state, blended, ramp, delayed, position]
            for dtype, bits in ((np.int16, 16), (np.int32, 32)):
                codes = (x * 2.0 ** (bits - 2)).astype(dtype)
                floats = np.empty(x.shape)
                k.codes_to_float(codes, 2.0 ** -(bits - 1), floats)
                encoded, rng, tally = np.empty(x.shape, dtype), np.array([5], np.uint64), np.array(
                    [-np.inf, np.inf, 0.0, 0.0])
                k.encode_codes(x, 2.0 ** 15, -2.0 ** 15, 2.0 ** 15 - 1, 2.0 ** (bits - 16), True, rng, tally,
                               encoded)
                parts += [floats, encoded, rng, tally]
                for out_dtype, out_bits in ((np.int16, 16), (np.int32, 32)):
                    out_codes, rng, tally = np.empty((2998, 2), out_dtype), np.array([3], np.uint64), np.array(
                        [-np.inf, np.inf, 0.0, 0.0])
                    k.filter_codes(codes, 2.0 ** -(bits - 1), sos, np.zeros((3, 2, 2)), True,
                                   np.array([0.2, 1e-3, 0.7]), np.zeros((2, 2)), np.zeros(1, np.int64), 2,
                                   2.0 ** 15, -2.0 ** 15, 2.0 ** 15 - 1, 2.0 ** (out_bits - 16), out_bits == 16,
                                   rng, tally, np.empty((3, 256, 2)), out_codes)
                    parts += [out_codes, rng, tally]
            packed = np.random.default_rng(2).integers(0, 256, 3 * x.size).astype(np.uint8)
            unpacked, repacked = np.empty(x.shape, np.int32), np.empty_like(packed)
            k.unpack_pcm24(packed, unpacked)
            k.pack_pcm24(unpacked, repacked)
            parts += [unpacked, repacked]
            results.append(parts)
        for a, b in zip(*results):
            np.testing.assert_array_equal(a, b)
