"""The seed sweep's plan and task results as data (shared by the sweep and its rows)."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..battery.plan import PlannedCheck
from .defaults import DEFAULT_BLOCK, DEFAULT_BYTES_PER_SEED, DEFAULT_EARLY_BYTES, DEFAULT_LAGS, DEFAULT_MERGE_BUDGET


@dataclass
class SweepOptions:
    bytes_per_seed: int = DEFAULT_BYTES_PER_SEED
    per_seed_checks: list[str] | None = None  # battery selectors; None: DEFAULT_PER_SEED (first variants)
    lags: int = DEFAULT_LAGS
    interleave: tuple[int, ...] = (2, 4)
    merge_budget: int = DEFAULT_MERGE_BUDGET
    avalanche_seeds: int | None = None  # None: 128 (16 for --command)
    seed_bits: int = 64
    early_bytes: int = DEFAULT_EARLY_BYTES
    block: int = DEFAULT_BLOCK
    checks: list[str] | None = None  # rows to run (ROW_KEYS, ids); None: all
    skip: list[str] | None = None


@dataclass
class _Cfg:
    """What a block task needs (picklable)."""

    B: int
    per_seed: list[PlannedCheck]
    early: int
    lags: int  # -1: no cross-correlation
    spacing: int
    cap: int
    overlaps: bool
    groups: dict[int, int]  # interleave k -> number of groups merged
    xor_groups: int  # number of XOR pairs merged (0: none)


@dataclass
class _Block:
    start: int
    n: int
    digests: np.ndarray
    early: np.ndarray
    anchors: tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]
    per_seed: list[list[tuple[Any, str | None]]]  # [check][seed] -> (results or None, error)
    seconds: list[float]
    z: np.ndarray
    merged: dict[int, np.ndarray] = field(default_factory=dict)
    xor: np.ndarray | None = None


@dataclass
class SweepPlan:
    """What a sweep will run, decided before any stream is made (validated options, selected rows)."""

    seeds: np.ndarray
    o: SweepOptions
    S: int
    B: int
    P: int  # early-byte positions (0: the row is not run)
    ks: tuple[int, ...]
    per_seed: list[PlannedCheck]
    run_x: bool
    run_ov: bool
    run_early: bool
    groups: dict[int, int]
    xor_groups: int
    n_av: int
    edges: tuple | None  # (a, b, bit, dropped, number of base seeds) for the avalanche, or None
    spacing: int
    cfg: _Cfg
    notes: list[str]

    @property
    def nblocks(self) -> int:
        return -(-self.S // self.o.block)


@dataclass
class SweepTasks:
    """What the sweep's tasks returned: complete, or partial with what finished (never an exception)."""

    blocks: list[_Block | None]
    av_parts: list[tuple[int, np.ndarray]]  # (first edge index, distances)
    av_tasks: int
    lost: list[str]
    interrupted: bool
    sub_results: dict[str, Any]
    executor_name: str
    workers_used: int | None

    @property
    def finished(self) -> list[_Block]:
        return [bl for bl in self.blocks if bl is not None]

    @property
    def incomplete_reason(self) -> str | None:
        if self.interrupted:
            return "interrupted"
        return f"a worker was lost ({self.lost[0]})" if self.lost else None
