"""Calibration experiment: does a sound generator fail as often as --alpha promises?

    python benchmarks/calibration.py --runs 200 --budget 8MiB --jobs 2 > benchmarks/calibration.md

Runs the whole battery on PCG64 with seeds 1..RUNS (fixed, so the experiment is reproducible), then reports:
- the share of `fail` (and `notable`) runs, with an exact binomial test of the fail count against alpha;
- for every check, a Kolmogorov–Smirnov test of its first-level p-values (all replicates of all runs)
  against uniform — continuous checks only; discrete ones are listed with their pooled second-level p-values.
Prints Markdown.
"""

from __future__ import annotations

import argparse
import concurrent.futures as cf
import sys
import time
from collections import defaultdict

import numpy as np


def one_run(seed: int, budget: str, alpha: float) -> dict:
    from rngassay import api
    from rngassay.checks.catalog import load_all

    rep = api.assay(gen="pcg64", seed=seed, budget=budget, workers=1, alpha=alpha)
    reg = load_all()
    from rngassay.stats import holm_adjusted

    first_p = [c.rounds[0].p_value if c.rounds else c.p_value for c in rep.checks]
    out = {"seed": seed, "verdict": rep.verdict, "checks": {}, "elapsed": rep.elapsed_s,
           "min_holm": float(min(holm_adjusted(np.asarray(first_p)))) if first_p else 1.0}
    for c in rep.checks:
        first = c.rounds[0] if c.rounds else None
        out["checks"][c.id] = {
            "kind": reg[c.key].kind if "subtests" not in c.second_level else "continuous, Bonferroni over sub-tests",
            "grade": c.grade,
            "p": c.rounds[0].p_value if first else c.p_value,
            "replicate_p": list(first.replicate_p) if first else [],
            "rounds": len(c.rounds),
        }
    return out


def main() -> None:
    from scipy import stats

    ap = argparse.ArgumentParser()
    ap.add_argument("--runs", type=int, default=200)
    ap.add_argument("--budget", default="8MiB")
    ap.add_argument("--alpha", type=float, default=1e-3)
    ap.add_argument("--jobs", type=int, default=2)
    a = ap.parse_args()
    t0 = time.time()
    results = []
    with cf.ProcessPoolExecutor(a.jobs) as ex:
        futs = [ex.submit(one_run, s, a.budget, a.alpha) for s in range(1, a.runs + 1)]
        for i, f in enumerate(cf.as_completed(futs)):
            results.append(f.result())
            print(f"\r{i + 1}/{a.runs}", end="", file=sys.stderr)
    print(file=sys.stderr)
    results.sort(key=lambda r: r["seed"])
    n = len(results)
    fails = sum(r["verdict"] == "fail" for r in results)
    borders = sum(r["verdict"] == "notable" for r in results)
    binom = stats.binomtest(fails, n, a.alpha, alternative="greater")
    print("# Calibration of the battery on a sound generator\n")
    print(f"Command: `python benchmarks/calibration.py --runs {a.runs} --budget {a.budget} --jobs {a.jobs}`  ")
    print(f"Generator: numpy PCG64, seeds 1..{a.runs} (`--gen pcg64 --seed S`), budget {a.budget}, alpha {a.alpha}.  ")
    print(f"Wall time: {time.time() - t0:.0f} s; mean run {np.mean([r['elapsed'] for r in results]):.1f} s.\n")
    print("## Run verdicts\n")
    print("| verdict | runs | share |\n|---|---|---|")
    for v, k in (("fail", fails), ("notable", borders), ("pass", n - fails - borders)):
        print(f"| {v} | {k} | {k / n:.4f} |")
    for r in results:
        if r["verdict"] != "pass":
            worst = sorted(r["checks"].items(), key=lambda kv: kv[1]["p"])[:3]
            print(f"\n- seed {r['seed']}: {r['verdict']}; lowest check p-values: "
                  + "; ".join(f"{cid} {c['p']:.3g} ({c['grade']})" for cid, c in worst))
    print(f"\nExact binomial test of {fails} fails in {n} runs against the promised rate {a.alpha} "
          f"(one-sided, more fails than promised): p = {binom.pvalue:.3g}. "
          + ("Consistent with alpha." if binom.pvalue > 0.01 else "NOT consistent with alpha."))
    print("\n## Run-level false alarms at several levels\n")
    print("The share of runs whose smallest Holm-adjusted p-value (first round, over all checks) is below each "
          "level; Holm promises at most that share. Exact binomial test, one-sided (more alarms than promised), "
          "and the two-sided p for reference.\n")
    print("| level | runs below | share | one-sided p (excess) | two-sided p | judgement |\n|---|---|---|---|---|---|")
    for level in (0.05, 0.01, 0.001):
        k = sum(r["min_holm"] < level for r in results)
        one = stats.binomtest(k, n, level, alternative="greater").pvalue
        two = stats.binomtest(k, n, level).pvalue
        verdict = "consistent" if one >= 0.01 else "**more alarms than promised**"
        print(f"| {level} | {k} | {k / n:.4f} | {one:.3g} | {two:.3g} | {verdict} |")
    per = defaultdict(list)
    kinds = {}
    for r in results:
        for cid, c in r["checks"].items():
            per[cid].extend(c["replicate_p"])
            kinds[cid] = c["kind"]
    print("\n## First-level p-values per check (all replicates of all runs)\n")
    from rngassay.stats import holm_adjusted

    ks_p = {}
    for cid in sorted(per):
        p = np.asarray(per[cid])
        if kinds[cid] == "continuous" and p.size > 10:
            ks_p[cid] = stats.kstest(p, "uniform")
    adj = dict(zip(ks_p, holm_adjusted(np.asarray([k.pvalue for k in ks_p.values()])))) if ks_p else {}
    print("| check | kind | p-values | KS D | KS p | Holm-adjusted | share < 0.01 |\n|---|---|---|---|---|---|---|")
    bad = 0
    for cid in sorted(per):
        p = np.asarray(per[cid])
        if cid in ks_p:
            ks = ks_p[cid]
            flag = "" if adj[cid] > 0.01 else " **non-uniform**"
            bad += adj[cid] <= 0.01
            print(f"| {cid} | continuous | {p.size} | {ks.statistic:.4f} | {ks.pvalue:.3g} | {adj[cid]:.3g}{flag} "
                  f"| {np.mean(p < 0.01):.4f} |")
        else:
            print(f"| {cid} | {kinds[cid]} | {p.size} | – | – | – (discrete: p-values are conservative, not "
                  f"uniform) | {np.mean(p < 0.01):.4f} |")
    print(f"\n{bad} continuous check(s) whose first-level p-values are non-uniform at Holm-adjusted 0.01 "
          f"(Holm across {len(ks_p)} checks).")


if __name__ == "__main__":
    main()
