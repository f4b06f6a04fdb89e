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
    """A progress bar on stderr, shown only on a terminal, unless --quiet, and only once a run has taken
    more than ``delay`` seconds (short runs stay silent)."""

    def __init__(self, quiet: bool, delay: float = 2.0):
        import time

        self.on = (not quiet) and sys.stderr.isatty()
        self._last = ""
        self._t0 = time.monotonic()
        self._delay = delay

    def __call__(self, text: str) -> None:
        import re
        import time

        if not self.on or time.monotonic() - self._t0 < self._delay:
            return
        m = re.search(r"(\d+)/(\d+)", text)
        if m and int(m.group(2)) > 0:
            done, total = int(m.group(1)), int(m.group(2))
            width = 24
            fill = round(width * min(done, total) / total)
            text = f"[{'#' * fill}{'.' * (width - fill)}] {text}"
        line = f"\r{text[:100]:<100}"
        if line != self._last:
            sys.stderr.write(line)
            sys.stderr.flush()
            self._last = line

    def done(self) -> None:
        if self.on and self._last:
            sys.stderr.write("\r" + " " * 100 + "\r")
            sys.stderr.flush()
            self._last = ""


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

    out("Input formats (--format):")
    out("  " + "  ".join(FORMATS))
    out("  text takes floats in [0, 1), or integers with --range LO:HI")
    out("")
    out("Built-in generators (--gen NAME, rngassay emit NAME):")
    width = max(len(n) for n in GENERATORS)
    for name, info in GENERATORS.items():
        out(f"  {name:<{width}}  {info.quality:<6}  {info.summary}")
    from .checks.registry import load_all

    reg = load_all()
    if reg:
        out("")
        out("Checks (family / key / view):")
        kw = max(len(k) for k in reg)
        for key, spec in sorted(reg.items(), key=lambda kv: (kv[1].family, kv[0])):
            out(f"  {spec.family:<11} {key:<{kw}}  {spec.view:<9} {spec.title}")


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
        _quiet_broken_pipe()
    except OSError as e:
        raise InputError(f"cannot write to standard output: {e.strerror or e}", "", "check the disk or the receiving program") from None


def _quiet_broken_pipe() -> None:
    # The reader closed the pipe: that ends `emit` quietly. Point stdout at /dev/null so the
    # interpreter's final flush does not complain.
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
    except OSError:  # pragma: no cover
        pass
    raise click.exceptions.Exit(0)


def _report_options(f):
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


def _split(values: tuple[str, ...]) -> list[str] | None:
    out = [p.strip() for v in values for p in v.split(",") if p.strip()]
    if values and not out:
        raise InputError("empty --checks/--skip selection", "", "name checks, e.g. --checks gap,serial or --checks bits")
    return out or None


@cli.command("test")
@_source_options
@click.option("--budget", default=None, metavar="SIZE",
              help="Bytes each check may see (default 64 MiB; a file shorter than that is read whole).")
@click.option("--checks", "checks", multiple=True, metavar="SEL",
              help="Run only these checks: key, family or identifier; comma-separated or repeated.")
@click.option("--skip", "skip", multiple=True, metavar="SEL", help="Leave out these checks (same selectors).")
@click.option("--alpha", default=1e-3, type=float, show_default=True,
              help="Family-wise false-alarm rate of a run (Holm).")
@click.option("--workers", default=None, type=int, metavar="N", help="Worker processes (default: all cores).")
@click.option("--no-retest", is_flag=True, help="Do not retest borderline checks on fresh data.")
@click.option("--plan-only", is_flag=True, help="Show the plan (checks, parameters, bytes, replicates) and stop.")
@click.option("--cluster", default=None, metavar="ADDRESS",
              help="Run the checks on a Dask cluster, e.g. tcp://host:8786 (pip install 'rngassay[cluster]').")
@_report_options
def test_cmd(source, fmt, value_range, command, shell, python_spec, gen, seed, budget, checks, skip, alpha,
             workers, no_retest, plan_only, cluster, json_path, html_path, junit_path, strict, quiet) -> None:
    """Assay a stream: read it, run the checks, grade, report; exit 0 pass, 1 fail, 2 bad input."""
    from .battery.run import defer_signals

    defer_signals()  # a stop signal while starting up is kept for the run, which then ends in a report
    from . import api

    _check_source_given(source, command, python_spec, gen)
    check_workers(workers, cluster)
    outputs = _check_outputs(json_path, html_path, junit_path, input_paths(source, command, shell, python_spec))
    if shell and command is None:
        raise InputError("--shell applies to --command only", "", "drop --shell or give --command")
    progress = Progress(quiet)
    try:
        result = api.assay(
            source, fmt=fmt, value_range=value_range, command=command, shell=shell, python=python_spec,
            gen=gen, seed=seed, budget=budget, checks=_split(checks), skip=_split(skip), alpha=alpha,
            workers=workers or (os.cpu_count() or 1), retest=not no_retest, progress=progress, plan_only=plan_only,
            cluster=cluster,
        )
    except InputError as e:
        partial = getattr(e, "partial_report", None)
        if partial is not None:  # bad data mid-run: file what finished, marked incomplete, then the error
            progress.done()
            _write_outputs(partial, outputs)
            out(_text(partial))
        raise
    finally:
        progress.done()
    if plan_only:
        out(result.describe())
        raise click.exceptions.Exit(EXIT_OK)
    finish(result, outputs, strict)


def finish(report, outputs: list[tuple[str, str]], strict: bool) -> None:
    """Write the reports, print the table and exit: 0 pass (and borderline unless strict), 1 fail or an
    incomplete run, 130 interrupted. Shared by `test`, `fit` and `seeds`.
    A report that cannot be written still leaves the verdict and the table on standard output (then exit 2)."""
    try:
        _write_outputs(report, outputs)
    except InputError:
        out(_text(report))
        raise
    out(_text(report))
    for what, path in outputs:
        out(f"{what:<12} {path}")
    code = report.exit_code(strict=strict)
    sig = _stop_signal()
    if sig:  # SIGINT, SIGTERM, SIGHUP: 128 + the signal's number (130, 143, 129)
        code = 128 + sig
    elif report.incomplete:
        code = 130 if any("interrupted" in n for n in report.notes) else max(code, EXIT_FAIL)
    raise click.exceptions.Exit(code)


def _text(report) -> str:
    from .report.terminal import render

    return render(report, color=sys.stdout.isatty())


def _stop_signal() -> int | None:
    from .battery.run import received_signal

    return received_signal()


def _check_outputs(json_path, html_path, junit_path, inputs: tuple = ()) -> list[tuple[str, str]]:
    """Validate report paths before any work, so a long run does not end in an unwritable path and no
    report ever replaces an input file, a device or a pipe."""
    from .report.files import check_report_paths

    outs = [(w, p) for w, p in (("json report", json_path), ("html report", html_path), ("junit report", junit_path))
            if p is not None]
    check_report_paths(outs, [p for p in inputs if isinstance(p, str)])
    return outs


MAX_WORKERS = 256  # worker processes a run may ask for; more only adds start-up cost


def check_workers(workers: int | None, cluster: str | None = None) -> None:
    """--workers must be 1..MAX_WORKERS, and is not combined with --cluster (the cluster's workers do the work);
    a --cluster address must have the form SCHEME://HOST:PORT (checked before any work or connection)."""
    if cluster is not None:
        from .battery.cluster import validate_address

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
    """Every existing file a run reads, for the report-path check: the source, the --python module's file,
    a command's arguments that name existing files (the program itself too), and ``extra`` (odds, seeds files)."""
    import shlex

    paths = [p for p in (source, *extra) if isinstance(p, str) and p]
    if python_spec:
        mod = python_spec.rsplit(":", 1)[0] if ":" in python_spec else python_spec
        if os.path.exists(mod):
            paths.append(mod)
        elif mod and not mod.endswith(".py"):
            try:
                import importlib.util

                spec = importlib.util.find_spec(mod)
                if spec is not None and spec.origin and os.path.exists(spec.origin):
                    paths.append(spec.origin)
            except (ImportError, ValueError, AttributeError):
                pass
    if command:
        try:
            words = shlex.split(command)
        except ValueError:
            words = command.split()
        for w in words:
            for part in ([w] + (w.split("=", 1)[1:] if "=" in w else [])):
                if part and os.path.exists(part) and not os.path.isdir(part):
                    paths.append(part)
    return paths


def _write_outputs(report, outputs: list[tuple[str, str]]) -> None:
    from .report.files import write_atomic

    for what, path in outputs:
        if what.startswith("json"):
            write_atomic(path, report.to_json() + "\n")
        elif what.startswith("html"):
            from .report.html import render_html

            write_atomic(path, render_html(report))
        else:
            from .report.junit import render_junit

            write_atomic(path, render_junit(report))


def _check_source_given(source: Any, command: Any, python_spec: Any, gen: Any) -> None:
    if source is None and command is None and python_spec is None and gen is None and sys.stdin.isatty():
        raise InputError(
            "no source given", "", "name a file, '-' for standard input, or use --gen NAME, --command CMD or --python SPEC"
        )


def _one_line(text: str) -> str:
    """An error message as one printable line: control characters (newlines in a file name, escapes) are
    shown escaped, never raw."""
    from .report.files import safe_name

    return safe_name(text)


def main(argv: list[str] | None = None) -> int:
    """Entry point: one line on stderr and exit 2 for bad input or usage, never a traceback."""
    from .battery.run import signal_guard

    try:
        with signal_guard(ignore_after_stop=True):  # a stop signal: reports marked incomplete, exit 128 + signal
            rc = cli.main(args=argv, prog_name="rngassay", standalone_mode=False)
    except InputError as e:
        click.echo(f"rngassay: error: {_one_line(e.line())}", err=True)
        rc = EXIT_USAGE
    except click.exceptions.UsageError as e:
        hint = ""
        if e.ctx is not None:
            hint = f" (see '{e.ctx.command_path} --help')"
        click.echo(f"rngassay: usage error: {_one_line(e.format_message())}{hint}", err=True)
        rc = EXIT_USAGE
    except click.exceptions.Abort as e:
        click.echo("rngassay: interrupted", err=True)
        rc = 128 + (getattr(e.__context__, "signum", None) or _stop_signal() or 2)
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
        rc = 128 + (getattr(e, "signum", None) or _stop_signal() or 2)
    except Exception as e:  # a bug of ours: still one line; RNGASSAY_DEBUG=1 shows the traceback
        if os.environ.get("RNGASSAY_DEBUG"):
            raise
        click.echo(f"rngassay: internal error: {type(e).__name__}: {e} (set RNGASSAY_DEBUG=1 for details and please report it)", err=True)
        rc = EXIT_INTERNAL
    if rc is None:
        rc = EXIT_OK
    return int(rc)




DEMO_STREAMS = (
    ("supplier", "Draw-machine stream from Kestrel Draw Systems (fictional supplier)", "shake256", 2026),
    ("homegrown", "Harbour Lane Lotteries' home-grown simulation generator (fictional)", "lcg32", 42),
)


@cli.command()
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
    from . import api

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
                               workers=workers or (os.cpu_count() or 1))
        finally:
            progress.done()
        report.notes.insert(0, f"demo: {title}; stand-in: --gen {name} --seed {seed}")
        base = os.path.join(out_dir, f"demo-{slug}")
        outs = [("json report", base + ".json"), ("html report", base + ".html"), ("junit report", base + ".xml")]
        _write_outputs(report, outs)
        out(f"== {title}  (stand-in: --gen {name} --seed {seed})")
        out(_text(report))
        out("")
        written += [p for _, p in outs]
    out("Reports written:")
    for p in written:
        out(f"  {p}")


@cli.command()
@click.argument("base", metavar="BASE.json")
@click.argument("new", metavar="NEW.json")
@click.option("--all", "show_all", is_flag=True, help="Also list checks that did not change.")
def diff(base: str, new: str, show_all: bool) -> None:
    """Compare two JSON reports check by check; exit 1 when NEW is worse, else 0."""
    from .report.diff import diff_reports, render_diff_text
    from .report.files import read_report_json

    b = read_report_json(base)
    n = read_report_json(new)
    result = diff_reports(b, n)
    out(render_diff_text(result, show_same=show_all))
    raise click.exceptions.Exit(EXIT_FAIL if result.worse else EXIT_OK)


from .fitting import register_cli as _register_fit  # noqa: E402  (adds `rngassay fit`)
from .seeds.cli import register_cli as _register_seeds  # noqa: E402  (adds `rngassay seeds`)

_register_fit(cli)
_register_seeds(cli)
