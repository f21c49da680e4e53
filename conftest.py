"""Settings for the whole tree (the tests' own live in tests/conftest.py).

The docstring examples under ``emulate/`` are tests too (``--doctest-modules``); this file is
read for them as for ``tests/``, whichever part of the tree a run collects.
"""

import pytest


# docstring examples that run a whole measurement, fit or picture (about 0.5-1.5 s of CPU each):
# with the slow checks, like the tests that check the same functions further by default
# (test_measure.py, test_sheet.py, test_plots.py)
SLOW_DOCTESTS = frozenset({
    "emulate.measuring.synthetic.synthetic_recording",
    "emulate.measuring.fit.diagnose",
    "emulate.report.sheet.write_sheet",
    "emulate.report.plots.plot_response",
})


@pytest.hookimpl(tryfirst=True)
def pytest_collection_modifyitems(config, items):
    """Mark the long docstring examples slow (before ``-m`` selects)."""
    for item in items:
        if item.name in SLOW_DOCTESTS and type(item).__name__ == "DoctestItem":
            item.add_marker(pytest.mark.slow)
