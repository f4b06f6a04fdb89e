"""Kernel speed of the classic checks of part A on 64 MiB of input (one core).

Run: ``python benchmarks/_classic_a_speed.py [MiB]``.  For each registered default parameter set
of each check, the input is 64 MiB of PCG64 output in the check's view (uniforms: 8 Mi float64;
bytes: 64 Mi uint8; integers: 8 Mi int64 outcomes in [0, 6)); the time of one call after a warm-up
call (numba compilation excluded) gives MB/s of view input = 64 MiB / time.
"""

from __future__ import annotations

import sys
import time

import numpy as np

from rngassay.checks.classic import (  # noqa: F401 - registers the checks
    categorical, correlation, coupon, frequency, gap, goodness, maxoft, permutation, poker, serial,
)
from rngassay.checks.registry import REGISTRY

KEYS = ("equidistribution", "byte frequency", "16-bit frequency", "serial", "serial overlapping", "gap",
        "poker", "coupon collector", "permutation", "maximum-of-t", "kolmogorov-smirnov",
        "anderson-darling", "serial correlation", "categorical frequency", "categorical serial")


def main() -> None:
    mib = int(sys.argv[1]) if len(sys.argv) > 1 else 64
    nbytes = mib << 20
    rng = np.random.Generator(np.random.PCG64(2024))
    raw = rng.integers(0, 256, nbytes, dtype=np.uint8)
    views = {
        "bytes": raw,
        "uniforms": (raw.view("<u8") >> np.uint64(11)).astype(np.float64) * 2.0**-53,
        "integers": rng.integers(0, 6, nbytes // 8),
    }
    print(f"{'check':<44} {'values':>10} {'seconds':>8} {'MB/s':>8}")
    for key in KEYS:
        spec = REGISTRY[key]
        data = views[spec.view]
        for params in spec.default_params(data.size):
            p = dict(params)
            if spec.view == "integers":
                p["k"] = 6
            spec.func(data, **p)  # compile / warm up
            t0 = time.perf_counter()
            res = spec.func(data, **p)
            dt = time.perf_counter() - t0
            mbs = p["n"] * data.itemsize / dt / 1e6
            print(f"{res.name:<44} {p['n']:>10} {dt:>8.3f} {mbs:>8.0f}")


if __name__ == "__main__":
    main()
