"""rngassay: assay streams of random numbers.

``rngassay.assay(source, budget=...)`` runs the battery and returns a report; see :mod:`rngassay.api`.
"""

__version__ = "0.1.0"

__all__ = ["assay", "__version__"]


def __getattr__(name):  # keep `import rngassay` light; load the API on first use
    if name == "assay":
        from .api import assay

        return assay
    raise AttributeError(name)
