"""``rngassay fit``: a supplier's values against a declared distribution or a table of odds."""

from __future__ import annotations

import os

import click

from ..errors import InputError
from ..battery.defaults import DEFAULT_PIT_SEED
from .common import (Progress, check_outputs, check_source_given, check_workers, finish, input_paths, report_options,
                     run_argv, split)


def register_cli(cli_group) -> None:
    """Add the ``fit`` command to the click group."""
    @cli_group.command("fit")
    @click.argument("source", required=False)
    @click.option("--dist", "dist_spec", default=None, metavar="SPEC",
                  help="Declared scipy.stats distribution, e.g. 'norm(loc=2, scale=3)', 'gamma(a=2)', 'poisson(mu=3)'.")
    @click.option("--odds", "odds_path", default=None, metavar="FILE",
                  help="Declared outcome probabilities: CSV with header outcome,probability, or TOML [odds] table.")
    @click.option("--format", "fmt", default="text", show_default=True, metavar="F",
                  help="Format of the values: text (white-space separated), <f8 or <f4 (binary floats).")
    @click.option("--command", default=None, metavar="CMD", help="Read the standard output of this command.")
    @click.option("--shell", is_flag=True, help="Run --command through the shell.")
    @click.option("--limit", default=None, type=int, metavar="N", help="Use at most the first N values.")
    @click.option("--checks", "checks", multiple=True, metavar="SEL",
                  help="Run only these checks: fit, a key or id, pit (the PIT battery) or 'pit: SEL'.")
    @click.option("--skip", "skip", multiple=True, metavar="SEL", help="Leave out these checks (same selectors).")
    @click.option("--no-battery", is_flag=True, help="Fit-specific checks only: no uniform battery on the PIT values.")
    @click.option("--pit-seed", default=DEFAULT_PIT_SEED, type=int, show_default=True,
                  help="Seed of the randomised PIT for discrete declarations (recorded in the report).")
    @click.option("--alpha", default=1e-3, type=float, show_default=True, help="Family-wise false-alarm rate (Holm).")
    @click.option("--workers", default=None, type=int, metavar="N", help="Worker processes (default: all cores).")
    @report_options
    def fit_cmd(source, dist_spec, odds_path, fmt, command, shell, limit, checks, skip, no_battery, pit_seed, alpha,
                workers, json_path, html_path, junit_path, strict, quiet) -> None:
        """Test a supplier's values against a declared distribution; exit 0 pass, 1 fail, 2 bad input."""
        if (dist_spec is None) == (odds_path is None):
            raise InputError("give exactly one of --dist and --odds" if dist_spec else "give --dist SPEC or --odds FILE",
                             "", "e.g. rngassay fit data.txt --dist 'norm(loc=0, scale=1)'")
        check_source_given(source, command, None, None)
        check_workers(workers)
        if not 0 <= pit_seed < 2**64:
            raise InputError(f"--pit-seed must be between 0 and 2**64 - 1, got {str(pit_seed)[:30]}", "", "e.g. --pit-seed 1")
        outputs = check_outputs(json_path, html_path, junit_path,
                                 input_paths(source, command, shell, None, (odds_path,)))
        progress = Progress(quiet)
        try:
            from .. import api

            report = api.fit(source, dist=dist_spec, odds=odds_path, fmt=fmt, command=command, shell=shell, limit=limit,
                         checks=split(checks), skip=split(skip), battery=not no_battery, alpha=alpha,
                         workers=workers or (os.cpu_count() or 1), pit_seed=pit_seed, progress=progress,
                         argv=run_argv())
        finally:
            progress.done()
        finish(report, outputs, strict)
