"""Work over many takes: sweeps, batch plans and runners, presets per speaker."""

__all__: list[str] = []  # the stage's modules are imported by name
