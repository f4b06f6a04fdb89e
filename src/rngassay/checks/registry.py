"""What checks exist: name, view consumed, data needed, statistic kind.

Every check module registers its checks here at import time with :func:`register`.
The battery (``battery/plan.py``) reads this registry to choose checks and their
parameters for a data budget; ``rngassay catalog`` lists it.

Views (defined in ``rngassay.intake.views``):

- ``bytes``     uint8 array, stream order
- ``words32``   uint32 array (little-endian words from the byte stream unless the input format says otherwise)
- ``words64``   uint64 array
- ``bits``      packed bits: a uint8 array, most significant bit of each byte first
                (``np.unpackbits`` order); a check receives ``(packed, n_bits)``
- ``uniforms``  float64 array in [0, 1)
- ``integers``  int64 array of outcomes in [0, k) (``k`` passed as a parameter)
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable

from ..intake.views import VIEW_NAMES
from .result import StatKind

VIEWS = VIEW_NAMES  # the views intake makes (rngassay.intake.views.VIEW_TABLE)
FAMILIES = ("classic", "bits", "transform", "categorical")


@dataclass(frozen=True)
class CheckSpec:
    """Registry entry of one check.

    key           -- stable identifier of the method, lower case, e.g. "gap", "serial-overlapping"
    family        -- one of FAMILIES
    title         -- the published method name, e.g. "gap test (Knuth 3.3.2 C)"
    view          -- the view the check consumes (one of VIEWS)
    kind          -- "continuous" or "discrete" statistic under H0
    func          -- the pure function: func(data, **params) -> CheckResult
    values_needed -- values_needed(params) -> number of view values one run needs
    default_params-- default_params(n_available) -> list of parameter dicts to run when
                     n_available view values are available (several = several variants,
                     e.g. serial d=2 and d=3); empty list = not enough data
    both_tails    -- True when a too-small statistic is evidence too (p_left is meaningful)
    source        -- citation of the method definition
    pool          -- optional: pool(list of the replicates' ``pooled`` dicts) -> CheckResult, the check's own
                     test on the pooled sufficient statistics (when a plain chi-square on summed counts is not
                     its statistic, e.g. Good's first difference); see ``battery.grade.pool_sufficient``
    windows, cheap, max_replicates, resolution_param, judges_grid, table, from_table, sample -- how the plan
                     and the runner treat it (see the fields)
    sized, id_params -- what the check's identifier leaves out (see :func:`stable_params`)
    """

    key: str
    family: str
    title: str
    view: str
    kind: StatKind
    func: Callable[..., Any]
    values_needed: Callable[[dict], int]
    default_params: Callable[[int], list[dict]]
    both_tails: bool = False
    source: str = ""
    notes: str = ""
    pool: Callable[[list[dict]], Any] | None = None
    windows: tuple[str, ...] = ()  # other bits of the same values the check also runs on (intake.views.WINDOWS)
    cheap: bool = False  # one fast counting pass: sees every byte of a large budget (no cap)
    max_replicates: int | None = None  # costly per byte: at most this many replicates
    resolution_param: str | None = None  # the parameter the plan sets to the values' resolution in bits
    judges_grid: bool = False  # judges the float grid itself: runs on float formats only, against the claimed bits
    # a table several checks share (made once per segment, view and length: e.g. the 256 byte-value counts),
    # and the check's result from it: from_table(table, params) -> CheckResult, or None where its parameters
    # need more than the table holds (the runner then calls ``func``); must equal ``func``'s result exactly
    table: "SharedTable | None" = None
    from_table: Callable[[Any, dict], Any] | None = None
    # a block check that reads a fixed sample however large the budget (its parameters cap the data it
    # reads): why, in a few words, for the plan and the README
    sample: str | None = None
    # parameters that ``default_params`` chooses from the amount of data (e.g. gap's t, serial's v): left out of
    # the check's identifier, so that a selector in a CI job does not break when the budget changes; the plan
    # lists their values beside the identifier
    sized: tuple[str, ...] = ()
    # a check whose variants differ only in a sized parameter names them here: id_params(params) -> the
    # parameters its identifier shows (e.g. equidistribution d=16 and the fine d chosen from the data)
    id_params: Callable[[dict], dict] | None = None


@dataclass(frozen=True)
class SharedTable:
    """A table of counts that several checks are computed from (the shared histograms of the one-pass engine).

    ``make(data, n, view)`` makes it from the first ``n`` values of a check's view (``view`` "bytes": a uint8
    array; "bits": the packed bytes, ``n`` bits); returns None when it cannot be made from them (e.g. a partial
    byte, or another view), and the checks then run their function forms."""

    name: str
    make: Callable[[Any, int, str], Any]
    # the table depends only on which byte values occur, not their order: the bits view of whole words (the
    # same bytes, reordered within each word) shares the bytes view's table
    order_free: bool = False


REGISTRY: dict[str, CheckSpec] = {}


def register(spec: CheckSpec) -> CheckSpec:
    if spec.view not in VIEWS:
        raise ValueError(f"unknown view {spec.view!r} for check {spec.key!r}")
    if spec.family not in FAMILIES:
        raise ValueError(f"unknown family {spec.family!r} for check {spec.key!r}")
    if spec.key in REGISTRY and REGISTRY[spec.key] is not spec:
        raise ValueError(f"check {spec.key!r} registered twice")
    REGISTRY[spec.key] = spec
    return spec


def matches(key: str, family: str, cid: str, patterns: list[str]) -> bool:
    """The one selector rule (``--checks``/``--skip`` of every command): a pattern names a check by its key,
    its family, its full identifier, or the identifier's first words (``gap a=0`` matches ``gap a=0 b=0.5 t=12``).
    Case does not matter; empty patterns match nothing."""
    for p in patterns:
        p = p.strip().lower()
        if p and (p in (family, key) or cid.lower() == p or cid.lower().startswith(p + " ")):
            return True
    return False


def selected(key: str, family: str, cid: str, checks: list[str] | None, skip: list[str] | None) -> bool:
    """Whether a check runs under ``checks`` (None: all) and ``skip`` (None: none), by :func:`matches`."""
    if checks and not matches(key, family, cid, checks):
        return False
    return not (skip and matches(key, family, cid, skip))


#: parameters that only say how much data a run reads: never part of an identifier
SIZE_KEYS = ("n", "n_bits", "n_values", "n_words")


def stable_params(spec: CheckSpec, params: dict) -> tuple[dict, dict]:
    """Split a run's parameters into those its identifier shows and those chosen from the amount of data
    (``spec.sized``; the sample sizes of SIZE_KEYS are in neither): the identifier of a check is the same at
    every budget, so ``--checks``/``--skip`` selectors and report diffs keep working when the budget changes."""
    shown = {k: v for k, v in params.items() if k not in SIZE_KEYS and k not in spec.sized}
    sized = {k: v for k, v in params.items() if k in spec.sized}
    if spec.id_params is not None:
        shown = spec.id_params({k: v for k, v in params.items() if k not in SIZE_KEYS})
        sized = {k: v for k, v in params.items() if k not in SIZE_KEYS and shown.get(k) != v}
    return shown, sized


def check_id(key: str, params: dict) -> str:
    """Human identifier: the method key plus its parameters, e.g. 'gap a=0 b=0.5 t=16'."""
    if not params:
        return key
    parts = [f"{k}={_fmt(v)}" for k, v in params.items()]
    return f"{key} " + " ".join(parts)


def _fmt(v: Any) -> str:
    if isinstance(v, float):
        return f"{v:g}"
    return str(v)
