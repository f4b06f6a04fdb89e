"""rngassay: assay streams of random numbers.

``rngassay.assay(source, budget=...)`` runs the battery and returns a report; see :mod:`rngassay.api`.
"""

from ._version import __version__

__all__ = ["assay", "fit", "sweep_seeds", "render_text", "__version__"]


def __getattr__(name):  # keep `import rngassay` light; load the API on first use
    if name in ("assay", "fit", "sweep_seeds", "render_text"):
        from . import api

        return getattr(api, name)
    raise AttributeError(name)
