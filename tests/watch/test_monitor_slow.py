"""Calibration and power of the outcome monitor by simulation (slow; fixed seeds)."""

import math

import numpy as np
import pytest
from scipy import stats

from game import PRIZES, PROBS, declared, draw

from rngassay.watch.design import arl_one_sided, arl_two_sided
from rngassay.watch.monitor import Monitor

EPROC = ("log10 eprocess-table", "log10 eprocess-tier")


@pytest.mark.slow
def test_false_alarms_of_the_eprocesses_are_within_alpha():
    # 1000 sound streams of 1e5 outcomes at alpha = 0.001; Ville's inequality bounds P(any e-process alarm) by alpha.
    # Exact binomial test (scipy.stats.binom): the count must not be significantly above 1000 * alpha (p >= 0.01).
    rng = np.random.default_rng(20240615)
    alarms = 0
    for _ in range(1000):
        m = Monitor(declared(), 0.001, cusum_limit=30.0)
        a = m.update_many(draw(rng, 100_000), None, None, 0)
        alarms += any(x["statistic"] in EPROC for x in a)
    assert stats.binom.sf(alarms - 1, 1000, 0.001) >= 0.01, alarms
    print("e-process false alarms in 1000 x 1e5:", alarms)


@pytest.mark.slow
def test_twenty_percent_drift_of_a_one_in_a_hundred_tier_is_flagged():
    # 'small' (1 in 100) at 1.2 / 100, mass taken from the losing outcome; 200 runs of 2e5 outcomes, fixed seed.
    probs = PROBS.copy()
    probs[4] *= 1.2
    probs[-1] = 1 - probs[:-1].sum()
    rng = np.random.default_rng(99)
    delays = []
    for _ in range(200):
        m = Monitor(declared(), 0.001, cusum_limit=30.0)
        a = [x for x in m.update_many(draw(rng, 200_000, probs), None, None, 0) if x["statistic"] in EPROC]
        delays.append(a[0]["index"] + 1 if a else math.inf)
    d = np.array(delays)
    assert np.mean(np.isfinite(d)) >= 0.9, np.mean(np.isfinite(d))
    print("20% drift: flagged", np.mean(np.isfinite(d)), "median delay", np.median(d))


@pytest.mark.slow
def test_return_slide_of_two_points_is_flagged():
    # Declared 95 %; every payout cut to 93/95 of its prize (a 2-point slide).  40 runs, fixed seed.
    rng = np.random.default_rng(31)
    delays = []
    for _ in range(40):
        m = Monitor(declared(), 0.001)
        x = draw(rng, 1_500_000)
        pay = PRIZES[x] * (0.93 / 0.95)
        a = [y for y in m.update_many(x, None, pay, 0) if y["statistic"] == "cusum-down"]
        delays.append(a[0]["index"] + 1 if a else math.inf)
    d = np.array(delays)
    assert np.mean(np.isfinite(d)) >= 0.9
    print("2-point slide: flagged", np.mean(np.isfinite(d)), "median delay", np.median(d))


def _sim_cusum(z, k, h):
    s, n = 0.0, 0
    for v in z:
        n += 1
        s = max(0.0, s + v - k)
        if s >= h:
            return n
    return None


@pytest.mark.slow
def test_brook_evans_arl_against_simulation():
    # Independent estimate: simulated run lengths of a one-sided CUSUM with N(0,1) increments, k = 0.5, h = 4
    # (fixed seed, 4000 runs).  Tolerance: 4 standard errors of the mean run length.  Published value for
    # k = 0.5, h = 4 is about 336 (Montgomery's SPC tables, from memory) - checked loosely below.
    from numba import njit

    @njit
    def runs(seed, nrun, k, h):
        np.random.seed(seed)
        out = np.empty(nrun)
        for r in range(nrun):
            s, n = 0.0, 0
            while True:
                n += 1
                s = max(0.0, s + np.random.standard_normal() - k)
                if s >= h:
                    break
            out[r] = n
        return out

    rl = runs(7, 4000, 0.5, 4.0)
    arl = arl_one_sided(0.5, 4.0)
    se = rl.std() / math.sqrt(rl.size)
    assert abs(arl - rl.mean()) < 4 * se, (arl, rl.mean(), se)
    assert 320 < arl < 350
    # the two-sided ARL of the monitor's own CUSUM on simulated game outcomes (clipped returns, batches of 100,
    # limit 6): simulated mean run length within 15 % of the chain's value (the Pearson III law is an
    # approximation of the batch mean's law; 15 % is the stated tolerance).
    m = Monitor(declared(), 0.001, cusum_batch=100, cusum_limit=6.0)
    info = m.summary()["cusum"]
    rng = np.random.default_rng(5)
    lengths = []
    for _ in range(300):
        mm = Monitor(declared(), 0.001, cusum_batch=100, cusum_limit=6.0)
        pos = 0
        while True:
            a = [y for y in mm.update_many(draw(rng, 50_000), None, None, pos) if y["statistic"].startswith("cusum")]
            if a:
                lengths.append(a[0]["index"] + 1)
                break
            pos += 50_000
    sim = float(np.mean(lengths))
    print("CUSUM ARL0: chain", info["arl0_outcomes"], "simulated", sim)
    assert abs(sim / info["arl0_outcomes"] - 1) < 0.15
