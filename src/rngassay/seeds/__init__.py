"""Seed sweeps: many seeds of one generator, and checks of how their streams relate.

``sweep_seeds(seeds="0..999", python="gen.py:make")`` returns a :class:`~rngassay.model.Report`
(command ``seeds``); ``rngassay seeds`` is the command line over it. See :mod:`rngassay.seeds.sweep`.
Names are imported on first use, so that ``rngassay --help`` stays quick.
"""

from __future__ import annotations

import importlib
from typing import Any

_WHERE = {
    "SeedFactory": "factory", "SEED_SETS": "defaults", "ROW_KEYS": "defaults", "named_seed_set": "seedsets",
    "parse_seeds": "seedsets", "resolve_seeds": "seedsets", "SweepOptions": "sweep", "run_sweep": "sweep",
    "sweep_seeds": "sweep",
}
__all__ = sorted(_WHERE)


def __getattr__(name: str) -> Any:
    if name in _WHERE:
        return getattr(importlib.import_module(f"{__name__}.{_WHERE[name]}"), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
