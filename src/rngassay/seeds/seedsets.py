"""Seed sets: what ``--seeds`` and ``--seed-set`` mean.

Seeds are integers in ``[0, 2**64 - 1]`` (decimal, or hexadecimal with ``0x``). The order given is kept:
"adjacent seeds" (cross-stream correlation, interleaving, XOR pairs) means adjacent in this order.
A seed may appear only once (a repeated seed would make two identical streams and a false alarm).

``--seeds`` takes
  ``A..B``        the inclusive range A, A+1, ..., B (A <= B);
  ``A,B,C``       a comma list; items may be ranges too: ``0..9,100,200..209``;
  ``@FILE``       one seed per line (blank lines and ``#`` comments are ignored); errors name the line.

``--seed-set NAME[:N]`` names a ready-made adversarial set (seeds ascending):
  ``consecutive[:N]``   0, 1, ..., N-1 (N = 1000 by default);
  ``powers-of-two``     0 and 2**i for i = 0..63: 65 seeds;
  ``low-weight``        every 64-bit seed with at most two bits set: 1 + 64 + 2016 = 2081 seeds;
  ``all-ones``          2**i - 1 for i = 0..64 (0, 1, 3, 7, ..., 2**64 - 1): 65 seeds.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from ..errors import InputError
from .defaults import SEED_SETS

MAX_SEED = 2**64 - 1
MAX_SEEDS = 10_000_000  # a sweep larger than this is almost surely a typo (0..10**12)
DEFAULT_CONSECUTIVE = 1000


_INT = re.compile(r"\s*(0[xX][0-9a-fA-F_]+|\d[\d_]*)\s*")
_HINT = "write a range 0..999, a list 1,5,9 (items may be ranges) or @FILE with one seed per line"


def _parse_int(text: str, where: str) -> int:
    m = _INT.fullmatch(text)
    if not m:
        what = "empty seed" if not text.strip() else f"not a seed: {text.strip()!r}"
        raise InputError(what, where, _HINT + "; seeds are integers in [0, 2**64 - 1]")
    v = int(m.group(1), 0) if m.group(1).lower().startswith("0x") else int(m.group(1).replace("_", ""))
    if v > MAX_SEED:
        raise InputError(f"seed {v} is too large (the maximum is 2**64 - 1)", where, "give seeds in [0, 2**64 - 1]")
    return v


def _parse_item(item: str, where: str) -> np.ndarray:
    if ".." in item:
        a_text, _, b_text = item.partition("..")
        a, b = _parse_int(a_text, where), _parse_int(b_text, where)
        if b < a:
            raise InputError(f"empty seed range {item.strip()!r} (the end is below the start)", where,
                             "write the smaller seed first, e.g. 0..999")
        if b - a + 1 > MAX_SEEDS:
            raise InputError(f"seed range {item.strip()!r} has {b - a + 1} seeds (at most {MAX_SEEDS})", where,
                             "give a smaller range")
        return np.arange(b - a + 1, dtype=np.uint64) + np.uint64(a)
    if "-" in item.strip()[:1]:
        raise InputError(f"negative seed {item.strip()!r}", where, "seeds are integers in [0, 2**64 - 1]")
    return np.array([_parse_int(item, where)], dtype=np.uint64)


def parse_seeds(text: str) -> np.ndarray:
    """Parse a ``--seeds`` value (range, comma list or ``@FILE``) into a uint64 array, order kept."""
    if text is None or not str(text).strip():
        raise InputError("empty seed set", "--seeds", _HINT)
    text = str(text).strip()
    if text.startswith("@"):
        return _read_file(text[1:])
    parts = text.split(",")
    arrays = []
    for i, part in enumerate(parts, 1):
        where = "--seeds" if len(parts) == 1 else f"--seeds item {i}"
        if not part.strip():
            raise InputError("empty item in the seed list", where, _HINT)
        arrays.append(_parse_item(part, where))
    return _finish(np.concatenate(arrays), "--seeds")


def _read_file(path_text: str) -> np.ndarray:
    if not path_text:
        raise InputError("no file after '@'", "--seeds", "write @FILE, one seed per line")
    p = Path(path_text)
    if not p.is_file():
        raise InputError("seed file not found" if not p.exists() else "seed file is not a regular file", path_text,
                         "check the path after '@'")
    try:
        text = p.read_text(encoding="utf-8")
    except UnicodeDecodeError:
        raise InputError("seed file is not UTF-8 text", path_text, "one decimal or 0x-hex seed per line") from None
    except OSError as e:
        raise InputError(f"cannot read seed file: {e.strerror}", path_text, "check its permissions") from None
    values: list[int] = []
    lines: list[int] = []
    for lineno, line in enumerate(text.splitlines(), 1):
        s = line.split("#", 1)[0].strip()
        if not s:
            continue
        values.append(_parse_int(s, f"{path_text} line {lineno}"))
        lines.append(lineno)
        if len(values) > MAX_SEEDS:
            raise InputError(f"more than {MAX_SEEDS} seeds", f"{path_text} line {lineno}", "give fewer seeds")
    if not values:
        raise InputError("empty seed set: the file has no seeds", path_text, "one seed per line")
    arr = np.array(values, dtype=np.uint64)
    return _finish(arr, path_text, lines)


def _finish(arr: np.ndarray, where: str, lines: list[int] | None = None) -> np.ndarray:
    if arr.size == 0:
        raise InputError("empty seed set", where, _HINT)
    if arr.size > MAX_SEEDS:
        raise InputError(f"{arr.size} seeds (at most {MAX_SEEDS})", where, "give fewer seeds")
    order = np.argsort(arr, kind="stable")
    srt = arr[order]
    dup = np.flatnonzero(srt[1:] == srt[:-1])
    if dup.size:
        j = int(dup[0])
        first, second = sorted((int(order[j]), int(order[j + 1])))
        value = int(srt[j])
        if lines is not None:
            at, what = f"{where} line {lines[second]}", f"seed {value} appears twice (also on line {lines[first]})"
        else:
            at, what = where, f"seed {value} appears twice (positions {first + 1} and {second + 1} of the set)"
        raise InputError(what, at, "remove the repeat: two identical seeds make identical streams and a false alarm")
    return arr


def named_seed_set(spec: str) -> np.ndarray:
    """The ready-made set ``NAME`` or ``NAME:N`` (see the module docstring)."""
    name, _, arg = str(spec).strip().partition(":")
    name = name.strip().lower()
    where = "--seed-set"
    if name not in SEED_SETS:
        raise InputError(f"unknown seed set {name!r} (known: {', '.join(SEED_SETS)})", where,
                         "or give --seeds A..B / a list / @FILE")
    if name == "consecutive":
        n = DEFAULT_CONSECUTIVE
        if arg.strip():
            m = re.fullmatch(r"\s*(\d+)\s*", arg)
            if not m or int(m.group(1)) < 1:
                raise InputError(f"bad size in {spec!r}", where, "write consecutive:N with N >= 1, e.g. consecutive:5000")
            n = int(m.group(1))
            if n > MAX_SEEDS:
                raise InputError(f"consecutive:{n} is more than {MAX_SEEDS} seeds", where, "give a smaller N")
        return np.arange(n, dtype=np.uint64)
    if arg.strip():
        raise InputError(f"seed set {name!r} takes no size", where, f"write --seed-set {name}")
    if name == "powers-of-two":
        return np.array([0] + [1 << i for i in range(64)], dtype=np.uint64)
    if name == "all-ones":
        return np.array([(1 << i) - 1 for i in range(65)], dtype=np.uint64)
    # low-weight: weight 0, 1, 2 -- built with numpy (no loop over the 2016 pairs in Python)
    i, j = np.triu_indices(64, k=1)
    one = np.uint64(1)
    pairs = (one << i.astype(np.uint64)) | (one << j.astype(np.uint64))
    singles = one << np.arange(64, dtype=np.uint64)
    return np.sort(np.concatenate([np.zeros(1, np.uint64), singles, pairs]))


def resolve_seeds(seeds: str | None = None, seed_set: str | None = None) -> np.ndarray:
    """Exactly one of ``seeds`` / ``seed_set``; returns the seeds as a uint64 array."""
    if seeds is not None and seed_set is not None:
        raise InputError("both --seeds and --seed-set given", "", "give one of them")
    if seeds is None and seed_set is None:
        raise InputError("no seeds given", "", "use --seeds 0..999, --seeds 1,5,9, --seeds @FILE or --seed-set consecutive")
    return parse_seeds(seeds) if seeds is not None else named_seed_set(seed_set)
