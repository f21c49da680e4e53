"""Stage 1: parts, the nodal circuit engine, the twin-T family, response metrics, design, tolerance."""

__all__: list[str] = []  # the stage's modules are imported by name
