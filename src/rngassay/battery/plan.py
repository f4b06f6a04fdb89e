"""The plan: which checks run, with which parameters, on how much data, in how many replicates.

How the budget is spent
-----------------------
The budget (default 64 MiB) is cut into ``R`` disjoint segments, ``R = clamp(budget / 2 MiB, 4, 64)``
(the replicates), and more when a segment would be larger than 64 MiB: a segment and its views are what a run
holds in memory, so peak memory stays bounded at any budget. Every check runs once per segment; its parameters come from its registry entry's
``default_params(n)``, where ``n`` is the number of values of the check's view that one segment holds,
and it reads only the first ``values_needed(params)`` values of that view (a check need not see every
byte). The second level then combines the ``R`` first-level results (see :mod:`.grade`).

The budget is the total read, from any source (file, standard input, command, Python factory, built-in
generator): all checks share the segments, and the stream is read once, segment by segment, so memory stays
bounded by one segment and its views. A check's share of the read is the part of each segment it reads.

The plan depends only on the input format, the budget and the selection, never on the source kind or the
number of workers, so results are identical for any ``--workers``.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field
from typing import Any

from ..checks.registry import CheckSpec, check_id, matches, stable_params
from ..checks.catalog import load_all
from ..errors import InputError
from ..intake import views
from ..intake.formats import Format

MIN_SEGMENTS, MAX_SEGMENTS = 4, 64
SEGMENT_UNIT = 2 << 20
MAX_SEGMENT_BYTES = 64 << 20  # above 4 GiB the budget is cut into more than 64 segments of at most 64 MiB
# Above this many bytes per check (all replicates together), a check sees only the first
# CHECK_CAP_BYTES / R bytes of each segment -- unless its registry entry says it is cheap
# (``CheckSpec.cheap``: one fast counting pass) or it is a block check on a fixed sample
# (``CheckSpec.sample``: its parameters bound what it reads, whatever the budget). This keeps a
# large budget's cost near a fixed multiple of one read pass while the cheap checks still use
# every byte. A capped check runs on at most MAX_SEGMENTS of the segments.
CHECK_CAP_BYTES = 64 << 20
MIN_BUDGET_BYTES = 64 << 10  # below this the checks have too little data to say anything useful
MIN_TEXT_VALUES = 100


@dataclass
class PlannedCheck:
    id: str
    key: str
    family: str
    view: str
    params: dict[str, Any]
    values: int  # view values per replicate
    bytes: int  # stream bytes (text: values) per replicate
    replicates: int
    sample: str | None = None  # a block check's fixed sample, and why (CheckSpec.sample)
    sized: str = ""  # the parameters chosen from the data available (not in the id), e.g. "t=12"

    def to_dict(self) -> dict[str, Any]:
        return asdict(self)


@dataclass
class Plan:
    fmt: Format
    budget_bytes: int
    segments: int
    segment_bytes: int  # binary formats: bytes per segment; text: values per segment
    checks: list[PlannedCheck] = field(default_factory=list)
    skipped: list[str] = field(default_factory=list)  # checks left out, with the reason

    def to_list(self) -> list[dict[str, Any]]:
        return [c.to_dict() for c in self.checks]

    def bytes_total(self) -> int:
        """What the run reads (bytes; text: values): every segment once, shared by the checks."""
        return self.segments * self.segment_bytes

    def share(self, c: PlannedCheck) -> float:
        """The part of the run's read that a check reads (its bytes per replicate, over its replicates)."""
        return c.bytes * c.replicates / max(1, self.bytes_total())

    def describe(self) -> str:
        from ..sizes import format_size

        unit = "values" if not self.fmt.is_binary else "bytes"
        budget = (f"{format_size(self.budget_bytes)} ({self.budget_bytes} bytes)" if self.fmt.is_binary
                  else f"{self.budget_bytes} values")
        total = self.bytes_total()
        lines = [
            f"plan: {len(self.checks)} checks, up to {self.segments} replicates each, on {self.segments} segments of "
            f"{self.segment_bytes} {unit} that all checks share",
            f"budget {budget}; format {self.fmt.describe()}",
            f"reads {total} {unit} in all" + (f" ({format_size(total)})" if self.fmt.is_binary else ""),
            "",
            f"  {'check':<52} {'family':<11} {'view':<9} {'per replicate':>14} {'replicates':>10} {'share':>6}"
            "  sized to the data",
        ]
        for c in self.checks:
            lines.append(f"  {c.id:<52} {c.family:<11} {c.view:<9} {c.bytes:>14} {c.replicates:>10} "
                         f"{_pct(self.share(c)):>6}" + (f"  {c.sized}" if c.sized else "")
                         + ("  fixed sample" if c.sample else ""))
        fixed = {c.key: c.sample for c in self.checks if c.sample}
        if fixed:
            lines += ["", "fixed samples (block checks: at most this much however large the budget; less when a segment "
                      "is smaller):"]
            lines += [f"  {k}: {why}" for k, why in fixed.items()]
        for s in self.skipped:
            lines.append(f"  (left out: {s})")
        return "\n".join(lines)


def _pct(x: float) -> str:
    return f"{100 * x:.0f}%" if x >= 0.1 else (f"{100 * x:.1f}%" if x >= 0.001 else "<0.1%")


def display_id(spec: CheckSpec, params: dict[str, Any]) -> tuple[str, str]:
    """A run's identifier (the same at every budget) and its parameters chosen from the data, as text."""
    shown, sized = stable_params(spec, params)
    return check_id(spec.key, shown), " ".join(f"{k}={v:g}" if isinstance(v, float) else f"{k}={v}"
                                               for k, v in sized.items())


def segments_for(budget_bytes: int, binary: bool = True) -> int:
    """Replicates for a budget: one per 2 MiB, 4 to 64; for binary budgets above 4 GiB, as many as keep every
    segment within MAX_SEGMENT_BYTES."""
    r = max(MIN_SEGMENTS, min(MAX_SEGMENTS, budget_bytes // SEGMENT_UNIT))
    return max(r, -(-budget_bytes // MAX_SEGMENT_BYTES)) if binary else r


def _matches(spec: CheckSpec, cid: str, patterns: list[str]) -> bool:
    return matches(spec.key, spec.family, cid, patterns)


def plan_params(key: str, spec: CheckSpec, fmt: Format, param_sets: list[dict], n_avail: int, per_value: float,
                replicates: int, *, windows: bool, checks: list[str] | None, skip: list[str] | None,
                skipped: list[str], first_only: bool = False) -> list[PlannedCheck]:
    """One check's runs for ``n_avail`` view values per replicate (the rule the battery and the seed sweep share):
    its parameter sets (and their bit windows), the resolution its values have, the selection, the data each run
    needs; ``first_only``: the first run that qualifies. Why a run is left out goes to ``skipped``."""
    wins = [w for w in spec.windows if windows and w in views.available_windows(fmt, spec.view)]
    param_sets = [p for p in param_sets] + [{**p, "window": w} for w in wins for p in param_sets]
    out: list[PlannedCheck] = []
    for params in param_sets:
        rp = spec.resolution_param
        if rp and spec.view == "uniforms":
            # the grid check judges the grid the input claims; the other resolution-aware checks the grid
            # the values were found on (when read whole), so that a coarse grid fails once, not in each
            bits = views.claimed_bits(fmt) if spec.judges_grid else views.float_bits(fmt)
            params = {**params, rp: bits}
        cid, sized = display_id(spec, params)
        if checks and not _matches(spec, cid, checks):
            continue
        if skip and _matches(spec, cid, skip):
            continue
        need = int(spec.values_needed(params))
        if need > n_avail:
            skipped.append(f"{cid}: needs {need} {spec.view} values per replicate, {n_avail} available")
            continue
        nbytes = int(math.ceil(need * per_value))
        if fmt.is_binary:
            nbytes += (-nbytes) % max(8, fmt.itemsize)
        reps = max(1, min(replicates, int(spec.max_replicates or replicates)))  # costly checks: fewer replicates
        out.append(PlannedCheck(cid, key, spec.family, spec.view, dict(params), need, nbytes, reps, spec.sample,
                                sized))
        if first_only:
            break
    return out


def make_plan(
    fmt: Format,
    budget_bytes: int,
    *,
    checks: list[str] | None = None,
    skip: list[str] | None = None,
    families: tuple[str, ...] | None = None,
    segments: int | None = None,
    strict_selectors: bool = True,
    windows: bool = True,
) -> Plan:
    """Choose checks and parameters for a budget. ``checks``/``skip`` select by key, family or id.

    ``windows=False`` leaves out the runs of checks in other bit windows (low bits, fraction tail): for
    derived values such as PIT values, whose last bits are rounding, not randomness."""
    registry = load_all()
    if fmt.is_binary and budget_bytes < MIN_BUDGET_BYTES:
        raise InputError(
            f"too little data: {budget_bytes} bytes; the battery needs at least {MIN_BUDGET_BYTES} bytes (64 KiB)",
            "",
            "give --budget 64KiB or more, and a stream at least that long",
        )
    if not fmt.is_binary and budget_bytes < MIN_TEXT_VALUES:
        raise InputError(
            f"too little data: {budget_bytes} values; the battery needs at least {MIN_TEXT_VALUES}",
            "",
            "supply more values",
        )
    R = segments or segments_for(budget_bytes, fmt.is_binary)
    if fmt.is_binary:
        seg = budget_bytes // R
        seg -= seg % max(8, fmt.itemsize)  # whole 64-bit words in every segment
        if seg <= 0:
            raise InputError(
                f"budget {budget_bytes} bytes is too small for {R} replicates", "", "give a larger --budget, e.g. 1MiB"
            )
    else:
        seg = max(1, budget_bytes // R)  # text: values per segment (budget counted in values)
    plan = Plan(fmt, budget_bytes, R, seg)
    avail = set(views.available_views(fmt))
    selected_any = False
    for key, spec in sorted(registry.items(), key=lambda kv: (_family_order(kv[1].family), kv[0])):
        if families is not None and spec.family not in families:
            continue
        if spec.view not in avail:
            continue
        if spec.family == "categorical" and fmt.kind != "text-integers":
            continue
        if fmt.kind == "text-integers" and spec.family != "categorical":
            continue
        if spec.judges_grid and fmt.kind != "floats":
            continue  # only float formats claim a grid of their own (words and bytes are made uniform exactly)
        if fmt.kind == "text-floats" and spec.resolution_param:
            # printed decimals have a grid of their own (e.g. 1e-6) that the format does not declare
            plan.skipped.append(f"{key}: text floats are rounded to their printed digits, so their grid is unknown")
            continue
        if spec.resolution_param and not views.binary_grid(fmt):
            plan.skipped.append(f"{key}: the uniforms (x - LO)/{fmt.range_size} are not on a 2^-b grid, which its law "
                                "assumes")
            continue
        per_value = views.input_bytes_per_value(fmt, spec.view)
        seg_for_check, reps = seg, R
        if fmt.is_binary and not spec.cheap and not spec.sample and seg * R > CHECK_CAP_BYTES:
            reps = min(R, MAX_SEGMENTS)
            seg_for_check = max(1, CHECK_CAP_BYTES // reps)
        n_avail = int(seg_for_check / per_value)
        if spec.view == "integers" and fmt.kind in ("bytes", "words"):
            n_avail = int(n_avail * 0.99)  # rejection sampling may drop a few words
        try:
            param_sets = spec.default_params(n_avail) if n_avail > 0 else []
        except Exception as e:  # a check's parameter rule must never take the battery down
            plan.skipped.append(f"{key}: parameter rule failed ({type(e).__name__}: {e})")
            continue
        if not param_sets:
            plan.skipped.append(f"{key}: needs more data per replicate than {n_avail} {spec.view} values")
            continue
        planned = plan_params(key, spec, fmt, param_sets, n_avail, per_value, reps, windows=windows, checks=checks,
                              skip=skip, skipped=plan.skipped)
        plan.checks += planned
        selected_any = selected_any or bool(planned)
    if strict_selectors:
        _check_selectors(registry, checks, skip, plan)
    if not selected_any:
        what = "the selection" if checks or skip else f"format {fmt.describe()}"
        raise InputError(
            f"no check can run for {what} with a budget of {budget_bytes} bytes",
            "",
            "give a larger --budget or change --checks/--skip (see `rngassay catalog`)",
        )
    return plan


def _check_selectors(registry, checks, skip, plan: Plan) -> None:
    """Every selector must name something: a typo in a CI gate must not silently drop checks."""
    ids = [c.id for c in plan.checks] + [s.split(":")[0] for s in plan.skipped]
    for option, sel in (("--checks", checks or []), ("--skip", skip or [])):
        for p in sel:
            q = p.strip().lower()
            known = any(q in (spec.family, spec.key) for spec in registry.values()) or any(
                i.lower() == q or i.lower().startswith(q + " ") for i in ids
            )
            if not known:
                raise InputError(
                    f"{option} {p!r} names no check or family",
                    "",
                    "see `rngassay catalog` for keys and families, or `--plan-only` for identifiers",
                )


def _family_order(f: str) -> int:
    return {"classic": 0, "categorical": 1, "bits": 2, "transform": 3}.get(f, 9)
