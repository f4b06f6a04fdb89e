"""The result object every check returns.

A check is a pure function over numpy arrays; it returns one :class:`CheckResult`.
p-values are *right-tail* probabilities of the statistic under the null hypothesis
(large statistic = evidence against randomness).  Where a statistic that is too
*small* is itself evidence ("too good a fit", too few collisions), ``p_left`` is
set as well; otherwise it is ``None``.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Literal

StatKind = Literal["continuous", "discrete"]


@dataclass(frozen=True)
class CheckResult:
    """Outcome of one check on one segment of data.

    statistic -- the test statistic's observed value
    p_value   -- right-tail p-value P(T >= t | H0), never exactly 0 or 1 by rounding
    p_left    -- left-tail p-value P(T <= t | H0) where a small statistic means something, else None
    null      -- description of the null distribution, e.g. "chi2(df=15)" or "poisson(mu=2.0)"
    kind      -- "continuous" or "discrete": whether p-values are continuous under H0
    n         -- number of values (bits, words, uniforms...) the check consumed
    details   -- small JSON-able extras for the report (counts, expected counts, ...)
    pooled    -- for discrete statistics whose replicates are pooled at the second level:
                 the additive sufficient quantities, e.g. {"observed": 3, "mu": 2.0} for a Poisson count
    """

    name: str
    statistic: float
    p_value: float
    null: str
    kind: StatKind = "continuous"
    p_left: float | None = None
    n: int = 0
    details: dict[str, Any] = field(default_factory=dict)
    pooled: dict[str, Any] | None = None

    @property
    def p_two_sided(self) -> float:
        """min(1, 2 * min(right, left)) where both tails mean something, else the right tail."""
        if self.p_left is None:
            return self.p_value
        return min(1.0, 2.0 * min(self.p_value, self.p_left))
