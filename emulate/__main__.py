"""Run the command-line tool as ``python -m emulate``."""

from emulate.cli import main

__all__: list[str] = []

main()
