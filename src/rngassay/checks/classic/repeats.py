"""Repeat detection: the stream, or long stretches of it, occurring twice (short periods, recycled buffers).

H0: the bytes are i.i.d. uniform.  Then two given windows of w bytes are equal with probability
exactly 2^(-8w), also when they overlap (each of the w byte equalities brings in a byte not used
by the earlier ones), so by the union bound over all pairs of the L = n - w + 1 window positions

    P(any two windows of w bytes are equal) <= C(L, 2) 2^(-8w)

(for n = 64 MiB and w = 64: about 2^-461).  The check reports the number of repeated windows it
finds and, when that number is >= 1, this bound as its p-value: an upper bound on the false-alarm
probability, so the p-value is conservative (valid), not exact; with no repeat the p-value is 1.
Because the windows are compared byte for byte before being counted, a reported repeat is a real
one (hash collisions cannot raise false alarms).

Which windows are compared (content-defined anchors, a common practice of deduplicating
storage): a 64-byte rolling hash ``g <- 2 g + G[byte] (mod 2^64)`` (G: a fixed table of 256
pseudo-random words), whose top ``anchor_bits`` bits depend only on the last 64 bytes, marks
an anchor where those bits are all zero (one position in 2^anchor_bits), and also at every
multiple of ``grid`` (so that streams too regular to produce content anchors, like a constant
or a tiny cycle, still have windows).  The w bytes after an anchor form a window; the next
anchor is looked for only after that window, so windows do not overlap and there are at most
n / w of them.  Since anchors depend on content only, a stretch that recurs at *any* offset
(not only a multiple of the word or window size) gets anchors at the same places in both
copies, after at most a few hundred bytes: a repeated stretch of ~1 KiB or more is found with
near certainty for w = 64.  Windows are hashed (from the rolling hash at every 64th byte,
mixed), sorted by hash, and equal hashes verified byte for byte.

``details`` gives the number of windows, the most common distance between copies of a repeated
window (``period_bytes``: the period of a periodic stream; for periods so short that only grid
anchors occur, e.g. a constant stream, a multiple of it), and ``first_copy_at``, the first
offset where a copy starts (among the first 4096 candidate pairs).

Not a published test: a practical detector built on the birthday bound (the false-alarm
probability of w-byte windows, as in the collision and birthday analyses of Knuth, TAOCP Vol. 2,
3rd ed., §3.3.2 I-J) and content-defined chunking (A. Muthitacharoen, B. Chen, D. Mazières
(2001), "A low-bandwidth network file system", SOSP '01).
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, check_id, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError
from rngassay.stats import P_FLOOR

SOURCE = ("birthday (union) bound on equal windows, Knuth TAOCP Vol. 2 §3.3.2 I-J; content-defined "
          "anchors after Muthitacharoen, Chen, Mazieres (2001) SOSP")

DEFAULT_WINDOW = 64
DEFAULT_ANCHOR_BITS = 6
DEFAULT_GRID = 4096
#: The smallest input the default parameters run on (bytes): a few windows are needed.
REPEATS_MIN_BYTES = 1 << 14


def _gear_table() -> np.ndarray:
    """256 fixed pseudo-random 64-bit words: SplitMix64 outputs from state 0 (S. Vigna's
    finalizer constants; any fixed table works, it only decides where anchors fall)."""
    out = np.empty(256, dtype=np.uint64)
    s = 0
    mask = (1 << 64) - 1
    for i in range(256):
        s = (s + 0x9E3779B97F4A7C15) & mask
        z = s
        z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & mask
        z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & mask
        out[i] = z ^ (z >> 31)
    out.setflags(write=False)
    return out


GEAR = _gear_table()


@njit(cache=True)
def _mix(z):
    z = (z ^ (z >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
    z = (z ^ (z >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
    return z ^ (z >> np.uint64(31))


@njit(cache=True)
def _windows(b, gear, w, anchor_bits, grid):
    """(starts, hashes) of the anchored windows of w bytes (w a multiple of 64)."""
    n = b.size
    cap = n // w + 2
    starts = np.empty(cap, dtype=np.int64)
    hashes = np.empty(cap, dtype=np.uint64)
    k = 0
    g = np.uint64(0)
    top = np.uint64(64 - anchor_bits)
    one = np.uint64(1)
    i = 0
    next_grid = grid - 1  # positions i with (i + 1) % grid == 0 are grid anchors
    while i < n:
        # search for an anchor at i (its window starts at i + 1)
        found = False
        while i < n:
            g = (g << one) + gear[b[i]]
            if (g >> top) == 0 or i == next_grid:
                found = True
            if i == next_grid:
                next_grid += grid
            if found:
                break
            i += 1
        if not found or i + w >= n:
            break
        start = i + 1
        h = np.uint64(0x6A09E667F3BCC909)
        # roll over the window; mix the rolling value at every 64th byte
        for c in range(w // 64):
            base = start + 64 * c
            for j in range(base, base + 64):
                g = (g << one) + gear[b[j]]
            h = _mix(h ^ g) + np.uint64(64 * c + 63)
        starts[k] = start
        hashes[k] = h
        k += 1
        i = start + w
        while next_grid < i:
            next_grid += grid
    return starts[:k], hashes[:k]


@njit(cache=True)
def _equal(b, p, q, w):
    for j in range(w):
        if b[p + j] != b[q + j]:
            return False
    return True


@njit(cache=True)
def _repeats(b, starts, hashes, order, w, max_group):
    """Scan windows sorted by hash; count windows equal (byte for byte) to an earlier-listed one.

    Returns (repeats, distances, unresolved): distances between consecutive copies (by position) of
    each repeated window; unresolved counts windows in hash groups too large to resolve pairwise
    (only possible with hash collisions between different windows; they are not counted as repeats).
    """
    m = order.size
    dist = np.empty(m, dtype=np.int64)
    nd = 0
    reps = 0
    unresolved = 0
    i = 0
    while i < m:
        j = i + 1
        while j < m and hashes[order[j]] == hashes[order[i]]:
            j += 1
        if j - i >= 2:
            # positions of the group in increasing order
            pos = np.sort(starts[order[i:j]])
            used = np.zeros(j - i, dtype=np.bool_)
            for a in range(j - i):
                if used[a]:
                    continue
                used[a] = True
                last = pos[a]
                for c in range(a + 1, j - i):
                    if used[c]:
                        continue
                    if _equal(b, pos[a], pos[c], w):
                        used[c] = True
                        reps += 1
                        dist[nd] = pos[c] - last
                        nd += 1
                        last = pos[c]
                if a >= max_group:
                    for c in range(a + 1, j - i):
                        if not used[c]:
                            unresolved += 1
                            used[c] = True
                    break
        i = j
    return reps, dist[:nd], unresolved


def log10_false_alarm_bound(n_bytes: int, w: int) -> float:
    """log10 of C(L, 2) 2^(-8w), L = n - w + 1: the bound on P(any repeat) for i.i.d. uniform bytes."""
    L = max(int(n_bytes) - int(w) + 1, 0)
    if L < 2:
        return -math.inf
    return math.log10(L) + math.log10(L - 1) - math.log10(2.0) - 8 * int(w) * math.log10(2.0)


def find_repeats(data: np.ndarray, w: int = DEFAULT_WINDOW, anchor_bits: int = DEFAULT_ANCHOR_BITS,
                 grid: int = DEFAULT_GRID) -> dict:
    """Anchored windows of ``data`` (uint8) and the repeats among them (see the module docstring)."""
    b = np.ascontiguousarray(np.asarray(data).ravel().view(np.uint8))
    starts, hashes = _windows(b, GEAR, int(w), int(anchor_bits), int(grid))
    order = np.argsort(hashes, kind="stable")
    reps, dist, unresolved = _repeats(b, starts, hashes, order, int(w), 64)
    out: dict = {"windows": int(starts.size), "repeats": int(reps), "unresolved": int(unresolved)}
    if dist.size:
        vals, counts = np.unique(dist, return_counts=True)
        out["period_bytes"] = int(vals[np.argmax(counts)])
        out["period_share"] = float(counts.max() / dist.size)
        out["min_distance"] = int(vals[0])
        later = _later_copies(b, starts, hashes, order, int(w))
        out["first_copy_at"] = later
    return out


def _later_copies(b: np.ndarray, starts: np.ndarray, hashes: np.ndarray, order: np.ndarray, w: int) -> int:
    """Smallest start of a window equal to an earlier window (only called when repeats exist)."""
    hs = hashes[order]
    dup = np.flatnonzero(hs[1:] == hs[:-1])
    best = -1
    for i in dup[:4096]:
        p, q = sorted((int(starts[order[i]]), int(starts[order[i + 1]])))
        if np.array_equal(b[p:p + w], b[q:q + w]) and (best < 0 or q < best):
            best = q
    return best


def check_repeats(data: np.ndarray, w: int = DEFAULT_WINDOW, anchor_bits: int = DEFAULT_ANCHOR_BITS,
                  grid: int = DEFAULT_GRID, n: int | None = None) -> CheckResult:
    """Repeat detection on the first ``n`` bytes (all when None).

    H0: i.i.d. uniform bytes.  Statistic: number of anchored w-byte windows equal, byte for byte,
    to another one.  p-value: 1 when there is none; otherwise the union bound C(L, 2) 2^(-8w) on
    the probability of any repeat under H0 (conservative).  ``w`` is a multiple of 64 in 64..4096.
    """
    w, anchor_bits, grid = int(w), int(anchor_bits), int(grid)
    if w % 64 or not 64 <= w <= 4096:
        raise InputError(f"repeats: w must be a multiple of 64 in 64..4096, got {w}")
    if not 1 <= anchor_bits <= 20:
        raise InputError(f"repeats: anchor_bits must be in 1..20, got {anchor_bits}")
    if grid < 1:
        raise InputError(f"repeats: grid must be >= 1, got {grid}")
    a = np.asarray(data).ravel()
    if a.dtype != np.uint8:
        raise InputError(f"repeats: needs bytes (uint8), got {a.dtype}")
    if n is not None:
        n = int(n)
        if n < 0 or n > a.size:
            raise InputError(f"repeats: asked for {n} bytes, {a.size} available")
        a = a[:n]
    nb = int(a.size)
    if nb < 2 * w:
        raise InputError(f"repeats with w={w} needs at least {2 * w} bytes, got {nb}", hint="use more data")
    found = find_repeats(a, w, anchor_bits, grid)
    lb = log10_false_alarm_bound(nb, w)
    reps = found["repeats"]
    if reps == 0:
        p = 1.0
    else:
        p = max(min(1.0, 10.0**lb), P_FLOOR)
    mu = 10.0**lb if lb > -300 else 0.0
    details = dict(found)
    details["log10_false_alarm_bound"] = lb
    return CheckResult(
        name=check_id("repeats", {"w": w}), statistic=float(reps), p_value=p, p_left=None,
        null=f"no repeat; P(any) <= 10^{lb:.1f} (union bound)", kind="discrete", n=nb,
        details=details, pooled={"observed": reps, "mu": mu},
    )


def _defaults(n: int) -> list[dict]:
    # w = 64: a 512-bit window, so even 2^40 bytes keep the false-alarm bound below 2^-430.
    return [{"w": DEFAULT_WINDOW, "n": int(n)}] if n >= REPEATS_MIN_BYTES else []


register(CheckSpec(
    key="repeats", family="classic", title="repeat detection (content-anchored windows, birthday bound)",
    view="bytes", kind="discrete", func=check_repeats, values_needed=lambda p: int(p["n"]),
    default_params=_defaults, both_tails=False, source=SOURCE,
    notes="p-value is the union bound C(L,2) 2^-8w on a false alarm (conservative); all available bytes",
    cheap=True, max_replicates=16,  # whole segments even of a large budget (a period must fit
    # inside one); 16 of them are plenty to find a recurring stretch
))
