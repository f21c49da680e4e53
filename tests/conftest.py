"""Shared test settings.

Under CI (the CI variable set) hypothesis draws the same examples every run, so a
submission is judged on a fixed sample; locally it explores new ones each run.
"""

import os

from hypothesis import settings

settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI"):
    settings.load_profile("ci")
