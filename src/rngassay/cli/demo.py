"""``rngassay demo`` (the invented example) and ``rngassay diff`` (two reports compared)."""

from __future__ import annotations

import os

import click

from ..errors import InputError
from .common import EXIT_FAIL, EXIT_OK, Progress, out, run_argv, text, write_outputs


DEMO_STREAMS = (
    ("supplier", "Draw-machine stream from Kestrel Draw Systems (fictional supplier)", "shake256", 2026),
    ("homegrown", "Harbour Lane Lotteries' home-grown simulation generator (fictional)", "lcg32", 42),
)


@click.command()
@click.option("--budget", default="8MiB", metavar="SIZE", show_default=True, help="Bytes each check may see.")
@click.option("--out", "out_dir", default="reports", metavar="DIR", show_default=True, help="Folder for the reports.")
@click.option("--workers", default=None, type=int, metavar="N", help="Worker processes (default: all cores).")
@click.option("--quiet", "-q", is_flag=True, help="No progress on stderr.")
def demo(budget: str, out_dir: str, workers: int | None, quiet: bool) -> None:
    """Run the built-in example and write its reports.

    Harbour Lane Lotteries, an invented operator, receives its draw randomness from an invented supplier,
    Kestrel Draw Systems, and keeps a home-grown generator for its prize-fund simulations. The demo
    assays both (built-in generators stand in for them) and writes JSON, HTML and JUnit reports.
    """
    from .. import api

    if not os.path.isdir(out_dir):
        try:
            os.makedirs(out_dir, exist_ok=True)
        except OSError as e:
            raise InputError(f"cannot create the report folder: {e.strerror}", out_dir, "choose another --out") from None
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
    out("Reports written:")
    for p in written:
        out(f"  {p}")


@click.command()
@click.argument("base", metavar="BASE.json")
@click.argument("new", metavar="NEW.json")
@click.option("--all", "show_all", is_flag=True, help="Also list checks that did not change.")
def diff(base: str, new: str, show_all: bool) -> None:
    """Compare two JSON reports check by check; exit 1 when NEW is worse, else 0."""
    from ..report.diff import diff_reports, render_diff_text
    from ..report.files import read_report_json

    b = read_report_json(base)
    n = read_report_json(new)
    result = diff_reports(b, n)
    out(render_diff_text(result, show_same=show_all))
    raise click.exceptions.Exit(EXIT_FAIL if result.worse else EXIT_OK)
