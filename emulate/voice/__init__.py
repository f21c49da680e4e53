"""Analysis of takes: the finders, band levels and ANSI S3.5 weighting, loudness, invented voices."""

__all__: list[str] = []  # the stage's modules are imported by name
