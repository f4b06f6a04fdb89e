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

    def avalanche_bytes(self) -> int:
        """Bytes the avalanche reads: the first output bytes of every seed of its pairs (base and flipped)."""
        from .defaults import AVALANCHE_BYTES

        if self.edges is None:
            return 0
        a, b = self.edges[0], self.edges[1]
        return int(np.unique(np.concatenate([a, b])).size) * AVALANCHE_BYTES

    def total_bytes(self) -> int:
        """Everything the sweep reads from the seeded streams: every seed's stream, and the avalanche's."""
        return self.S * self.B + self.avalanche_bytes()

    def describe(self) -> str:
        """The sweep's plan as text (``rngassay seeds --plan-only``): the rows, their parameters, the total read."""
        from ..sizes import format_size

        rows = [f"per-seed {pc.id}  (on each of the {self.S} streams; second level across seeds)" for pc in self.per_seed]
        rows += [f"interleave k={k}  ({g} merged stream{'s' if g != 1 else ''} of {k * self.B} bytes, then the battery)"
                 for k, g in self.groups.items()]
        if self.xor_groups:
            rows.append(f"xor pairs  ({self.xor_groups} XOR-ed pair{'s' if self.xor_groups != 1 else ''}, "
                        f"{self.xor_groups * self.B} bytes, then the battery)")
        if self.run_x:
            rows.append(f"cross-correlation lags={self.o.lags}  (adjacent seeds' streams)")
        if self.run_ov:
            rows.append("duplicates and overlaps  (identical or shifted streams across seeds)")
        if self.edges is not None:
            rows.append(f"avalanche seed-bits={self.o.seed_bits}  ({len(self.edges[0])} flipped-seed pairs from "
                        f"{self.edges[4]} base seeds)")
        if self.run_early:
            rows.append(f"early bytes positions={self.P}")
        total, av = self.total_bytes(), self.avalanche_bytes()
        lines = [f"seed sweep plan: {len(rows)} checks on {self.S} seeds, {self.B} bytes of each seed's stream",
                 f"reads {total} bytes in all ({format_size(total)}): {self.S} x {self.B} bytes of the seeds' streams"
                 + (f" and {av} bytes for the avalanche" if av else "")
                 + "; merged streams are made from what was read", ""]
        lines += [f"  {r}" for r in rows]
        lines += [f"note: {n}" for n in self.notes]
        return "\n".join(lines)


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
