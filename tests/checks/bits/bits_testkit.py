"""Helpers for the bit-level check tests (a plain module with a unique name, imported by the tests)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

REFERENCE_DIR = Path(__file__).resolve().parents[3] / "reference_streams"
CONSTANTS = ("e", "pi", "sqrt2", "sqrt3")


def load_reference(name: str) -> np.ndarray:
    """First 10^6 bits of a constant, packed MSB first (see reference_streams/README.md)."""
    return np.fromfile(REFERENCE_DIR / f"{name}.bin", dtype=np.uint8)


