"""suitmap's version, in one place that imports nothing (modules read it from here)."""

__version__ = "0.1.0"
