"""Anytime-valid monitoring of a game's outcome log against its declared odds (the library core of ``watch``).

Method (the README states it in words):

* **Whole table**: the Dirichlet-multinomial mixture likelihood ratio of the counts against the
  declared odds (a Bayes factor with a Dirichlet(c p) prior), averaged over a grid of concentrations
  ``c``.  Under the declared odds each mixture is a nonnegative martingale of mean 1 (a test
  martingale), so is their average; Ville's inequality (Ville 1939) gives
  ``P(sup_n E_n >= 1/a) <= a``.  See Ramdas, Grunwald, Vovk & Shafer (2023), "Game-theoretic
  statistics and safe anytime-valid inference", Statistical Science 38(4) (details from memory).
* **Each tier**: the Beta-binomial mixture likelihood ratio for "this tier's rate differs from p_k",
  prior Beta(c p_k, c (1 - p_k)) with ``c = 1 / (p_k r^2)`` (prior relative spread ``r``), averaged
  over a grid of ``r``.
* **Alpha**: half of ``alpha`` to the table, half split evenly over the tiers (Bonferroni), so
  P(any e-process alarm, ever | declared odds) <= alpha.  The CUSUM and the streak alarm are outside
  this budget: the CUSUM's in-control ARL and the streak's per-window and horizon probabilities are
  stated in :meth:`Monitor.summary`.
* Alarms are latched: each statistic (per tier where it has one) raises at most one alarm.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from . import design

TIER_SCALES = (0.05, 0.2, 1.0, 5.0)  # prior relative spreads r of a tier's rate
TABLE_CONCENTRATIONS = (1e3, 1e4, 1e5, 1e6)  # Dirichlet concentrations c of the whole-table mixture
HIST_ROWS = 512
STATE_VERSION = 1


@dataclass
class Declared:
    """Declared odds: tier labels, probabilities (sum 1) and optional prizes per unit stake."""

    tiers: list[str]
    probs: np.ndarray
    prizes: np.ndarray | None = None

    def return_rate(self) -> float | None:
        if self.prizes is None:
            return None
        return float(math.fsum(float(p) * float(z) for p, z in zip(self.probs, self.prizes)))


def declared_from_odds(path: str | os.PathLike) -> Declared:
    """Read an odds file (CSV ``outcome,probability[,prize]`` or TOML ``[odds]`` + ``[prizes]``)."""
    from ..checks.transform.declared import read_odds

    d = read_odds(path)
    return Declared(list(d.outcomes), np.asarray(d.probs, dtype=np.float64),
                    None if d.prizes is None else np.asarray(d.prizes, dtype=np.float64))


def _stat_names(K: int) -> list[tuple[str, int | None]]:
    return ([("eprocess-table", None)] + [("eprocess-tier", k) for k in range(K)] + [("cusum-up", None), ("cusum-down", None)]
            + [("streak", k) for k in range(K)] + [("impossible-outcome", k) for k in range(K)])


class Monitor:
    """Sequential monitor of an outcome log.  Options (all recorded in :meth:`state`):

    ``tier_scales`` prior relative spreads of the tier mixtures (default 0.05, 0.2, 1, 5);
    ``table_concentrations`` Dirichlet concentrations of the table mixture (default 1e3 ... 1e6);
    ``streak_pmax`` tiers with p <= this get a streak alarm (default 1e-4); ``streak_window`` w (3);
    ``streak_horizon`` outcomes the streak bound covers (1e8); ``streak_alpha`` its total budget (= alpha);
    ``cusum_batch`` outcomes per CUSUM batch (1000); ``cusum_shift`` the return-rate shift to detect,
    per unit stake (0.02; reference value k = half of it in batch standard deviations);
    ``cusum_arl`` in-control two-sided ARL in outcomes that sets the limit h (1e7);
    ``cusum_clip`` cap on one outcome's return (default: the largest prize of tiers with p >= 1e-2; rarer
    tiers are watched by their e-processes and the streak alarm); ``cusum_limit`` h (default: solved
    from ``cusum_arl`` by the Brook-Evans chain, then kept in the options).
    """

    def __init__(self, declared: Declared, alpha: float = 0.001, **options):
        if not (0.0 < alpha < 1.0):
            raise InputError(f"alpha must be in (0, 1), got {alpha!r}", "", "e.g. 0.001")
        self.declared = declared
        self.alpha = float(alpha)
        self.options = self._options(options)
        self._setup()
        K, G, GT = len(declared.tiers), len(self.options["tier_scales"]), len(self.options["table_concentrations"])
        self._n = np.zeros(1, np.int64)
        self._counts = np.zeros(K, np.int64)
        self._et = np.ones((K, G))
        self._et_scale = np.zeros(K)
        self._ed = np.ones(GT)
        self._ed_scale = np.zeros(1)
        self._cus = np.zeros(4)
        self._money = np.zeros(2)
        self._ring = np.full((K, max(1, self.options["streak_window"])), -(10**12), np.int64)
        self._latched = np.zeros(3 * K + 3, np.bool_)
        self._hist = np.zeros((HIST_ROWS, 2 * K + 4))
        self._hmeta = np.array([0, 1], np.int64)
        self._alarms: list[dict] = []

    # ------------------------------------------------------------------ design
    def _options(self, o: dict) -> dict:
        d = self.declared
        common = [float(z) for p, z in zip(d.probs, d.prizes if d.prizes is not None else []) if p >= 1e-2]
        out = {"tier_scales": [float(x) for x in o.pop("tier_scales", TIER_SCALES)],
               "table_concentrations": [float(x) for x in o.pop("table_concentrations", TABLE_CONCENTRATIONS)],
               "streak_pmax": float(o.pop("streak_pmax", 1e-4)), "streak_window": int(o.pop("streak_window", 3)),
               "streak_horizon": float(o.pop("streak_horizon", 1e8)),
               "streak_alpha": float(o.pop("streak_alpha", self.alpha)),
               "cusum_batch": int(o.pop("cusum_batch", 1000)), "cusum_shift": float(o.pop("cusum_shift", 0.02)),
               "cusum_arl": float(o.pop("cusum_arl", 1e7)),
               "cusum_clip": float(o.pop("cusum_clip", max(common) if common else 0.0)),
               "cusum_limit": o.pop("cusum_limit", None)}
        if o:
            raise InputError(f"unknown monitor option {sorted(o)[0]!r}", "", "see the Monitor docstring for its options")
        return out

    def _setup(self) -> None:
        d, o = self.declared, self.options
        p = np.asarray(d.probs, dtype=np.float64)
        K = p.size
        self._p = p
        with np.errstate(divide="ignore"):
            self._inv_p = np.where(p > 0, 1.0 / np.where(p > 0, p, 1.0), 0.0)
            self._inv_q = np.where(p < 1, 1.0 / np.where(p < 1, 1.0 - p, 1.0), 0.0)
        r = np.asarray(o["tier_scales"])
        pp = np.where(p > 0, p, 1.0)
        self._tier_c = 1.0 / (pp[:, None] * r[None, :] ** 2)
        self._tier_a = self._tier_c * pp[:, None]
        self._table_c = np.asarray(o["table_concentrations"], dtype=np.float64)
        self._table_a = self._table_c[:, None] * p[None, :]
        monitored = int(np.sum((p > 0) & (p < 1)))
        self._alpha_table = self.alpha / 2
        self._alpha_tier = self.alpha / 2 / max(1, monitored)
        self._log_thr = np.concatenate([[math.log(1 / self._alpha_table)], np.full(K, math.log(1 / self._alpha_tier))])
        # streak
        rare = [k for k in range(K) if 0 < p[k] <= o["streak_pmax"]]
        self._streak_k = np.zeros(K, np.int64)
        self._streak_info = {}
        for k in rare:
            kk, q, bound = design.streak_rule(float(p[k]), o["streak_window"], o["streak_horizon"],
                                              o["streak_alpha"] / len(rare))
            self._streak_k[k] = kk
            self._streak_info[d.tiers[k]] = {"k": kk, "w": o["streak_window"], "p_window": q, "horizon_bound": bound}
        # CUSUM on the clipped return per unit stake
        self._cus_par = np.zeros(7)
        self._cusum_info = None
        if d.prizes is not None and o["cusum_clip"] > 0:
            x = np.minimum(np.asarray(d.prizes, dtype=np.float64), o["cusum_clip"])
            mu = float(np.sum(p * x))
            sd = math.sqrt(max(float(np.sum(p * (x - mu) ** 2)), 0.0))
            if sd > 0:
                m = o["cusum_batch"]
                sd_b = sd / math.sqrt(m)
                skew = float(np.sum(p * (x - mu) ** 3)) / sd**3 / math.sqrt(m)  # skewness of a batch mean
                kref = o["cusum_shift"] / 2 / sd_b
                if o["cusum_limit"] is None:  # found once, then kept in the options (and the state)
                    o["cusum_limit"] = design.limit_for_arl(kref, o["cusum_arl"] / m, skew)
                h = float(o["cusum_limit"])
                arl_b = design.arl_two_sided(kref, h, 0.0, skew)
                delay_b = design.arl_two_sided(kref, h, -o["cusum_shift"] / sd_b, skew)
                self._cus_par[:] = [1.0, o["cusum_clip"], mu, sd_b, kref, h, m]
                self._cusum_info = {"clip": o["cusum_clip"], "clipped_mean": mu, "clipped_sd": sd, "batch": m,
                                    "batch_skewness": skew, "k": kref, "h": h, "arl0_outcomes": arl_b * m,
                                    "arl_at_drop_outcomes": delay_b * m, "shift": o["cusum_shift"],
                                    "method": "Brook & Evans (1972) Markov chain, 400 states, Pearson III batch means"}

    # ------------------------------------------------------------------ updates
    def _returns(self, tiers, stakes, payouts):
        n = tiers.size
        if payouts is None:
            z = self.declared.prizes if self.declared.prizes is not None else np.zeros(len(self.declared.tiers))
            pays = np.asarray(z, dtype=np.float64)[tiers]
            st = np.ones(n)
        else:
            pays = np.asarray(payouts, dtype=np.float64)
            st = np.ones(n) if stakes is None else np.asarray(stakes, dtype=np.float64)
            if pays.shape != (n,) or st.shape != (n,):
                raise InputError("payouts and stakes must have one value per outcome", "", "check the log's columns")
            if not (np.all(np.isfinite(pays)) and np.all(pays >= 0)):
                raise InputError("a payout is negative or not finite", "", "payouts must be finite numbers >= 0")
            if not (np.all(np.isfinite(st)) and np.all(st > 0)):
                raise InputError("a stake is zero, negative or not finite", "", "stakes must be finite numbers > 0")
        return pays / st, pays, st

    def update_many(self, tiers: np.ndarray, stakes: np.ndarray | None, payouts: np.ndarray | None,
                    start_index: int, times: list[str] | None = None) -> list[dict]:
        """Feed outcomes in log order; ``tiers`` are indices into ``declared.tiers``.  Returns new alarms in order."""
        from .kernels import run_chunk

        t = np.ascontiguousarray(tiers, dtype=np.int64)
        K = len(self.declared.tiers)
        if t.ndim != 1:
            raise InputError("tiers must be a one-dimensional array", "", "")
        if t.size == 0:
            return []
        if t.min() < 0 or t.max() >= K:
            raise InputError(f"tier index out of range 0..{K - 1}", "", "map outcome labels with declared.tiers")
        xs, pays, st = self._returns(t, stakes, payouts)
        pos = np.full(3 * K + 3, -1, np.int64)
        val = np.zeros(3 * K + 3)
        run_chunk(t, xs, pays, st, self._p, self._inv_p, self._inv_q, self._tier_a, self._tier_c, self._table_a,
                  self._table_c, self._log_thr, self._streak_k, self.options["streak_window"], self._cus_par,
                  self._n, self._counts, self._et, self._et_scale, self._ed, self._ed_scale, self._cus, self._money,
                  self._ring, self._latched, self._hist, self._hmeta, pos, val)
        new = [self._alarm(s, int(pos[s]), float(val[s]), start_index, times) for s in np.flatnonzero(pos >= 0)]
        new.sort(key=lambda a: (a["index"], a["_slot"]))
        for a in new:
            del a["_slot"]
        self._alarms.extend(new)
        return new

    def _alarm(self, s: int, i: int, v: float, start: int, times) -> dict:
        name, k = _stat_names(len(self.declared.tiers))[s]
        tier = None if k is None else self.declared.tiers[k]
        if name.startswith("eprocess"):
            thr = float(self._log_thr[s]) / math.log(10)
            value = v / math.log(10)
            what = "the whole odds table" if tier is None else f"tier {tier!r} (declared p = {self._p[k]:.6g})"
            msg = (f"e-value for {what} reached 10^{value:.2f} >= 10^{thr:.2f} = 1/alpha_j; "
                   "the outcomes so far are unlikely under the declared odds (anytime-valid)")
            stat = f"log10 {name}"
        elif name.startswith("cusum"):
            thr, value = float(self._cus_par[5]), v
            way = "above" if name == "cusum-up" else "below"
            msg = f"return-rate CUSUM reached {value:.2f} >= h = {thr:.2f}: the return runs {way} the declared rate"
            stat = name
        elif name == "streak":
            thr = value = float(v)
            info = self._streak_info[tier]
            msg = (f"{int(v)} hits of rare tier {tier!r} within {info['w']} outcomes "
                   f"(probability per window {info['p_window']:.3g} under the declared odds)")
            stat = name
        else:
            thr = value = 1.0
            msg = f"outcome {tier!r}, declared impossible (probability 0), occurred"
            stat = name
        idx = start + i
        return {"index": idx, "time": (times[i] if times is not None and i < len(times) else None), "statistic": stat,
                "value": value, "threshold": thr, "tier": tier, "message": msg + " - a reason to investigate, not proof "
                "of a fault", "_slot": s}

    # ------------------------------------------------------------------ state
    _ARRAYS = ("_n", "_counts", "_et", "_et_scale", "_ed", "_ed_scale", "_cus", "_money", "_ring", "_latched",
               "_hmeta")

    def state(self) -> dict:
        st = {"version": STATE_VERSION, "alpha": self.alpha, "options": dict(self.options),
              "tiers": list(self.declared.tiers), "probs": [float(x) for x in self._p],
              "alarms": [dict(a) for a in self._alarms]}
        for name in self._ARRAYS:
            st[name[1:]] = getattr(self, name).tolist()
        st["hist"] = self._hist[: int(self._hmeta[0])].tolist()
        return st

    @classmethod
    def from_state(cls, declared: Declared, state: dict) -> "Monitor":
        try:
            if state.get("version") != STATE_VERSION:
                raise InputError("monitor state has an unknown version", "", "start the watch afresh")
            if list(state["tiers"]) != list(declared.tiers) or not np.array_equal(np.asarray(state["probs"]), declared.probs):
                raise InputError("monitor state was made for other declared odds", "",
                                 "start afresh (the odds file changed since the state was saved)")
            m = cls(declared, state["alpha"], **state["options"])
            for name in cls._ARRAYS:
                cur = getattr(m, name)
                arr = np.asarray(state[name[1:]], dtype=cur.dtype)
                if arr.shape != cur.shape:
                    raise InputError(f"monitor state field {name[1:]!r} has the wrong shape", "", "start the watch afresh")
                cur[...] = arr
            h = np.asarray(state["hist"], dtype=np.float64).reshape(-1, m._hist.shape[1])
            m._hist[: h.shape[0]] = h
            m._alarms = [dict(a) for a in state["alarms"]]
        except (KeyError, TypeError, ValueError) as e:
            if isinstance(e, InputError):
                raise
            raise InputError(f"monitor state is damaged ({type(e).__name__})", "", "start the watch afresh") from None
        return m

    # ------------------------------------------------------------------ reports
    def log10_evalues(self) -> tuple[float, np.ndarray]:
        from .kernels import _log_mean

        ln10 = math.log(10)
        table = _log_mean(self._ed, self._ed_scale[0]) / ln10
        tiers = np.array([_log_mean(self._et[k], self._et_scale[k]) / ln10 for k in range(self._p.size)])
        return float(table), tiers

    def summary(self) -> dict:
        table, tiers = self.log10_evalues()
        n = int(self._n[0])
        d = self.declared
        return {
            "outcomes": n, "alpha": self.alpha, "counts": {t: int(c) for t, c in zip(d.tiers, self._counts)},
            "declared_probs": {t: float(p) for t, p in zip(d.tiers, self._p)},
            "log10_evalue_table": table, "log10_threshold_table": math.log10(1 / self._alpha_table),
            "log10_evalue_tiers": {t: float(v) for t, v in zip(d.tiers, tiers)},
            "log10_threshold_tier": math.log10(1 / self._alpha_tier),
            "alpha_table": self._alpha_table, "alpha_tier": self._alpha_tier,
            "declared_return": d.return_rate(),
            "observed_return": (float(self._money[0] / self._money[1]) if self._money[1] > 0 else None),
            "cusum": (None if self._cusum_info is None else
                      {**self._cusum_info, "up": float(self._cus[0]), "down": float(self._cus[1])}),
            "streak": self._streak_info, "alarms": [dict(a) for a in self._alarms],
            "options": dict(self.options),
        }

    def history(self) -> dict:
        K = self._p.size
        h = self._hist[: int(self._hmeta[0])]
        return {"n": h[:, 0].astype(np.int64).tolist(), "log10_e_table": h[:, 1].tolist(),
                "log10_e_tiers": {t: h[:, 2 + k].tolist() for k, t in enumerate(self.declared.tiers)},
                "cusum_up": h[:, 2 + K].tolist(), "cusum_down": h[:, 3 + K].tolist(),
                "counts": {t: h[:, 4 + K + k].astype(np.int64).tolist() for k, t in enumerate(self.declared.tiers)}}
