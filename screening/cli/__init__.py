"""The command line: one module per command; each is a thin layer over the Python API."""
