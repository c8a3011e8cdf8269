"""The version of pumpscreen, written into every report's run record and dataset manifest."""

__version__ = "0.1.0"
