"""Shared test settings.

Under CI (the CI variable set) hypothesis draws the same examples every run, so a
submission is judged on a fixed sample; locally it explores new ones each run.

Every test is hermetic: the user's own presets folder and data folder point into the
test's temporary folder, so no test sees (or writes) what a user saved; matplotlib's
configuration folder (a user's matplotlibrc, its font cache) is a folder of the test
session's own, so no picture depends on the user's settings. No test uses the network.
"""

import atexit
import os
import shutil
import tempfile

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


@pytest.fixture(autouse=True)
def hermetic_user_folders(tmp_path_factory, monkeypatch):
    """$EMULATE_PRESETS_DIR, $XDG_DATA_HOME and $EMULATE_KERNELS_DIR inside a fresh temporary folder."""
    home = tmp_path_factory.mktemp("user")
    monkeypatch.setenv("EMULATE_PRESETS_DIR", str(home / "presets"))
    monkeypatch.setenv("XDG_DATA_HOME", str(home / "data"))
    monkeypatch.setenv("EMULATE_KERNELS_DIR", str(home / "kernels"))
    return home


@pytest.fixture(scope="module")
def browser(page):
    """A headless Chromium on the test module's ``page`` (the module's own fixture), module-wide."""
    from helpers_browser import open_browser, open_page

    driver = open_browser()
    open_page(driver, page)
    yield driver
    driver.quit()
