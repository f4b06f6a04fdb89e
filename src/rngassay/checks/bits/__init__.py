"""Bit-level checks: the published methods of NIST SP 800-22 Rev. 1a, a FIPS 140-2 style poker
test on m-bit symbols, and lane variants (linear complexity, matrix rank) for 32-bit words.

Every check is a pure function ``f(packed, n_bits=None, **params) -> CheckResult`` over the
``bits`` view (uint8, most significant bit of each byte first); lane checks take
``f(words, n_words=None, **params)`` over ``words32``.  The random excursions checks return a
``list[CheckResult]``, one per state (empty when the walk has too few cycles).
Importing this package registers every check (family "bits").
"""

from ._common import bits_from_string, clip_p
from .complexity import linear_complexity, linear_complexity_lanes, linear_complexity_profile_bits
from .excursions import random_excursions, random_excursions_variant
from .frequency import block_frequency, cumulative_sums, monobit_frequency, poker_symbols
from .rank import binary_matrix_rank, binary_matrix_rank_lanes, rank_probability
from .runs import longest_run_of_ones, runs_of_bits
from .serial import approximate_entropy, serial_psi2
from .spectral import spectral_dft
from .templates import non_overlapping_template, overlapping_template
from .universal import universal_maurer

__all__ = [
    "approximate_entropy", "binary_matrix_rank", "binary_matrix_rank_lanes", "bits_from_string",
    "block_frequency", "clip_p", "cumulative_sums", "linear_complexity", "linear_complexity_lanes",
    "linear_complexity_profile_bits", "longest_run_of_ones", "monobit_frequency",
    "non_overlapping_template", "overlapping_template", "poker_symbols", "random_excursions",
    "random_excursions_variant", "rank_probability", "runs_of_bits", "serial_psi2", "spectral_dft",
    "universal_maurer",
]
