"""The command line: a click group of verbs; each parses, delegates and prints.

The group and the shared options live in :mod:`emulate.cli.options`; each
module beside it holds the commands of one subject and registers them when the
group first asks for them (:data:`emulate.cli.options.COMMAND_MODULES`).
"""

from emulate.cli.options import main

__all__ = ["main"]
