"""emulate: hear a proposed analog twin-T notch filter before you build it."""

__version__ = "0.1.0"
