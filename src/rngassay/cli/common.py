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


class SharedOption(click.Option):
    """An option whose meaning is the same in every command that has it: made only by the decorators below, which
    give it the same name, type and help stem everywhere (``meaning`` names it; tests/test_cli_consistency.py
    walks the commands and holds them to it). A command may add a sentence of its own after the stem."""

    def __init__(self, *args: Any, meaning: str, stem: str, **kwargs: Any):
        super().__init__(*args, **kwargs)
        self.meaning, self.stem = meaning, stem


def shared(meaning: str, *decls: str, tail: str = "", **kwargs: Any):
    """A click option of the shared ``meaning`` (a key of :data:`MEANINGS`); ``tail`` is the command's own sentence."""
    stem = MEANINGS[meaning]
    return click.option(*decls, cls=SharedOption, meaning=meaning, stem=stem,
                        help=stem + (" " + tail if tail else ""), **kwargs)


#: The help stem of every shared option: the one meaning of the option wherever it appears.
MEANINGS = {
    "budget": "Total to read from the source: bytes for binary formats, values for text (SIZE, e.g. 64MiB, 512KiB, "
              "or a plain count); a source shorter than an explicit budget is refused.",
    "plan-only": "Print the plan (the checks with their parameters, and the total read) and stop: no check runs and "
                 "no report is written.",
    "checks": "Run only these checks: a key, its first word (e.g. monobit), a family or a full identifier; "
              "comma-separated or repeated.",
    "skip": "Leave out these checks (the same selectors as --checks).",
    "command": "Read the standard output of this command (run without a shell).",
    "shell": "Run --command through the shell.",
    "python": "A Python factory FILE.py:NAME (or package.module:NAME) returning a numpy BitGenerator, Generator or "
              "draw(n_bytes) callable.",
    "gen": "A built-in reference generator (see `rngassay catalog`).",
    "seed": "Seed of the generator (--gen, --python, or emit's NAME); default: the generator's own, and a --python "
            "factory that takes a seed gets one drawn from OS entropy (printed and recorded).",
    "format": "How the source's bytes are read:",
    "json": "Write the report as JSON (versioned schema).",
    "html": "Write a self-contained HTML report with figures.",
    "junit": "Write JUnit XML: one test case per check.",
    "strict": "Exit 1 for a notable run too.",
    "quiet": "Quiet: no progress display on stderr. Only the progress goes: the results, the report paths, a drawn "
             "seed and error lines are still printed.",
    "alpha": "Family-wise false-alarm rate of a run (Holm).",
    "workers": "Worker processes (1 to 256).",
    "cluster": "Run on a Dask cluster at this address, e.g. tcp://host:8786 (pip install 'rngassay[cluster]').",
}


def budget_option(default: str):
    """``--budget SIZE``: the total read, as in ``test`` (``default`` says what happens without it)."""
    return shared("budget", "--budget", default=None, metavar="SIZE", tail=default)


def plan_only_option(tail: str = ""):
    return shared("plan-only", "--plan-only", is_flag=True, tail=tail)


def selection_options(tail: str = ""):
    """``--checks SEL`` and ``--skip SEL`` (``tail``: what this command's selectors also name)."""
    def deco(f):
        f = shared("skip", "--skip", "skip", multiple=True, metavar="SEL")(f)
        return shared("checks", "--checks", "checks", multiple=True, metavar="SEL", tail=tail)(f)
    return deco


def stream_source_options(f=None, *, seed: bool = True, tails: dict[str, str] | None = None):
    """The sources a stream can come from: ``--command`` (``--shell``), ``--python``, ``--gen`` and ``--seed``.
    Shared by ``test``, ``fit`` and ``seeds`` (``seeds`` has no ``--seed``: it sweeps seeds; ``tails`` add a
    command's own sentence, e.g. how ``seeds`` passes each seed)."""
    t = tails or {}

    def deco(f):
        opts = [
            shared("command", "--command", default=None, metavar="CMD", tail=t.get("command", "")),
            shared("shell", "--shell", is_flag=True),
            shared("python", "--python", "python_spec", default=None, metavar="FILE.py:NAME",
                   tail=t.get("python", "")),
            shared("gen", "--gen", default=None, metavar="NAME", tail=t.get("gen", "")),
        ]
        if seed:
            opts.append(shared("seed", "--seed", default=None, type=int, metavar="N", tail=t.get("seed", "")))
        for o in reversed(opts):
            f = o(f)
        return f

    return deco(f) if f is not None else deco


def source_options(f):
    """Options naming the source of ``test``: a path (or '-'), its format and range, or a stream source."""
    opts = [
        click.argument("source", required=False),
        shared("format", "--format", "fmt", default=None, metavar="F",
               tail="u1 (raw bytes, default), <u2 >u2 <u4 >u4 <u8 >u8, <f4 <f8, text, hex (bytes as hex digits). "
                    "With none, printed numbers or hex are refused: name the format."),
        click.option("--range", "value_range", default=None, metavar="LO:HI",
                     help="Inclusive range of the values: text integers (e.g. 1:6 for a die), or words of "
                          "<u2..>u8 (e.g. 1:2147483646 for a multiplicative 31-bit generator)."),
    ]
    for o in reversed(opts):
        f = o(f)
    return stream_source_options(f)


def quiet_option(tail: str = ""):
    return shared("quiet", "--quiet", "-q", is_flag=True, tail=tail)


def alpha_option(tail: str = ""):
    return shared("alpha", "--alpha", default=1e-3, type=float, show_default=True, tail=tail)


def workers_option(tail: str):
    return shared("workers", "--workers", default=None, type=int, metavar="N", tail=tail)


def cluster_option(f):
    return shared("cluster", "--cluster", default=None, metavar="ADDRESS")(f)


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
    """Report paths (``--json``, ``--html``, ``--junit``), ``--strict`` and ``-q/--quiet``: the same in every command
    that files a report."""
    opts = [
        shared("json", "--json", "json_path", default=None, metavar="PATH"),
        shared("html", "--html", "html_path", default=None, metavar="PATH"),
        shared("junit", "--junit", "junit_path", default=None, metavar="PATH"),
        shared("strict", "--strict", is_flag=True),
        quiet_option(),
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
    """Write the reports, print the table and exit: 0 pass (and notable unless strict), 1 fail or an
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

