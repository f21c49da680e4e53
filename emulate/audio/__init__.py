"""Stage 3: streaming file I/O: read -> process -> encode -> atomic write."""

__all__: list[str] = []  # the stage's modules are imported by name
