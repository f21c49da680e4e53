"""emulate: hear a proposed analog twin-T notch filter before you build it.

Importing the package is cheap and changes no environment variable; the command
line holds BLAS to one thread when it starts (:mod:`emulate.cli.options`).
"""

__version__ = "0.1.0"

__all__ = ["__version__"]
