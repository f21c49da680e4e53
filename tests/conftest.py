"""Shared test settings.

Under CI (the CI variable set) hypothesis draws the same examples every run, so a
submission is judged on a fixed sample; locally it explores new ones each run.

Every test is hermetic: the user's own presets folder and data folder point into the
test's temporary folder, so no test sees (or writes) what a user saved.
"""

import os

import pytest
from hypothesis import settings

settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI"):
    settings.load_profile("ci")


@pytest.fixture(autouse=True)
def hermetic_user_folders(tmp_path_factory, monkeypatch):
    """$EMULATE_PRESETS_DIR and $XDG_DATA_HOME inside a fresh temporary folder."""
    home = tmp_path_factory.mktemp("user")
    monkeypatch.setenv("EMULATE_PRESETS_DIR", str(home / "presets"))
    monkeypatch.setenv("XDG_DATA_HOME", str(home / "data"))
    return home
