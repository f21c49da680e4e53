"""Stage 2: analog -> digital sections, numba kernels, the block processor, depth control."""

__all__: list[str] = []  # the stage's modules are imported by name
