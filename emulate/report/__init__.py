"""What a person reads: plots, schematic, netlist, build sheet, text/JSON summaries."""
