"""Plain-Python reference implementations, written from the published definitions, for the tests.

Slow on purpose (one Python step per output); used only on a few thousand outputs.
"""

from __future__ import annotations

M32 = 0xFFFFFFFF


def randu(x: int, count: int) -> list[int]:
    # IBM SSP RANDU: x <- 65539 x mod 2**31 (Knuth TAOCP vol. 2 section 3.3.4)
    out = []
    for _ in range(count):
        x = (65539 * x) % 2**31
        out.append(x)
    return out


def minstd(x: int, count: int) -> list[int]:
    # Park & Miller (1988): x <- 16807 x mod (2**31 - 1)
    out = []
    for _ in range(count):
        x = (16807 * x) % (2**31 - 1)
        out.append(x)
    return out


def lcg32(x: int, count: int) -> list[int]:
    # Numerical Recipes in C, 2nd ed., section 7.1: x <- 1664525 x + 1013904223 mod 2**32
    out = []
    for _ in range(count):
        x = (1664525 * x + 1013904223) % 2**32
        out.append(x)
    return out


def xorshift32(y: int, count: int) -> list[int]:
    # Marsaglia (2003), Xorshift RNGs, J. Stat. Software 8(14): y^=y<<13; y^=y>>17; y^=y<<5
    out = []
    for _ in range(count):
        y ^= (y << 13) & M32
        y ^= y >> 17
        y ^= (y << 5) & M32
        out.append(y)
    return out


class MT19937:
    """Matsumoto & Nishimura (1998), following the reference code mt19937ar.c (2002)."""

    N, M = 624, 397

    def __init__(self) -> None:
        self.mt = [0] * self.N
        self.mti = self.N + 1

    def init_genrand(self, s: int) -> None:
        self.mt[0] = s & M32
        for i in range(1, self.N):
            prev = self.mt[i - 1]
            self.mt[i] = (1812433253 * (prev ^ (prev >> 30)) + i) & M32
        self.mti = self.N

    def init_by_array(self, key: list[int]) -> None:
        self.init_genrand(19650218)
        mt, n = self.mt, self.N
        i, j = 1, 0
        for _ in range(max(n, len(key))):
            prev = mt[i - 1]
            mt[i] = ((mt[i] ^ ((prev ^ (prev >> 30)) * 1664525)) + key[j] + j) & M32
            i += 1
            j += 1
            if i >= n:
                mt[0] = mt[n - 1]
                i = 1
            if j >= len(key):
                j = 0
        for _ in range(n - 1):
            prev = mt[i - 1]
            mt[i] = ((mt[i] ^ ((prev ^ (prev >> 30)) * 1566083941)) - i) & M32
            i += 1
            if i >= n:
                mt[0] = mt[n - 1]
                i = 1
        mt[0] = 0x80000000

    def _twist(self) -> None:
        mt, n, m = self.mt, self.N, self.M
        for k in range(n):
            y = (mt[k] & 0x80000000) | (mt[(k + 1) % n] & 0x7FFFFFFF)
            mt[k] = mt[(k + m) % n] ^ (y >> 1) ^ (0x9908B0DF if y & 1 else 0)
        self.mti = 0

    def genrand_int32(self) -> int:
        if self.mti >= self.N:
            self._twist()
        y = self.mt[self.mti]
        self.mti += 1
        y ^= y >> 11
        y ^= (y << 7) & 0x9D2C5680
        y ^= (y << 15) & 0xEFC60000
        y ^= y >> 18
        return y
