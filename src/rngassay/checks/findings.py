"""Findings in words: what is wrong with a stream, for the commonest causes, as exact statements or with p-values.

A check says *that* a stream fails; a finding says *what* it found, in a sentence and with its evidence. The
functions here are pure functions over one bounded sample (the battery hands them the first segment, at most a
few MiB) and return :class:`Finding` objects; :func:`diagnose` runs them all and keeps what clears a run-wide
threshold. Four kinds:

``lane``
    A bit lane that never changes (exact: "bit 0 is 1 in all N words"), whose frequency of ones is far from
    one half (two-sided exact binomial p-value, Binomial(N, 1/2)), or that repeats with a short period from
    some word on (exact, found by comparing the lane value for value; e.g. bit k of a power-of-two-modulus
    linear congruential generator has period 2^(k+1)).
``period``
    The stream repeats: from offset S on, every value equals the one P values before it, checked value for
    value to the end of the sample (binary formats: on the raw bytes, so S and P are byte counts). Called a
    period when the copy covers at least one whole period (n - S >= 2P), else a repeat.
``grid``
    Float values all on a grid 2^-r coarser than the format claims; computed by the ``fraction grid`` check
    (:func:`rngassay.checks.transform.resolution.check_fraction_grid`), whose exact law gives the p-value.
``lag``
    A lag at which values repeat (``x[i] == x[i-L]``: exact binomial, Binomial(N - L, 1/K) for K equally likely
    values), are tied by a three-term relation of a lagged-Fibonacci kind (``x[i] = x[i-j] + x[i-k]``, ``-``,
    or exclusive or, modulo 2^b: exact binomial, Binomial(N - k, 3 / 2^b) for the +/- forms, which allow a
    carry of one, and Binomial(N - k, 2^-b) for exclusive or), or correlate (the serial correlation at lag L,
    ``Z = sum (x_i - mu)(x_{i-L} - mu) / (sigma^2 sqrt(N - L))`` with the exact mean and variance of the
    discrete uniform law; two-sided standard normal p-value, an approximation by the martingale central limit
    theorem: the summands are uncorrelated with mean 0, skewness 0 and excess kurtosis 0.24).
    Why the binomial laws are exact: under H0 each x[i] is uniform and independent of all earlier values,
    so each comparison holds with the stated probability whatever came before; the indicators are therefore
    independent Bernoulli variables (a martingale argument), and their count is binomial.

Bit lanes (said in every finding): for words formats bit 0 is the least significant bit of each value as the
format decodes it (its declared byte order); for raw bytes (``u1``) of each 32-bit word read little-endian from
four consecutive bytes; for floats the lanes are the fraction bits the values carry, named by weight
("fraction bit j" has weight 2^-j). Text inputs have no lanes.

Calibration: every finding carries a p-value (exact, an exact law, a union bound, or for correlations the
normal approximation); :func:`diagnose` counts every test it ran (``m``) and reports a finding only when its
p-value is at most ``alpha / m`` (Bonferroni), so on sound data the chance of any finding in a run is at most
``alpha`` (default 1e-6, :data:`FINDINGS_ALPHA`).
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field
from typing import Any

import numpy as np

from ..intake import views
from ..intake.formats import Format
from ..stats import P_FLOOR, binomial_tails, normal_two_sided, two_sided

#: Run-wide false-finding rate: on sound data a run reports any finding with probability at most this.
FINDINGS_ALPHA = 1e-6
LANE_WORDS = 1 << 19  #: words examined for bit lanes
LAG_VALUES = 1 << 16  #: values examined for repeats and correlation at a lag
MAX_LAG = 128  #: lags 1..MAX_LAG
RELATION_VALUES = 1 << 13  #: values examined for three-term relations
RELATION_LAG = 32  #: three-term relations with lags 1 <= j < k <= RELATION_LAG
LANE_MATCH_BITS = 128  #: a lane period is claimed only when at least this many lane bits repeat
PERIOD_MATCH_BITS = 256  #: a stream period is claimed only when at least this many bits' worth of values repeat
_RELATIONS = ("x[i] = x[i-{j}] + x[i-{k}]", "x[i] = x[i-{j}] - x[i-{k}]", "x[i] = x[i-{k}] - x[i-{j}]",
              "x[i] = x[i-{j}] xor x[i-{k}]")


@dataclass
class Finding:
    """One finding: its ``kind`` (lane, period, grid, lag) and ``test``, ``where`` it is (lane, lag, offset),
    the ``evidence`` as an exact statement, its ``p_value`` and how that is computed (``law``), whether the
    statement is an exact fact of the sample (``exact``), one ``sentence`` for the user and the numbers
    (``stats``)."""

    kind: str
    test: str
    where: dict[str, Any]
    evidence: str
    p_value: float
    law: str
    exact: bool
    sentence: str
    stats: dict[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return asdict(self)


# ------------------------------------------------------------------------------------------- lanes


@dataclass
class Lanes:
    """Words whose bit lanes are examined, and how lanes are named."""

    words: np.ndarray  # uint64
    width: int
    unit: str  # "32-bit word", "<u4 value", "value"
    convention: str

    def name(self, k: int) -> str:
        if self.unit == "value":  # floats: fraction bits by weight
            return f"fraction bit {self.width - k}"
        return f"bit {k}"


def lane_words(vals: np.ndarray, fmt: Format, limit: int = LANE_WORDS) -> Lanes | None:
    """The words whose lanes are examined (module docstring), at most ``limit`` of them; None for text."""
    if fmt.kind == "bytes":
        w = views.as_words32(vals[: 4 * limit], fmt).astype(np.uint64)
        return Lanes(w, 32, "32-bit word", "bit 0 = least significant bit of each 32-bit word read little-endian "
                                           "from 4 consecutive bytes")
    if fmt.kind == "words":
        w = vals[:limit].astype(np.uint64)
        return Lanes(w, 8 * fmt.itemsize, f"{fmt.name} value",
                     f"bit 0 = least significant bit of each {fmt.name} value (as its byte order decodes it)")
    if fmt.kind == "floats":
        m, r = float_fields(vals[:limit], fmt)
        if r < 1:
            return None
        return Lanes(m, r, "value", f"the {r} fraction bits the values carry; fraction bit j has weight 2^-j")
    return None


def float_fields(vals: np.ndarray, fmt: Format) -> tuple[np.ndarray, int]:
    """(m = floor(u 2^r) as uint64, r): the fraction bits float values carry, r the grid they lie on (at most
    the claimed resolution; :func:`rngassay.intake.views.fraction_grid_bits`)."""
    u = np.asarray(vals, dtype=np.float64)
    r = views.fraction_grid_bits(u, views.claimed_bits(fmt))
    return np.floor(u * 2.0**r).astype(np.uint64), int(r)


def lane_findings(lanes: Lanes) -> tuple[list[Finding], int]:
    """Constant, unbalanced and short-period bit lanes (module docstring); returns (findings, tests run)."""
    from .findings_kernels import lane_ones, lane_period

    w, n = np.ascontiguousarray(lanes.words), int(lanes.words.size)
    if n < 2 * LANE_MATCH_BITS:
        return [], 0
    ones = lane_ones(w, lanes.width)
    out: list[Finding] = []
    for k in range(lanes.width):
        c = int(ones[k])
        right, left = binomial_tails(c, n, 0.5)
        p = two_sided(right, left)
        name = lanes.name(k)
        if c in (0, n):
            out.append(Finding("lane", "constant", {"lane": k, "name": name, "lanes": lanes.convention}, f"{name} of every "
                               f"{lanes.unit} is {1 if c else 0} in all {n} {lanes.unit}s", p,
                               "exact binomial, Binomial(n, 1/2), two-sided", True,
                               f"{name} never changes: it is {1 if c else 0} in every {lanes.unit}.",
                               {"ones": c, "n": n, "unit": lanes.unit}))
            continue
        out.append(Finding("lane", "frequency", {"lane": k, "name": name, "lanes": lanes.convention},
                           f"{name} is 1 in {c} of {n} {lanes.unit}s ({c / n:.4f}; 0.5 expected)", p,
                           "exact binomial, Binomial(n, 1/2), two-sided", False,
                           f"{name} is 1 in {100 * c / n:.2f}% of {lanes.unit}s, far from half.",
                           {"ones": c, "n": n, "unit": lanes.unit}))
        d, s = lane_period(w, k, n // 2, LANE_MATCH_BITS)
        if d and n - s >= 2 * d:
            pb = _bound(n // 2, LANE_MATCH_BITS)
            out.append(Finding("lane", "periodic", {"lane": k, "name": name, "lanes": lanes.convention, "period": int(d),
                                                    "start": int(s)},
                               f"from {lanes.unit} {s} on, {name} equals {name} {d} {lanes.unit}s later, in all "
                               f"{n - s - d} positions to the end of the sample ({n} {lanes.unit}s)", pb,
                               f"union bound: (n/2) 2^-{LANE_MATCH_BITS} (a claim needs {LANE_MATCH_BITS} "
                               "matching bits at the end)", True,
                               f"{name} repeats with period {d} {lanes.unit}s" + (f" from {lanes.unit} {s} on." if s
                                                                                  else "."),
                               {"period": int(d), "start": int(s), "n": n, "unit": lanes.unit}))
    return out, 2 * lanes.width


def binom_right(c: np.ndarray, n: np.ndarray, q: Any) -> np.ndarray:
    """P(X >= c) for X ~ Binomial(n, q), elementwise (``scipy.stats.binom.sf(c - 1, n, q)``), floored at the
    smallest normal double so that no p-value is 0."""
    from scipy import stats

    return np.maximum(stats.binom.sf(np.asarray(c) - 1, n, q), P_FLOOR)


def _bound(tries: int, bits: float) -> float:
    """min(1, tries 2^-bits), never 0 (floored at the smallest normal double)."""
    lg = math.log2(max(tries, 1)) - bits
    return max(P_FLOOR, min(1.0, 2.0**lg)) if lg > -1020 else P_FLOOR


# ------------------------------------------------------------------------------------------- period


def period_finding(vals: np.ndarray, fmt: Format) -> Finding | None:
    """The smallest period P (and its start S) of the sample's tail, verified value for value (module
    docstring); binary formats are searched as raw bytes. None when there is none."""
    from .findings_kernels import tail_period

    if fmt.is_binary:
        x, unit, bits = np.ascontiguousarray(vals).view(np.uint8), "byte", 8.0
    else:
        sym = symbols(vals, fmt)
        if sym is None:
            return None
        x, unit, bits = sym[0], "value", math.log2(sym[1])
    if bits <= 0:
        return None
    need = max(4, math.ceil(PERIOD_MATCH_BITS / bits))
    n = int(x.size)
    if n < 2 * need:
        return None
    d, s = tail_period(x, n - need, need)
    if not d:
        return None
    d, s = int(d), int(s)
    whole = n - s >= 2 * d
    per_value = fmt.itemsize if fmt.is_binary else 0
    vp = f" ({d // per_value} {fmt.name} values)" if per_value > 1 and d % per_value == 0 else ""
    what = (f"the stream repeats with period {d} {unit}s{vp}, starting at {unit} {s}" if whole else
            f"{unit}s {s} to {n - d - 1} recur {d} {unit}s later")
    return Finding("period", "period" if whole else "repeat", {"period": d, "start": s, "unit": unit},
                   f"every {unit} from offset {s + d} to the end of the sample ({n} {unit}s) equals the {unit} {d} "
                   f"before it ({n - s - d} {unit}s compared, all equal)", _bound(n, need * bits),
                   f"union bound: n 2^-{need * bits:.0f} (a claim needs {need} matching {unit}s at the end)", True,
                   what[0].upper() + what[1:] + ".", {"period": d, "start": s, "n": n, "compared": n - s - d})


# ------------------------------------------------------------------------------------------- grid


def grid_finding(vals: np.ndarray, fmt: Format) -> Finding | None:
    """Float values on a grid coarser than the format claims, by the ``fraction grid`` check (one bit short of
    the claim is a sound 52-bit construction there, and not a finding here either)."""
    if fmt.kind != "floats" or vals.size < 2:
        return None
    from .transform.resolution import check_fraction_grid

    c = views.claimed_bits(fmt)
    res = check_fraction_grid(np.asarray(vals, dtype=np.float64), resolution_bits=c)
    r = int(res.statistic)
    if r >= c - 1:
        return None
    return Finding("grid", "grid", {"grid_bits": r, "claimed_bits": c},
                   f"all {res.n} values are multiples of 2^-{r}; {fmt.name} claims 2^-{c}", res.p_value,
                   f"exact law: P(all n on the 2^-r grid) = 2^(-n ({c - 1} - r)) (fraction grid check)", True,
                   f"The values carry only {r} fraction bits although {fmt.name} claims {c}: they lie on a grid "
                   f"2^{c - r} times coarser.", {"bits": r, "claimed": c, "n": res.n})


# ------------------------------------------------------------------------------------------- lags


def symbols(vals: np.ndarray, fmt: Format) -> tuple[np.ndarray, float, int | None] | None:
    """(x as uint64, K equally likely values under H0, b bits when K = 2^b else None) for the lag tests."""
    if fmt.kind == "bytes":
        return views.as_words32(vals, fmt).astype(np.uint64), 2.0**32, 32
    if fmt.kind == "words":
        b = 8 * fmt.itemsize
        return vals.astype(np.uint64), 2.0**b, b
    if fmt.kind in ("text-integers", "ranged-words"):  # values LO..HI: x - LO, K = HI - LO + 1 of them
        assert fmt.lo is not None and fmt.hi is not None
        k = fmt.hi - fmt.lo + 1
        x = (vals.astype(np.uint64) - np.uint64(fmt.lo)) if fmt.kind == "ranged-words" else \
            (vals.astype(np.int64) - fmt.lo).astype(np.uint64)
        b = k.bit_length() - 1
        return x, float(k), (b if k == 1 << b and fmt.kind == "ranged-words" else None)
    u = np.asarray(vals, dtype=np.float64)
    if fmt.kind == "text-floats":
        d = fmt.decimals if fmt.decimals is not None else views.decimal_grid(u)
        if d is not None:
            return np.rint(u * 10.0**d).astype(np.uint64), 10.0**d, None
        r = views.fraction_grid_bits(u, 53)
        return np.floor(u * 2.0**r).astype(np.uint64), 2.0**r, r
    m, r = float_fields(u, fmt)
    return m, 2.0**r, r


def lag_findings(x: np.ndarray, K: float, b: int | None) -> tuple[list[Finding], int]:
    """The strongest lag of each test (equal values, three-term relation, serial correlation) with its
    statistic; returns (candidates, tests run). ``x``: values in [0, K)."""
    from .findings_kernels import equal_at_lags, three_term

    out: list[Finding] = []
    tests = 0
    xs = np.ascontiguousarray(x[:LAG_VALUES])
    n = int(xs.size)
    lags = min(MAX_LAG, n // 4)
    if K < 2 or lags < 1:
        return [], 0
    eq = equal_at_lags(xs, lags)
    q = 1.0 / K
    law = "exact binomial, Binomial(n - L, 1/K), right tail"
    if K <= 2**16:  # few values: the sample's own chance of two equal values, sum of squared frequencies
        f = np.bincount(xs.astype(np.int64), minlength=int(K)) / n
        q = max(q, float(np.dot(f, f)))
        law = ("binomial, Binomial(n - L, q) with q = the sample's sum of squared value frequencies (at least 1/K: "
               "conservative under H0, and robust to unequal frequencies), right tail")
    trials = n - np.arange(1, lags + 1)
    ps = binom_right(eq, trials, q)
    L = int(np.argmin(ps)) + 1
    out.append(Finding("lag", "equal", {"lag": L}, f"x[i] == x[i-{L}] in {int(eq[L - 1])} of {n - L} positions "
                       f"({(n - L) * q:.3g} expected)", float(ps[L - 1]), law, False,
                       f"Values repeat at lag {L}: {int(eq[L - 1])} of {n - L} values equal the one {L} before.",
                       {"count": int(eq[L - 1]), "trials": n - L, "expected": (n - L) * q}))
    tests += lags
    y = xs.astype(np.float64)
    y -= y.mean()
    s2 = float(np.dot(y, y)) / n
    if s2 > 0:
        zs = np.array([float(np.dot(y[L:], y[:-L])) for L in range(1, lags + 1)]) / (s2 * np.sqrt(trials))
        L = int(np.argmax(np.abs(zs))) + 1
        z = float(zs[L - 1])
        rho = z / math.sqrt(n - L)
        out.append(Finding("lag", "correlation", {"lag": L}, f"serial correlation at lag {L} is {rho:+.4f} over "
                           f"{n - L} pairs (Z = {z:+.2f})", normal_two_sided(z),
                           "standard normal, two-sided: the sample autocorrelation times sqrt(n - L) is "
                           "asymptotically N(0, 1) for i.i.d. values (Bartlett 1946, from memory)", False,
                           f"Values are correlated at lag {L} (correlation {rho:+.3f}).",
                           {"z": z, "correlation": rho, "pairs": n - L}))
        tests += lags
    if b is not None and b >= 16:
        xr = np.ascontiguousarray(x[:RELATION_VALUES])
        nr, kmax = int(xr.size), min(RELATION_LAG, int(xr.size) // 4)
        if kmax >= 2:
            mask = np.uint64((1 << b) - 1) if b < 64 else np.uint64(0xFFFFFFFFFFFFFFFF)
            cnt = three_term(xr, kmax, mask)
            jj, kk = np.triu_indices(kmax, 1)  # j < k, as 0-based lags - 1
            qs = np.array([3.0, 3.0, 3.0, 1.0]) * 2.0**-b
            cs = cnt[jj, kk, :]  # pairs x relations
            ps = binom_right(cs, (nr - (kk + 1))[:, None], qs[None, :])
            tests += int(ps.size)
            a, op = np.unravel_index(int(np.argmin(ps)), ps.shape)
            j, k, op = int(jj[a]) + 1, int(kk[a]) + 1, int(op)
            p, c, q = float(ps[a, op]), int(cs[a, op]), float(qs[op])
            rel = _RELATIONS[op].format(j=j, k=k)
            carry = " (within a carry of 1)" if op < 3 else ""
            out.append(Finding("lag", "relation", {"lags": [j, k], "relation": rel},
                               f"{rel} (mod 2^{b}){carry} in {c} of {nr - k} positions ({(nr - k) * q:.3g} expected)",
                               p, f"exact binomial, Binomial(n - {k}, {'3 ' if op < 3 else ''}2^-{b}), right tail",
                               c == nr - k, f"Each value is tied to the values {j} and {k} before it: {rel}"
                               f"{' (mod 2^%d)' % b} holds in {c} of {nr - k} positions.",
                               {"count": c, "trials": nr - k, "expected": (nr - k) * q}))
    return out, tests


# ------------------------------------------------------------------------------------------- all together


def diagnose(vals: np.ndarray, fmt: Format, alpha: float = FINDINGS_ALPHA) -> tuple[list[Finding], int]:
    """All findings on one sample of decoded values (module docstring): ``(findings, m)``, where a finding is
    kept only when its p-value is at most ``alpha / m`` and ``m`` counts every test run (Bonferroni: on sound
    data some finding is reported with probability at most ``alpha``). A finding that another explains is left
    out: lags and lane periods that the stream's own period accounts for."""
    cands: list[Finding] = []
    m = 0
    per = period_finding(vals, fmt)
    m += 1
    if per is not None:
        cands.append(per)
    grid = grid_finding(vals, fmt)
    m += 1 if fmt.kind == "floats" else 0
    if grid is not None:
        cands.append(grid)
    lanes = lane_words(vals, fmt)
    if lanes is not None:
        found, t = lane_findings(lanes)
        cands += found
        m += t
    sym = symbols(vals, fmt)
    if sym is not None:
        found, t = lag_findings(*sym)
        cands += found
        m += t
    level = alpha / max(m, 1)
    kept = [f for f in cands if f.p_value <= level]
    return group_lanes(_explained_away(kept, fmt)), m


def _explained_away(found: list[Finding], fmt: Format) -> list[Finding]:
    """Leave out what the stream's period explains: any lag finding when the period is at most the longest lag
    tried, and lane periods equal to the stream's period."""
    per = next((f for f in found if f.kind == "period"), None)
    if per is None:
        return found
    p_bytes = per.where["period"] * (1 if fmt.is_binary else 0)
    word = {"bytes": 4, "words": fmt.itemsize}.get(fmt.kind, 0)
    short = per.where["period"] <= MAX_LAG * max(word, fmt.itemsize, 1)
    out = []
    for f in found:
        if f.kind == "lag" and short:
            continue
        if f.test == "periodic" and word and p_bytes and f.where["period"] * word == p_bytes:
            continue
        out.append(f)
    return out


def group_lanes(found: list[Finding]) -> list[Finding]:
    """One finding per lane test (constant, frequency, periodic) naming all its lanes, so that a generator with
    many weak lanes reads as one sentence; the group's p-value is the smallest of its lanes'."""
    out: list[Finding] = []
    for test in ("constant", "frequency", "periodic"):
        group = sorted((f for f in found if f.kind == "lane" and f.test == test), key=lambda f: f.where["lane"])
        if len(group) <= 1:
            out += group
            continue
        names = _lane_list([f.where["name"] for f in group])
        unit = group[0].stats["unit"]
        stats: dict[str, Any] = {"lanes": [f.where["lane"] for f in group], "n": group[0].stats["n"], "unit": unit}
        if test == "periodic":
            shown = [f"{f.where['name']} every {f.where['period']}" for f in group]
            if len(shown) > 5:
                shown = shown[:3] + ["...", shown[-1]]
            sentence = f"{names} repeat with short periods (in {unit}s): {', '.join(shown)}."
            stats.update(periods=[f.where["period"] for f in group], starts=[f.where["start"] for f in group])
        elif test == "constant":
            ones = {1 if f.stats["ones"] else 0 for f in group}
            sentence = f"{names} never change" + (f" (always {ones.pop()})." if len(ones) == 1 else ".")
            stats.update(ones=[f.stats["ones"] for f in group])
        else:
            sentence = f"{names} are 1 far from half the time."
            stats.update(ones=[f.stats["ones"] for f in group])
        n = group[0].stats["n"]
        if test == "periodic":
            least = min(n - f.where["start"] - f.where["period"] for f in group)
            starts = sorted({f.where["start"] for f in group})
            evidence = (f"each lane equals itself one period later in every position from {unit} "
                        f"{starts[0] if len(starts) == 1 else 'S (its start)'} to the end of the sample ({n} {unit}s; "
                        f"at least {least} positions compared per lane)")
        elif test == "constant":
            evidence = "; ".join(f"{f.where['name']} is {1 if f.stats['ones'] else 0}" for f in group) + \
                f" in all {n} {unit}s"
        else:
            evidence = "; ".join(f"{f.where['name']} is 1 in {f.stats['ones']}" for f in group[:8]) + \
                (f"; and {len(group) - 8} more" if len(group) > 8 else "") + f" of {n} {unit}s"
        out.append(Finding("lane", test, {"lanes": stats["lanes"], "convention": group[0].where["lanes"]}, evidence,
                           min(f.p_value for f in group), group[0].law, all(f.exact for f in group), sentence, stats))
    return out + [f for f in found if f.kind != "lane"]


def _lane_list(labels: list[str]) -> str:
    """"bit 0, bit 1 and bit 5", or "18 lanes (bit 0 to bit 17)"."""
    if len(labels) > 5:
        return f"{len(labels)} lanes ({labels[0]} to {labels[-1]})"
    return ", ".join(labels[:-1]) + " and " + labels[-1]
