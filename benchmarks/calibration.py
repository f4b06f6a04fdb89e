"""Calibration experiment: does a sound generator fail as often as --alpha promises?

    python benchmarks/calibration.py --runs 200 --budget 8MiB --jobs 2 > benchmarks/calibration.md

Runs the whole battery on PCG64 with seeds 1..RUNS (fixed, so the experiment is reproducible), then reports:
- the share of `fail` (and `borderline`) runs, with an exact binomial test of the fail count against alpha;
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
    from rngassay.checks.registry import load_all

    rep = api.assay(gen="pcg64", seed=seed, budget=budget, workers=1, alpha=alpha)
    reg = load_all()
    out = {"seed": seed, "verdict": rep.verdict, "checks": {}, "elapsed": rep.elapsed_s}
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
    borders = sum(r["verdict"] == "borderline" for r in results)
    binom = stats.binomtest(fails, n, a.alpha, alternative="greater")
    print("# Calibration of the battery on a sound generator\n")
    print(f"Command: `python benchmarks/calibration.py --runs {a.runs} --budget {a.budget} --jobs {a.jobs}`  ")
    print(f"Generator: numpy PCG64, seeds 1..{a.runs} (`--gen pcg64 --seed S`), budget {a.budget}, alpha {a.alpha}.  ")
    print(f"Wall time: {time.time() - t0:.0f} s; mean run {np.mean([r['elapsed'] for r in results]):.1f} s.\n")
    print("## Run verdicts\n")
    print("| verdict | runs | share |\n|---|---|---|")
    for v, k in (("fail", fails), ("borderline", borders), ("pass", n - fails - borders)):
        print(f"| {v} | {k} | {k / n:.4f} |")
    for r in results:
        if r["verdict"] != "pass":
            worst = sorted(r["checks"].items(), key=lambda kv: kv[1]["p"])[:3]
            print(f"\n- seed {r['seed']}: {r['verdict']}; lowest check p-values: "
                  + "; ".join(f"{cid} {c['p']:.3g} ({c['grade']})" for cid, c in worst))
    print(f"\nExact binomial test of {fails} fails in {n} runs against the promised rate {a.alpha} "
          f"(one-sided, more fails than promised): p = {binom.pvalue:.3g}. "
          + ("Consistent with alpha." if binom.pvalue > 0.01 else "NOT consistent with alpha."))
    per = defaultdict(list)
    kinds = {}
    for r in results:
        for cid, c in r["checks"].items():
            per[cid].extend(c["replicate_p"])
            kinds[cid] = c["kind"]
    print("\n## First-level p-values per check (all replicates of all runs)\n")
    print("| check | kind | p-values | KS D | KS p | share < 0.01 |\n|---|---|---|---|---|---|")
    bad = 0
    for cid in sorted(per):
        p = np.asarray(per[cid])
        if kinds[cid] == "continuous" and p.size > 10:
            ks = stats.kstest(p, "uniform")
            flag = "" if ks.pvalue > 1e-3 else " **non-uniform**"
            bad += ks.pvalue <= 1e-3
            print(f"| {cid} | continuous | {p.size} | {ks.statistic:.4f} | {ks.pvalue:.3g}{flag} | {np.mean(p < 0.01):.4f} |")
        else:
            print(f"| {cid} | {kinds[cid]} | {p.size} | – | – (discrete: p-values are conservative, not uniform) | {np.mean(p < 0.01):.4f} |")
    print(f"\n{bad} continuous check(s) with KS p <= 1e-3 over their first-level p-values.")


if __name__ == "__main__":
    main()
