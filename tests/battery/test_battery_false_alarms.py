"""Run-level false alarms at the smallest budget, where discreteness of statistics bites hardest.

The family-wise promise (README "Grades"): a sound stream fails a run with probability at most about
alpha = 0.001. Over 60 runs (fixed seeds, so the outcome is deterministic) the chance of 3 or more fails
under that promise is C(60,3) * 0.001^3 ~ 3.4e-5, so more than 2 fails means the promise is broken.
"""

import numpy as np
import pytest

from rngassay.api import stream_from_array, assay_stream


@pytest.mark.slow
def test_few_false_fails_at_the_minimum_budget():
    verdicts = []
    for seed in range(60):
        data = np.frombuffer(np.random.Generator(np.random.PCG64(1000 + seed)).bytes(64 << 10), np.uint8)
        with stream_from_array(data, "u1", name=f"pcg64-{seed}") as s:
            verdicts.append(assay_stream(s, workers=1).verdict)
    assert verdicts.count("fail") <= 2, verdicts
