"""Shared test settings.

Under CI (the CI variable set) hypothesis draws the same examples every run, so a
submission is judged on a fixed sample; locally it explores new ones each run.

Every test is hermetic: the user's own presets folder and data folder point into the
test's temporary folder, so no test sees (or writes) what a user saved; matplotlib's
configuration folder (a user's matplotlibrc, its font cache) is a folder of the test
session's own, so no picture depends on the user's settings. No test uses the network.
A command stopped in process replaces ``sys.unraisablehook``; pytest's is put back after each test.
"""

import os

# BLAS held to one thread before numpy loads, as the command line holds it (cli/options._Group.main):
# the engine solves thousands of tiny systems, where OpenBLAS threads only spin; the tests run the
# commands in this process, after numpy has loaded, so the setting must come first. It halves the
# CPU of a notch measurement (21 to 9.5 ms on the 2-core machine). A value already set is kept.
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import atexit
import gc
import itertools
import re
import shutil
import sys
import tempfile
from pathlib import Path

import pytest
from hypothesis import settings

# before anything imports matplotlib (the doctests of emulate.report do, at collection); the
# font list is rebuilt once a session, about 0.6 s of CPU
_MPL_CONFIG = tempfile.mkdtemp(prefix="emulate-tests-mpl-")
os.environ["MPLCONFIGDIR"] = _MPL_CONFIG
atexit.register(shutil.rmtree, _MPL_CONFIG, ignore_errors=True)

settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI"):
    settings.load_profile("ci")


# every test's own user folder: a fresh numbered folder under one session folder (made by a
# counter: tmp_path_factory.mktemp lists its whole base folder at each call, about 1.5 ms a test
# with thousands of tests)
_USER_HOMES = tempfile.mkdtemp(prefix="emulate-tests-users-")
atexit.register(shutil.rmtree, _USER_HOMES, ignore_errors=True)
_NEXT_HOME = itertools.count()


@pytest.fixture(autouse=True)
def hermetic_user_folders(monkeypatch):
    """$EMULATE_PRESETS_DIR, $XDG_DATA_HOME and $EMULATE_KERNELS_DIR inside a fresh temporary folder."""
    home = Path(_USER_HOMES) / str(next(_NEXT_HOME))
    home.mkdir()
    monkeypatch.setenv("EMULATE_PRESETS_DIR", str(home / "presets"))
    monkeypatch.setenv("XDG_DATA_HOME", str(home / "data"))
    monkeypatch.setenv("EMULATE_KERNELS_DIR", str(home / "kernels"))
    return home


@pytest.fixture(autouse=True)
def unraisable_faults_still_reported(monkeypatch):
    """A command stopped in process (Ctrl-C injected through click's runner) replaces
    ``sys.unraisablehook`` for good (``lifetime.quiet_late_faults``: the real process is ending);
    put pytest's back after each test, so later tests' unraisable faults are still reported."""
    monkeypatch.setattr(sys, "unraisablehook", sys.unraisablehook)


_NEXT_TMP = itertools.count()


@pytest.fixture
def tmp_path(request, tmp_path_factory):
    """A fresh empty folder for the test under pytest's session folder, as pytest's own ``tmp_path``.

    Numbered by a counter: pytest's own lists the whole session folder at every call to find the
    next free number (a thousand tests with ``tmp_path`` made that quadratic: about 1 s of CPU).
    The name starts with the test's name, as pytest's does.
    """
    name = re.sub(r"\W", "_", request.node.name)[:30]
    path = tmp_path_factory.getbasetemp() / f"{name}-{next(_NEXT_TMP)}"
    path.mkdir()
    return path


@pytest.fixture(scope="module")
def browser(page):
    """A headless Chromium on the test module's ``page`` (the module's own fixture), module-wide."""
    from helpers_browser import open_browser, open_page

    driver = open_browser()
    open_page(driver, page)
    yield driver
    driver.quit()


# docstring examples that run a whole measurement, fit or picture (about 0.5-1.5 s of CPU each):
# with the slow checks, like the tests that check the same functions further by default
# (test_measure.py, test_sheet.py, test_plots.py)
SLOW_DOCTESTS = frozenset({
    "emulate.measuring.synthetic.synthetic_recording",
    "emulate.measuring.fit.diagnose",
    "emulate.report.sheet.write_sheet",
    "emulate.report.plots.plot_response",
    # 0.2-0.6 s each (measured 2026-12-03): a picture, a schematic, a finder on a take, a pot solve;
    # tested by default in test_plots.py, test_schematic.py, test_sibilance.py, test_resonance.py
    "emulate.report.plots.plot_tolerance",
    "emulate.report.plots.plot_take_spectrum",
    "emulate.report.plots.plot_sweep",
    "emulate.report.schematic.draw_schematic",
    "emulate.report.schematic.schematic_figure",  # 0.6 s; drawn by default in test_schematic.py
    "emulate.voice.sibilance.most_sibilant_excerpt",
    "emulate.voice.resonance.finder.find_resonance",
    "emulate.voice.sibilance.find_sibilance",
    "emulate.voice.sibilance.combine_reports",
    "emulate.voice.sibilance.aimed_at",
    "emulate.dsp.depth.pot_position_for_depth",  # test_depth.py
})


@pytest.hookimpl(tryfirst=True)
def pytest_collection_modifyitems(config, items):
    """Mark the long docstring examples slow (before ``-m`` selects).

    A hook of this file sees every collected item, the docstring examples under ``emulate/``
    included, whenever ``tests/`` is collected (as in the default run).
    """
    for item in items:
        if item.name in SLOW_DOCTESTS and type(item).__name__ == "DoctestItem":
            item.add_marker(pytest.mark.slow)


# The cyclic garbage collector's full passes walk every live object: after collection these are
# mostly the imported libraries (numpy, scipy, numba, sympy, matplotlib), the test items and the
# rewritten test modules, all alive until the end. They are moved out of its reach (gc.freeze, a
# public CPython call) once collected, so the run's automatic full passes and pytest's five passes
# at the end (for exceptions raised in finalizers) walk only what the tests made. Before its final
# passes one full collection runs with pytest's hook for such exceptions still in place, so none is
# missed. Measured 2026-12-03 on five test files (networks, digital, depth, plots, sibilance): the
# collector took 2.2 s of 15 s of CPU before, 0.75 s after.
def pytest_collection_finish(session):
    """Collect once and freeze what is alive: imports, items and test modules stay until the end."""
    gc.collect()
    gc.freeze()


def pytest_unconfigure(config):
    """One full collection (pytest's hook for finalizer exceptions still set), then freeze the rest."""
    gc.collect()
    gc.freeze()
