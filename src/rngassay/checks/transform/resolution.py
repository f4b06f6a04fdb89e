"""Resolution check: repeated values among the uniforms against the count the claimed resolution allows.

H0: the n uniforms are i.i.d. and uniform on the grid of ``m = 2^bits`` values
``{k 2^-bits : 0 <= k < m}``.  The statistic is the number of repeats ``C = n - #distinct`` (the
"collisions" of Knuth's collision test with the urns being the grid points), counted in a sorted
copy.  Its exact mean is ``n - m (1 - (1 - 1/m)^n)`` (Knuth, TAOCP Vol. 2, 3rd ed., §3.3.2 I), about
``n (n - 1) / (2 m)``: for 10^5 float32-grade uniforms (m = 2^24) about 298 (check-values.md §7),
for 53-bit uniforms 5.5e-7.  When ``n << m`` the count is Poisson with that mean (the classic
birthday limit); the Poisson law is used for the p-values and for pooling across replicates
(``pooled = {"observed": C, "mu": E[C]}``).  When n is not small against m (16-bit grids) the true
law is much narrower than the Poisson one, so the test is then valid but conservative.

Both tails: too many repeats mean the uniforms are coarser than claimed (float32 values passed off
as doubles, 32-bit words scaled to "53-bit" floats, few printed decimals); too few mean values that
avoid each other (a full-period generator of the claimed width, a permutation), which a random
sequence does not do.

Resolution (``resolution_bits``): see :mod:`._common`: ``None`` (the default) infers 16 or 32 bits when every value lies on
that grid, otherwise 53.  Float32-grade uniforms (multiples of 2^-24) are therefore judged at 32
bits, and they repeat 256 times as often as 32-bit uniforms do: one MiB of them as ``<f8``
(131072 values) holds about 512 repeats where 2 are expected.
"""

from __future__ import annotations

import numpy as np

from rngassay.checks.classic.frequency import need, result_name, uniforms
from rngassay.checks.registry import CheckSpec, register
from rngassay.checks.result import CheckResult
from rngassay.stats import poisson_tails

from ._common import expected_repeats, resolve_bits

#: Fewest uniforms a default run uses.
MIN_VALUES = 1000


def count_repeats(u: np.ndarray) -> int:
    """n - #distinct values (numpy sort, then equal neighbours)."""
    s = np.sort(np.asarray(u, dtype=np.float64))
    if s.size < 2:
        return 0
    return int(np.count_nonzero(s[1:] == s[:-1]))


def check_float_resolution(data: np.ndarray, resolution_bits: int | None = None, n: int | None = None) -> CheckResult:
    """Repeated values among the uniforms against the claimed resolution (module docstring).

    H0: i.i.d. uniforms on the 2^-bits grid; the repeat count is ~Poisson(E[C]), E[C] exact.
    Both tails.
    """
    u = uniforms(data, n, "float resolution")
    need(u.size, 2, "float resolution")
    b, inferred = resolve_bits(u, resolution_bits)  # lowered to the grid found: a coarse grid fails only once
    c = count_repeats(u)
    m = int(u.size)
    mu = expected_repeats(m, b)
    right, left = poisson_tails(c, mu)
    return CheckResult(
        name=result_name("float resolution", {"resolution_bits": resolution_bits}), statistic=float(c), p_value=right,
        p_left=left, null=f"poisson(mu={mu:.6g})", kind="discrete", n=m,
        pooled={"observed": c, "mu": mu},
        details={"repeats": c, "expected": mu, "bits": b, "bits_inferred": inferred,
                 "pairs_expected_float32": m * (m - 1) / 2.0 / 2.0**24},
    )


register(CheckSpec(
    key="float resolution", family="transform", title="repeated values against the claimed float resolution",
    view="uniforms", kind="discrete", func=check_float_resolution, values_needed=lambda p: int(p["n"]),
    default_params=lambda n: [{"n": n}] if n >= MIN_VALUES else [], both_tails=True,
    source="Knuth, TAOCP Vol. 2, 3rd ed., §3.3.2 I (expected collisions); Poisson limit",
    notes="resolution inferred from the data: 16 or 32 bits when every value lies on that grid, else 53",
    resolution_param='resolution_bits',
))


# --------------------------------------------------------------------------- effective resolution


def check_fraction_grid(data: np.ndarray, resolution_bits: int = 53, n: int | None = None) -> CheckResult:
    """The grid the values actually lie on: the largest r with every value a multiple of 2^-r.

    H0: i.i.d. uniforms on the claimed grid 2^-c (c = ``resolution_bits``). Then each value is a multiple
    of 2^-r (r < c) with probability 2^-(c - r), so P(all n are) = 2^(-n (c - r)) exactly. One bit short of
    the claim is allowed (tolerance t = c - 1): doubles made from a 52-bit mantissa ("[1, 2) minus 1") are
    a common, sound construction and are named in the details, not failed; the p-value is
    2^(-n (t - r)) for r < t, else 1 (conservative). A stream on a coarser grid (a 48-bit generator's
    fractions as ``<f8``, float32 values as ``<f8``) fails here once; the word and bit views then take only
    the bits the values carry (:mod:`rngassay.intake.views`), so the same grid is not failed again.
    Discrete; pooled over replicates as the smallest r over all values.
    """
    from rngassay.intake.views import fraction_grid_bits

    u = uniforms(data, n, "fraction grid")
    need(u.size, 2, "fraction grid")
    c = int(resolution_bits)
    if not 1 <= c <= 53:
        raise ValueError(f"fraction grid: resolution_bits must be in 1..53, got {resolution_bits}")
    r = fraction_grid_bits(u, c)
    return _grid_result(r, int(u.size), c)


def _grid_result(r: int, m: int, c: int) -> CheckResult:
    t = c - 1
    log2p = -float(m) * (t - r) if r < t else 0.0
    p = max(2.0**log2p, 1e-300) if log2p > -996 else 1e-300
    note = ("every value on the claimed grid" if r >= c else
            f"{r}-bit values (a {r}-bit mantissa construction): a note, not a failure" if r == t else
            f"every value lies on a 2^-{r} grid although the format claims 2^-{c}")
    return CheckResult(
        name="fraction grid", statistic=float(r), p_value=p, null=f"P(all on a 2^-r grid) = 2^(-n ({t} - r)), r < {t}",
        kind="discrete", n=m, pooled={"r": r, "n": m, "claimed": c},
        details={"grid": f"2^-{r}", "claimed": f"2^-{c}", "bits": r, **({"note": note} if r < c else {})},
    )


def pool_fraction_grid(pooled: list[dict]) -> CheckResult:
    """All replicates at once: the smallest grid exponent over all values, and all values counted."""
    c = int(pooled[0]["claimed"])
    return _grid_result(min(int(p["r"]) for p in pooled), sum(int(p["n"]) for p in pooled), c)


register(CheckSpec(
    key="fraction grid", family="transform", title="effective resolution: the grid the values lie on",
    view="uniforms", kind="discrete", func=check_fraction_grid, values_needed=lambda p: int(p["n"]),
    default_params=lambda n: [{"n": n}] if n >= 64 else [],
    source="exact law: P(n i.i.d. values on the 2^-c grid all lie on the 2^-r grid) = 2^(-n (c - r))",
    notes="one bit short of the claimed grid (52-bit doubles) is named, not failed",
    resolution_param='resolution_bits', judges_grid=True, cheap=True, pool=pool_fraction_grid,
))
