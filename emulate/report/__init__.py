"""What a person reads: plots, schematic, netlist, build sheet, text/JSON summaries."""

__all__: list[str] = []  # the stage's modules are imported by name
