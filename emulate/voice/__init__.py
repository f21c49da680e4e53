"""Analysis of takes: the finders, band levels and ANSI S3.5 weighting, loudness, invented voices."""
