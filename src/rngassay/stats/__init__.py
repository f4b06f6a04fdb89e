"""Statistics core: exact tails, chi-square with pooling, KS, AD, second-level tests,
multiple testing and p-value combination.

Conventions (see :mod:`rngassay.stats.tails`): right tail ``P(T >= t)``, left tail
``P(T <= t)``; p-values are clipped into ``[P_FLOOR, 1]`` and never 0; NaN input raises
:class:`ValueError`.
"""

from .ad import AD_EPS, AD_TAIL_SWITCH, ad_log10_pvalue, ad_pvalue, ad_statistic, ad_uniform, adinf_sf
from .chisq import (
    EXACT_MULTINOMIAL_MAX_OUTCOMES,
    ChiSquareResult,
    chisquare_gof,
    exact_multinomial_p,
    g_test,
    pooling_groups,
)
from .combine import CAUCHY_P_MAX, cauchy_combination, harmonic_mean, harmonic_mean_p
from .ks import KS_EXACT_MAX_N, ks_cdf, ks_pvalue, ks_statistic, ks_uniform
from .multiple import (benjamini_hochberg, benjamini_hochberg_adjusted, bonferroni, holm, holm_adjusted, sidak,
                       sidak_log, sidak_min)
from .secondlevel import pool_binomial, pool_chisquare, pool_poisson, proportion_below, uniformity_of_pvalues
from .tails import (
    P_FLOOR,
    binomial_tails,
    chi2_log10_sf,
    chi2_tails,
    clip_p,
    clip_p_array,
    discrete_two_sided,
    two_sided,
    log10_p,
    normal_log10_sf,
    normal_tails,
    normal_two_sided,
    poisson_tails,
)

__all__ = [
    "bonferroni", "sidak", "sidak_log", "sidak_min", "two_sided",
    "P_FLOOR", "clip_p", "clip_p_array", "log10_p",
    "chi2_tails", "chi2_log10_sf", "normal_tails", "normal_two_sided", "normal_log10_sf",
    "poisson_tails", "binomial_tails", "discrete_two_sided",
    "ChiSquareResult", "pooling_groups", "chisquare_gof", "g_test", "exact_multinomial_p",
    "EXACT_MULTINOMIAL_MAX_OUTCOMES",
    "KS_EXACT_MAX_N", "ks_statistic", "ks_pvalue", "ks_uniform", "ks_cdf",
    "AD_EPS", "AD_TAIL_SWITCH", "ad_statistic", "ad_pvalue", "ad_log10_pvalue", "ad_uniform", "adinf_sf",
    "uniformity_of_pvalues", "proportion_below", "pool_poisson", "pool_chisquare", "pool_binomial",
    "holm", "holm_adjusted", "benjamini_hochberg", "benjamini_hochberg_adjusted",
    "cauchy_combination", "harmonic_mean", "harmonic_mean_p", "CAUCHY_P_MAX",
]
