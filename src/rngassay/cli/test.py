"""``rngassay test``: assay a stream."""

from __future__ import annotations

import os

import click

from .common import (EXIT_OK, Progress, alpha_option, announce_seeds, budget_option, check_outputs, check_source_given,
                     check_workers, cluster_option, finish, out, plan_only_option, report_options, run_argv,
                     selection_options, source_options, split, text, workers_option, write_outputs)


@click.command("test")
@source_options
@budget_option("Default 64 MiB; a file shorter than that is read whole.")
@selection_options()
@alpha_option()
@workers_option("Default: one per core; a run of at most 8 MiB in this process.")
@click.option("--grow-to", "grow_to", default=None, metavar="SIZE",
              help="Grow to a decision: run at the budget, then on fresh data at 2x, 4x, ... up to SIZE, stopping at "
                   "the first stage where a check fails (family-wise alpha over all stages by alpha spending).")
@plan_only_option("The plan also shows the segments and replicates.")
@cluster_option
@report_options
def test_cmd(source, fmt, value_range, command, shell, python_spec, gen, seed, budget, checks, skip, alpha,
             workers, grow_to, plan_only, cluster, json_path, html_path, junit_path, strict, quiet) -> None:
    """Assay a stream: read it, run the checks, grade, report; exit 0 pass, 1 fail, 2 bad input."""
    from ..signals import defer_signals

    defer_signals()  # a stop signal while starting up is kept for the run, which then ends in a report
    from .. import api

    from ..intake.open import SourceSpec

    spec = SourceSpec(path=source, command=command, shell=shell, python=python_spec, gen=gen, seed=seed, fmt=fmt,
                      value_range=value_range)
    check_source_given(source, command, python_spec, gen)
    check_workers(workers, cluster)
    outputs = check_outputs(json_path, html_path, junit_path, spec.files())
    spec.check()
    progress = Progress(quiet)
    try:
        result = api.assay(
            spec, budget=budget, checks=split(checks), skip=split(skip), alpha=alpha,
            workers=workers or "auto", progress=progress, plan_only=plan_only,
            cluster=cluster, partial=True, argv=run_argv(), grow_to=grow_to,
        )
    finally:
        progress.done()
    if not plan_only and result.input_error is not None:  # (a drawn seed is in the table and the reports)  # bad data mid-run: file what finished, then the error
        write_outputs(result, outputs)
        out(text(result))
        raise result.input_error
    if plan_only:
        out(result.describe())
        raise click.exceptions.Exit(EXIT_OK)
    announce_seeds(result)
    finish(result, outputs, strict)

