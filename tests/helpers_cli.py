"""What every command-line test checks of a user error."""

from __future__ import annotations


def assert_one_line_error(result, match: str):
    """A user error: non-zero exit, one line naming the problem, no traceback."""
    assert result.exit_code != 0
    assert result.exception is None or isinstance(result.exception, SystemExit)
    assert "Traceback" not in result.output
    lines = [line for line in result.output.splitlines() if line.strip()]
    assert len(lines) == 1 and match in lines[0], result.output
