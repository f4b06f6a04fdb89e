"""``rngassay fit``: a supplier's values against a declared distribution or a table of odds."""

from __future__ import annotations

import os

import click

from ..errors import InputError
from ..battery.defaults import DEFAULT_PIT_SEED
from .common import (EXIT_OK, Progress, alpha_option, announce_seeds, budget_option, check_outputs, check_source_given,
                     check_workers, finish, input_paths, out, plan_only_option, report_options, run_argv, selection_options,
                     shared, split, stream_source_options, workers_option)


def register_cli(cli_group) -> None:
    """Add the ``fit`` command to the click group."""
    @cli_group.command("fit")
    @click.argument("source", required=False)
    @click.option("--dist", "dist_spec", default=None, metavar="SPEC",
                  help="Declared scipy.stats distribution, e.g. 'norm(loc=2, scale=3)', 'gamma(a=2)', 'poisson(mu=3)'.")
    @click.option("--odds", "odds_path", default=None, metavar="FILE",
                  help="Declared outcome probabilities: CSV with header outcome,probability, or TOML [odds] table.")
    @shared("format", "--format", "fmt", default=None, metavar="F",
            tail="text (white-space separated, the default), <f8 or <f4 (binary floats; >f8 >f4 big-endian). "
                 "Not with --gen.")
    @stream_source_options(tails={
        "command": "Its output is read in --format, like a file.",
        "python": "Its draw(n_bytes) returns your sampler's values encoded in --format (e.g. doubles as bytes with "
                  "--format <f8); a plain bit generator gives bytes, not variates: assay those with `rngassay test`.",
        "gen": "fit takes its uniforms in [0, 1) (its output read as `test` reads it), so declare a continuous law "
               "such as 'uniform'.",
    })
    @budget_option("Bytes for --gen. Default: a source is read whole (at most 2**25 values); --gen and --python "
                   "for 64 MiB.")
    @click.option("--limit", default=None, type=int, metavar="N",
                  help="Use at most the first N values (a shorter source is fine; not with --budget).")
    @selection_options("Here also: fit (the fit-specific checks), pit (the PIT battery) or 'pit: SEL'.")
    @click.option("--no-battery", is_flag=True, help="Fit-specific checks only: no uniform battery on the PIT values.")
    @click.option("--pit-seed", default=DEFAULT_PIT_SEED, type=int, show_default=True,
                  help="Seed of the randomised PIT for discrete declarations (recorded in the report).")
    @alpha_option("Over the fit checks and the PIT battery together.")
    @workers_option("Default: all cores.")
    @plan_only_option("fit reads and validates the values first (their number sets the plan).")
    @report_options
    def fit_cmd(source, dist_spec, odds_path, fmt, command, shell, python_spec, gen, seed, budget, limit, checks, skip,
                no_battery, pit_seed, alpha, workers, plan_only, json_path, html_path, junit_path, strict,
                quiet) -> None:
        """Test a supplier's values against a declared distribution; exit 0 pass, 1 fail, 2 bad input."""
        if (dist_spec is None) == (odds_path is None):
            raise InputError("give exactly one of --dist and --odds" if dist_spec else "give --dist SPEC or --odds FILE",
                             "", "e.g. rngassay fit data.txt --dist 'norm(loc=0, scale=1)'")
        check_source_given(source, command, python_spec, gen)
        check_workers(workers)
        if not 0 <= pit_seed < 2**64:
            raise InputError(f"--pit-seed must be between 0 and 2**64 - 1, got {str(pit_seed)[:30]}", "", "e.g. --pit-seed 1")
        outputs = check_outputs(json_path, html_path, junit_path,
                                 input_paths(source, command, shell, python_spec, (odds_path,)))
        progress = Progress(quiet)
        try:
            from .. import api

            report = api.fit(source, dist=dist_spec, odds=odds_path, fmt=fmt, command=command, shell=shell,
                             python=python_spec, gen=gen, seed=seed, budget=budget, limit=limit,
                             checks=split(checks), skip=split(skip), battery=not no_battery, alpha=alpha,
                             workers=workers or (os.cpu_count() or 1), pit_seed=pit_seed, progress=progress,
                             plan_only=plan_only, argv=run_argv())
        finally:
            progress.done()
        if plan_only:
            out(report.describe())
            raise click.exceptions.Exit(EXIT_OK)
        announce_seeds(report)
        finish(report, outputs, strict)

