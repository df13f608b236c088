"""suitmap: where an insect completes its life cycle, now and in scenario climates."""

__version__ = "0.1.0"
