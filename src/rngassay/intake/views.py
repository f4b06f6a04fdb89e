"""Views: the arrays checks consume, made from decoded stream values.

ALL bit-order and word-to-float conventions of rngassay live in this module.

Input kinds (see :mod:`rngassay.intake.formats`): raw bytes (``u1``), unsigned words (``<u2 >u2 <u4 >u4
<u8 >u8``), uniform floats (``<f4 <f8``, or text floats) and categorical integers (text with ``--range``).

``bytes``
    Raw bytes in stream order (byte and word inputs only).
``words32`` / ``words64``
    Unsigned words. From raw bytes: consecutive 4 (8) bytes read **little-endian**, so a generator
    that writes its words little-endian is seen word for word. From word inputs: the words as
    declared by the format's byte order; narrower words are combined little-end first (two ``u2``
    make one ``u4`` as ``w0 | w1 << 16``; two ``u4`` make one ``u8`` as ``w0 | w1 << 32``, numpy's
    own convention), wider ones are split low half first.
``bits``
    Packed bits as a uint8 array plus a bit count, **most significant bit first** within each byte
    (``np.unpackbits`` order). From raw bytes: bytes in stream order. From words: each word's bits
    from its most significant to its least, words in stream order — so the bit sequence of a word
    input does not depend on its byte order.
``uniforms``
    float64 in [0, 1). Raw bytes become ``<u8`` words and then ``(w >> 11) * 2**-53`` (53-bit
    resolution: numpy's ``Generator.random`` convention). ``u8`` words the same way; ``u4`` words
    ``w * 2**-32`` (32-bit resolution), ``u2`` words ``w * 2**-16``. Float inputs keep their own
    values and resolution (``<f4``: 24 bits). Text integers have no uniform view.
``words32`` / ``bits`` of floats (wave 2a)
    Floats carry ``r`` fraction bits: ``r`` = the claimed resolution (53 for ``<f8``, 24 for ``<f4``)
    or, where the values were read whole before planning, the **effective** resolution found in them
    (every value a multiple of ``2^-r``: :func:`fraction_grid_bits`), never more than claimed; text
    floats printed with ``d`` decimals carry exactly ``d`` bits (``floor(u 2^d) = floor(k / 5^d)`` for
    ``u = k 10^-d``, and each of the ``2^d`` results takes exactly ``5^d`` grid points, so the bits are
    exactly fair when the printed values are uniform on their grid). Let ``m = floor(u 2^r)``.
    For ``r >= 32`` the words32 view is the top 32 bits, ``m >> (r - 32) = floor(u 2^32)``, one word per
    value, and the bits view is those words' bits, most significant first. For ``r < 32`` (``<f4``, text
    decimals) the ``r``-bit fields ``m`` are concatenated, most significant bit first, into one bit
    sequence (the bits view), cut into 32-bit words read big-endian (the words32 view): no bit the values
    do not carry is ever shown to a check, so a coarse grid is judged once (by the resolution check), not
    again by every bit-level check.
``tail`` lanes of floats (window ``fraction-tail``)
    For ``r > 32``: the fraction bits below the top 32, ``m & (2^(r-32) - 1)``, as words whose lanes
    0..r-33 are checked as bit lanes of their own (lane 0 = the last bit the values carry).
``reversed`` window
    The lowest 32 bits a value carries, bit-reversed, so that its least significant bit becomes the most
    significant: words and bytes: each words32 value reversed; floats with ``r >= 32``: ``m mod 2^32``
    reversed. ``uniforms`` in this window are ``reversed * 2^-32``. Word checks run here too, on the bits
    where linear congruential generators are weakest.
``uniforms`` of text floats on a 10^-d grid
    ``(k + V) 10^-d`` with ``k = round(u 10^d)`` and ``V`` uniform on [0, 1) from numpy's PCG64 seeded
    with ``(DITHER_SEED, segment)``: exactly U(0, 1) when the printed values are uniform on their grid
    (a randomised interval transform; common practice), so no check that cuts [0, 1) into cells that do
    not divide the grid can fail an honest, rounded stream.
Ranged words (``<u2 .. >u8`` with ``--range LO:HI``)
    The words of a generator whose outputs fill a range of R = HI - LO + 1 values (31-bit words, or
    1..2^31-2 of a multiplicative generator); ``y = x - LO`` is uniform on [0, R) under the null.
    ``uniforms``: ``y / R`` -- a float64 division of two exact integers (R <= 2^53), so correctly rounded,
    and below 1; for R = 2^b > 2^53, ``(y >> (b - 53)) 2^-53`` (the top 53 bits, as for 64-bit words).
    ``bits`` and ``words32``, only when R = 2^b: the b-bit fields y concatenated, most significant bit first,
    into one bit sequence (the bits view), cut into 32-bit words read big-endian (the words32 view) -- the rule
    of floats carrying r < 32 bits; exactly fair bits when y is uniform, and the constant bits above the range
    are never shown to a check. No ``bytes``/``words64`` views and no windows.
    When R is **not** a power of two there are **no bit views**: with 2^b < R < 2^(b+1) the top bit of a
    (b+1)-bit field is 1 with probability (R - 2^b)/R, not 1/2, and even the b low bits are not uniform
    (``y mod 2^b`` takes the values below R - 2^b twice as often as the others). Exact bits would need
    rejection (keep y < 2^b, about half the words for 1..2^31-2), which makes the number of bits per word
    random, and the plan could then not promise a check its sample size; so the bit-level checks are left out,
    the format's description says "views: uniforms only", and the checks whose law assumes a 2^-b grid
    (float resolution, tail counts, exact endpoints) are listed as skipped. The uniforms lie on a grid of R
    points: a check that cuts [0, 1) into d cells sees cell probabilities off by less than 1/R each, a
    chi-square noncentrality of less than n d^2 / R^2 on n values. The battery's largest cell count is
    d = 2^16 (equidistribution, at large budgets); with R >= 2^28 (the smallest range accepted that is not a
    power of two) that is below n / 2^24, under 0.05 of the statistic's standard deviation sqrt(2d) ~ 362 up
    to n = 2^28 values (R = 2^31 - 2: below n / 2^30).
    ``integers`` in [0, k): for R = 2^b and k = 2^j the top j bits of the field; otherwise ``y mod k`` after
    rejecting ``y >= k floor(R / k)`` (exactly unbiased).
``integers``
    Unbiased integers in [0, k). Text integers with ``--range LO:HI``: ``value - LO`` with
    ``k = HI - LO + 1`` fixed by the declaration. Byte and word inputs: 32-bit words; for k a power
    of two the top log2(k) bits, otherwise ``w mod k`` after rejecting ``w >= k * floor(2**32 / k)``
    (exactly unbiased; the count of rejected words is small and data-dependent). Float inputs:
    ``floor(u * k)`` (biased by at most k / 2**resolution per outcome).
"""

from __future__ import annotations

import numpy as np

from .formats import Format

VIEW_NAMES = ("bytes", "words32", "words64", "bits", "uniforms", "integers")
#: Windows: other bits of the same values, for checks whose registry entry lists them.
WINDOWS = ("reversed", "fraction-tail")
#: Seed of the dither that spreads text floats over their grid cells (recorded in every report).
DITHER_SEED = 20261202


def available_views(fmt: Format) -> tuple[str, ...]:
    """Views that make sense for an input format."""
    if fmt.kind in ("bytes", "words"):
        return VIEW_NAMES
    if fmt.kind == "ranged-words":
        return ("words32", "bits", "uniforms", "integers") if fmt.range_bits is not None else ("uniforms", "integers")
    if fmt.kind in ("floats", "text-floats"):
        return ("words32", "bits", "uniforms", "integers")
    return ("integers",)


def claimed_bits(fmt: Format) -> int:
    """Fraction bits a float format claims (text floats: their printed decimals when known)."""
    if fmt.kind == "text-floats" and fmt.decimals is not None:
        return fmt.decimals
    return uniform_resolution_bits(fmt)


def float_bits(fmt: Format) -> int:
    """Fraction bits the views take from each float value (see the module docstring)."""
    if fmt.kind == "text-floats" and fmt.decimals is not None:
        return fmt.decimals
    c = uniform_resolution_bits(fmt)
    return max(1, min(c, fmt.grid_bits)) if fmt.grid_bits is not None else c  # all zeros: still 1 bit, no crash


def available_windows(fmt: Format, view: str) -> tuple[str, ...]:
    """Windows a check on ``view`` can also run in, for this format."""
    out = []
    wide = fmt.kind in ("bytes", "words") or (fmt.kind in ("floats", "text-floats") and float_bits(fmt) >= 32)
    if view in ("words32", "uniforms") and wide and fmt.kind != "text-floats":
        out.append("reversed")
    if view == "words32" and fmt.kind == "floats" and float_bits(fmt) > 32:
        out.append("fraction-tail")
    return tuple(out)


def binary_grid(fmt: Format) -> bool:
    """Whether the uniforms view lies on a 2^-b grid (what resolution-aware checks assume): not so for ranged
    words whose range is not a power of two."""
    return fmt.kind != "ranged-words" or fmt.range_bits is not None


def input_bytes_per_value(fmt: Format, view: str) -> float:
    """Stream bytes (binary) or values (text) consumed per view value. Bits: per bit."""
    size = fmt.itemsize
    if fmt.kind == "ranged-words" and view in ("words32", "bits"):
        b = fmt.range_bits
        if b is None:
            raise ValueError(f"no {view} view for {fmt.describe()}")
        return size * 32.0 / b if view == "words32" else size / b
    if fmt.kind == "ranged-words" and view in ("bytes", "words64"):
        raise ValueError(f"no {view} view for {fmt.describe()}")
    if fmt.kind in ("floats", "text-floats") and view in ("words32", "bits"):
        per = float(size) if size else 1.0
        r = float_bits(fmt)
        if r >= 32:
            return per if view == "words32" else per / 32.0
        return per * 32.0 / r if view == "words32" else per / r
    if not fmt.is_binary:
        return 1.0
    if view == "bytes":
        return 1.0
    if view == "words32":
        return 4.0
    if view == "words64":
        return 8.0
    if view == "bits":
        return 1.0 / 8.0
    if view == "uniforms":
        if fmt.kind == "bytes":
            return 8.0
        return float(size) if size else 1.0
    if view == "integers":
        if fmt.kind in ("bytes", "words"):
            return 4.0  # before rejection
        return float(size) if size else 1.0
    raise ValueError(f"unknown view {view!r}")


def uniform_resolution_bits(fmt: Format) -> int:
    """Resolution in bits of the uniforms view (the grid 2**-bits the values claim to live on)."""
    if fmt.kind == "bytes" or (fmt.kind == "words" and fmt.itemsize == 8):
        return 53
    if fmt.kind == "ranged-words":  # a power-of-two range: its bits (otherwise no 2^-b grid: see binary_grid)
        return min(53, fmt.range_bits if fmt.range_bits is not None else 53)
    if fmt.kind == "words":
        return 8 * fmt.itemsize
    if fmt.name == "<f4":
        return 24
    return 53


def fraction_grid_bits(u: np.ndarray, claimed: int) -> int:
    """Effective resolution: the largest r <= claimed with every value a multiple of 2^-r (0 for all zeros).

    ``floor(u 2^claimed)`` is exact for doubles (a power-of-two scaling); the trailing zeros common to all
    of them are the bits the values do not carry."""
    if u.size == 0:
        return claimed
    from ._grid import or_of_scaled  # one pass, no temporaries (numba, loaded here only)

    u = np.ascontiguousarray(u, dtype=np.float64)
    acc, ok = or_of_scaled(u, 2.0**claimed)
    if not ok:  # values outside [0, 1]: numpy's conversion, as before
        acc = np.bitwise_or.reduce(np.floor(u * 2.0**claimed).astype(np.uint64))
    return grid_from_or(int(acc), claimed)


def grid_from_or(acc: int, claimed: int) -> int:
    """The effective resolution from the OR of floor(u 2^claimed) over the values: the trailing zeros common to
    all of them are the bits they do not carry (0 when every value is 0)."""
    if acc == 0:
        return 0
    return claimed - ((acc & -acc).bit_length() - 1)


def decimal_grid(x: np.ndarray, max_decimals: int = 15) -> int | None:
    """The number of decimals d (0..max_decimals) such that every value is a multiple of 10^-d (within
    float rounding), or None when the values are not on such a grid (full-precision data)."""
    if x.size == 0 or not np.all(np.isfinite(x)):
        return None
    for d in range(max_decimals + 1):
        y = x * 10.0**d
        tol = 1e-6 + 8 * np.finfo(float).eps * np.abs(y)
        if np.all(np.abs(y - np.rint(y)) <= tol):
            return d
    return None


def _float_fields(vals: np.ndarray, fmt: Format) -> tuple[np.ndarray, int]:
    """(m = floor(u 2^r) as uint64, r) for float values (text floats on a decimal grid: floor(k / 5^d))."""
    r = float_bits(fmt)
    u = vals.astype(np.float64, copy=False)
    if fmt.kind == "text-floats" and fmt.decimals is not None:
        d = fmt.decimals
        k = np.rint(u * 10.0**d).astype(np.int64)
        return (k // 5**d).astype(np.uint64), d
    if fmt.grid_bits is None:  # not read whole before planning: the grid of this segment's values
        r = min(r, fraction_grid_bits(u, r))
    return np.floor(u * 2.0**r).astype(np.uint64), r


def _pack_fields(m: np.ndarray, r: int) -> np.ndarray:
    """Concatenate the r-bit fields m (r <= 64), most significant bit first, into packed bytes."""
    w = 4 if r <= 32 else 8
    be = np.ascontiguousarray(m.astype(f">u{w}")).view(np.uint8).reshape(-1, w)
    bits = np.unpackbits(be, axis=1)[:, 8 * w - r :]
    return np.packbits(bits.ravel())


def _words_of_bits(packed: np.ndarray, nbits: int) -> np.ndarray:
    """The whole 32-bit words (read big-endian) of a packed bit sequence of ``nbits`` bits: the padding bits of
    its last byte never enter a word."""
    return packed[: (nbits // 32) * 4].view(">u4").astype(np.uint32)


def _ranged(vals: np.ndarray, fmt: Format) -> np.ndarray:
    """y = x - LO as uint64 (every x was checked to lie in LO..HI when it was decoded)."""
    return vals.astype(np.uint64) - np.uint64(fmt.lo)


def _ranged_fields(vals: np.ndarray, fmt: Format) -> tuple[np.ndarray, int]:
    b = fmt.range_bits
    if b is None:
        raise ValueError(f"no bit views for {fmt.describe()}: the range is not a power of two")
    return _ranged(vals, fmt), b


_REV8 = np.array([int(f"{i:08b}"[::-1], 2) for i in range(256)], dtype=np.uint8)


def reverse32(w: np.ndarray) -> np.ndarray:
    """Bit-reverse each uint32 (bit 0 becomes bit 31)."""
    b = np.ascontiguousarray(w, dtype="<u4").view(np.uint8).reshape(-1, 4)
    return np.ascontiguousarray(_REV8[b[:, ::-1]]).view("<u4").ravel().astype(np.uint32, copy=False)


def as_window(vals: np.ndarray, fmt: Format, view: str, window: str):
    """The ``view`` of the ``window`` (module docstring): words32 (reversed or fraction-tail) or uniforms."""
    if window == "reversed":
        if fmt.kind in ("floats", "text-floats"):
            m, r = _float_fields(vals, fmt)
            if r < 32:
                raise ValueError(f"no reversed window for floats carrying {r} bits")
            w = reverse32((m & np.uint64(0xFFFFFFFF)).astype(np.uint32))
        else:
            w = reverse32(as_words32(vals, fmt))
        if view == "uniforms":
            return w.astype(np.float64) * 2.0**-32
        if view == "words32":
            return w
    if window == "fraction-tail" and view == "words32" and fmt.kind == "floats":
        m, r = _float_fields(vals, fmt)
        if r <= 32:  # values found to carry no bits below the top 32 (a coarse grid, judged by the grid check)
            return np.empty(0, dtype=np.uint32), 0
        return (m & np.uint64((1 << (r - 32)) - 1)).astype(np.uint32), r - 32
    raise ValueError(f"no {window!r} window of the {view} view for {fmt.describe()}")


def dithered_uniforms(vals: np.ndarray, decimals: int, segment: int, seed: int = DITHER_SEED) -> np.ndarray:
    """Text floats on a 10^-d grid spread uniformly over their cells (module docstring)."""
    scale = 10.0**decimals
    k = np.rint(np.asarray(vals, dtype=np.float64) * scale)
    v = np.random.Generator(np.random.PCG64(np.random.SeedSequence([seed, int(segment)]))).random(k.size)
    u = (k + v) / scale
    np.minimum(u, np.nextafter(1.0, 0.0), out=u)
    return u


def ranged_uniforms(vals: np.ndarray, fmt: Format) -> np.ndarray:
    """(x - LO) / R for ranged words (module docstring)."""
    y, r, b = _ranged(vals, fmt), fmt.range_size, fmt.range_bits
    if r is not None and r <= 2**53:
        return y.astype(np.float64) / float(r)
    return (y >> np.uint64(b - 53)).astype(np.float64) * 2.0**-53  # R = 2^b > 2^53 (parse_format ensures it)


def as_bytes(vals: np.ndarray, fmt: Format) -> np.ndarray:
    if fmt.kind not in ("bytes", "words"):
        raise ValueError(f"no byte view for {fmt.describe()}")
    return np.ascontiguousarray(vals).view(np.uint8)


def _trim(a: np.ndarray, multiple: int) -> np.ndarray:
    return a[: a.size - a.size % multiple]


def as_words32(vals: np.ndarray, fmt: Format) -> np.ndarray:
    if fmt.kind == "ranged-words":
        y, b = _ranged_fields(vals, fmt)
        return _words_of_bits(_pack_fields(y, b), int(y.size) * b)
    if fmt.kind in ("floats", "text-floats"):
        m, r = _float_fields(vals, fmt)
        if r >= 32:
            return (m >> np.uint64(r - 32)).astype(np.uint32)
        return _words_of_bits(_pack_fields(m, r), int(m.size) * r)
    if fmt.kind == "bytes":
        return _trim(np.ascontiguousarray(vals), 4).view("<u4").astype(np.uint32, copy=False)
    if fmt.kind != "words":
        raise ValueError(f"no word view for {fmt.describe()}")
    size = fmt.itemsize
    if size == 4:
        return vals.astype(np.uint32, copy=False)
    if size == 2:
        w = _trim(vals.astype(np.uint32), 2)
        return w[0::2] | (w[1::2] << np.uint32(16))
    w = vals.astype(np.uint64, copy=False)  # size 8: split, low half first
    out = np.empty(w.size * 2, dtype=np.uint32)
    out[0::2] = (w & np.uint64(0xFFFFFFFF)).astype(np.uint32)
    out[1::2] = (w >> np.uint64(32)).astype(np.uint32)
    return out


def as_words64(vals: np.ndarray, fmt: Format) -> np.ndarray:
    if fmt.kind == "bytes":
        return _trim(np.ascontiguousarray(vals), 8).view("<u8").astype(np.uint64, copy=False)
    if fmt.kind != "words":
        raise ValueError(f"no word view for {fmt.describe()}")
    if fmt.itemsize == 8:
        return vals.astype(np.uint64, copy=False)
    w32 = _trim(as_words32(vals, fmt), 2).astype(np.uint64)
    return w32[0::2] | (w32[1::2] << np.uint64(32))


def as_bits(vals: np.ndarray, fmt: Format) -> tuple[np.ndarray, int]:
    """(packed uint8 MSB-first, number of bits)."""
    if fmt.kind == "ranged-words":
        y, b = _ranged_fields(vals, fmt)
        return _pack_fields(y, b), int(y.size) * b
    if fmt.kind in ("floats", "text-floats"):
        m, r = _float_fields(vals, fmt)
        if r >= 32:
            b = np.ascontiguousarray((m >> np.uint64(r - 32)).astype(">u4")).view(np.uint8)
            return b, int(b.size) * 8
        return _pack_fields(m, r), int(m.size) * r
    if fmt.kind == "bytes":
        b = np.ascontiguousarray(vals).view(np.uint8)
    elif fmt.kind == "words":
        b = np.ascontiguousarray(vals.astype(f">u{fmt.itemsize}", copy=False)).view(np.uint8)
    else:
        raise ValueError(f"no bit view for {fmt.describe()}")
    return b, int(b.size) * 8


def as_uniforms(vals: np.ndarray, fmt: Format) -> np.ndarray:
    if fmt.kind == "ranged-words":
        return ranged_uniforms(vals, fmt)
    if fmt.kind in ("floats", "text-floats"):
        return vals.astype(np.float64, copy=False)
    if fmt.kind == "bytes" or (fmt.kind == "words" and fmt.itemsize == 8):
        from ._grid import top53_uniforms  # one pass, no temporaries (numba, loaded here only)

        return top53_uniforms(np.ascontiguousarray(as_words64(vals, fmt)))
    if fmt.kind == "words":
        return vals.astype(np.float64) * (2.0 ** -(8 * fmt.itemsize))
    raise ValueError(f"no uniform view for {fmt.describe()}: categorical outcomes")


def as_integers(vals: np.ndarray, fmt: Format, k: int | None = None) -> tuple[np.ndarray, int]:
    """(outcomes in [0, k), k). For text integers k comes from --range and must match if given."""
    if fmt.kind == "text-integers":
        assert fmt.lo is not None and fmt.hi is not None
        kk = fmt.hi - fmt.lo + 1
        if k is not None and k != kk:
            raise ValueError(f"outcomes are declared in {kk} categories, not {k}")
        return (vals - fmt.lo).astype(np.int64), kk
    if k is None or k < 2:
        raise ValueError("k >= 2 is needed for an integer view")
    if fmt.kind in ("floats", "text-floats"):
        return np.minimum(np.floor(vals * k), k - 1).astype(np.int64), k
    if fmt.kind == "ranged-words":
        return _ranged_integers(vals, fmt, k), k
    if k > 2**32:
        raise ValueError("k must be at most 2**32")
    w = as_words32(vals, fmt)
    if k & (k - 1) == 0:
        shift = 32 - (k.bit_length() - 1)
        return (w.astype(np.uint64) >> np.uint64(shift)).astype(np.int64) if shift < 32 else np.zeros(w.size, np.int64), k
    limit = (2**32 // k) * k
    w = w[w < limit] if limit < 2**32 else w
    return (w % np.uint32(k)).astype(np.int64), k


def _ranged_integers(vals: np.ndarray, fmt: Format, k: int) -> np.ndarray:
    y, r, b = _ranged(vals, fmt), int(fmt.range_size), fmt.range_bits
    if k > r:
        raise ValueError(f"k = {k} is more than the {r} values of the range")
    if b is not None and k & (k - 1) == 0:
        return (y >> np.uint64(b - (k.bit_length() - 1))).astype(np.int64)
    limit = (r // k) * k
    y = y[y < np.uint64(limit)] if limit < r else y
    return (y % np.uint64(k)).astype(np.int64)


#: The one view table (plan, run and seeds read it): view name -> function(values, format) -> the view.
#: ``integers`` takes the range ``k`` too (see :func:`make_view`).
VIEW_TABLE = {
    "bytes": as_bytes,
    "words32": as_words32,
    "words64": as_words64,
    "bits": as_bits,
    "uniforms": as_uniforms,
    "integers": as_integers,
}
assert tuple(VIEW_TABLE) == VIEW_NAMES


def make_view(vals: np.ndarray, fmt: Format, view: str, k: int | None = None, window: str | None = None,
              segment: int = 0):
    """One view of a segment's values: a window of other bits (:data:`WINDOWS`), the dithered uniforms of text
    floats (dither seeded by the segment's index), or the plain view of :data:`VIEW_TABLE`."""
    if window is not None:
        return as_window(vals, fmt, view, window)
    if view == "uniforms" and fmt.kind == "text-floats" and fmt.decimals is not None:
        return dithered_uniforms(vals, fmt.decimals, segment)
    if view == "integers":
        return as_integers(vals, fmt, k if fmt.kind != "text-integers" else None)
    if view not in VIEW_TABLE:
        raise ValueError(f"unknown view {view!r}")
    return VIEW_TABLE[view](vals, fmt)
