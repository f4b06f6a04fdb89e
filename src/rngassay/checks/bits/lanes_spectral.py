"""Spectral (discrete Fourier transform) check on each bit lane of 32-bit words.

Lane ``b`` of ``n`` words is the ``n``-bit sequence (bit ``b`` of word 0, bit ``b`` of word 1, ...),
bit 0 = least significant.  Each lane is turned into ``X_t = 2 eps_t - 1`` and transformed,
``S_j = sum_t X_t exp(-2 pi i j t / n)``, as in the DFT test of NIST SP 800-22 Rev. 1a §2.6 (the
per-lane application is ours).  Two statistics are read off the periodogram ``|S_j|^2``:

1. **Largest periodogram ordinate** (Schuster's periodogram; the law of its maximum for independent
   exponential ordinates is Walker's, 1914 -- from memory).  Under H0 (fair, independent bits) the
   normalised ordinates ``I_j = |S_j|^2 / n`` for ``j = 1 .. n/2 - 1`` are asymptotically independent
   Exp(1), and ``I_0`` (the monobit sum) and ``I_{n/2}`` (the alternating sum) are chi2(1).  Every
   ordinate gets its own tail probability and the smallest one is Šidák-corrected over all ordinates
   of all lanes: ``p = 1 - (1 - q_min)^K``, ``K = lanes * blocks * (n/2 + 1)``.  Catches a periodic
   or slowly drifting bias in a lane (a peak) and a lane of short period (its energy sits on few
   frequencies).
2. **Largest circular autocorrelation**, the inverse transform of the periodogram (Wiener--Khinchin):
   ``c_h = sum_t X_t X_{(t+h) mod n}``.  For ``0 < h < n/2``, ``c_h`` is a sum of ``n`` signs with mean 0
   and variance exactly ``n`` (``2n`` at ``h = n/2``, where every pair is counted twice); ``z_h = c_h / sd``
   is close to N(0, 1) (a ±1 sum: excess kurtosis -2/n) and the lags are uncorrelated, so the largest
   ``|z_h|`` is Šidák-corrected over ``K = lanes * blocks * n/2`` lags.  A lane whose period ``P``
   satisfies ``P <= n/2`` has ``c_P = n`` (``z = sqrt(n)``, e.g. 512 at n = 2^18), and a lane that
   changes sign every ``P`` words (lane ``b`` of a power-of-two LCG, ``P = 2^b``) has ``c_P = -n``: the
   periodogram maximum sees a period of ``n/2`` only weakly (half the ordinates are zero, the rest
   doubled), the autocorrelation sees it at once.  ``c_h`` is an integer with ``c_h = n mod 4`` (the
   products ``X_t X_{t+h}`` along each cycle of ``t -> t + h mod n`` multiply to 1), so the tail is
   continuity-corrected, ``P(|c_h| >= c) ~ 2 Phi(-(c - 2) / sd)``, and the p-value is discrete (steps
   of a few per cent at n = 2^18): this result says ``kind="discrete"``.

Lanes of a sound generator are independent, so the Šidák corrections are exact given the per-ordinate
(per-lag) laws; the asymptotic laws were checked by simulation on PCG64 output at n = 2^16..2^19
(figures in ``tests/checks/bits/test_lanes_spectral.py``): no finite-n correction is needed there;
at n = 2^12 the periodogram law is about 3% conservative at p = 0.01.  The check returns two results per replicate (the
battery Bonferronis them); the periodogram result is continuous, the autocorrelation result
discrete, so the registry entry says "discrete" (no uniformity test of the replicate p-values).

Cost: two single-precision real FFTs per lane (scipy.fft), about 0.1 s for 32 lanes of 2^18 bits and
0.25-0.35 s for 2^19 bits on one core of the development machine; the planner runs one block of 2^19
bits per lane (2^18 when a segment holds only 1 MiB) in one replicate.
"""

from __future__ import annotations

import math

import numpy as np
import scipy.fft
from numba import njit
from scipy import special

from rngassay.checks.registry import CheckSpec, check_id, register
from rngassay.checks.result import CheckResult
from rngassay.errors import InputError

from rngassay.stats import sidak_log

from ._common import clip_p

SP800_22 = "NIST SP 800-22 Rev. 1a (2010)"

LOG2_BLOCK_MIN, LOG2_BLOCK_MAX = 10, 24
SPECTRAL_LANES_LOG2_BLOCK = 19  # planner: up to 2^19-bit lanes (a lane of period <= 2^18 shows)
SPECTRAL_LANES_MIN_LOG2 = 16  # planner: no smaller blocks than 2^16 bits per lane
_LANE_CHUNK = 2  # lanes transformed together (transient memory: ~40 bytes per bit per lane in the chunk)


class LaneParameterError(InputError, ValueError):
    """Bad parameters for a bit-lane check (a ValueError the command line reports in one line)."""


def words32(words: np.ndarray, n_words: int | None, what: str) -> np.ndarray:
    """Validate a uint32 array and cut it to ``n_words`` values."""
    arr = np.ascontiguousarray(words).reshape(-1)
    if arr.dtype != np.uint32:
        raise LaneParameterError(f"{what}: takes uint32 words, got dtype {arr.dtype}", hint="use the 'words32' view")
    if n_words is not None:
        nw = as_int(n_words)
        if nw is None or nw < 0 or nw > arr.size:
            raise LaneParameterError(f"{what}: n_words={n_words!r} but {arr.size} words were given")
        arr = arr[:nw]
    return arr


def as_int(v: object) -> int | None:
    """``v`` as an int when it is integral (7, 7.0, np.int64(7)), else None."""
    if isinstance(v, (bool, np.bool_)):
        return None
    try:
        k = int(v)  # type: ignore[call-overload]
    except (TypeError, ValueError, OverflowError):
        return None
    return k if k == v else None


def check_lane_bits(lane_bits: int, what: str) -> int:
    lb = as_int(lane_bits)
    if lb is None or not 1 <= lb <= 32:
        raise LaneParameterError(f"{what}: lane_bits must be an integer in 1..32, got {lane_bits!r}")
    return lb


def check_log2_block(log2_block: int, what: str, lo: int, hi: int) -> int:
    k = as_int(log2_block)
    if k is None or not lo <= k <= hi:
        raise LaneParameterError(f"{what}: log2_block must be an integer in {lo}..{hi}, got {log2_block!r}")
    return k


@njit(cache=True)
def _lane_signs(words, first, count, start, n, out):
    """out[i, t] = +1 if bit (first + i) of words[start + t] is set, else -1 (out: float32 or float64)."""
    for i in range(count):
        sh = np.uint32(first + i)
        for t in range(n):
            out[i, t] = 2.0 * np.float64((words[start + t] >> sh) & np.uint32(1)) - 1.0


def _log_chi2_1_tail(x: np.ndarray) -> np.ndarray:
    """ln P(chi2(1) >= x) = ln(2 Phi(-sqrt x)), stable for large x."""
    return math.log(2.0) + special.log_ndtr(-np.sqrt(np.maximum(x, 0.0)))


def _log_normal_two_sided(z: np.ndarray) -> np.ndarray:
    """ln P(|N(0,1)| >= |z|)."""
    return math.log(2.0) + special.log_ndtr(-np.abs(z))


def lane_spectra(words: np.ndarray, n: int, lanes: int, blocks: int) -> dict[str, np.ndarray]:
    """Per-lane, per-block summaries of the periodogram and circular autocorrelation.

    Returns arrays of shape (lanes, blocks): ``log_q_freq`` (ln of the smallest ordinate tail),
    ``freq`` (its frequency index j), ``log_q_lag`` (ln of the smallest two-sided lag tail), ``lag``
    (its lag h), ``acf`` (c_h at that lag)."""
    half = n // 2
    out = {k: np.empty((lanes, blocks)) for k in ("log_q_freq", "log_q_lag", "acf")}
    out["freq"] = np.empty((lanes, blocks), dtype=np.int64)
    out["lag"] = np.empty((lanes, blocks), dtype=np.int64)
    buf = np.empty((min(_LANE_CHUNK, lanes), n), dtype=np.float32)
    sd = math.sqrt(n)
    for blk in range(blocks):
        for first in range(0, lanes, _LANE_CHUNK):
            cnt = min(_LANE_CHUNK, lanes - first)
            x = buf[:cnt]
            _lane_signs(words, first, cnt, blk * n, n, x)
            # single precision: ~3x faster than float64; relative error of the ordinates ~1e-6, and of
            # c_h below 0.05 up to n = 2^19 (measured) against a lattice step of 4
            s = scipy.fft.rfft(x, axis=1)
            per = s.real * s.real
            per += s.imag * s.imag  # |S_j|^2, j = 0 .. n/2
            del s
            # ordinate tails: interior Exp(1), DC and Nyquist chi2(1)
            inner = per[:, 1:half]
            jmax = np.argmax(inner, axis=1)
            lq_inner = -inner[np.arange(cnt), jmax].astype(np.float64) / n
            lq_dc = _log_chi2_1_tail(per[:, 0].astype(np.float64) / n)
            lq_ny = _log_chi2_1_tail(per[:, half].astype(np.float64) / n)
            lq = np.stack([lq_inner, lq_dc, lq_ny])
            which = np.argmin(lq, axis=0)
            out["log_q_freq"][first:first + cnt, blk] = lq[which, np.arange(cnt)]
            out["freq"][first:first + cnt, blk] = np.where(which == 0, jmax + 1, np.where(which == 1, 0, half))
            # circular autocorrelation: c_h = n mod 4 (module text), so rounding to the lattice removes
            # the transform's float error
            c = 4.0 * np.rint(scipy.fft.irfft(per, n, axis=1)[:, 1:half + 1].astype(np.float64) * 0.25)
            del per
            # continuity-corrected tail P(|c_h| >= c) on the lattice of step 4
            z = np.maximum(np.abs(c) - 2.0, 0.0) / sd
            z[:, -1] *= math.sqrt(0.5)  # h = n/2: variance 2n
            hmax = np.argmax(z, axis=1)
            rows = np.arange(cnt)
            out["log_q_lag"][first:first + cnt, blk] = _log_normal_two_sided(z[rows, hmax])
            out["lag"][first:first + cnt, blk] = hmax + 1
            out["acf"][first:first + cnt, blk] = c[rows, hmax]
    return out


def spectral_dft_lanes(words: np.ndarray, n_words: int | None = None, log2_block: int = 18,
                       blocks: int | None = None, lane_bits: int = 32) -> list[CheckResult]:
    """DFT (spectral) test on each bit lane 0 .. lane_bits-1 of 32-bit words.

    H0: every lane is a sequence of independent fair bits, lanes independent of each other.  Each
    lane is cut into ``blocks`` blocks of ``n = 2^log2_block`` bits (default: as many as the words
    hold).  Returns two results, each Šidák-combined over lanes and blocks (see the module text):
    the largest periodogram ordinate and the largest circular autocorrelation.  Both p-values are
    right tails of asymptotic laws (the autocorrelation's is a lattice law: ``kind="discrete"``).
    Statistics: ``-ln`` of the smallest ordinate tail (the largest normalised ordinate ``I_j`` when
    that is an interior one), and the largest ``|z_h|``.  ``details["log10_p"]`` keeps tiny exponents;
    ``details["worst_lane"]`` with ``"frequency"`` / ``"lag"`` says where the evidence is (a lane of
    period P has ``lag = P`` and ``acf = n``).
    """
    what = "spectral dft lanes"
    arr = words32(words, n_words, what)
    k = check_log2_block(log2_block, what, LOG2_BLOCK_MIN, LOG2_BLOCK_MAX)
    lb = check_lane_bits(lane_bits, what)
    n = 1 << k
    nb = arr.size // n if blocks is None else as_int(blocks)
    if nb is None:
        raise LaneParameterError(f"{what}: blocks must be a positive integer, got {blocks!r}")
    if nb < 1 or nb * n > arr.size:
        raise LaneParameterError(
            f"{what}: {max(nb, 1)} block(s) of 2^{k} bits per lane need {max(nb, 1) * n} words, have {arr.size}")
    sp = lane_spectra(arr, n, lb, nb)
    half = n // 2
    used = nb * n
    common = {"log2_block": k, "blocks": nb, "lanes": lb}
    results = []
    # 1. periodogram maximum
    lqf = sp["log_q_freq"]
    i, j = np.unravel_index(int(np.argmin(lqf)), lqf.shape)
    K1 = lb * nb * (half + 1)
    p1, lg1 = sidak_log(float(lqf[i, j]), K1)
    f = int(sp["freq"][i, j])
    results.append(CheckResult(
        name=check_id(f"{what} periodogram", {"log2_block": k}),
        statistic=float(-lqf[i, j]), p_value=p1,
        null=f"largest of {K1} periodogram ordinates (Exp(1); chi2(1) at 0 and n/2), Šidák",
        kind="continuous", n=used,
        details={**common, "worst_lane": int(i), "block": int(j), "frequency": f,
                 "period": (n / f) if f else None, "log10_p": lg1,
                 "lane_log10_p": [round(sidak_log(float(v), nb * (half + 1))[1], 3) for v in lqf.min(axis=1)]},
    ))
    # 2. autocorrelation maximum
    lql = sp["log_q_lag"]
    i, j = np.unravel_index(int(np.argmin(lql)), lql.shape)
    K2 = lb * nb * half
    p2, lg2 = sidak_log(float(lql[i, j]), K2)
    h = int(sp["lag"][i, j])
    zsd = math.sqrt(2 * n if h == half else n)
    results.append(CheckResult(
        name=check_id(f"{what} autocorrelation", {"log2_block": k}),
        statistic=float(abs(sp["acf"][i, j]) / zsd), p_value=p2,
        null=f"largest |z| of {K2} circular autocorrelations (N(0,1), lattice step 4/sqrt(n)), Šidák",
        kind="discrete", n=used,
        details={**common, "worst_lane": int(i), "block": int(j), "lag": h, "acf": int(sp["acf"][i, j]),
                 "log10_p": lg2,
                 "lane_log10_p": [round(sidak_log(float(v), nb * half)[1], 3) for v in lql.min(axis=1)]},
    ))
    return results


# --------------------------------------------------------------------------- registry


def _spectral_lanes_defaults(nw: int) -> list[dict]:
    if nw < (1 << SPECTRAL_LANES_MIN_LOG2):
        return []
    k = min(SPECTRAL_LANES_LOG2_BLOCK, int(nw).bit_length() - 1)
    return [{"n_words": 1 << k, "log2_block": k}]


register(CheckSpec(
    key="spectral dft lanes", family="bits", windows=("fraction-tail",), title="discrete Fourier transform test per bit lane of 32-bit words",
    sized=("log2_block",),  # block length, from the data available
    view="words32", kind="discrete", func=spectral_dft_lanes, values_needed=lambda p: int(p["n_words"]),
    default_params=_spectral_lanes_defaults,
    source=f"{SP800_22} §2.6 (the transform), applied per bit lane; Schuster (1898) periodogram, "
           "Walker (1914) law of its maximum (from memory); Wiener-Khinchin autocorrelation",
    notes="two results per replicate: largest periodogram ordinate and largest circular autocorrelation, "
          "each Šidák-combined over 32 lanes; one block of 2^19 bits per lane (2^18 when a segment holds "
          "only 1 MiB); one replicate",
    max_replicates=1,  # 32 lanes x 2^19 bits: ~0.25-0.35 s per replicate (2^18: ~0.1 s)
    sample="one block of 2^19 bits in each of the 32 lanes (2 MiB of words), one replicate: 32 FFTs of 2^19 "
           "points cost about 0.3 s",
))
