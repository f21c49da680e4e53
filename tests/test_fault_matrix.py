"""The fault matrix (tests/fault_matrix.py): every command against bad inputs, refusals and injected faults.

For every case: the expected exit status and message, one line for a failure, no traceback,
no file that existed before changed or gone (unless the case allows it, e.g. with --force),
and nothing new left behind (no partial file, no hidden temporary, no empty folder) unless
the command succeeded and the case allows it. Regression cases are named after the defect.
"""

from __future__ import annotations

import pytest

from fault_matrix import CASES, make_template, run_case, template_unchanged


@pytest.fixture(scope="module")
def template(tmp_path_factory):
    return make_template(tmp_path_factory.mktemp("template") / "w")


def test_the_matrix_is_large_enough():
    # the issue asks for at least 120 cases
    assert len(CASES) >= 120 and len({case.name for case in CASES}) == len(CASES)


class TestFaultMatrix:
    @pytest.mark.parametrize("case", [pytest.param(case, marks=pytest.mark.slow if case.slow else (), id=case.name)
                                      for case in CASES])
    def test_case(self, case, template, tmp_path):
        outcome = run_case(case, template, tmp_path / "w")
        assert not outcome.traceback, outcome.output
        assert outcome.exit_code == case.exit, outcome.output
        assert outcome.matches, (case.message, outcome.output)
        assert outcome.one_line, outcome.output
        assert outcome.lost == [], outcome.output
        assert outcome.stray == [], outcome.output


def test_no_case_changed_the_template(template):
    # runs after the matrix (file order): the workspaces' files are hard links to the template's
    assert template_unchanged(template)
