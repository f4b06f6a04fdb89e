"""The seed sweep: many seeds, one stream each, checks of how the streams relate.

How the work is split
---------------------
The seeds (in the order given) are cut into blocks of ``block`` seeds (default 32, a multiple of 4).
One task per block makes the block's streams (``bytes_per_seed`` bytes each) and returns, per seed,
the results of the per-seed checks, the first ``early_bytes`` bytes, the SHA-256 of the stream and its
content-selected 16-byte windows; per adjacent pair (the block's last seed is paired with the next
block's first, whose stream the task makes too) the lagged cross-correlation z-scores; and, for the
first groups only (up to ``merge_budget`` bytes per merged stream), the interleaved and XOR-ed streams.
Avalanche tasks take the first 16 bytes of the streams of seeds whose bits were flipped. Every task
is a pure function of (factory, seeds, settings) and the results are combined in seed order, so the
report is the same (timings aside) for any block size, any number of workers and any executor.

The checks (family ``seeds``; every row has its own p-value and grade, Holm across the rows)
--------------------------------------------------------------------------------------------
- ``per-seed CHECK``: a lean subset of the battery on every seed's stream (:data:`DEFAULT_PER_SEED`,
  from 4 KiB per seed), then the battery's second level (:func:`rngassay.battery.grade.second_level`)
  over the seeds' p-values, one row per check; when the p-values sit on a coarse lattice the uniformity
  and proportion tests are left out (see :func:`_coarse`).
- ``interleave k=K``: the streams of K adjacent seeds merged 8-byte word by word (groups of K seeds
  in order), concatenated over the first groups up to ``merge_budget`` bytes; then the battery.
- ``xor pairs``: the XOR of the streams of seed pairs (1st ^ 2nd, 3rd ^ 4th, ...) concatenated up to
  ``merge_budget``; then the battery. A merged stream's p-value is the Bonferroni minimum over the
  battery's checks (the smallest Holm-adjusted p-value within it); a merged stream shorter than the
  battery's minimum (64 KiB) is left out with a note.
- ``cross-correlation lags=L``: :func:`rngassay.seeds.measures.cross_correlation` on adjacent pairs.
- ``avalanche``: :func:`rngassay.seeds.measures.avalanche` on the first ``avalanche_seeds`` seeds, each
  with every one of its ``seed_bits`` low bits flipped in turn.
- ``duplicates and overlaps``: :func:`rngassay.seeds.measures.overlaps`.
- ``early bytes``: :func:`rngassay.seeds.measures.early_bytes` on bytes 0..P-1 of every stream.
"""

from __future__ import annotations

import concurrent.futures as cf
import dataclasses
import hashlib
import math
import time
from typing import Any, Callable

import numpy as np

from ..battery import grade as G
from ..battery.plan import PlannedCheck, make_plan
from ..battery.run import ViewCache, call_check, run_plan
from ..checks.catalog import load_all
from ..checks.registry import selected
from ..errors import InputError, check_alpha
from ..intake.formats import parse_format
from ..intake.memory import BytesSource
from ..intake.stream import Stream
from ..model import CheckReport, Report
from ..signals import armed, defer_signals, received_signal, signals_deferred
from ..sizes import format_size
from . import kernels as K
from . import measures as M
from . import rows as R
from .defaults import (
    AVALANCHE_BYTES,
    DEFAULT_AVALANCHE_SEEDS,
    DEFAULT_AVALANCHE_SEEDS_COMMAND,
    DEFAULT_BYTES_PER_SEED,
    DEFAULT_EARLY_BYTES,
    DEFAULT_LAGS,
    DEFAULT_MERGE_BUDGET,
    MIN_PER_SEED_BYTES,
    ROW_KEYS,
)
from .factory import SeedFactory
from .plan import SweepOptions, SweepPlan, SweepTasks, _Block, _Cfg
from .runner import SweepRunner, TaskFailure

FAMILY = "seeds"
#: The lean per-seed subset: cheap checks of different kinds (bits, bytes, uniforms, spacings); for each
#: key the first parameter set the registry proposes for the stream length.
DEFAULT_PER_SEED = (
    "monobit frequency", "runs of bits", "cumulative sums", "longest run of ones", "byte frequency",
    "serial correlation", "gap", "serial overlapping", "birthday spacings",
)
_U1 = parse_format("u1")


# ------------------------------------------------------------------------------------------------ tasks


def _block_task(factory: SeedFactory, seeds: np.ndarray, start: int, halo: int | None, cfg: _Cfg) -> _Block:
    B = cfg.B
    mat = factory.streams(seeds, B)
    n = len(seeds)
    per: list[list[tuple[Any, str | None]]] = [[] for _ in cfg.per_seed]
    secs = [0.0] * len(cfg.per_seed)
    if cfg.per_seed:
        registry = load_all()  # once per task: the lookup is not free
        specs = [registry[pc.key] for pc in cfg.per_seed]
        for i in range(n):  # one battery call per seed
            cache = ViewCache(mat[i], _U1)
            for j, (pc, spec) in enumerate(zip(cfg.per_seed, specs)):
                t = time.perf_counter()
                try:
                    res = call_check(pc, cache, spec)
                    per[j].append(([dataclasses.replace(r, details={}) for r in res], None))  # what grading needs
                except Exception as e:  # one broken check must not take the others down
                    per[j].append((None, f"{type(e).__name__}: {e}"))
                secs[j] += time.perf_counter() - t
    dig = K.digests(mat)
    if cfg.overlaps:
        rows, pos, hi, lo = K.anchors(mat, cfg.spacing, cfg.cap)
        anchors = ((rows + start).astype(np.int32), pos, hi, lo)
    else:
        e = np.empty(0, np.int32)
        anchors = (e, e.copy(), np.empty(0, np.uint64), np.empty(0, np.uint64))
    z = np.empty((0, 2 * max(cfg.lags, 0) + 1))
    if cfg.lags >= 0:
        both = mat if halo is None else np.vstack([mat, factory.stream(halo, B)[None, :]])
        z = K.cross_z(both, cfg.lags)
    merged: dict[int, np.ndarray] = {}
    for k, ngroups in cfg.groups.items():  # groups of k seeds never straddle blocks (block % 4 == 0)
        g0 = -(-start // k)
        g1 = min(ngroups, (start + n) // k)
        if g1 > g0:
            parts = [K.interleave(mat[g * k - start : g * k - start + k]) for g in range(g0, g1)]
            merged[k] = np.concatenate(parts)
    xor = None
    g0, g1 = -(-start // 2), min(cfg.xor_groups, (start + n) // 2)
    if g1 > g0:
        a = mat[2 * g0 - start : 2 * g1 - start : 2]
        b = mat[2 * g0 - start + 1 : 2 * g1 - start : 2]
        xor = np.bitwise_xor(a, b).reshape(-1)
    early = mat[:, : cfg.early].copy()
    return _Block(start, n, dig, early, anchors, per, secs, z, merged, xor)


def _avalanche_task(factory: SeedFactory, a: np.ndarray, b: np.ndarray, nbytes: int) -> np.ndarray:
    verts = np.unique(np.concatenate([a, b]))
    first = factory.streams(verts, nbytes)
    ia = np.searchsorted(verts, a)
    ib = np.searchsorted(verts, b)
    return K.hamming(first[ia], first[ib])


# ------------------------------------------------------------------------------------------- the sweep


def _row_selected(key: str, rid: str, checks: list[str] | None, skip: list[str] | None) -> bool:
    return selected(key, FAMILY, rid, checks, skip)


def _spacing(B: int) -> int:
    s = 1 << max(0, int(math.floor(math.log2(max(B // 64, 1)))))
    return int(min(1024, max(16, s)))


def per_seed_plan(B: int, selectors: list[str] | None) -> tuple[list[PlannedCheck], list[str]]:
    """The per-seed checks for streams of ``B`` bytes: (checks, notes on what was left out).

    The parameters follow the registry exactly as the battery's plan does for one segment of ``B`` bytes
    (``default_params(n)`` for the ``n`` view values ``B`` bytes hold; ``values_needed`` of them read),
    without the battery's 64 KiB minimum: across many seeds, short streams still say something -- down to
    :data:`MIN_PER_SEED_BYTES` for the default subset, below which its p-values become too coarse.
    With the default subset only the first parameter set of each check is kept.
    """
    from ..battery.plan import _matches, plan_params
    from ..intake import views

    notes: list[str] = []
    default = selectors is None
    if default and B < MIN_PER_SEED_BYTES:
        return [], [f"per-seed checks left out: streams of {B} bytes are shorter than {MIN_PER_SEED_BYTES} "
                    "(their p-values would be too coarse across many seeds); --per-seed-checks forces them"]
    sel = list(DEFAULT_PER_SEED) if default else list(selectors or [])
    registry = load_all()
    avail = set(views.available_views(_U1))
    out: list[PlannedCheck] = []
    matched = False
    for key, spec in sorted(registry.items(), key=lambda kv: (kv[1].family, kv[0])):
        if spec.view not in avail or spec.family == "categorical":
            continue
        per_value = views.input_bytes_per_value(_U1, spec.view)
        n_avail = int(B / per_value)
        if spec.view == "integers":
            n_avail = int(n_avail * 0.99)  # rejection sampling may drop a few words (as the battery's plan)
        if _matches(spec, key, sel):
            matched = True
        try:
            param_sets = spec.default_params(n_avail) if n_avail > 0 else []
        except Exception as e:  # a parameter rule must never take the sweep down
            notes.append(f"per-seed {key}: parameter rule failed ({type(e).__name__}: {e})")
            continue
        too_big: list[str] = []
        planned = plan_params(key, spec, _U1, param_sets, n_avail, per_value, 1, windows=False, checks=sel, skip=None,
                              skipped=too_big, first_only=default)
        matched = matched or bool(planned) or bool(too_big)
        out += planned
        kept = len(planned)
        if not kept and key in sel:
            notes.append(f"per-seed {key}: needs more than {B} bytes per seed")
    if not out and not default:
        what = "no check matches" if not matched else "none can run on streams this short"
        raise InputError(f"--per-seed-checks {','.join(sel)}: {what}", "",
                         "give a larger --bytes-per-seed or other checks (see `rngassay catalog`)")
    order = {k: i for i, k in enumerate(DEFAULT_PER_SEED)}
    out.sort(key=lambda pc: order.get(pc.key, len(order)))
    return out, notes


def _validate(seeds: np.ndarray, o: SweepOptions, alpha: float) -> None:
    check_alpha(alpha)
    if seeds.size == 0:
        raise InputError("empty seed set", "--seeds", "give at least one seed, e.g. --seeds 0..999")
    B = int(o.bytes_per_seed)
    if B < 64 or B % 8:
        raise InputError(f"--bytes-per-seed must be a multiple of 8 and at least 64, got {B}", "",
                         "e.g. 64KiB")
    if not 1 <= o.seed_bits <= 64:
        raise InputError(f"--seed-bits must be between 1 and 64, got {o.seed_bits}", "--seed-bits", "e.g. 64")
    if o.seed_bits < 64 and int(seeds.max()) >> o.seed_bits:
        bad = int(seeds[np.flatnonzero(seeds >> np.uint64(o.seed_bits))[0]])
        raise InputError(f"seed {bad} does not fit in {o.seed_bits} bits", "--seeds",
                         f"give seeds below 2**{o.seed_bits} or a larger --seed-bits")
    if o.lags < 0 or o.early_bytes < 0 or o.merge_budget <= 0:
        raise InputError("--lags and --early-bytes must be >= 0 and --merge-budget positive", "", "")
    if o.block < 4 or o.block % 4:
        raise InputError(f"block size must be a positive multiple of 4, got {o.block}", "", "e.g. 32")
    if any(int(k) < 2 or 4 % int(k) for k in o.interleave):
        raise InputError(f"interleave widths must be 2 or 4, got {sorted(set(o.interleave))}", "--interleave",
                         "e.g. 2,4")


def plan_sweep(seeds: np.ndarray, factory: SeedFactory, o: SweepOptions, alpha: float) -> SweepPlan:
    """Validate the options and decide the rows (the per-seed part reuses the battery's plan rules)."""
    seeds = np.asarray(seeds, dtype=np.uint64).ravel()
    _validate(seeds, o, alpha)
    S, B = int(seeds.size), int(o.bytes_per_seed)
    P = min(o.early_bytes, B)
    ks = tuple(sorted(set(int(k) for k in o.interleave)))
    sel = lambda key, rid: _row_selected(key, rid, o.checks, o.skip)  # noqa: E731
    notes: list[str] = []

    per_seed, more = per_seed_plan(B, o.per_seed_checks)
    per_seed = [pc for pc in per_seed if sel("per-seed", f"per-seed {pc.id}")]
    notes += more
    run_x = sel("cross-correlation", f"cross-correlation lags={o.lags}") and S >= 2
    run_ov = sel("overlaps", "duplicates and overlaps")
    run_early = sel("early-bytes", f"early bytes positions={P}") and P > 0
    groups = {k: min(S // k, max(1, o.merge_budget // (k * B))) for k in ks if sel("interleave", f"interleave k={k}")}
    for k in [k for k, g in groups.items() if g == 0]:
        notes.append(f"interleave k={k}: needs at least {k} seeds")
        del groups[k]
    xor_groups = min(S // 2, max(1, o.merge_budget // B)) if sel("xor-pairs", "xor pairs") else 0
    n_av = o.avalanche_seeds
    if n_av is None:
        n_av = DEFAULT_AVALANCHE_SEEDS_COMMAND if factory.kind == "command" else DEFAULT_AVALANCHE_SEEDS
    run_av = sel("avalanche", f"avalanche seed-bits={o.seed_bits} output-bits={8 * AVALANCHE_BYTES}") and n_av > 0
    if S < 2:
        notes.append("cross-correlation, interleave and xor pairs need at least 2 seeds")
    spacing = _spacing(B)
    cfg = _Cfg(B, per_seed, P if run_early else 0, o.lags if run_x else -1, spacing, 4 * (B // spacing) + 16,
               run_ov, groups, xor_groups)
    if not (per_seed or run_x or run_ov or run_early or groups or xor_groups or run_av):
        raise InputError("no seed check selected", "--checks/--skip",
                         f"choose among {', '.join(ROW_KEYS)} (or full identifiers)")
    edges = None
    if run_av:
        bases = seeds[: min(n_av, S)]
        a, b, bit, dropped = M.avalanche_edges(bases, o.seed_bits)
        edges = (a, b, bit, dropped, len(bases))
    return SweepPlan(seeds, o, S, B, P, ks, per_seed, run_x, run_ov, run_early, groups, xor_groups, int(n_av), edges,
                     spacing, cfg, notes)


def run_sweep(
    seeds: np.ndarray,
    factory: SeedFactory,
    *,
    options: SweepOptions | None = None,
    alpha: float = G.DEFAULT_ALPHA,
    workers: int | None = 1,
    cluster: str | None = None,
    client: Any = None,
    progress: Callable[[str], None] | None = None,
    seed_spec: str = "",
) -> Report:
    """Run the seed sweep and return its :class:`~rngassay.model.Report` (command ``seeds``).

    ``seeds``: integers (order kept, no repeats); ``factory``: a :class:`SeedFactory`. ``workers`` local
    processes, or a Dask cluster by ``cluster`` address or an existing ``client``; the report is the
    same either way. A task lost for good (a dead worker after Dask's retries, a broken local pool) or
    a stop signal ends the run early: the report covers what finished and is marked incomplete.
    """
    t0 = time.perf_counter()
    sp = plan_sweep(seeds, factory, options or SweepOptions(), alpha)
    # the factory must work before any pool starts: one clear error line otherwise
    factory.stream(int(sp.seeds[0]), min(sp.B, 64))
    tasks = run_tasks(sp, factory, workers, cluster, client, progress)
    return sweep_report(sp, tasks, factory, alpha, seed_spec, time.perf_counter() - t0)


def run_tasks(sp: SweepPlan, factory: SeedFactory, workers: int | None, cluster: str | None, client: Any,
              progress: Callable[[str], None] | None) -> SweepTasks:
    """Run the block and avalanche tasks, then the batteries on merged streams; keep what finished.

    Starting the pool and handing it the tasks is not interruptible (a signal inside a fork or a submit
    can leave a half-started pool that hangs the exit): a stop signal there is only recorded, and the
    run stops when it starts waiting for results (:func:`armed`); what finished is kept.
    """
    prev_deferred = signals_deferred()
    defer_signals(True)
    try:
        return _run_tasks(sp, factory, workers, cluster, client, progress)
    finally:
        defer_signals(prev_deferred)


def _run_tasks(sp: SweepPlan, factory: SeedFactory, workers: int | None, cluster: str | None, client: Any,
               progress: Callable[[str], None] | None) -> SweepTasks:
    o, S, seeds = sp.o, sp.S, sp.seeds
    nblocks = sp.nblocks
    out = SweepTasks([None] * nblocks, [], 0, [], False, {}, "", None)
    failure: TaskFailure | None = None

    def collect(f: Any) -> Any:
        try:
            return f.result()
        except cf.process.BrokenProcessPool as e:  # a lost worker: the task's seeds are missing
            out.lost.append(str(e))
            return None

    with SweepRunner(factory, workers, cluster, client) as runner:
        futs, av_futs = [], []
        if received_signal() is None:  # stopped while starting up: no task is started
            for i in range(nblocks):
                lo, hi = i * o.block, min(S, (i + 1) * o.block)
                halo = int(seeds[hi]) if (sp.run_x and hi < S) else None
                futs.append(runner.submit(_block_task, seeds[lo:hi], lo, halo, sp.cfg))
            if sp.edges is not None:
                a, b = sp.edges[0], sp.edges[1]
                step = 16 * o.seed_bits  # about 16 base seeds per task
                for j in range(0, a.size, step):
                    av_futs.append((j, runner.submit(_avalanche_task, a[j : j + step], b[j : j + step],
                                                     AVALANCHE_BYTES)))
        out.av_tasks = len(av_futs)
        try:
            with armed():
                done_seeds = 0
                for i, f in enumerate(futs):
                    r = collect(f)
                    if isinstance(r, TaskFailure):
                        failure = r
                        break
                    if r is not None:
                        out.blocks[i] = r
                        done_seeds += r.n
                    if progress:
                        progress(f"seeds {done_seeds}/{S} (block {i + 1}/{nblocks})")
                if failure is None:
                    for j, f in av_futs:
                        r = collect(f)
                        if isinstance(r, TaskFailure):
                            failure = r
                            break
                        if r is not None:
                            out.av_parts.append((j, r))
                    if progress and av_futs:
                        progress("avalanche done")
        except KeyboardInterrupt:
            out.interrupted = True
        if failure is not None:
            for f in futs + [f for _, f in av_futs]:
                f.cancel()
            raise failure.error()
        if out.lost and runner.mode == "local":
            sp.notes.append("batteries on merged streams not run: the local worker pool broke")
        elif not out.interrupted:
            _merged_batteries(sp, out, runner.battery_executor, progress)
        out.executor_name = runner.describe()
        out.workers_used = runner.workers_used
    return out


def _merged_batteries(sp: SweepPlan, out: SweepTasks, executor: Any, progress: Callable[[str], None] | None) -> None:
    """The battery on each merged stream (from the groups that finished)."""
    merged_inputs: list[tuple[str, np.ndarray]] = []
    for k in sp.groups:
        parts = [bl.merged[k] for bl in out.finished if k in bl.merged]
        if parts:
            merged_inputs.append((f"interleave k={k}", np.concatenate(parts)))
    if sp.xor_groups:
        parts = [bl.xor for bl in out.finished if bl.xor is not None]
        if parts:
            merged_inputs.append(("xor pairs", np.concatenate(parts)))
    try:
        for rid, arr in merged_inputs:
            if progress:
                progress(f"battery on {rid} ({format_size(arr.size)})")
            res = _sub_battery(arr, rid, executor, sp.notes)
            out.sub_results[rid] = res
            if res is not None and res.get("incomplete"):
                out.lost.append(res["incomplete"])
    except KeyboardInterrupt:
        out.interrupted = True


def sweep_report(sp: SweepPlan, tasks: SweepTasks, factory: SeedFactory, alpha: float, seed_spec: str,
                 elapsed: float) -> Report:
    """The rows from what the tasks returned, graded together (Holm over every row, as for `test`)."""
    o, S, B, seeds = sp.o, sp.S, sp.B, sp.seeds
    notes = sp.notes
    finished = tasks.finished
    reason = tasks.incomplete_reason
    if reason is not None:
        missing = S - sum(bl.n for bl in finished)
        what = f"{missing} of {S} seeds did not finish" if missing else "some tasks did not finish"
        if sp.edges is not None and len(tasks.av_parts) < tasks.av_tasks:
            what += f"; {tasks.av_tasks - len(tasks.av_parts)} of {tasks.av_tasks} avalanche tasks did not finish"
        notes.append(f"incomplete run: {reason}; {what}; the verdict covers only what finished")
    rows: list[CheckReport] = []
    plan_rows: list[dict[str, Any]] = []
    idx_seeds = np.concatenate([np.arange(bl.start, bl.start + bl.n) for bl in finished]) if finished else np.empty(0, int)
    Sd = int(idx_seeds.size)
    R.per_seed_rows(sp, finished, rows, plan_rows)
    R.merged_rows(sp, tasks, rows, plan_rows)
    if sp.run_x:
        R.cross_rows(sp, finished, rows, plan_rows)
    av_bytes = R.avalanche_rows(sp, tasks, rows, plan_rows) if sp.edges is not None else 0
    if sp.run_ov:
        R.overlap_rows(sp, finished, idx_seeds, rows, plan_rows)
    if sp.run_early:
        R.early_rows(sp, finished, Sd, rows, plan_rows)

    order = {p["id"]: i for i, p in enumerate(plan_rows)}
    rows.sort(key=lambda c: order.get(c.id, 10**9))
    # the evidence: SHA-256 over the per-seed SHA-256 digests, in seed order
    all_dig = np.concatenate([bl.digests for bl in finished]) if finished else np.empty((0, 32), np.uint8)
    sha = hashlib.sha256(all_dig.tobytes()).hexdigest()
    source = {
        "kind": "seeds", "name": factory.describe(), "format": "u1", "bytes_read": Sd * B + av_bytes,
        "sha256": sha,
        "sha256_of": "the SHA-256 digests of every seed's stream, concatenated in seed order",
        "seeds": S, "seed_spec": seed_spec or f"{S} seeds", "first_seed": int(seeds[0]), "last_seed": int(seeds[-1]),
        "bytes_per_seed": B,
    }
    settings = {
        "executor": tasks.executor_name, "workers_used": tasks.workers_used, "block_seeds": o.block, "lags": o.lags,
        "interleave": list(sp.ks), "merge_budget": o.merge_budget, "avalanche_seeds": int(sp.n_av),
        "seed_bits": o.seed_bits, "avalanche_output_bits": 8 * AVALANCHE_BYTES, "early_bytes": sp.P,
        "window_spacing": sp.spacing, "per_seed_checks": [pc.id for pc in sp.per_seed],
        "notable_factor": G.NOTABLE_FACTOR,
    }
    completed = [{"what": "seeds", "done": Sd, "planned": S}]
    if sp.edges is not None:
        completed.append({"what": "avalanche tasks", "done": len(tasks.av_parts), "planned": tasks.av_tasks})
    return G.graded_report("seeds", rows, alpha=alpha, source=source, budget_bytes=S * B, incomplete=reason is not None,
                           elapsed_s=elapsed, plan=plan_rows, settings=settings, notes=notes,
                           audit={"completed": completed})


def _sub_battery(arr: np.ndarray, rid: str, executor: Any, notes: list[str]) -> dict[str, Any] | None:
    """The battery on a merged stream: one p-value (Bonferroni minimum over its checks) and the worst checks."""
    try:
        plan = make_plan(_U1, int(arr.size))
    except InputError:
        notes.append(f"{rid}: {arr.size} bytes are too few for the battery")
        return None
    stream = Stream(BytesSource(rid, arr), _U1)
    outcomes, complete, reason, _error = run_plan(stream, plan, executor)
    found = []
    errors = []
    for oc in outcomes:
        rr = G.second_level(oc)
        if rr is not None:
            found.append((oc.check.id, rr.p_value))
        elif oc.errors:
            errors.append(f"{oc.check.id}: {oc.errors[0]}")
    if not found:
        notes.append(f"{rid}: no battery check finished")
        return None
    ps = [p for _, p in found]
    worst = sorted(found, key=lambda t: t[1])[:5]
    details = {
        "method": f"Bonferroni minimum over the battery's {len(found)} checks (the smallest Holm-adjusted p)",
        "battery_checks": len(found), "segments": plan.segments, "merged_bytes": int(arr.size),
        "worst_checks": [{"id": i, "p_value": float(p)} for i, p in worst],
    }
    if errors:
        details["errors"] = errors[:5]
    out = {"p_value": M.bonferroni(ps), "bytes": int(arr.size), "segments": plan.segments, "details": details}
    if not complete:
        out["incomplete"] = f"{rid}: {reason}"
    return out


def sweep_seeds(
    seeds: str | Any = None,
    *,
    seed_set: str | None = None,
    python: str | None = None,
    command: str | None = None,
    shell: bool = False,
    gen: str | None = None,
    factory: Callable[[int], Any] | None = None,
    bytes_per_seed: str | int = DEFAULT_BYTES_PER_SEED,
    checks: list[str] | None = None,
    skip: list[str] | None = None,
    per_seed_checks: list[str] | None = None,
    lags: int = DEFAULT_LAGS,
    interleave: tuple[int, ...] = (2, 4),
    merge_budget: str | int = DEFAULT_MERGE_BUDGET,
    avalanche_seeds: int | None = None,
    seed_bits: int = 64,
    early_bytes: int = DEFAULT_EARLY_BYTES,
    alpha: float = G.DEFAULT_ALPHA,
    workers: int | None = 1,
    cluster: str | None = None,
    client: Any = None,
    progress: Callable[[str], None] | None = None,
    budget: str | int | None = None,
    plan_only: bool = False,
) -> Report | SweepPlan:
    """The seed sweep from CLI-style arguments (what ``rngassay seeds`` calls).

    ``seeds``: ``"0..999"``, ``"1,5,9"``, ``"@FILE"`` or a sequence of ints; or ``seed_set`` (``"consecutive:N"``,
    ``"powers-of-two"``, ``"low-weight"``, ``"all-ones"``). The factory: ``python="FILE.py:NAME"``,
    ``command="prog --seed {seed}"``, ``gen="NAME"`` or ``factory=callable(seed)``. Sizes take IEC suffixes.
    ``budget``: the total read (every seed's stream and the avalanche's), instead of ``bytes_per_seed``: each
    seed gets an equal share, rounded down to a multiple of 8 bytes. ``plan_only``: return the
    :class:`~rngassay.seeds.plan.SweepPlan` (its ``describe()`` and ``total_bytes()``) without making a stream.
    """
    from ..sizes import parse_size
    from .seedsets import resolve_seeds

    from ..intake.open import SourceSpec

    f = SeedFactory.from_spec(SourceSpec(command=command, shell=shell, python=python, gen=gen, obj=factory))
    if seeds is not None and not isinstance(seeds, str):
        if seed_set is not None:
            raise InputError("both --seeds and --seed-set given", "", "give one of them")
        arr = np.asarray(list(seeds) if not isinstance(seeds, np.ndarray) else seeds)
        if arr.size == 0:
            raise InputError("empty seed set", "seeds", "give at least one seed")
        if arr.dtype.kind not in "ui" or (arr.dtype.kind == "i" and (arr < 0).any()):
            raise InputError("seeds must be non-negative integers", "seeds", "give integers in [0, 2**64 - 1]")
        from .seedsets import _finish

        arr = _finish(arr.astype(np.uint64), "seeds")
        spec = f"{arr.size} seeds"
    else:
        arr = resolve_seeds(seeds, seed_set)
        spec = f"--seeds {seeds}" if seeds is not None else f"--seed-set {seed_set}"
    opts = SweepOptions(
        bytes_per_seed=parse_size(bytes_per_seed, "--bytes-per-seed"), per_seed_checks=per_seed_checks, lags=lags,
        interleave=tuple(interleave), merge_budget=parse_size(merge_budget, "--merge-budget"),
        avalanche_seeds=avalanche_seeds, seed_bits=seed_bits, early_bytes=early_bytes, checks=checks, skip=skip,
    )
    if budget is not None:
        opts.bytes_per_seed = _bytes_for_budget(arr, f, opts, alpha, parse_size(budget, "--budget"), str(budget))
    if plan_only:
        return plan_sweep(arr, f, opts, alpha)
    return run_sweep(arr, f, options=opts, alpha=alpha, workers=workers, cluster=cluster, client=client,
                     progress=progress, seed_spec=spec)


def _bytes_for_budget(seeds: np.ndarray, f: SeedFactory, o: SweepOptions, alpha: float, total: int, shown: str) -> int:
    """Bytes per seed for a total ``--budget``: what the avalanche reads (it does not depend on the stream length)
    comes off first, the rest is shared equally, rounded down to a multiple of 8."""
    from .defaults import MAX_BYTES_PER_SEED

    trial = plan_sweep(seeds, f, dataclasses.replace(o, bytes_per_seed=MAX_BYTES_PER_SEED), alpha)
    av = trial.avalanche_bytes()
    per = max(0, total - av) // trial.S // 8 * 8
    if per < 64:
        raise InputError(f"--budget {shown} is too small for {trial.S} seeds: each seed's stream needs at least 64 "
                         "bytes" + (f", and the avalanche reads {av} bytes" if av else ""), "",
                         f"give at least --budget {64 * trial.S + av}, or fewer seeds")
    if per > MAX_BYTES_PER_SEED:
        raise InputError(f"--budget {shown} gives {per} bytes per seed, above the maximum of {MAX_BYTES_PER_SEED}",
                         "", "sweep more seeds rather than longer streams, or give a smaller --budget")
    if o.lags >= per // 8:
        raise InputError(f"--lags {o.lags} is too large for --budget {shown}: below the {per // 8} values per seed",
                         "", "give a larger --budget or a smaller --lags")
    return per
