"""``rngassay seeds``: the seed sweep at the command line. ``register_cli(group)`` adds the command."""

from __future__ import annotations

import os

import click

from ..seeds.defaults import (
    DEFAULT_AVALANCHE_SEEDS,
    DEFAULT_AVALANCHE_SEEDS_COMMAND,
    DEFAULT_BYTES_PER_SEED,
    DEFAULT_EARLY_BYTES,
    DEFAULT_LAGS,
    MAX_BYTES_PER_SEED,
    ROW_KEYS,
    SEED_SETS,
)


def _ints(text: str, option: str) -> tuple[int, ...]:
    from ..errors import InputError

    try:
        out = tuple(int(x) for x in text.split(",") if x.strip())
    except ValueError:
        raise InputError(f"cannot read {option} {text!r}", option, "write a comma list, e.g. 2,4") from None
    return out


DEFAULT_BYTES_PER_SEED_TEXT = "64KiB"
MAX_LAGS = 1024  # cross-correlation lags; the cost grows with lags times values per seed


def _bounded_sizes(bytes_per_seed: str | None, lags: int, budget: str | None) -> int | None:
    """Bound --bytes-per-seed and --lags before anything is allocated; return the byte count (None: from --budget,
    whose share per seed the sweep bounds)."""
    from ..errors import InputError
    from ..sizes import format_size, parse_size

    if budget is not None:
        if bytes_per_seed is not None:
            raise InputError("--budget and --bytes-per-seed given", "",
                             "give one: --budget (the total read, shared by the seeds) or --bytes-per-seed")
        parse_size(budget, "--budget")
        if lags > MAX_LAGS:
            raise InputError(f"--lags {lags} is too large: at most {MAX_LAGS}", "", "e.g. --lags 8")
        return None
    b = parse_size(bytes_per_seed or DEFAULT_BYTES_PER_SEED_TEXT, "--bytes-per-seed")
    if b > MAX_BYTES_PER_SEED:
        raise InputError(f"--bytes-per-seed {bytes_per_seed} is above the maximum of {format_size(MAX_BYTES_PER_SEED)}",
                         "", "sweep more seeds rather than longer streams, e.g. --bytes-per-seed 1MiB")
    if lags > MAX_LAGS or (lags >= 0 and lags >= b // 8):
        raise InputError(f"--lags {lags} is too large: at most {MAX_LAGS} and below the {b // 8} values per seed",
                         "", "e.g. --lags 8")
    return b


def register_cli(group: click.Group) -> click.Command:
    """Add the ``seeds`` command to ``group`` (once) and return it."""
    if "seeds" in group.commands:
        return group.commands["seeds"]
    from .common import (EXIT_OK, Progress, alpha_option, budget_option, check_outputs, check_workers, cluster_option,
                         finish, input_paths, out, plan_only_option, report_options, run_argv, selection_options,
                         split, stream_source_options, workers_option)

    sets = "; ".join(f"{k}: {v}" for k, v in SEED_SETS.items())

    @group.command("seeds")
    @stream_source_options(seed=False, tails={
        "command": "Run once per seed with {seed} replaced, e.g. \"mygen --seed {seed}\".",
        "python": "Called once per seed: NAME(seed).",
        "gen": "Seeded with each seed in turn.",
    })
    @click.option("--seeds", "seeds_spec", default=None, metavar="SPEC",
                  help="Seeds: an inclusive range 0..999, a list 1,5,9 (items may be ranges) or @FILE (one per line).")
    @click.option("--seed-set", default=None, metavar="NAME", help=f"A ready-made adversarial set. {sets}.")
    @click.option("--bytes-per-seed", default=None, metavar="SIZE",
                  help="Bytes of each seed's stream (a multiple of 8, at least 64; default 64KiB; not with --budget).")
    @budget_option("Here: every seed's stream and the avalanche's; each seed gets an equal share (instead of "
                   "--bytes-per-seed).")
    @selection_options(f"Here the seed checks: {', '.join(ROW_KEYS)}.")
    @click.option("--per-seed-checks", "per_seed", multiple=True, metavar="SEL",
                  help="Battery checks to run on every seed's stream (key, family or identifier; "
                       "default: a lean subset of nine).")
    @click.option("--lags", default=DEFAULT_LAGS, show_default=True, type=int, metavar="L",
                  help="Cross-correlation of adjacent seeds at lags -L..L.")
    @click.option("--interleave", "interleave", default="2,4", show_default=True, metavar="K,..",
                  help="Merge K adjacent seeds' streams word by word (K = 2 and/or 4).")
    @click.option("--merge-budget", default="16MiB", show_default=True, metavar="SIZE",
                  help="Bytes of each merged stream (interleaved, XOR-ed) given to the battery.")
    @click.option("--avalanche-seeds", default=None, type=int, metavar="N",
                  help=f"Base seeds of the avalanche check (default {DEFAULT_AVALANCHE_SEEDS}; "
                       f"{DEFAULT_AVALANCHE_SEEDS_COMMAND} with --command); 0 to leave it out.")
    @click.option("--seed-bits", default=64, show_default=True, type=int, metavar="N",
                  help="Seed width: the avalanche flips bits 0..N-1; every seed must be below 2**N.")
    @click.option("--early-bytes", default=DEFAULT_EARLY_BYTES, show_default=True, type=int, metavar="P",
                  help="Output byte positions 0..P-1 checked across seeds.")
    @alpha_option("Here over the seed checks.")
    @workers_option("Default: all cores.")
    @cluster_option
    @plan_only_option("Here the seed checks, the seeds and the bytes of each stream; no stream is made.")
    @report_options
    def seeds_cmd(command, shell, python_spec, gen, seeds_spec, seed_set, bytes_per_seed, budget, checks, skip,
                  per_seed, lags, interleave, merge_budget, avalanche_seeds, seed_bits, early_bytes, alpha, workers,
                  cluster, plan_only, json_path, html_path, junit_path, strict, quiet) -> None:
        """Sweep seeds: one stream per seed, checks of how the streams relate; exit 0 pass, 1 fail, 2 bad input.

        \b
        Checks (family "seeds", Holm across them):
          per-seed CHECK      a lean battery on every seed's stream, second level across seeds
          interleave k=K      adjacent seeds' streams merged word by word, then the battery
          xor pairs           XOR of paired seeds' streams, then the battery
          cross-correlation   lagged correlation between adjacent seeds' streams
          avalanche           output bits changed by flipping one seed bit
          duplicates and overlaps   identical or shifted streams across seeds
          early bytes         each early output byte's distribution across seeds
        """
        from ..signals import defer_signals
        from ..errors import InputError
        from ..api import sweep_seeds

        defer_signals()  # a stop signal while starting up is kept for the run, which then ends in a report
        check_workers(workers, cluster)
        nbytes = _bounded_sizes(bytes_per_seed, lags, budget)
        if avalanche_seeds is not None and avalanche_seeds < 0:
            raise InputError(f"--avalanche-seeds must be >= 0, got {avalanche_seeds}", "", "e.g. 128")
        seeds_file = (seeds_spec[1:],) if seeds_spec and seeds_spec.startswith("@") else ()
        outputs = check_outputs(json_path, html_path, junit_path,
                                 input_paths(None, command, shell, python_spec, seeds_file))
        progress = Progress(quiet)
        try:
            report = sweep_seeds(
                seeds_spec, seed_set=seed_set, python=python_spec, command=command, shell=shell, gen=gen,
                bytes_per_seed=nbytes or DEFAULT_BYTES_PER_SEED, budget=budget, plan_only=plan_only,
                checks=split(checks), skip=split(skip),
                per_seed_checks=split(per_seed), lags=lags, interleave=_ints(interleave, "--interleave"),
                merge_budget=merge_budget, avalanche_seeds=avalanche_seeds, seed_bits=seed_bits,
                early_bytes=early_bytes, alpha=alpha, workers=workers or (os.cpu_count() or 1) if cluster is None
                else None, cluster=cluster, progress=progress, argv=run_argv(),
            )
        finally:
            progress.done()
        if plan_only:
            out(report.describe())
            raise click.exceptions.Exit(EXIT_OK)
        finish(report, outputs, strict)

    return seeds_cmd
