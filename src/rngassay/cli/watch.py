"""``rngassay watch``: follow a live game's outcome log against its declared odds; one JSON line per alarm."""

from __future__ import annotations

import json

import click

from .common import EXIT_FAIL, EXIT_OK, alpha_option, out, quiet_option, shared

CAUTION = ("an alarm is a reason to investigate, not proof of a fault or of fraud; regulated games answer to their "
           "jurisdiction's technical standards and accredited laboratories")


def _alarm_line(a: dict) -> str:
    keys = ("index", "line", "time", "statistic", "value", "threshold", "tier", "message")
    return json.dumps({"alarm": True, **{k: a.get(k) for k in keys}}, sort_keys=False)


def _charts(res, html_path: str | None, png_path: str | None) -> None:
    """The chart of the run, as HTML and/or PNG (watch/chart.py), once the log is processed."""
    if not (html_path or png_path):
        return
    from ..report.files import write_atomic
    from ..watch import chart

    if png_path:
        chart.render_png(res.summary, res.history, res.declared, png_path)
        click.echo(f"rngassay: watch: chart written to {png_path}", err=True)
    if html_path:
        write_atomic(html_path, chart.render_html(res.summary, res.history, res.declared,
                                                  title=f"Outcome watch: {res.log}"))
        click.echo(f"rngassay: watch: chart written to {html_path}", err=True)


def register_cli(cli_group) -> None:
    """Add the ``watch`` command to the click group."""
    @cli_group.command("watch")
    @click.argument("log")
    @click.option("--odds", "odds_path", required=True, metavar="FILE",
                  help="Declared outcome probabilities: CSV with header outcome,probability, or TOML [odds] table.")
    @click.option("--state", "state_path", default=None, metavar="PATH",
                  help="SQLite state file (offset, log identity, statistics, alarms, skipped lines). Default: "
                       "LOG.watch.sqlite beside the log; for standard input ('-') none is kept unless given.")
    @click.option("--once", is_flag=True,
                  help="Process what is in the log now and exit: 0 no alarm on record, 1 an alarm on record "
                       "(raised in this run or an earlier one). Without it a file is followed until Ctrl-C.")
    @click.option("--poll", default=1.0, type=float, show_default=True, metavar="SECONDS",
                  help="How often a followed log is checked for new lines.")
    @click.option("--log-format", "log_format", type=click.Choice(["csv", "jsonl"]), default=None,
                  help="The log's format; default: by extension (.jsonl, .ndjson, .json) or a first line starting with '{'.")
    @click.option("--outcome-column", default="outcome", show_default=True, metavar="NAME",
                  help="CSV column or JSON key of the outcome (a tier of the odds file).")
    @click.option("--stake-column", default=None, metavar="NAME", help="CSV column or JSON key of the stake.")
    @click.option("--payout-column", default=None, metavar="NAME", help="CSV column or JSON key of the payout.")
    @click.option("--time-column", default=None, metavar="NAME",
                  help="CSV column or JSON key of the time, copied into the alarms.")
    @click.option("--skip-bad", is_flag=True,
                  help="Skip malformed lines and undeclared outcomes instead of stopping; each is recorded in the "
                       "state and counted in the summary.")
    @click.option("--start-over", is_flag=True,
                  help="Begin a new state from the start of the log (after a rotation, a truncation or changed "
                       "settings); the old state file is kept, renamed beside it.")
    @shared("html", "--html", "html_path", default=None, metavar="PATH",
            tail="Here: the watch chart (e-values against their threshold, the return-rate CUSUM with its limits, "
                 "tier frequencies against the declared odds) with the alarms, written when the run ends.")
    @click.option("--png", "png_path", default=None, metavar="PATH", help="The same chart as a PNG image.")
    @alpha_option("Here: it bounds the chance that a game playing to its declared odds ever raises an e-value "
                  "alarm, however long it is watched; the streak alarm adds at most alpha per 10^8 outcomes, and "
                  "the return-rate CUSUM alarms about once per 10^7 sound outcomes (its ARL).")
    @quiet_option("Here: the summary line on stderr is left out too; alarms still go to stdout.")
    def watch_cmd(log, odds_path, state_path, once, poll, log_format, outcome_column, stake_column, payout_column,
                  time_column, skip_bad, start_over, html_path, png_path, alpha, quiet) -> None:
        """Watch an outcome log (a file, or '-' for standard input) against its declared odds.

        Each alarm is one JSON line on stdout. Exit codes: 0 no alarm, 1 an alarm on record, 2 bad input;
        a followed log stopped by Ctrl-C or SIGTERM exits 128 + the signal with its state saved.
        An alarm is a reason to investigate, not proof of a fault or of fraud.
        """
        from .. import api
        from ..report.files import check_report_paths

        inputs = [p for p in (log, odds_path, state_path) if p and p != "-"]
        if log != "-" and state_path is None:
            inputs.append(f"{log}.watch.sqlite")
        check_report_paths([(w, p) for w, p in (("html chart", html_path), ("png chart", png_path)) if p], inputs)

        def on_alarm(a: dict) -> None:
            out(_alarm_line(a))

        res = api.watch(log, odds_path, state=state_path, once=once, poll=poll, outcome_column=outcome_column,
                        stake_column=stake_column, payout_column=payout_column, time_column=time_column,
                        log_format=log_format, alpha=alpha, skip_bad=skip_bad, start_over=start_over,
                        on_alarm=on_alarm)
        if res.set_aside:
            click.echo(f"rngassay: watch: the old state was moved to {res.set_aside}", err=True)
        if not quiet:
            where = res.state_path or "not kept (standard input without --state)"
            click.echo(f"rngassay: watch: {res.outcomes_total} outcomes ({res.outcomes_this_run} this run), "
                       f"{res.skipped_total} lines skipped ({res.skipped_this_run} this run), "
                       f"{len(res.alarms_this_run)} alarms this run, {len(res.alarms_on_record)} on record; "
                       f"offset {res.offset}; state: {where}", err=True)
            if res.alarms_on_record:
                click.echo(f"rngassay: watch: {CAUTION}", err=True)
        _charts(res, html_path, png_path)
        if res.stopped_by is not None:
            from ..signals import signal_name

            click.echo(f"rngassay: watch stopped by {signal_name(res.stopped_by)}; state saved", err=True)
            raise click.exceptions.Exit(128 + res.stopped_by)
        raise click.exceptions.Exit(EXIT_FAIL if res.alarms_on_record else EXIT_OK)
