"""``rngassay catalog`` and ``rngassay emit``: what there is, and a built-in generator's bytes."""

from __future__ import annotations

import sys

import click

from ..errors import InputError
from .common import out, quiet_broken_pipe, quiet_option, shared


@click.command()
@quiet_option("catalog shows no progress: accepted so that every command takes -q.")
def catalog(quiet: bool) -> None:
    """List input formats, built-in generators and checks."""
    from ..generators import GENERATORS
    from ..intake.formats import FORMATS

    out("Input formats (--format):")
    out("  " + "  ".join(FORMATS))
    out("  text takes floats in [0, 1), or integers with --range LO:HI")
    out("  word formats take --range LO:HI too (e.g. 1:2147483646): uniforms (x-LO)/(HI-LO+1), bits only if a power of two")
    out("  hex takes bytes as hex digits (white-space-separated tokens, either case, optional 0x), read like u1")
    out("  with no --format, a file or stdin that starts with printed numbers or hex digits is refused (exit 2)")
    out("")
    out("Built-in generators (--gen NAME, rngassay emit NAME):")
    width = max(len(n) for n in GENERATORS)
    for name, info in GENERATORS.items():
        out(f"  {name:<{width}}  {info.quality:<6}  {info.summary}")
    from ..checks.catalog import load_all

    reg = load_all()
    if reg:
        out("")
        out("Checks (family / key / view):")
        kw = max(len(k) for k in reg)
        for key, spec in sorted(reg.items(), key=lambda kv: (kv[1].family, kv[0])):
            out(f"  {spec.family:<11} {key:<{kw}}  {spec.view:<9} {spec.title}")


@click.command()
@click.argument("name")
@shared("seed", "--seed", default=None, type=int, metavar="N")
@click.option("--bytes", "nbytes", default=None, metavar="SIZE",
              help="How many bytes to write (KiB, MiB, GiB suffixes); default: until the reader closes the pipe.")
@quiet_option("emit shows no progress: accepted so that every command takes -q.")
def emit(name: str, seed: int | None, nbytes: str | None, quiet: bool) -> None:
    """Write the raw bytes of a built-in generator to standard output."""
    from ..generators import make_generator
    from ..sizes import parse_size

    total = parse_size(nbytes, "--bytes") if nbytes is not None else None
    gen = make_generator(name, seed)
    if sys.stdout is None:
        raise InputError("standard output is closed", "", "redirect it to a file or a pipe")
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
        quiet_broken_pipe()
    except OSError as e:
        raise InputError(f"cannot write to standard output: {e.strerror or e}", "", "check the disk or the receiving program") from None

