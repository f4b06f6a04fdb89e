"""What the commands share: source and report options, progress, checks of outputs and workers, writing the
reports, the exit code. Public so that every command module uses the same ones."""

from __future__ import annotations

import os
import sys
from typing import Any

import click

from ..errors import InputError
from .progress import Progress  # noqa: F401 (the commands import it from here)

EXIT_OK, EXIT_FAIL, EXIT_USAGE, EXIT_INTERNAL = 0, 1, 2, 3

def out(text: str = "") -> None:
    """Print to standard output; a reader that closed the pipe early (``| head``) ends the output quietly,
    and the command still exits with its own code."""
    try:
        click.echo(text)
    except BrokenPipeError:
        try:
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
        except (OSError, ValueError):  # pragma: no cover
            pass


def source_options(f):
    """Options naming the source; shared by commands that read a stream."""
    opts = [
        click.argument("source", required=False),
        click.option("--format", "fmt", default=None, metavar="F",
                     help="Input format: u1 (raw bytes, default), <u2 >u2 <u4 >u4 <u8 >u8, <f4 <f8, text, hex "
                          "(bytes as hex digits). With none, printed numbers or hex are refused: name the format."),
        click.option("--range", "value_range", default=None, metavar="LO:HI",
                     help="Inclusive range of the values: text integers (e.g. 1:6 for a die), or words of "
                          "<u2..>u8 (e.g. 1:2147483646 for a multiplicative 31-bit generator)."),
        click.option("--command", default=None, metavar="CMD",
                     help="Read the standard output of this command (run without a shell)."),
        click.option("--shell", is_flag=True, help="Run --command through the shell."),
        click.option("--python", "python_spec", default=None, metavar="FILE.py:NAME",
                     help="A factory returning a numpy BitGenerator, Generator or draw(n_bytes) callable."),
        click.option("--gen", default=None, metavar="NAME", help="A built-in reference generator (see `rngassay catalog`)."),
        click.option("--seed", default=None, type=int, metavar="N", help="Seed for --gen or --python."),
    ]
    for o in reversed(opts):
        f = o(f)
    return f


def quiet_broken_pipe() -> None:
    # The reader closed the pipe: that ends `emit` quietly. Point stdout at /dev/null so the
    # interpreter's final flush does not complain.
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except OSError:  # pragma: no cover
        pass
    raise click.exceptions.Exit(0)


def report_options(f):
    opts = [
        click.option("--json", "json_path", default=None, metavar="PATH", help="Write the report as JSON (versioned schema)."),
        click.option("--html", "html_path", default=None, metavar="PATH", help="Write a self-contained HTML report with figures."),
        click.option("--junit", "junit_path", default=None, metavar="PATH", help="Write JUnit XML: one test case per check."),
        click.option("--strict", is_flag=True, help="Exit 1 for a borderline run too."),
        click.option("--quiet", "-q", is_flag=True, help="No progress on stderr."),
    ]
    for o in reversed(opts):
        f = o(f)
    return f


def run_argv() -> list[str]:
    """The command line as run (program name "rngassay", then the arguments as given), for the audit trail."""
    ctx = click.get_current_context(silent=True)
    argv = ctx.meta.get("rngassay.argv") if ctx is not None else None
    return list(argv) if argv else ["rngassay", *sys.argv[1:]]


def announce_seeds(report) -> None:
    """One line on stderr for every seed drawn for this run (so that it can be repeated with --seed)."""
    for s in (getattr(report, "audit", None) or {}).get("seeds", []):
        if s.get("origin") == "drawn":
            opt = s.get("source", "").split(" ")[0] or "the source"
            click.echo(f"rngassay: seed {s['seed']} drawn for {opt}; repeat the run with --seed {s['seed']}", err=True)


def split(values: tuple[str, ...]) -> list[str] | None:
    out = [p.strip() for v in values for p in v.split(",") if p.strip()]
    if values and not out:
        raise InputError("empty --checks/--skip selection", "", "name checks, e.g. --checks gap,serial or --checks bits")
    return out or None


def finish(report, outputs: list[tuple[str, str]], strict: bool) -> None:
    """Write the reports, print the table and exit: 0 pass (and borderline unless strict), 1 fail or an
    incomplete run, 128 + the signal when a stop signal ended it. Shared by `test`, `fit` and `seeds`.
    A report that cannot be written still leaves the verdict and the table on standard output (then exit 2)."""
    try:
        write_outputs(report, outputs)
    except InputError:
        out(text(report))
        raise
    out(text(report))
    for what, path in outputs:
        out(f"{what:<12} {path}")
    code = report.exit_code(strict=strict)
    sig = stop_signal()  # every stop signal of a run is recorded by the guard `main` holds (no note is searched)
    if sig:  # SIGINT, SIGTERM, SIGHUP: 128 + the signal's number (130, 143, 129)
        code = 128 + sig
    elif report.incomplete:  # e.g. a source that died mid-run: never green
        code = max(code, EXIT_FAIL)
    raise click.exceptions.Exit(code)


def text(report) -> str:
    from ..report.terminal import render

    return render(report, color=sys.stdout.isatty())


def stop_signal() -> int | None:
    from ..signals import received_signal

    return received_signal()


def check_outputs(json_path, html_path, junit_path, inputs: tuple = ()) -> list[tuple[str, str]]:
    """Validate report paths before any work, so a long run does not end in an unwritable path and no
    report ever replaces an input file, a device or a pipe."""
    from ..report.files import check_report_paths

    outs = [(w, p) for w, p in (("json report", json_path), ("html report", html_path), ("junit report", junit_path))
            if p is not None]
    check_report_paths(outs, [p for p in inputs if isinstance(p, str)])
    return outs


MAX_WORKERS = 256  # worker processes a run may ask for; more only adds start-up cost


def check_workers(workers: int | None, cluster: str | None = None) -> None:
    """--workers must be 1..MAX_WORKERS, and is not combined with --cluster (the cluster's workers do the work);
    a --cluster address must have the form SCHEME://HOST:PORT (checked before any work or connection)."""
    if cluster is not None:
        from ..battery.cluster import validate_address

        validate_address(cluster)
    if workers is None:
        return
    if workers < 1:
        raise InputError(f"--workers must be at least 1, got {workers}", "", "e.g. --workers 2")
    if workers > MAX_WORKERS:
        shown = str(workers) if len(str(workers)) <= 20 else str(workers)[:20] + "..."
        raise InputError(f"--workers {shown} is above the maximum of {MAX_WORKERS}", "",
                         "the battery uses at most one worker per check; e.g. --workers 4")
    if cluster is not None:
        raise InputError("--workers and --cluster given", "", "the cluster's workers do the work; drop --workers")


def input_paths(source: Any = None, command: str | None = None, shell: bool = False, python_spec: str | None = None,
                extra: tuple = ()) -> list[str]:
    """Every existing file a run reads (see :meth:`rngassay.intake.open.SourceSpec.files`)."""
    from ..intake.open import SourceSpec

    return SourceSpec(path=source if isinstance(source, str) else None, command=command, shell=shell,
                      python=python_spec).files(extra)


def write_outputs(report, outputs: list[tuple[str, str]]) -> None:
    from ..report.files import write_atomic

    for what, path in outputs:
        if what.startswith("json"):
            write_atomic(path, report.to_json() + "\n")
        elif what.startswith("html"):
            from ..report.html import render_html

            write_atomic(path, render_html(report))
        else:
            from ..report.junit import render_junit

            write_atomic(path, render_junit(report))


def check_source_given(source: Any, command: Any, python_spec: Any, gen: Any) -> None:
    if source is None and command is None and python_spec is None and gen is None and sys.stdin.isatty():
        raise InputError(
            "no source given", "", "name a file, '-' for standard input, or use --gen NAME, --command CMD or --python SPEC"
        )


def one_line(text: str) -> str:
    """An error message as one printable line: control characters (newlines in a file name, escapes) are
    shown escaped, never raw."""
    from ..report.files import safe_name

    return safe_name(text)

