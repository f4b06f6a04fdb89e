"""Random excursions checks: visits of the ±1 random walk to states between returns to zero.

Null hypothesis: the bits are independent fair coin flips, so the walk S_k = sum (2 x_i - 1),
cut into cycles at its returns to 0, visits each state x with the fair-walk distribution.
Methods: NIST SP 800-22 Rev. 1a §2.14 (random excursions, states ±1..±4) and §2.15 (variant,
states ±1..±9), after Baron & Rukhin (1999).  The p-values are conditional on the number of
cycles J; with too few cycles (J < max(500, 0.005 sqrt n)) the standard does not apply the test,
and these functions return an empty list.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from rngassay.checks.registry import CheckSpec, SharedTable, register
from rngassay.checks.result import CheckResult

from ._common import as_packed, chi2_counts, erfc_p, igamc, need

SP800_22 = "NIST SP 800-22 Rev. 1a (2010)"
EXCURSION_STATES = (-4, -3, -2, -1, 1, 2, 3, 4)
VARIANT_STATES = tuple(x for x in range(-9, 10) if x != 0)


_POP8 = np.array([bin(v).count("1") for v in range(256)], dtype=np.int64)


@njit(cache=True)
def _walk_cycles(packed, n_bits):
    """J (number of cycles), nu[8, 6] (cycles visiting state -4..-1,1..4 exactly k = 0..4, >=5 times),
    xi[19] (total visits to each state -9..9).

    Far from zero (|S| >= 18) no step of the next byte can reach a counted state, so the walk moves a whole
    byte at once (S += 2 popcount - 8); the walk spends most of its time there (|S| grows like sqrt(n))."""
    nu = np.zeros((8, 6), dtype=np.int64)
    xi = np.zeros(19, dtype=np.int64)
    cyc = np.zeros(9, dtype=np.int64)  # visits to -4..4 in the current cycle (index s + 4)
    pop = _POP8
    s = 0
    J = 0
    i = 0
    while i < n_bits:
        if (i & 7) == 0 and i + 8 <= n_bits and (s >= 18 or s <= -18):
            s += 2 * pop[packed[i >> 3]] - 8
            i += 8
            continue
        b = (packed[i >> 3] >> (7 - (i & 7))) & 1
        i += 1
        s += 2 * b - 1
        if s == 0:
            J += 1
            for t in range(9):
                if t != 4:
                    k = cyc[t] if cyc[t] < 5 else 5
                    nu[t if t < 4 else t - 1, k] += 1
                    cyc[t] = 0
        elif -9 <= s <= 9:
            xi[s + 9] += 1
            if -4 <= s <= 4:
                cyc[s + 4] += 1
    if s != 0:
        J += 1
        for t in range(9):
            if t != 4:
                k = cyc[t] if cyc[t] < 5 else 5
                nu[t if t < 4 else t - 1, k] += 1
    return J, nu, xi


def excursion_probs(x: int) -> np.ndarray:
    """pi_k(x), k = 0..4 and >= 5: probability that a cycle visits state x exactly k times
    (SP 800-22 §3.14): pi_0 = 1 - 1/(2|x|), pi_k = (1/(4x^2)) (1 - 1/(2|x|))^(k-1), pi_5 = rest."""
    a = 1.0 / (2.0 * abs(x))
    p = [1.0 - a] + [(1.0 / (4.0 * x * x)) * (1.0 - a) ** (k - 1) for k in range(1, 5)]
    p.append(a * (1.0 - a) ** 4)
    return np.array(p)


def _min_cycles(n: int, min_cycles: int) -> int:
    return max(int(min_cycles), int(math.ceil(0.005 * math.sqrt(n))))


def random_excursions(packed: np.ndarray, n_bits: int | None = None,
                      min_cycles: int = 500) -> list[CheckResult]:
    """Random excursions test, SP 800-22 §2.14: one result per state x in -4..-1, 1..4.

    For each x, nu_k(x) = number of the J cycles visiting x exactly k times (k = 0..4, >= 5);
    chi2(x) = sum (nu_k - J pi_k(x))^2 / (J pi_k(x)) ~ chi2(5).  Empty list if J is below
    max(min_cycles, 0.005 sqrt n) (the standard's applicability rule).
    """
    return _excursions_result(_walk_table(packed, n_bits), min_cycles)


def _walk_table(packed: np.ndarray, n_bits: int | None, view: str = "bits") -> tuple:
    """(n, J, nu, xi) of the walk over the first ``n_bits`` bits: everything both excursion checks use."""
    packed, n = as_packed(packed, n_bits)
    need(n, 1, "random excursions")
    return (n, *_walk_cycles(packed, n))


# the walk's cycles and visits: the random excursions check and its variant are functions of them
WALK = SharedTable("walk cycles", _walk_table)


def _excursions_result(table: tuple, min_cycles: int = 500) -> list[CheckResult]:
    n, J, nu, _ = table
    if J < _min_cycles(n, min_cycles):
        return []
    out = []
    for i, x in enumerate(EXCURSION_STATES):
        chi2, expected = chi2_counts(nu[i], excursion_probs(x))
        out.append(CheckResult(
            name="random excursions", statistic=chi2, p_value=igamc(2.5, chi2 / 2.0),
            null="chi2(df=5)", kind="continuous", n=n,
            details={"state": x, "cycles": int(J), "counts": nu[i].tolist()},
        ))
    return out


def random_excursions_variant(packed: np.ndarray, n_bits: int | None = None,
                              min_cycles: int = 500) -> list[CheckResult]:
    """Random excursions variant test, SP 800-22 §2.15: one result per state x in -9..-1, 1..9.

    xi(x) = total visits of the walk to x; under H0, given J cycles, xi(x) ~ N(J, 2 J (2|x| - 1))
    approximately; p = erfc(|xi - J| / sqrt(2 J (4|x| - 2))).  Empty list if J is too small.
    """
    return _variant_result(_walk_table(packed, n_bits), min_cycles)


def _variant_result(table: tuple, min_cycles: int = 500) -> list[CheckResult]:
    n, J, _, xi = table
    if J < _min_cycles(n, min_cycles):
        return []
    out = []
    for x in VARIANT_STATES:
        v = int(xi[x + 9])
        z = (v - J) / math.sqrt(J * (4.0 * abs(x) - 2.0))  # erfc(|v-J|/sqrt(2J(4|x|-2))) = erfc_p(z)
        out.append(CheckResult(
            name="random excursions variant", statistic=float(v), p_value=erfc_p(z),
            null="normal approximation", kind="continuous", n=n,
            details={"state": x, "cycles": int(J), "visits": v, "z": z},
        ))
    return out


_NOTE = ("returns list[CheckResult], one per state (details['state']); an empty list when the walk "
         "has fewer than max(500, 0.005 sqrt n) cycles (the standard does not apply the test then)")

register(CheckSpec(
    key="random excursions", family="bits", title="random excursions test", view="bits",
    kind="continuous", func=random_excursions, values_needed=lambda p: int(p["n_bits"]),
    default_params=lambda n: [{"n_bits": n}] if n >= 1_000_000 else [],
    source=f"{SP800_22} §2.14", notes=_NOTE,
    table=WALK, from_table=lambda t, p: _excursions_result(t, p.get("min_cycles", 500)),
))

register(CheckSpec(
    key="random excursions variant", family="bits", title="random excursions variant test", view="bits",
    kind="continuous", func=random_excursions_variant, values_needed=lambda p: int(p["n_bits"]),
    default_params=lambda n: [{"n_bits": n}] if n >= 1_000_000 else [],
    source=f"{SP800_22} §2.15", notes=_NOTE,
    table=WALK, from_table=lambda t, p: _variant_result(t, p.get("min_cycles", 500)),
))
