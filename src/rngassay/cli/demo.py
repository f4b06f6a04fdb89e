"""``rngassay demo`` (the invented example) and ``rngassay diff`` (two reports compared)."""

from __future__ import annotations

import os

import click

from ..errors import InputError
from .common import (EXIT_FAIL, EXIT_OK, Progress, out, quiet_option, run_argv, shared, text, workers_option,
                     write_outputs)


DEMO_STREAMS = (
    ("supplier", "Draw-machine stream from Kestrel Draw Systems (fictional supplier)", "shake256", 2026),
    ("homegrown", "Harbour Lane Lotteries' home-grown simulation generator (fictional)", "lcg32", 42),
)


@click.command()
@shared("budget", "--budget", default="8MiB", metavar="SIZE", show_default=True, tail="Here for each demo stream.")
@click.option("--out", "out_dir", default=None, metavar="DIR",
              help="Folder for the reports (default: a new folder ./rngassay-demo, -2, -3, ...).")
@click.option("--replace", is_flag=True, help="Write over demo reports already in --out (else refused).")
@workers_option("Default: all cores.")
@quiet_option()
def demo(budget: str, out_dir: str | None, workers: int | None, quiet: bool, replace: bool) -> None:
    """Run the built-in example and write its reports.

    Harbour Lane Lotteries, an invented operator, receives its draw randomness from an invented supplier,
    Kestrel Draw Systems, and keeps a home-grown generator for its prize-fund simulations. The demo
    assays both (built-in generators stand in for them) and writes JSON, HTML and JUnit reports into a new
    folder, never over files that are there already (unless --replace).
    """
    from .. import api

    out_dir = _demo_folder(out_dir, replace)
    written = []
    for slug, title, name, seed in DEMO_STREAMS:
        progress = Progress(quiet)
        try:
            report = api.assay(gen=name, seed=seed, budget=budget, progress=progress,
                               workers=workers or (os.cpu_count() or 1), argv=run_argv())
        finally:
            progress.done()
        report.notes.insert(0, f"demo: {title}; stand-in: --gen {name} --seed {seed}")
        base = os.path.join(out_dir, f"demo-{slug}")
        outs = [("json report", base + ".json"), ("html report", base + ".html"), ("junit report", base + ".xml")]
        write_outputs(report, outs)
        out(f"== {title}  (stand-in: --gen {name} --seed {seed})")
        out(text(report))
        out("")
        written += [p for _, p in outs]
    out(f"Reports written to {out_dir}{os.sep}:")
    for p in written:
        out(f"  {p}")


def demo_files(out_dir: str) -> list[str]:
    return [os.path.join(out_dir, f"demo-{slug}{ext}") for slug, *_ in DEMO_STREAMS for ext in (".json", ".html", ".xml")]


def _demo_folder(out_dir: str | None, replace: bool) -> str:
    """The folder the demo writes to: a new ./rngassay-demo[-N] by default; a given folder is made if missing, and
    its demo files are written over only with ``replace`` (a checkout's committed reports/ stays as it is)."""
    if out_dir is None:
        out_dir, k = "rngassay-demo", 1
        while os.path.lexists(out_dir):
            k += 1
            out_dir = f"rngassay-demo-{k}"
    elif not replace:
        there = [p for p in demo_files(out_dir) if os.path.lexists(p)]
        if there:
            raise InputError(f"{len(there)} demo report(s) already in the folder, e.g. {os.path.basename(there[0])}",
                             out_dir, "give a new --out folder, or --replace to write over them")
    try:
        os.makedirs(out_dir, exist_ok=True)
    except OSError as e:
        raise InputError(f"cannot create the report folder: {e.strerror}", out_dir, "choose another --out") from None
    return out_dir


@click.command()
@click.argument("base", metavar="BASE.json")
@click.argument("new", metavar="NEW.json")
@click.option("--all", "show_all", is_flag=True, help="Also list checks that did not change.")
@quiet_option("diff shows no progress: accepted so that every command takes -q.")
def diff(base: str, new: str, show_all: bool, quiet: bool) -> None:
    """Compare two JSON reports check by check; exit 1 when NEW is worse, else 0."""
    from ..report.diff import diff_reports, render_diff_text
    from ..report.files import read_report_json

    b = read_report_json(base)
    n = read_report_json(new)
    result = diff_reports(b, n)
    out(render_diff_text(result, show_same=show_all))
    raise click.exceptions.Exit(EXIT_FAIL if result.worse else EXIT_OK)
