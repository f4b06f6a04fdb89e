"""Throughput of the bit-level checks (one core), against one numpy read pass over the same bytes.

Run: ``python benchmarks/bits.py [MiB]`` (default 64).  Input: MiB of numpy PCG64 output bytes.
Every check is called once on a small slice (numba compilation, excluded) and then timed on its
data; MB/s = bytes consumed / CPU seconds of this process (time.process_time, so other load
on the machine inflates the figures less than wall time would).  "x read" = MB/s divided by the speed of ``np.sum`` over the
whole array (one plain read pass).  Checks whose cost grows faster than the data (spectral: FFT)
or that are run on capped sizes by the planner are timed on the size noted; matrix rank and linear
complexity also print the cost per block.
"""

from __future__ import annotations

import sys
import time

import numpy as np

from rngassay.checks.bits import (
    approximate_entropy, binary_matrix_rank, binary_matrix_rank_lanes, block_frequency,
    cumulative_sums, linear_complexity, linear_complexity_lanes, longest_run_of_ones,
    monobit_frequency, non_overlapping_template, overlapping_template, poker_symbols,
    random_excursions, random_excursions_variant, runs_of_bits, serial_psi2, spectral_dft,
    universal_maurer,
)

MiB = 1 << 20


def timed(func, data, *args, **kw):
    t0 = time.process_time()
    res = func(data, *args, **kw)
    return time.process_time() - t0, res


def main() -> None:
    mib = int(sys.argv[1]) if len(sys.argv) > 1 else 64
    raw = np.random.PCG64(2024).random_raw((mib * MiB) // 8).astype("<u8").view(np.uint8)
    words = raw.view("<u4")
    np.sum(raw)
    t_read = min(timed(np.sum, raw)[0] for _ in range(3))
    read_mbs = raw.size / t_read / 1e6
    print(f"input: {mib} MiB of PCG64 bytes; one numpy read pass (np.sum): {read_mbs:,.0f} MB/s\n")
    print(f"{'check':<46} {'data':>9} {'seconds':>8} {'MB/s':>8} {'x read':>7}  per block")

    cases = [
        # label, function, kwargs, bytes used (None = all), blocks-of-work for the per-block column
        ("monobit frequency", monobit_frequency, {}, None, None),
        ("block frequency M=128", block_frequency, {"M": 128}, None, None),
        ("runs of bits", runs_of_bits, {}, None, None),
        ("longest run of ones M=10^4", longest_run_of_ones, {"M": 10_000}, None, None),
        ("longest run of ones M=8", longest_run_of_ones, {"M": 8}, None, None),
        ("cumulative sums forward", cumulative_sums, {"direction": "forward"}, None, None),
        ("cumulative sums backward", cumulative_sums, {"direction": "backward"}, None, None),
        ("non-overlapping template 000000001 N=8", non_overlapping_template,
         {"template": "000000001", "blocks": 8}, None, None),
        ("non-overlapping template 11111111 (periodic)", non_overlapping_template,
         {"template": "11111111", "blocks": 8}, None, None),
        ("overlapping template 9 ones M=1032", overlapping_template, {}, None, None),
        ("poker m=4", poker_symbols, {"m": 4}, None, None),
        ("serial psi2 m=16", serial_psi2, {"m": 16}, None, None),
        ("approximate entropy m=10", approximate_entropy, {"m": 10}, None, None),
        ("universal maurer L=16", universal_maurer, {"L": 16}, None, None),
        ("random excursions", random_excursions, {}, None, None),
        ("random excursions variant", random_excursions_variant, {}, None, None),
        ("spectral dft (2^22 bits, planner cap)", spectral_dft, {}, (1 << 22) // 8, None),
        ("binary matrix rank 32x32", binary_matrix_rank, {"M": 32, "Q": 32}, None, 32 * 32),
        ("binary matrix rank 256x256", binary_matrix_rank, {"M": 256, "Q": 256}, None, 256 * 256),
        ("binary matrix rank 1024x1024", binary_matrix_rank, {"M": 1024, "Q": 1024}, 16 * MiB, 1024 * 1024),
        ("linear complexity M=500", linear_complexity, {"M": 500}, 4 * MiB, 500),
        ("linear complexity M=5000", linear_complexity, {"M": 5000}, 1 * MiB, 5000),
    ]
    for label, func, kw, nbytes, block_bits in cases:
        data = raw if nbytes is None else raw[:nbytes]
        func(raw[: 2 * MiB], **kw)  # compile / warm up
        dt, _ = timed(func, data, **kw)
        mbs = data.size / dt / 1e6
        per = ""
        if block_bits:
            nblocks = 8 * data.size // block_bits
            per = f"{dt / nblocks * 1e6:,.1f} us"
        print(f"{label:<46} {data.size / MiB:>6.1f}MiB {dt:>8.3f} {mbs:>8.1f} {mbs / read_mbs:>7.3f}  {per}")

    lane_cases = [
        ("linear complexity lanes M=50000 x8 blocks", linear_complexity_lanes, {"M": 50_000, "blocks": 8},
         8 * 50_000, 32 * 8),
        ("binary matrix rank lanes 64x64", binary_matrix_rank_lanes, {"M": 64, "Q": 64}, 64 * 64 * 64, 32 * 64),
        ("binary matrix rank lanes 256x256", binary_matrix_rank_lanes, {"M": 256, "Q": 256}, 8 * 65536, 32 * 8),
    ]
    for label, func, kw, nwords, nblocks in lane_cases:
        w = words[:nwords]
        func(w[: max(nwords // 8, 4096 * 2)], **({**kw, "blocks": 1} if "blocks" in kw else kw))  # warm up
        dt, _ = timed(func, w, **kw)
        mbs = 4 * nwords / dt / 1e6
        print(f"{label:<46} {4 * nwords / MiB:>6.1f}MiB {dt:>8.3f} {mbs:>8.1f} {mbs / read_mbs:>7.3f}  "
              f"{dt / nblocks * 1e3:,.2f} ms")


if __name__ == "__main__":
    main()
