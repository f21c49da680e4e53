"""Measure the built box: stimulus (exponential sweep), analysis (deconvolution), diagnosis (part fit)."""

__all__: list[str] = []
