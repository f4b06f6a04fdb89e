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
    b, inferred = resolve_bits(u, resolution_bits)
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
    extra={"resolution_param": "resolution_bits"},
))
