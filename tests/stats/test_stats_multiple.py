"""Holm and Benjamini–Hochberg against hand-computed examples and scipy."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from rngassay.stats import benjamini_hochberg, benjamini_hochberg_adjusted, holm, holm_adjusted

P = [0.01, 0.04, 0.03, 0.005]


def test_holm_hand_example():
    # Holm (1979) by hand, m = 4, alpha = 0.05: sorted 0.005 <= 0.05/4 yes, 0.01 <= 0.05/3 yes,
    # 0.03 <= 0.05/2 no -> stop; reject the 0.005 and 0.01 hypotheses only.
    np.testing.assert_array_equal(holm(P, 0.05), [True, False, False, True])
    # adjusted: cummax of (4*0.005, 3*0.01, 2*0.03, 1*0.04) = 0.02, 0.03, 0.06, 0.06
    np.testing.assert_allclose(holm_adjusted(P), [0.03, 0.06, 0.06, 0.02], rtol=1e-14)


def test_bh_hand_examples():
    # Benjamini & Hochberg (1995) by hand, q = 0.05, thresholds i q / m = .0125 .025 .0375 .05:
    # all four sorted values pass -> all rejected
    np.testing.assert_array_equal(benjamini_hochberg(P, 0.05), [True] * 4)
    # adjusted: m p_(i) / i = .02 .02 .04 .04, then running minimum from the top
    np.testing.assert_allclose(benjamini_hochberg_adjusted(P), [0.02, 0.04, 0.04, 0.02], rtol=1e-14)
    # step-up: 0.02 > .0125 and 0.03 > .025 fail, 0.035 <= .0375 passes -> reject the first three
    np.testing.assert_array_equal(benjamini_hochberg([0.02, 0.03, 0.035, 0.9], 0.05), [True, True, True, False])
    # same family under Holm: 0.02 > 0.05/4 -> nothing rejected
    assert not holm([0.02, 0.03, 0.035, 0.9], 0.05).any()


def test_bh_adjusted_vs_scipy():
    rng = np.random.default_rng(17)
    for m in (1, 2, 10, 257):
        p = rng.random(m) ** 3
        ref = stats.false_discovery_control(p, method="bh")  # scipy.stats reference
        np.testing.assert_allclose(benjamini_hochberg_adjusted(p), ref, rtol=1e-12)


def test_rejections_agree_with_adjusted():
    rng = np.random.default_rng(18)
    for _ in range(50):
        p = rng.random(40) ** 4
        for a in (0.01, 0.05, 0.1):
            np.testing.assert_array_equal(holm(p, a), holm_adjusted(p) <= a)
            np.testing.assert_array_equal(benjamini_hochberg(p, a), benjamini_hochberg_adjusted(p) <= a)


def test_edge_cases():
    assert holm([], 0.05).size == 0 and holm_adjusted([]).size == 0
    assert benjamini_hochberg([], 0.05).size == 0
    np.testing.assert_array_equal(holm([0.001, 0.001], 0.05), [True, True])  # ties
    with pytest.raises(ValueError):
        holm([0.1, np.nan], 0.05)
    with pytest.raises(ValueError):
        benjamini_hochberg([0.1], 1.5)
