"""Reference generators, sound and flawed, each an endless byte stream citing its published definition.

``make_generator(name, seed)`` builds one by its CLI name; ``GENERATORS`` describes them all.
Word generators emit little-endian words (``<u8`` for pcg64, philox, sfc64, short-period,
splitmix64; ``<u4`` for mt19937, randu, minstd, lcg32, xorshift32, lcg48, lagfib); the doubles
generators (lcg48-doubles, xorshift128-doubles, mt19937-doubles) emit ``<f8`` values in [0, 1);
shake256 and biased are byte-oriented. ``GeneratorInfo.default_format`` names the format a stream
is meant to be read in when it is not the default one (the doubles generators: ``<f8``).
Seeds are integers in ``[0, 2**64 - 1]``; how each generator turns a seed into its state is in
the class docstring (some map several seeds to one state: see randu, minstd, lcg32, xorshift32,
mt19937, lcg48, lcg48-doubles).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Literal

from rngassay.errors import InputError
from rngassay.generators._common import MAX_SEED, check_seed
from rngassay.generators.base import ByteStreamGenerator
from rngassay.generators.biased import BIASED_P_ONE, BiasedBitsStream
from rngassay.generators.classic import Lcg32Stream, MinstdStream, RanduStream, Xorshift32Stream
from rngassay.generators.doubles import MT19937DoublesStream, Xorshift128DoublesStream
from rngassay.generators.lagfib import LagFibStream
from rngassay.generators.lcg48 import Lcg48DoublesStream, Lcg48Stream
from rngassay.generators.numpy_words import MT19937Stream, PCG64Stream, PhiloxStream, SFC64Stream
from rngassay.generators.shake import Shake256Stream, shake256_block
from rngassay.generators.short_period import SHORT_PERIOD_BYTES, ShortPeriodStream
from rngassay.generators.splitmix import SplitMix64Stream

__all__ = [
    "BIASED_P_ONE",
    "GENERATORS",
    "MAX_SEED",
    "SHORT_PERIOD_BYTES",
    "BiasedBitsStream",
    "ByteStreamGenerator",
    "GeneratorInfo",
    "LagFibStream",
    "Lcg32Stream",
    "Lcg48DoublesStream",
    "Lcg48Stream",
    "MT19937DoublesStream",
    "MT19937Stream",
    "MinstdStream",
    "PCG64Stream",
    "PhiloxStream",
    "RanduStream",
    "SFC64Stream",
    "Shake256Stream",
    "ShortPeriodStream",
    "SplitMix64Stream",
    "Xorshift128DoublesStream",
    "Xorshift32Stream",
    "make_generator",
    "shake256_block",
]


@dataclass(frozen=True)
class GeneratorInfo:
    """Catalogue entry of a reference generator."""

    name: str
    quality: Literal["sound", "flawed"]
    summary: str  # one line
    reference: str  # citation of the definition
    default_seed: int
    word_bytes: int  # natural output word size: 8, 4, or 1 for byte-oriented streams
    factory: Callable[[int], ByteStreamGenerator]
    #: the --format the stream is meant to be read in when the user gives none; None keeps the
    #: usual default
    default_format: str | None = None


_INFOS = [
    GeneratorInfo(
        "pcg64", "sound",
        "numpy PCG64 (XSL-RR 128/64), 64-bit little-endian words",
        "M. E. O'Neill (2014), PCG: A Family of Simple Fast Space-Efficient Statistically Good "
        "Algorithms for Random Number Generation, Harvey Mudd College HMC-CS-2014-0905; numpy.random.PCG64",
        0, 8, PCG64Stream),
    GeneratorInfo(
        "philox", "sound",
        "numpy Philox-4x64-10 counter-based generator, 64-bit little-endian words",
        "J. K. Salmon, M. A. Moraes, R. O. Dror, D. E. Shaw (2011), Parallel random numbers: "
        "as easy as 1, 2, 3, Proc. SC'11; numpy.random.Philox",
        0, 8, PhiloxStream),
    GeneratorInfo(
        "sfc64", "sound",
        "numpy SFC64 small fast chaotic generator, 64-bit little-endian words",
        "C. Doty-Humphrey, SFC64, as specified by numpy.random.SFC64 (numpy documentation)",
        0, 8, SFC64Stream),
    GeneratorInfo(
        "shake256", "sound",
        "SHAKE-256 output in counter mode keyed by the seed, bytes",
        "NIST FIPS 202 (2015), SHA-3 Standard: Permutation-Based Hash and Extendable-Output "
        "Functions; counter-mode construction documented in rngassay.generators.shake",
        0, 1, Shake256Stream),
    GeneratorInfo(
        "splitmix64", "sound",
        "SplitMix64: Weyl sequence with gamma 0x9E3779B97F4A7C15 and a bijective mix, 64-bit words",
        "G. L. Steele Jr., D. Lea, C. H. Flood (2014), Fast splittable pseudorandom number "
        "generators, Proc. OOPSLA 2014 (ACM SIGPLAN Notices 49(10) 453-472)",
        0, 8, SplitMix64Stream),
    GeneratorInfo(
        "mt19937", "flawed",
        "32-bit Mersenne Twister, init_genrand seeding; GF(2)-linear, 32-bit words",
        "M. Matsumoto, T. Nishimura (1998), Mersenne Twister: a 623-dimensionally equidistributed "
        "uniform pseudo-random number generator, ACM TOMACS 8(1) 3-30; ISO/IEC 14882 [rand.predef] mt19937",
        5489, 4, MT19937Stream),
    GeneratorInfo(
        "mt19937-doubles", "flawed",
        "32-bit Mersenne Twister, init_genrand seeding, 53-bit doubles by genrand_res53 (<f8)",
        "M. Matsumoto, T. Nishimura (1998), Mersenne Twister: a 623-dimensionally equidistributed "
        "uniform pseudo-random number generator, ACM TOMACS 8(1) 3-30; genrand_res53 of mt19937ar.c (2002)",
        5489, 8, MT19937DoublesStream, "<f8"),
    GeneratorInfo(
        "randu", "flawed",
        "IBM RANDU x <- 65539 x mod 2**31; triples on 15 planes, 32-bit words",
        "IBM System/360 Scientific Subroutine Package (1968), RANDU; D. E. Knuth, "
        "The Art of Computer Programming vol. 2, 3rd ed., section 3.3.4",
        0, 4, RanduStream),
    GeneratorInfo(
        "minstd", "flawed",
        "Park-Miller minimal standard x <- 16807 x mod (2**31 - 1), 32-bit words",
        "S. K. Park, K. W. Miller (1988), Random number generators: good ones are hard to find, "
        "Comm. ACM 31(10) 1192-1201; ISO/IEC 14882 [rand.predef] minstd_rand0",
        1, 4, MinstdStream),
    GeneratorInfo(
        "lcg32", "flawed",
        "LCG x <- 1664525 x + 1013904223 mod 2**32, all 32 bits; weak low bits",
        "W. H. Press, S. A. Teukolsky, W. T. Vetterling, B. P. Flannery (1992), "
        "Numerical Recipes in C, 2nd ed., section 7.1",
        0, 4, Lcg32Stream),
    GeneratorInfo(
        "lcg48", "flawed",
        "drand48 LCG x <- 0x5DEECE66D x + 0xB mod 2**48, bits 47..16 as 32-bit words",
        "The Open Group Base Specifications (POSIX.1-2017), drand48 family (a = 0x5DEECE66D, "
        "c = 0xB, m = 2**48); seed scrambling of java.util.Random.setSeed (Java SE API specification)",
        0, 4, Lcg48Stream),
    GeneratorInfo(
        "lcg48-doubles", "flawed",
        "drand48: the same LCG's state / 2**48 as doubles on a 48-bit grid (<f8), srand48 seeding",
        "The Open Group Base Specifications (POSIX.1-2017), drand48 and srand48",
        0, 8, Lcg48DoublesStream, "<f8"),
    GeneratorInfo(
        "xorshift32", "flawed",
        "Marsaglia xorshift on 32 bits, shifts (13, 17, 5); GF(2)-linear, 32-bit words",
        "G. Marsaglia (2003), Xorshift RNGs, Journal of Statistical Software 8(14)",
        2463534242, 4, Xorshift32Stream),
    GeneratorInfo(
        "xorshift128-doubles", "flawed",
        "Marsaglia xor128 (128-bit state), GF(2)-linear, 53-bit doubles by genrand_res53 (<f8)",
        "G. Marsaglia (2003), Xorshift RNGs, Journal of Statistical Software 8(14), xor128; "
        "doubles by genrand_res53 of mt19937ar.c (M. Matsumoto, T. Nishimura, 2002)",
        0, 8, Xorshift128DoublesStream, "<f8"),
    GeneratorInfo(
        "lagfib", "flawed",
        "additive lagged Fibonacci x_n = x_(n-5) + x_(n-17) mod 2**32, 32-bit words",
        "D. E. Knuth, The Art of Computer Programming vol. 2, 3rd ed., section 3.2.2 (additive "
        "lagged-Fibonacci generators, after G. J. Mitchell and D. P. Moore, unpublished, 1958)",
        0, 4, LagFibStream),
    GeneratorInfo(
        "biased", "flawed",
        "independent bits with P(1) = 1/2 + 1/1024 (fair PCG64 bit OR Bernoulli(1/512))",
        "defined in rngassay.generators.biased: X OR Z, X fair (numpy PCG64), Z ~ Bernoulli(1/512) "
        "by geometric gaps (inversion, L. Devroye (1986), Non-Uniform Random Variate Generation, ch. 2)",
        0, 1, BiasedBitsStream),
    GeneratorInfo(
        "short-period", "flawed",
        "the first 2**20 bytes of pcg64 (same seed) repeated forever",
        "defined in rngassay.generators.short_period: byte j = byte (j mod 2**20) of pcg64 "
        "(M. E. O'Neill 2014; numpy.random.PCG64)",
        0, 8, ShortPeriodStream),
]

#: All reference generators by CLI name, sound ones first.
GENERATORS: dict[str, GeneratorInfo] = {info.name: info for info in _INFOS}


def make_generator(name: str, seed: int | None = None) -> ByteStreamGenerator:
    """Build the reference generator ``name`` seeded with ``seed`` (its default seed if ``None``).

    Raises :class:`InputError` for an unknown name or a seed that is not an integer in
    ``[0, 2**64 - 1]``.
    """
    info = GENERATORS.get(name)
    if info is None:
        known = ", ".join(GENERATORS)
        raise InputError(f"unknown generator {name!r} (known: {known})", where="generator name",
                         hint="see `rngassay catalog`")
    value = info.default_seed if seed is None else check_seed(seed, name)
    return info.factory(value)
