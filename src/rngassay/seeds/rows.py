"""The seed sweep's rows: each check turns what the tasks returned into a graded-to-be report row.

Every function takes the sweep's plan (:class:`rngassay.seeds.sweep.SweepPlan`) and appends to ``rows`` (report
rows) and ``plan_rows`` (what was planned, for the report's plan table).
"""

from __future__ import annotations

import dataclasses
import math
from typing import Any

import numpy as np

from ..battery import grade as G
from ..battery.run import Outcome
from ..checks.catalog import load_all
from ..model import CheckReport
from . import measures as M
from .defaults import AVALANCHE_BYTES
from .plan import SweepPlan, SweepTasks, _Block

FAMILY = "seeds"


def per_seed_rows(sp: SweepPlan, finished: list[_Block], rows: list[CheckReport], plan_rows: list[dict]) -> None:
    """Per-seed checks: each seed's stream is one replicate; the battery's second level across seeds."""
    registry = load_all()
    for j, pc in enumerate(sp.per_seed):
        outcome = Outcome(pc, [], [], 0, 0.0)
        for bl in finished:
            for s_i, (res, err) in enumerate(bl.per_seed[j]):
                outcome.results.append(res)
                if err:
                    outcome.errors.append(f"seed {int(sp.seeds[bl.start + s_i])}: {err}")
            outcome.seconds += bl.seconds[j]
        outcome.bytes = pc.bytes * len(outcome.results)
        rid = f"per-seed {pc.id}"
        spec = registry[pc.key]
        plan_rows.append(_plan_row(rid, "per-seed", pc.params, pc.view, pc.bytes * sp.S, sp.S))
        if not outcome.results:
            continue
        rr = G.second_level(outcome)
        coarse = _coarse(rr.replicate_p) if rr is not None else None
        if coarse is not None:
            # p-values on a coarse lattice: no uniformity test (it would flag the lattice, not the streams)
            outcome.results = [None if rs is None else [dataclasses.replace(r, kind="discrete") for r in rs]
                               for rs in outcome.results]
            rr = G.second_level(outcome)
        if rr is None:
            if outcome.errors:
                rows.append(_row(rid, "per-seed", pc.params, pc.view, spec.kind, None, 1.0, outcome.bytes, 0, {},
                                 "", spec.title, error=outcome.errors[0]))
            continue
        sl = dict(rr.second_level)
        sl["across"] = f"{rr.replicates} seeds (each seed's stream is one replicate)"
        if coarse is not None:
            sl["uniformity_left_out"] = coarse
        if outcome.errors:
            sl["errors"] = outcome.errors[:5]
        rows.append(_row(rid, "per-seed", pc.params, pc.view, spec.kind, rr.statistic, rr.p_value, outcome.bytes,
                         rr.replicates, sl, rr.null, f"{spec.title}, per seed; second level across seeds",
                         replicate_p=rr.replicate_p, seconds=outcome.seconds))


def merged_rows(sp: SweepPlan, tasks: SweepTasks, rows: list[CheckReport], plan_rows: list[dict]) -> None:
    for rid, res in tasks.sub_results.items():
        key = "xor-pairs" if rid.startswith("xor") else "interleave"
        params = {"k": int(rid.split("=")[1])} if key == "interleave" else {"pairs": sp.xor_groups}
        if key == "interleave":
            params["groups"] = sp.groups[params["k"]]
        plan_rows.append(_plan_row(rid, key, params, "bytes", res["bytes"] if res else 0, 1))
        if res is None:
            continue
        title = ("streams of adjacent seeds merged word by word (8-byte words), then the battery"
                 if key == "interleave" else "XOR of the streams of seed pairs, then the battery")
        rows.append(_row(rid, key, params, "bytes", "continuous", None, res["p_value"], res["bytes"],
                         res["segments"], res["details"], "the battery's checks (Bonferroni minimum)", title))


def cross_rows(sp: SweepPlan, finished: list[_Block], rows: list[CheckReport], plan_rows: list[dict]) -> None:
    o, seeds = sp.o, sp.seeds
    rid = f"cross-correlation lags={o.lags}"
    zs, pairs = [], []
    for bl in finished:
        zs.append(bl.z)
        npairs = bl.z.shape[0]
        pairs.append(np.stack([seeds[bl.start : bl.start + npairs], seeds[bl.start + 1 : bl.start + 1 + npairs]],
                              axis=1))
    z = np.concatenate(zs) if zs else np.empty((0, 2 * o.lags + 1))
    pr = np.concatenate(pairs) if pairs else np.empty((0, 2), np.uint64)
    m = M.cross_correlation(z, o.lags, pr)
    plan_rows.append(_plan_row(rid, "cross-correlation", {"lags": o.lags, "pairs": "adjacent"}, "uniforms",
                               sp.S * sp.B, max(sp.S - 1, 0)))
    if m is not None:
        rows.append(_row(rid, "cross-correlation", {"lags": o.lags, "pairs": "adjacent"}, "uniforms", m.kind,
                         m.statistic, m.p_value, 2 * sp.B * z.shape[0], z.shape[0], m.details, m.null,
                         "lagged correlation between the uniforms of adjacent seeds' streams"))


def avalanche_rows(sp: SweepPlan, tasks: SweepTasks, rows: list[CheckReport], plan_rows: list[dict]) -> int:
    """The avalanche row; returns the bytes its streams read."""
    a, b, bit, dropped, nbases = sp.edges
    o = sp.o
    av_bytes = 0
    rid = f"avalanche seed-bits={o.seed_bits} output-bits={8 * AVALANCHE_BYTES}"
    params = {"seeds": nbases, "seed_bits": o.seed_bits, "output_bits": 8 * AVALANCHE_BYTES}
    if tasks.av_parts:
        d = np.concatenate([p for _, p in tasks.av_parts])
        take = np.concatenate([np.arange(j, j + p.size) for j, p in tasks.av_parts])
        m = M.avalanche(d, bit[take], 8 * AVALANCHE_BYTES, o.seed_bits)
        if m is not None:
            av_bytes = int(np.unique(np.concatenate([a[take], b[take]])).size) * AVALANCHE_BYTES
            m.details["pairs_dropped"] = int(dropped)
            m.details["pairs_dropped_why"] = "repeated pairs and pairs closing a cycle (kept pairs form a forest)"
            rows.append(_row(rid, "avalanche", params, "bits", m.kind, m.statistic, m.p_value, av_bytes,
                             int(d.size), m.details, m.null,
                             "seed avalanche: output bits changed by flipping one seed bit"))
    plan_rows.append(_plan_row(rid, "avalanche", params, "bits", int(a.size) * 2 * AVALANCHE_BYTES, int(a.size)))
    return av_bytes


def overlap_rows(sp: SweepPlan, finished: list[_Block], idx_seeds: np.ndarray, rows: list[CheckReport],
                  plan_rows: list[dict]) -> None:
    rid = "duplicates and overlaps"
    S, B, Sd = sp.S, sp.B, int(idx_seeds.size)
    params = {"window_bytes": 16, "window_spacing": sp.spacing}
    plan_rows.append(_plan_row(rid, "overlaps", params, "bytes", S * B, S))
    if not finished:
        return
    dig = np.concatenate([bl.digests for bl in finished])
    an = [np.concatenate([bl.anchors[i] for bl in finished]) for i in range(4)]
    # anchors carry global seed indices; map them to positions among the finished seeds
    pos_of = np.full(S, -1, dtype=np.int64)
    pos_of[idx_seeds] = np.arange(Sd)
    m = M.overlaps(sp.seeds[idx_seeds], dig, pos_of[an[0]], an[1], an[2], an[3], sp.spacing, B)
    m.details["found_with_probability_0.999"] = (
        f"overlaps of at least {M.overlap_detection_length(sp.spacing)} bytes (about)")
    rows.append(_row(rid, "overlaps", params, "bytes", m.kind, m.statistic, m.p_value, Sd * B, Sd,
                     m.details, m.null, "identical streams and streams that are shifted copies"))


def early_rows(sp: SweepPlan, finished: list[_Block], Sd: int, rows: list[CheckReport], plan_rows: list[dict]) -> None:
    P = sp.P
    rid = f"early bytes positions={P}"
    params = {"positions": P}
    plan_rows.append(_plan_row(rid, "early-bytes", params, "bytes", sp.S * P, sp.S))
    if not finished:
        return
    m = M.early_bytes(np.concatenate([bl.early for bl in finished]))
    if m is None:
        sp.notes.append("early bytes: needs at least 10 seeds")
        return
    params = {"positions": P, "cells": m.details["cells"]}
    rows.append(_row(rid, "early-bytes", params, "bytes", m.kind, m.statistic, m.p_value, Sd * P,
                     Sd, m.details, m.null, "distribution of each early output byte across seeds"))


def _coarse(ps: list[float]) -> str | None:
    """Why a uniformity test across seeds would be unsound here (p-values on a coarse lattice), or None.

    Continuous p-values of S seeds leave gaps of about ln(S)/S (the largest exceeds 3 ln(S)/S with
    probability about 1/S^2); a discrete statistic leaves gaps of its lattice. When the largest gap between
    distinct p-values (0 and 1 included) exceeds max(0.25/sqrt(S), 3 ln(S)/S), the lattice alone could
    move a uniformity statistic over S seeds, so the second level keeps only the tests valid for discrete
    p-values (smallest p-value, Sidak; pooled counts where the check has them).
    """
    S = len(ps)
    if S < 20:
        return None
    u = np.unique(np.asarray(ps, dtype=float))
    gap = float(np.diff(np.concatenate([[0.0], u, [1.0]])).max())
    limit = max(0.25 / math.sqrt(S), 3.0 * math.log(S) / S)
    if gap > limit:
        return (f"p-values take {u.size} distinct values (largest gap {gap:.3g} > {limit:.3g}): "
                "uniformity and proportion tests left out")
    return None


def _plan_row(rid: str, key: str, params: dict, view: str, nbytes: int, reps: int) -> dict[str, Any]:
    return {"id": rid, "key": key, "family": FAMILY, "view": view, "params": dict(params), "bytes": int(nbytes),
            "replicates": int(reps)}


def _row(rid: str, key: str, params: dict, view: str, kind: str, statistic: float | None, p: float, nbytes: int,
         reps: int, second_level: dict, null: str, title: str, error: str | None = None,
         replicate_p: list[float] | None = None, seconds: float = 0.0) -> CheckReport:
    return CheckReport.row(rid, key, FAMILY, params, view, kind, statistic=statistic, p_value=p, nbytes=nbytes,
                           replicates=reps, second_level=second_level, replicate_p=replicate_p, null=null, title=title,
                           error=error, seconds=seconds)
