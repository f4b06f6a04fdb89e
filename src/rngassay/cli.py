"""Command line: thin click commands over :mod:`rngassay.api`.

Exit codes everywhere: 0 nothing failed, 1 a check failed, 2 bad input or usage.
Errors are one line on stderr; never a traceback.
"""

from __future__ import annotations

import os
import sys
from typing import Any

import click

from . import __version__
from .errors import InputError

EXIT_OK, EXIT_FAIL, EXIT_USAGE = 0, 1, 2


def _source_options(f):
    """Options naming the source; shared by commands that read a stream."""
    opts = [
        click.argument("source", required=False),
        click.option("--format", "fmt", default=None, metavar="F",
                     help="Input format: u1 (raw bytes, default), <u2 >u2 <u4 >u4 <u8 >u8, <f4 <f8, text."),
        click.option("--range", "value_range", default=None, metavar="LO:HI",
                     help="Inclusive range of text integers, e.g. 1:6 for a die."),
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


class Progress:
    """A one-line progress indicator on stderr, shown only on a terminal and unless --quiet."""

    def __init__(self, quiet: bool):
        self.on = (not quiet) and sys.stderr.isatty()
        self._last = ""

    def __call__(self, text: str) -> None:
        if self.on:
            line = f"\r{text[:100]:<100}"
            if line != self._last:
                sys.stderr.write(line)
                sys.stderr.flush()
                self._last = line

    def done(self) -> None:
        if self.on and self._last:
            sys.stderr.write("\r" + " " * 100 + "\r")
            sys.stderr.flush()


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="rngassay")
def cli() -> None:
    """rngassay: assay streams of random numbers.

    A pass is evidence at the sample size used, not proof of unpredictability; for gaming or
    cryptographic use, defer to the applicable technical standards, local regulation and
    accredited test laboratories.
    """


@cli.command()
def catalog() -> None:
    """List input formats, built-in generators and checks."""
    from .generators import GENERATORS
    from .intake.formats import FORMATS

    click.echo("Input formats (--format):")
    click.echo("  " + "  ".join(FORMATS))
    click.echo("  text takes floats in [0, 1), or integers with --range LO:HI")
    click.echo("")
    click.echo("Built-in generators (--gen NAME, rngassay emit NAME):")
    width = max(len(n) for n in GENERATORS)
    for name, info in GENERATORS.items():
        click.echo(f"  {name:<{width}}  {info.quality:<6}  {info.summary}")
    from .checks.registry import load_all

    reg = load_all()
    if reg:
        click.echo("")
        click.echo("Checks (family / key / view):")
        kw = max(len(k) for k in reg)
        for key, spec in sorted(reg.items(), key=lambda kv: (kv[1].family, kv[0])):
            click.echo(f"  {spec.family:<11} {key:<{kw}}  {spec.view:<9} {spec.title}")


@cli.command()
@click.argument("name")
@click.option("--seed", default=None, type=int, metavar="N", help="Seed (default: the generator's own default).")
@click.option("--bytes", "nbytes", default=None, metavar="SIZE",
              help="How many bytes to write (KiB, MiB, GiB suffixes); default: until the reader closes the pipe.")
def emit(name: str, seed: int | None, nbytes: str | None) -> None:
    """Write the raw bytes of a built-in generator to standard output."""
    from .generators import make_generator
    from .sizes import parse_size

    total = parse_size(nbytes, "--bytes") if nbytes is not None else None
    gen = make_generator(name, seed)
    out = sys.stdout.buffer
    chunk = 1 << 20
    written = 0
    try:
        while total is None or written < total:
            n = chunk if total is None else min(chunk, total - written)
            out.write(gen.read(n).tobytes())
            written += n
        out.flush()
    except BrokenPipeError:
        _quiet_broken_pipe()


def _quiet_broken_pipe() -> None:
    # The reader closed the pipe: that ends `emit` quietly. Point stdout at /dev/null so the
    # interpreter's final flush does not complain.
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except OSError:  # pragma: no cover
        pass
    raise click.exceptions.Exit(0)


@cli.command("test")
@_source_options
@click.option("--budget", default=None, metavar="SIZE", help="Bytes of the stream to assay (default 64 MiB; files: at most their size).")
@click.option("--quiet", "-q", is_flag=True, help="No progress on stderr.")
def test_cmd(source, fmt, value_range, command, shell, python_spec, gen, seed, budget, quiet) -> None:
    """Assay a stream: read it, run the checks, grade, report; exit 0 pass, 1 fail, 2 bad input."""
    from . import api

    _check_source_given(source, command, python_spec, gen)
    progress = Progress(quiet)
    try:
        report = api.assay(
            source, fmt=fmt, value_range=value_range, command=command, shell=shell, python=python_spec,
            gen=gen, seed=seed, budget=budget, progress=progress,
        )
    finally:
        progress.done()
    click.echo(report.to_text(color=sys.stdout.isatty()))
    raise click.exceptions.Exit(report.exit_code())


def _check_source_given(source: Any, command: Any, python_spec: Any, gen: Any) -> None:
    if source is None and command is None and python_spec is None and gen is None and sys.stdin.isatty():
        raise InputError(
            "no source given", "", "name a file, '-' for standard input, or use --gen NAME, --command CMD or --python SPEC"
        )


def main(argv: list[str] | None = None) -> int:
    """Entry point: one line on stderr and exit 2 for bad input or usage, never a traceback."""
    try:
        rc = cli.main(args=argv, prog_name="rngassay", standalone_mode=False)
    except InputError as e:
        click.echo(f"rngassay: error: {e.line()}", err=True)
        rc = EXIT_USAGE
    except click.exceptions.UsageError as e:
        hint = ""
        if e.ctx is not None:
            hint = f" (see '{e.ctx.command_path} --help')"
        click.echo(f"rngassay: usage error: {e.format_message()}{hint}", err=True)
        rc = EXIT_USAGE
    except click.exceptions.Abort:
        click.echo("rngassay: interrupted", err=True)
        rc = 130
    except click.exceptions.Exit as e:
        rc = e.exit_code
    except BrokenPipeError:
        try:
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
        except OSError:  # pragma: no cover
            pass
        rc = EXIT_OK
    except KeyboardInterrupt:
        click.echo("rngassay: interrupted", err=True)
        rc = 130
    if rc is None:
        rc = EXIT_OK
    return int(rc)




DEMO_STREAMS = (
    ("supplier stream (Kestrel Draw Systems, fictional)", "shake256", 2026),
    ("home-grown generator (Harbour Lane Lotteries, fictional)", "lcg32", 42),
)


@cli.command()
@click.option("--budget", default="8MiB", metavar="SIZE", help="Bytes per stream (default 8 MiB).")
@click.option("--quiet", "-q", is_flag=True, help="No progress on stderr.")
def demo(budget: str, quiet: bool) -> None:
    """Run the built-in example: a fictional lottery operator assays two streams.

    Harbour Lane Lotteries (an invented organisation) receives draw randomness from an invented
    supplier, Kestrel Draw Systems, and also keeps a home-grown generator for its simulations.
    The demo assays both with built-in generators standing in for them.
    """
    from . import api

    worst = 0
    for title, name, seed in DEMO_STREAMS:
        progress = Progress(quiet)
        try:
            report = api.assay(gen=name, seed=seed, budget=budget, progress=progress)
        finally:
            progress.done()
        click.echo(f"== {title}: --gen {name} --seed {seed}")
        click.echo(report.to_text(color=sys.stdout.isatty()))
        click.echo("")
        worst = max(worst, report.exit_code())
    click.echo(
        "A pass is evidence at the sample size used, not proof of unpredictability. For gaming or "
        "cryptographic use, defer to the applicable technical standards, local regulation and accredited test laboratories."
    )
