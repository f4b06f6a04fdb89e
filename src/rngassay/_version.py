"""The version of rngassay (a leaf module: anything may import it)."""

__version__ = "0.1.0"
