"""Equidistribution (frequency) tests: uniforms in d bins, raw byte values, 16-bit values.

H0 throughout: the values are independent and uniform (on [0, 1), on the 256 byte values, on
the 65536 values of a 16-bit word), so the bin counts are one multinomial sample with equal cell
probabilities.  Statistic: Pearson's chi-square with ``cells - 1`` degrees of freedom.  Both tails
are reported: a spread that is too even (small chi-square) is evidence too.
Method: Knuth, TAOCP Vol. 2, 3rd ed., §3.3.2 A (equidistribution test); Pearson (1900).

This module also holds the small helpers the other classic checks share (counting kernels,
the equiprobable chi-square, result names, input slicing).
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from typing import Any

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, SharedTable, check_id, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError
from rngassay.stats import chi2_tails, chisquare_gof

KNUTH = "Knuth, TAOCP Vol. 2, 3rd ed., §3.3.2"

# --------------------------------------------------------------------------- shared helpers


def result_name(key: str, params: dict[str, Any]) -> str:
    """Check identifier: the key plus its parameters, without the data size ``n``."""
    return check_id(key, {k: v for k, v in params.items() if k != "n" and v is not None})


def take(data: np.ndarray, n: int | None, what: str, dtype=None) -> np.ndarray:
    """The first ``n`` values of ``data`` (all when ``n`` is None) as a contiguous 1-d array."""
    a = np.asarray(data)
    if a.ndim != 1:
        a = a.ravel()
    if dtype is not None and a.dtype != dtype:
        a = a.astype(dtype)
    if n is not None:
        n = int(n)
        if n < 0 or n > a.size:
            raise InputError(f"{what}: asked for {n} values, {a.size} available")
        a = a[:n]
    return np.ascontiguousarray(a)


def uniforms(data: np.ndarray, n: int | None, what: str) -> np.ndarray:
    """float64 view of the first ``n`` uniforms (values are assumed in [0, 1): intake validates)."""
    return take(data, n, what, np.float64)


def need(have: int, want: int, what: str) -> None:
    if have < want:
        raise InputError(f"{what} needs at least {want} values, got {have}", hint="use more data")


def pow2_floor(x: float) -> int:
    """Largest power of two <= x (1 for x < 2)."""
    if x < 2:
        return 1
    return 1 << int(math.floor(math.log2(x)))


def equiprobable_chi2(counts: np.ndarray) -> tuple[float, int, float, float]:
    """Pearson chi-square of counts against equal cell probabilities: (X2, df, right, left)."""
    c = np.asarray(counts, dtype=np.float64).ravel()
    total = float(c.sum())
    if total <= 0 or c.size < 2:
        raise InputError("chi-square needs at least one observation in at least two cells")
    e = total / c.size
    x2 = float(np.sum((c - e) ** 2) / e)
    df = c.size - 1
    right, left = chi2_tails(x2, df)
    return x2, df, right, left


def gof(counts: np.ndarray, probs: np.ndarray, what: str, min_expected: float = 5.0):
    """:func:`rngassay.stats.chisquare_gof` with its 'too little data' error as an InputError."""
    try:
        return chisquare_gof(np.asarray(counts, dtype=np.float64), probs=np.asarray(probs, np.float64),
                             min_expected=min_expected)
    except ValueError as exc:
        raise InputError(f"{what}: {exc}", hint="use more data") from exc


def small_list(a: Iterable, limit: int = 256) -> list | None:
    """A JSON-able list for the report, or None when the array is too long to be worth showing."""
    a = np.asarray(a)
    if a.size > limit:
        return None
    return a.tolist()


@njit(cache=True)
def bin_index_counts(u, d):
    """counts[j] = #{i : floor(u_i d) = j}, values clamped into [0, d)."""
    counts = np.zeros(d, dtype=np.int64)
    fd = float(d)
    for i in range(u.size):
        j = int(u[i] * fd)
        if j >= d:
            j = d - 1
        elif j < 0:
            j = 0
        counts[j] += 1
    return counts


@njit(cache=True)
def to_symbols(u, d):
    """floor(u_i d) clamped into [0, d), as int32 (the integers Y_j of Knuth §3.3.2)."""
    out = np.empty(u.size, dtype=np.int32)
    fd = float(d)
    for i in range(u.size):
        j = int(u[i] * fd)
        if j >= d:
            j = d - 1
        elif j < 0:
            j = 0
        out[i] = j
    return out


@njit(cache=True)
def _byte_counts(b):
    h = np.zeros((4, 256), dtype=np.int64)
    n4 = (b.size // 4) * 4
    for i in range(0, n4, 4):
        h[0, b[i]] += 1
        h[1, b[i + 1]] += 1
        h[2, b[i + 2]] += 1
        h[3, b[i + 3]] += 1
    for i in range(n4, b.size):
        h[0, b[i]] += 1
    out = np.zeros(256, dtype=np.int64)
    for r in range(4):
        for j in range(256):
            out[j] += h[r, j]
    return out


@njit(cache=True)
def _u16_counts(w):
    h = np.zeros(65536, dtype=np.int64)
    for i in range(w.size):
        h[w[i]] += 1
    return h


def byte_counts(b: np.ndarray) -> np.ndarray:
    """Histogram of uint8 values (numba; np.bincount on uint8 is ~10x slower here)."""
    return _byte_counts(np.ascontiguousarray(b, dtype=np.uint8))


# --------------------------------------------------------------------------- the checks


def check_equidistribution(data: np.ndarray, d: int = 16, n: int | None = None) -> CheckResult:
    """Equidistribution test on uniforms (Knuth §3.3.2 A).

    H0: the uniforms are i.i.d. U[0, 1), so the counts of ``floor(d u)`` in the d bins are
    multinomial with probabilities 1/d.  Pearson chi-square, ``d - 1`` d.o.f.; both tails.
    """
    d = int(d)
    if not 2 <= d <= 1 << 24:
        raise InputError(f"equidistribution: d must be in 2..2^24, got {d}")
    u = uniforms(data, n, "equidistribution")
    need(u.size, d, "equidistribution")
    return _equidistribution_result(bin_index_counts(u, d), d, int(u.size))


def _equidistribution_result(counts: np.ndarray, d: int, n: int) -> CheckResult:
    x2, df, right, left = equiprobable_chi2(counts)
    return CheckResult(
        name=result_name("equidistribution", {"d": d}), statistic=x2, p_value=right, p_left=left,
        null=f"chi2(df={df})", n=n,
        details={"d": d, "expected_per_bin": n / d, "counts": small_list(counts, 64)},
        pooled={"counts": counts},
    )


TABLE_D = 1 << 16  # the shared table: counts of floor(2^16 u)


def _bins_table(u: np.ndarray, n: int, view: str) -> np.ndarray | None:
    """Counts of floor(2^16 u) over the first ``n`` uniforms. For d a power of two up to 2^16,
    floor(d u) = floor(2^16 u) >> (16 - log2 d) exactly (scaling by a power of two is exact), so the
    d-bin counts are sums of adjacent cells: one pass serves d = 16 and the fine d."""
    if view != "uniforms" or n < 1:
        return None
    return bin_index_counts(uniforms(u, n, "equidistribution"), TABLE_D)


UNIFORM_BINS = SharedTable("uniform bins (2^16)", _bins_table)


def equidistribution_from_table(table: np.ndarray, params: dict) -> CheckResult | None:
    """Equidistribution from the shared 2^16-bin counts (None for a d that does not divide 2^16)."""
    d, n = int(params.get("d", 16)), int(params["n"])
    if not 2 <= d <= TABLE_D or TABLE_D % d:
        return None
    need(n, d, "equidistribution")
    return _equidistribution_result(table.reshape(d, -1).sum(axis=1), d, n)


def check_byte_frequency(data: np.ndarray, n: int | None = None) -> CheckResult:
    """Frequency test on raw byte values.

    H0: the bytes are i.i.d. uniform on 0..255.  Pearson chi-square on the 256 value counts,
    255 d.o.f.; both tails (Knuth §3.3.2 A applied to the integers 0..255).
    """
    b = take(data, n, "byte frequency", np.uint8)
    need(b.size, 256, "byte frequency")
    return byte_frequency_result(byte_counts(b), int(b.size))


def byte_frequency_result(counts: np.ndarray, n: int) -> CheckResult:
    """The byte frequency result from the 256 value counts of ``n`` bytes (shared with the one-pass form)."""
    x2, df, right, left = equiprobable_chi2(counts)
    lo, hi = int(np.argmin(counts)), int(np.argmax(counts))
    return CheckResult(
        name="byte frequency", statistic=x2, p_value=right, p_left=left, null=f"chi2(df={df})",
        n=int(n),
        details={"expected_per_value": n / 256, "rarest": [lo, int(counts[lo])],
                 "commonest": [hi, int(counts[hi])]},
        pooled={"counts": counts},
    )


def _byte_table(data: np.ndarray, n: int, view: str) -> np.ndarray | None:
    """Counts of the 256 byte values of the first ``n`` values of the bytes view, or of the first ``n`` bits
    of the bits view (whole bytes only: None for a partial byte)."""
    if view == "bits":
        return byte_counts(data[: n // 8]) if n % 8 == 0 else None
    return byte_counts(data[:n]) if view == "bytes" else None


# the 256 byte-value counts: byte frequency, monobit and poker on 4- and 8-bit symbols are functions of them
BYTE_COUNTS = SharedTable("byte counts", _byte_table, order_free=True)


def byte_frequency_from_counts(counts: np.ndarray, params: dict | None = None) -> CheckResult:
    """The byte frequency check from the 256 value counts of the bytes it reads (the shared histogram)."""
    n = int(counts.sum())
    need(n, 256, "byte frequency")
    return byte_frequency_result(np.asarray(counts, dtype=np.int64).copy(), n)


def check_u16_frequency(data: np.ndarray, n: int | None = None) -> CheckResult:
    """Frequency test on 16-bit values made from byte pairs, little-endian (b0 + 256 b1).

    H0: the byte stream is i.i.d. uniform, so the n // 2 16-bit values are uniform on 0..65535.
    Pearson chi-square, 65535 d.o.f.; both tails (Knuth §3.3.2 A).  An odd trailing byte is unused.
    """
    b = take(data, n, "16-bit frequency", np.uint8)
    m = b.size // 2
    need(m, 65536, "16-bit frequency (byte pairs)")
    w = b[: 2 * m].view("<u2")
    return u16_frequency_result(_u16_counts(w), m)


def u16_frequency_result(counts: np.ndarray, m: int) -> CheckResult:
    """The 16-bit frequency result from the 65,536 value counts of ``m`` byte pairs (shared with the one-pass
    form)."""
    x2, df, right, left = equiprobable_chi2(counts)
    lo, hi = int(np.argmin(counts)), int(np.argmax(counts))
    return CheckResult(
        name="16-bit frequency", statistic=x2, p_value=right, p_left=left, null=f"chi2(df={df})",
        n=2 * m,
        details={"values": m, "expected_per_value": m / 65536, "rarest": [lo, int(counts[lo])],
                 "commonest": [hi, int(counts[hi])]},
        pooled={"counts": counts},
    )


# --------------------------------------------------------------------------- registry

#: Minimum expected count per cell used by the default parameter choices of the classic checks.
MIN_EXPECTED_DEFAULT = 10


def _equidistribution_defaults(n: int) -> list[dict]:
    """d = 16 (coarse, most powerful against broad bias) from 160 values on; plus a fine d: the
    largest power of two with >= 32 expected per bin, at most 2^16, when that is >= 256."""
    out: list[dict] = []
    if n >= 16 * MIN_EXPECTED_DEFAULT:
        out.append({"n": n, "d": 16})
    fine = min(1 << 16, pow2_floor(n / 32))
    if fine >= 256:
        out.append({"n": n, "d": fine})
    return out


register(CheckSpec(
    key="equidistribution", family="classic", title="equidistribution (frequency) test on uniforms",
    id_params=lambda p: {"d": 16} if p.get("d") == 16 else {"d": "fine"},  # the fine d: from the data
    view="uniforms", kind="continuous", func=check_equidistribution,
    values_needed=lambda p: int(p["n"]), default_params=_equidistribution_defaults, both_tails=True,
    table=UNIFORM_BINS, from_table=equidistribution_from_table,
    source=f"{KNUTH} A",
    notes="d = 16, and a fine d (power of two, >= 32 expected per bin, <= 65536)",
    cheap=True,  # one fast counting pass: sees every byte of a large budget
))

register(CheckSpec(
    key="byte frequency", family="classic", title="frequency test on byte values", view="bytes",
    kind="continuous", func=check_byte_frequency, values_needed=lambda p: int(p["n"]),
    table=BYTE_COUNTS, from_table=byte_frequency_from_counts,
    default_params=lambda n: [{"n": n}] if n >= 256 * MIN_EXPECTED_DEFAULT else [],
    both_tails=True, source=f"{KNUTH} A (256 cells)",
    cheap=True,  # one fast counting pass: sees every byte of a large budget
))

register(CheckSpec(
    key="16-bit frequency", family="classic", title="frequency test on 16-bit values (byte pairs, little-endian)",
    view="bytes", kind="continuous", func=check_u16_frequency, values_needed=lambda p: int(p["n"]),
    default_params=lambda n: [{"n": n - n % 2}] if n // 2 >= 65536 * MIN_EXPECTED_DEFAULT else [],
    both_tails=True, source=f"{KNUTH} A (65536 cells)",
    cheap=True,  # one fast counting pass: sees every byte of a large budget
))
