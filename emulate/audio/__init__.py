"""Stage 3: streaming file I/O: read -> process -> encode -> atomic write."""
