"""Numba kernel of the outcome monitor: one sequential pass over a chunk of outcomes.

Everything the monitor carries from one outcome to the next lives in arrays that the kernel updates
in place, so a log processed in chunks of any size gives the same numbers as one call.  The
e-processes are kept as products of per-outcome likelihood-ratio factors on a linear scale with a
power-of-ten rescaling (``RESCALE``) applied on value, not on position, so rescaling does not depend
on chunk boundaries either.

Statistic slots (``S = 3 K + 3`` for ``K`` tiers): 0 the whole-table e-process; ``1 + k`` tier ``k``'s
e-process; ``K + 1`` / ``K + 2`` the upper / lower CUSUM on the return rate; ``K + 3 + k`` the streak
alarm of tier ``k``; ``2 K + 3 + k`` an outcome declared impossible (probability 0) seen in tier ``k``.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

RESCALE = 1e150
LOG_RESCALE = math.log(RESCALE)


@njit(cache=True)
def _log_mean(e, scale):
    s = 0.0
    for g in range(e.shape[0]):
        s += e[g]
    s /= e.shape[0]
    if s <= 0.0:
        return -np.inf
    return math.log(s) + scale


@njit(cache=True)
def _record(hist, hmeta, n, et, et_scale, ed, ed_scale, cus, counts, K):
    """Append one row to the bounded history; when full keep every other row and double the stride."""
    H = hist.shape[0]
    if hmeta[0] == H:
        half = H // 2
        for r in range(half):
            for c in range(hist.shape[1]):
                hist[r, c] = hist[2 * r + 1, c]
        hmeta[0] = half
        hmeta[1] *= 2
        if n % hmeta[1] != 0:
            return
    r = hmeta[0]
    hist[r, 0] = n
    hist[r, 1] = _log_mean(ed, ed_scale[0]) / math.log(10.0)
    for k in range(K):
        hist[r, 2 + k] = _log_mean(et[k], et_scale[k]) / math.log(10.0)
    hist[r, 2 + K] = cus[0]
    hist[r, 3 + K] = cus[1]
    for k in range(K):
        hist[r, 4 + K + k] = counts[k]
    hmeta[0] = r + 1


@njit(cache=True)
def run_chunk(tiers, xs, pays, stakes, probs, inv_p, inv_q, tier_a, tier_c, table_a, table_c,
              log_thr, streak_k, streak_w, cus_par, nstate, counts, et, et_scale, ed, ed_scale, cus, money,
              ring, latched, hist, hmeta, alarm_pos, alarm_val):
    """Process ``tiers[i]`` (int tier index), ``xs[i]`` (return per unit stake, clipped inside) in order.

    ``cus_par`` = (on, clip, mean, sd of a batch mean, reference k, limit h, batch size m);
    ``nstate`` = (outcomes seen,); ``money`` = (sum of payouts, sum of stakes);
    ``alarm_pos[s]`` receives the chunk position of statistic ``s``'s first crossing (else stays -1).
    """
    K = probs.shape[0]
    G = tier_c.shape[1]
    GT = table_c.shape[0]
    W = ring.shape[1]
    thr_t = np.empty(K)
    for k in range(K):
        thr_t[k] = math.exp(min(log_thr[1 + k] - et_scale[k], 700.0))
    thr_d = math.exp(min(log_thr[0] - ed_scale[0], 700.0))
    cus_on = cus_par[0] > 0.5
    m = int(cus_par[6])
    for i in range(tiers.shape[0]):
        t = tiers[i]
        n = nstate[0]
        # --- whole table: Dirichlet-multinomial mixture likelihood ratio
        if probs[t] > 0.0:
            s = 0.0
            for g in range(GT):
                ed[g] *= (table_a[g, t] + counts[t]) * inv_p[t] / (table_c[g] + n)
                s += ed[g]
            if s > RESCALE * GT or (0.0 < s < GT / RESCALE):
                f = 1.0 / RESCALE if s > 1.0 else RESCALE
                for g in range(GT):
                    ed[g] *= f
                ed_scale[0] += LOG_RESCALE if s > 1.0 else -LOG_RESCALE
                s *= f
                thr_d = math.exp(min(log_thr[0] - ed_scale[0], 700.0))
            if s >= thr_d * GT and not latched[0]:
                latched[0] = True
                alarm_pos[0] = i
                alarm_val[0] = math.log(s / GT) + ed_scale[0]
        elif not latched[2 * K + 3 + t]:
            latched[2 * K + 3 + t] = True
            alarm_pos[2 * K + 3 + t] = i
            alarm_val[2 * K + 3 + t] = 1.0
        # --- each tier: Beta-binomial mixture likelihood ratio
        for k in range(K):
            if probs[k] <= 0.0 or probs[k] >= 1.0:
                continue
            s = 0.0
            if k == t:
                for g in range(G):
                    et[k, g] *= (tier_a[k, g] + counts[k]) * inv_p[k] / (tier_c[k, g] + n)
                    s += et[k, g]
            else:
                miss = n - counts[k]
                for g in range(G):
                    et[k, g] *= (tier_c[k, g] - tier_a[k, g] + miss) * inv_q[k] / (tier_c[k, g] + n)
                    s += et[k, g]
            if s > RESCALE * G or (0.0 < s < G / RESCALE):
                f = 1.0 / RESCALE if s > 1.0 else RESCALE
                for g in range(G):
                    et[k, g] *= f
                et_scale[k] += LOG_RESCALE if s > 1.0 else -LOG_RESCALE
                s *= f
                thr_t[k] = math.exp(min(log_thr[1 + k] - et_scale[k], 700.0))
            if s >= thr_t[k] * G and not latched[1 + k]:
                latched[1 + k] = True
                alarm_pos[1 + k] = i
                alarm_val[1 + k] = math.log(s / G) + et_scale[k]
        counts[t] += 1
        # --- streak: k hits of a rare tier within the last w outcomes
        kk = streak_k[t]
        if kk > 0:
            ring[t, (counts[t] - 1) % W] = n
            if counts[t] >= kk and not latched[K + 3 + t]:
                first = ring[t, (counts[t] - kk) % W]
                if first >= n - streak_w + 1:
                    latched[K + 3 + t] = True
                    alarm_pos[K + 3 + t] = i
                    alarm_val[K + 3 + t] = kk
        # --- money and the CUSUM on the return rate (batch means of the clipped return)
        money[0] += pays[i]
        money[1] += stakes[i]
        if cus_on:
            cus[2] += min(xs[i], cus_par[1])
            cus[3] += 1.0
            if cus[3] >= m:
                z = (cus[2] / m - cus_par[2]) / cus_par[3]
                cus[0] = max(0.0, cus[0] + z - cus_par[4])
                cus[1] = max(0.0, cus[1] - z - cus_par[4])
                cus[2] = 0.0
                cus[3] = 0.0
                if cus[0] >= cus_par[5] and not latched[K + 1]:
                    latched[K + 1] = True
                    alarm_pos[K + 1] = i
                    alarm_val[K + 1] = cus[0]
                if cus[1] >= cus_par[5] and not latched[K + 2]:
                    latched[K + 2] = True
                    alarm_pos[K + 2] = i
                    alarm_val[K + 2] = cus[1]
        nstate[0] = n + 1
        if (n + 1) % hmeta[1] == 0:
            _record(hist, hmeta, n + 1, et, et_scale, ed, ed_scale, cus, counts, K)
