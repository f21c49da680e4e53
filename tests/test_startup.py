"""Start-up: a command imports only what it uses; importing the package changes nothing.

Each check runs a fresh interpreter (the modules a command loads are only visible in a
process that has loaded nothing else). Wall times are measured in
tests/benchmarks/bench_startup.py, not here.
"""

import json
import os
import subprocess
import sys

import click
import pytest

from emulate.cli import main
from emulate.cli.options import COMMAND_MODULES, COMMAND_SUMMARY, PRESETS_ENV_VAR

PARTS = ["--r1", "10k", "--r2", "10k", "--r3", "5k", "--c1", "2n2", "--c2", "2n2", "--c3", "4n4"]

# runs the command line in-process, then prints the top-level names of what it loaded
LOADED = """
import json, sys
import emulate.cli
try:
    emulate.cli.main(json.loads(sys.argv[1]))
except SystemExit:
    pass
print(json.dumps(sorted(sys.modules)))
"""


def loaded_modules(args: list[str], cwd) -> set[str]:
    env = dict(os.environ, PYTHONPATH=os.getcwd(), EMULATE_PRESETS_DIR=str(cwd))
    run = subprocess.run([sys.executable, "-c", LOADED, json.dumps(args)], capture_output=True,
                         text=True, cwd=cwd, env=env, check=True)
    return set(json.loads(run.stdout.strip().splitlines()[-1]))


def under(modules: set[str], package: str) -> set[str]:
    return {m for m in modules if m == package or m.startswith(package + ".")}


class TestCommandSummary:
    @pytest.mark.parametrize("name", sorted(COMMAND_MODULES))
    def test_matches_the_command_help(self, name):
        command = main.get_command(click.Context(main), name)
        assert COMMAND_SUMMARY[name] == command.help.splitlines()[0]

    def test_presets_variable_is_the_store_one(self):
        from emulate.work import presets

        assert PRESETS_ENV_VAR == presets.ENV_VAR


class TestImportsPerCommand:
    def test_help_loads_no_numpy_and_no_command(self, tmp_path):
        modules = loaded_modules(["--help"], tmp_path)
        assert not under(modules, "numpy")
        assert not {f"emulate.cli.{m}" for m in COMMAND_MODULES.values()} & modules

    def test_response_without_rate_loads_no_numba_scipy_or_plotting(self, tmp_path):
        modules = loaded_modules(["response", *PARTS], tmp_path)
        for heavy in ("numba", "scipy", "matplotlib"):
            assert not under(modules, heavy), heavy

    def test_response_with_rate_designs_without_numba_or_scipy(self, tmp_path):
        # the digital design and its fidelity are numpy only; numba loads with the first block;
        # the circuit's zeros and poles come from numpy (analog/pencil.py), not scipy.linalg
        modules = loaded_modules(["response", *PARTS, "--rate", "48000"], tmp_path)
        for heavy in ("numba", "scipy", "matplotlib"):
            assert not under(modules, heavy), heavy

    def test_tolerance_without_plot_loads_no_plotting(self, tmp_path):
        modules = loaded_modules(["tolerance", *PARTS, "--draws", "200"], tmp_path)
        assert not under(modules, "matplotlib") and "emulate.report.plots" not in modules

    def test_sibilance_loads_no_sweep(self, tmp_path):
        import numpy as np
        import soundfile as sf

        take = tmp_path / "take.wav"
        sf.write(take, 0.1 * np.sin(2 * np.pi * 6000 * np.arange(4800) / 48000), 48000)
        modules = loaded_modules(["sibilance", str(take)], tmp_path)
        assert "emulate.work.sweep" not in modules and not under(modules, "matplotlib")
        # a 16-bit take read for analysis converts its codes in numpy: no numba (about 0.6 s to start)
        assert not under(modules, "numba")


    @pytest.mark.slow  # a whole batch in a fresh interpreter: over 2 s on a loaded machine
    def test_batch_without_cluster_loads_no_dask_and_no_plotting(self, tmp_path):
        import numpy as np
        import soundfile as sf

        from emulate.work.presets import Preset, PresetStore

        (tmp_path / "takes").mkdir()
        sf.write(tmp_path / "takes" / "take.wav", 0.1 * np.sin(2 * np.pi * 6000 * np.arange(4800) / 48000), 48000)
        parts = dict(zip(("r1", "r2", "r3", "c1", "c2", "c3"), PARTS[1::2]))
        PresetStore(tmp_path / "presets").save(Preset("p", "A", circuit=parts))
        modules = loaded_modules(["batch", "--speaker", "A", "--preset", "p", "--takes", str(tmp_path / "takes"),
                                  "--out", str(tmp_path / "out"), "--workers", "1",
                                  "--presets", str(tmp_path / "presets")], tmp_path)
        assert "emulate.work.batch" in modules
        assert not under(modules, "distributed") and not under(modules, "dask") and not under(modules, "matplotlib")

class TestPackageImport:
    def test_changes_no_environment_variable(self):
        code = ("import json, os; before = dict(os.environ); import emulate, emulate.cli; "
                "print(json.dumps(dict(os.environ) == before))")
        env = {k: v for k, v in os.environ.items() if k != "OPENBLAS_NUM_THREADS"}
        env["PYTHONPATH"] = os.getcwd()
        run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env,
                             check=True)
        assert run.stdout.strip() == "true"

    def test_command_line_holds_blas_to_one_thread(self, tmp_path):
        code = ("import os, emulate.cli\ntry: emulate.cli.main(['--version'])\nexcept SystemExit: pass\n"
                "print(os.environ.get('OPENBLAS_NUM_THREADS'))")
        env = {k: v for k, v in os.environ.items() if k != "OPENBLAS_NUM_THREADS"}
        env["PYTHONPATH"] = os.getcwd()
        run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env,
                             cwd=tmp_path, check=True)
        assert run.stdout.strip().splitlines()[-1] == "1"
