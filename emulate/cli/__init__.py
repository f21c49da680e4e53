"""The command line: a click group of verbs; each parses, delegates and prints.

The group and the shared options live in :mod:`emulate.cli.options`; each
module beside it holds the commands of one subject and registers them on import.
"""

from emulate.cli.options import main
from emulate.cli import build, circuit, sound, speaker  # noqa: F401  (registers the commands)

__all__ = ["main"]
