"""Stage 1: parts, the nodal circuit engine, the twin-T family, response metrics, design, tolerance."""
