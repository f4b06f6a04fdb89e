"""Every check there is: imports each check module (which registers itself) and returns the registry.

Kept apart from :mod:`rngassay.checks.registry` so that the check modules, which import the registry to
register themselves, and the list of all of them do not import each other.
"""

from __future__ import annotations

from .registry import REGISTRY, CheckSpec

_ALL_LOADED = False


def load_all() -> dict[str, CheckSpec]:
    """Import every check module so that the registry is complete, and return it."""
    global _ALL_LOADED
    if _ALL_LOADED:  # the module scan costs ~0.7 ms, and call_check runs it for every check and segment
        return REGISTRY
    import importlib
    import pkgutil

    from . import bits, classic, transform

    for pkg in (classic, bits, transform):
        for mod in pkgutil.iter_modules(pkg.__path__):
            if not mod.name.startswith("_"):
                importlib.import_module(f"{pkg.__name__}.{mod.name}")
    _ALL_LOADED = True
    return REGISTRY
