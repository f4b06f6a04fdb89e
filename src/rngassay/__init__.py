"""rngassay: assay streams of random numbers."""

__version__ = "0.1.0"
