"""Continuous variates printed with few decimals: the interval PIT keeps the PIT battery honest."""

import numpy as np
import pytest
from scipy import stats as sps

from rngassay.api import fit
from rngassay.checks.transform.conformance import interval_pit
from rngassay.intake.views import decimal_grid


def test_decimal_grid_detection():
    rng = np.random.Generator(np.random.PCG64(1))
    x = rng.normal(size=1000)
    assert decimal_grid(x) is None  # full precision: no decimal grid
    assert decimal_grid(np.round(x, 2)) == 2
    assert decimal_grid(np.round(x * 100)) == 0


def test_interval_pit_is_uniform_for_rounded_normals():
    # a continuous N(0,1) variate rounded to 1 decimal, then the randomised interval PIT: exactly U(0,1)
    # under H0 (randomised PIT of a discretised variable, common practice); KS against uniform with
    # scipy.stats as the reference (fixed seeds: deterministic; p > 1e-3 is far from a false failure)
    rng = np.random.Generator(np.random.PCG64(2))
    x = np.round(rng.normal(size=200_000), 1)
    u = interval_pit(sps.norm(), x, 1, seed=7)
    assert sps.kstest(u, "uniform").pvalue > 1e-3
    # the plain PIT of the same rounded values is visibly not uniform (values on a grid)
    assert sps.kstest(sps.norm.cdf(x), "uniform").pvalue < 1e-10


def test_fit_of_two_decimal_normals_passes():
    # the case the review found failing (p ~ 1e-88 via the PIT battery): sound N(0,1) data printed with
    # 2 decimals; fixed seed
    rng = np.random.Generator(np.random.PCG64(3))
    x = np.round(rng.normal(size=50_000), 2)
    r = fit(x, dist="norm", workers=1)
    assert r.verdict != "fail", [(c.id, c.p_value) for c in r.checks if c.grade == "fail"]
    assert "interval PIT" in r.settings["pit"]


def test_rounded_but_wrong_law_still_fails():
    rng = np.random.Generator(np.random.PCG64(4))
    x = np.round(rng.normal(loc=0.1, size=50_000), 2)  # declared N(0, 1): a shift of 0.1 sd
    r = fit(x, dist="norm", workers=1)
    assert r.verdict == "fail" and min(c.p_value for c in r.checks) < 1e-10
