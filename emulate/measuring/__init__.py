"""Measuring the built box: stimulus (exponential sweep), analysis (deconvolution), diagnosis (part fit).

Named ``measuring`` rather than ``measure`` so that it never shadows the public
``emulate.measure`` (the notch metrics function of :mod:`emulate.analog.response`).
"""

__all__: list[str] = []
