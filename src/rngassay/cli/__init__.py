"""Command line: thin click commands over :mod:`rngassay.api`, one module per command.

Exit codes everywhere: 0 nothing failed, 1 a check failed, 2 bad input or usage.
Errors are one line on stderr; never a traceback.
"""

from __future__ import annotations

import os
import sys

import click

from .._version import __version__
from ..errors import InputError
from . import catalog as _catalog, demo as _demo, fit as _fit, seeds as _seeds, test as _test, watch as _watch
from .common import (EXIT_INTERNAL, EXIT_OK, EXIT_USAGE, Progress, check_workers, finish,  # noqa: F401 (re-exported)
                     input_paths, one_line, stop_signal)

class _RecordingGroup(click.Group):
    """The command group; it keeps the arguments as given, for the reports' audit trail (see common.run_argv)."""

    def parse_args(self, ctx: click.Context, args: list[str]) -> list[str]:
        ctx.meta["rngassay.argv"] = ["rngassay", *args]
        return super().parse_args(ctx, args)


@click.group(cls=_RecordingGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="rngassay")
def cli() -> None:
    """rngassay: assay streams of random numbers.

    A pass is evidence at the sample size used, not proof of unpredictability; for gaming or
    cryptographic use, defer to the applicable technical standards, local regulation and
    accredited test laboratories.
    """



for _cmd in (_catalog.catalog, _catalog.emit, _test.test_cmd, _demo.demo, _demo.diff):
    cli.add_command(_cmd)
_fit.register_cli(cli)
_seeds.register_cli(cli)
_watch.register_cli(cli)


def main(argv: list[str] | None = None) -> int:
    """Entry point: one line on stderr and exit 2 for bad input or usage, never a traceback."""
    from ..signals import signal_guard

    try:
        with signal_guard(ignore_after_stop=True):  # a stop signal: reports marked incomplete, exit 128 + signal
            rc = cli.main(args=argv, prog_name="rngassay", standalone_mode=False)
    except InputError as e:
        click.echo(f"rngassay: error: {one_line(e.line())}", err=True)
        rc = EXIT_USAGE
    except click.exceptions.UsageError as e:
        hint = ""
        if e.ctx is not None:
            hint = f" (see '{e.ctx.command_path} --help')"
        click.echo(f"rngassay: usage error: {one_line(e.format_message())}{hint}", err=True)
        rc = EXIT_USAGE
    except click.exceptions.Abort as e:
        click.echo("rngassay: interrupted", err=True)
        rc = 128 + (getattr(e.__context__, "signum", None) or stop_signal() or 2)
    except click.exceptions.Exit as e:
        rc = e.exit_code
    except BrokenPipeError:
        try:
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
        except OSError:  # pragma: no cover
            pass
        rc = EXIT_OK
    except KeyboardInterrupt as e:
        click.echo("rngassay: interrupted", err=True)
        rc = 128 + (getattr(e, "signum", None) or stop_signal() or 2)
    except Exception as e:  # a bug of ours: still one line; RNGASSAY_DEBUG=1 shows the traceback
        if os.environ.get("RNGASSAY_DEBUG"):
            raise
        click.echo(f"rngassay: internal error: {type(e).__name__}: {e} (set RNGASSAY_DEBUG=1 for details and please report it)", err=True)
        rc = EXIT_INTERNAL
    if rc is None:
        rc = EXIT_OK
    return int(rc)

