"""Stage 2: analog -> digital sections, numba kernels, the block processor, depth control."""
