"""Default settings of the seed sweep (kept apart so that the command line imports nothing heavy)."""

DEFAULT_BYTES_PER_SEED = 64 << 10
DEFAULT_MERGE_BUDGET = 16 << 20
DEFAULT_BLOCK = 32
DEFAULT_LAGS = 8
DEFAULT_EARLY_BYTES = 32
DEFAULT_AVALANCHE_SEEDS = 128
DEFAULT_AVALANCHE_SEEDS_COMMAND = 16  # every flipped seed is one more process start
AVALANCHE_BYTES = 16  # first 128 output bits
MAX_BYTES_PER_SEED = 16 << 20  # a block of 32 seeds' streams stays near 0.5 GiB per task
#: Below this stream length the default per-seed checks are left out: their asymptotic p-values become
#: coarse (e.g. the overlapping serial test with 4 cells on 128 uniforms reports a left tail of 1e-308
#: when the counts happen to be perfectly even, about once in 2000 sound streams).
MIN_PER_SEED_BYTES = 4096
#: Row selectors (``checks``/``skip``): these keys, a row's full identifier, or its first words.
ROW_KEYS = ("per-seed", "interleave", "xor-pairs", "cross-correlation", "avalanche", "overlaps", "early-bytes")
#: The ready-made seed sets of ``--seed-set`` (see :mod:`rngassay.seeds.seedsets`).
SEED_SETS = {
    "consecutive": "0, 1, ..., N-1 (consecutive:N, default N = 1000)",
    "powers-of-two": "0 and 2**i for i = 0..63 (65 seeds)",
    "low-weight": "all 64-bit seeds with at most two bits set (2081 seeds)",
    "all-ones": "2**i - 1 for i = 0..64 (65 seeds)",
}
