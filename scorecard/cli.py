"""The ``scorecard`` command: a thin shell over the importable core.

Bad input ends with one ``error:`` line on stderr and exit status 2, never a traceback.
"""

from __future__ import annotations

import os
import signal
import sys
import warnings
from pathlib import Path

import click

from scorecard.errors import InputError, ResultWarning
from scorecard.progress import StageLog

# The products with the design are tall and narrow (rows by a dozen columns) and bound by
# memory, so BLAS threads add little; on a machine shared with other work they contend for the
# cores, and a build ran about 1.5 times as long with them (benchmarks/bench_hard.py, 2 cores
# under load). One BLAS thread, unless
# the user chose otherwise; numpy reads this when it is first imported, which in the command
# happens after this module, inside the command that needs it.
_BLAS_THREAD_SETTINGS = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")
if not any(name in os.environ for name in _BLAS_THREAD_SETTINGS):
    os.environ["OPENBLAS_NUM_THREADS"] = "1"


class _Terminated(Exception):
    """SIGTERM, raised as an exception so that every ``finally`` removes its temporary files."""


def _raise_terminated(signum, frame):
    raise _Terminated()


def _show_warning(message, category, filename, lineno, file=None, line=None) -> None:
    """A warning as one plain line on stderr; under ``--quiet`` only one that changes the result."""
    ctx = click.get_current_context(silent=True)
    if ctx is not None and ctx.params.get("quiet") and not issubclass(category, ResultWarning):
        return
    # A build with declined applications runs its stages twice (accepts alone, then with the
    # inferred rejects); a fact about the data is told once.
    shown = ctx.find_root().meta.setdefault("scorecard.warnings", set()) if ctx else set()
    if str(message) in shown:
        return
    shown.add(str(message))
    click.echo(f"warning: {message}", err=True)


class _Group(click.Group):
    """Turns bad input and usage mistakes into one ``error: ...`` line with exit status 2."""

    def invoke(self, ctx):
        previous = signal.signal(signal.SIGTERM, _raise_terminated)
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("default")
                warnings.showwarning = _show_warning
                return super().invoke(ctx)
        except InputError as exc:
            click.echo(f"error: {exc}", err=True)
            ctx.exit(2)
        except click.UsageError as exc:
            command = f"{exc.ctx.command_path}: " if exc.ctx is not None else ""
            click.echo(f"error: {command}{exc.format_message()}", err=True)
            ctx.exit(2)
        except _Terminated:
            # Cleanup has run; end the way an unhandled SIGTERM would, for the caller to see.
            signal.signal(signal.SIGTERM, signal.SIG_DFL)
            os.kill(os.getpid(), signal.SIGTERM)
        finally:
            signal.signal(signal.SIGTERM, previous)


@click.group(cls=_Group)
@click.version_option(package_name="scorecard")
def main():
    """Build, apply and monitor credit-style scorecards."""


@main.command()
@click.argument("config", type=click.Path(path_type=Path))
@click.option("--workbook", type=click.Path(path_type=Path),
              help="Write the workbook here instead of output.workbook.")
@click.option("--model", type=click.Path(path_type=Path),
              help="Write the model file here instead of output.model.")
@click.option("--quiet", is_flag=True, help="Print nothing but errors.")
def build(config, workbook, model, quiet):
    """Build the scorecard that CONFIG describes."""
    from scorecard import api
    result = api.build(config, workbook=workbook, model=model, progress=StageLog(quiet))
    if not quiet:
        _print_summary(result)


def _print_summary(result) -> None:
    card = result.card
    if getattr(result, "segments", None) is not None:
        _print_segments(result)
        return
    click.echo(f"{card.name}: {len(card.characteristics)} characteristics, "
               f"scores {card.min_score} to {card.max_score}")
    for name, perf in result.performance.items():
        click.echo(f"  {name:12s} AUC {perf.auc:.4f}  Gini {perf.gini:.4f}  KS {perf.ks:.4f}")
    for name, why in result.unmeasured.items():
        click.echo(f"  {name:12s} not available: {why}")
    dropped = [r for r in result.reports if r.status != "in model"]
    if dropped:
        click.echo(f"left out ({len(dropped)}):")
        for r in dropped:
            click.echo(f"  {r.name}: {r.status} at {r.stage}: {r.reason}")
    _print_changes(result)
    for kind, path in result.outputs.items():
        click.echo(f"  {kind}: {path}")


def _print_changes(result) -> None:
    """What changed against the model file the build replaced, when it is of the same kind."""
    if isinstance(result.previous, type(result.card)):
        from scorecard.evaluation.model_diff import diff_models
        changes = diff_models(result.previous, result.card)
        click.echo(f"against the model file it replaced: {'no changes' if changes.empty else ''}"
                   .rstrip())
        for line in changes.lines():
            click.echo(f"  {line}")


def _print_segments(result) -> None:
    card = result.card
    click.echo(f"{card.name}: {len(card.cards)} segment cards by {card.rule.column}, "
               f"scores {card.min_score} to {card.max_score}")
    table = result.segment_table()
    shown = {c: "{:,.0f}".format for c in ("Rows", "Goods", "Bads", "Characteristics")}
    click.echo(table.to_string(index=False, na_rep="", float_format="{:.4f}".format,
                               formatters=shown))
    _print_changes(result)
    for kind, path in result.outputs.items():
        click.echo(f"  {kind}: {path}")


@main.command()
@click.option("--dir", "directory", type=click.Path(file_okay=False, path_type=Path),
              default=Path("demo"), show_default=True, help="Folder for the demo files.")
@click.option("--rows", type=click.IntRange(min=500), default=20_000, show_default=True)
@click.option("--seed", type=int, default=2024, show_default=True)
@click.option("--quiet", is_flag=True, help="Print nothing but errors.")
def demo(directory, rows, seed, quiet):
    """Write an invented sample and its config into DIR and build it."""
    from scorecard import api
    result = api.demo(directory, rows=rows, seed=seed, progress=StageLog(quiet))
    if not quiet:
        click.echo(f"demo config: {result.config.config_file}")
        _print_summary(result)


@main.command()
@click.argument("data", type=click.Path(path_type=Path))
@click.option("--target", required=True, help="The outcome column.")
@click.option("--out", type=click.Path(path_type=Path),
              help="Write the config here (default: print it).")
def init(data, target, out):
    """Write a starter config for DATA with every column classified."""
    from scorecard import api
    text = api.init(data, target, out)
    if out is None:
        click.echo(text, nl=False)
    else:
        click.echo(f"wrote {out}")


@main.command()
@click.argument("model", type=click.Path(dir_okay=False, path_type=Path))
@click.argument("data", type=click.Path(path_type=Path))
@click.option("--out", required=True, type=click.Path(path_type=Path),
              help="Scored file (.csv or .parquet).")
@click.option("--keep", multiple=True, help="Input column to copy to the output (repeatable).")
@click.option("--reasons", type=click.IntRange(min=0), default=None,
              help="Reason codes per row [default: the model's, from scoring.reasons].")
@click.option("--reason-text", is_flag=True, help="Write each reason's text instead of its code.")
@click.option("--apply-exclusions", is_flag=True,
              help="Apply the model's exclusion rules (data.exclude): a row a rule catches gets "
                   "its reason in column exclusion_reason instead of a score.")
def score(model, data, out, keep, reasons, reason_text, apply_exclusions):
    """Apply a built scorecard MODEL to the rows of DATA."""
    from scorecard import api
    summary = api.score(model, data, out, keep=keep, reasons=reasons, reason_text=reason_text,
                        apply_exclusions=apply_exclusions)
    click.echo(summary.text())


@main.command("compare")
@click.argument("model", type=click.Path(dir_okay=False, path_type=Path))
@click.argument("baseline", type=click.Path(path_type=Path))
@click.argument("current", type=click.Path(path_type=Path))
@click.option("--workbook", type=click.Path(path_type=Path),
              help="Write the validator's workbook (.xlsx) here.")
@click.option("--json", "json_path", type=click.Path(path_type=Path),
              help="Write the indices as JSON here.")
@click.option("--fail-on", type=click.Choice(["watch", "shift"]),
              help="Exit with status 1 when any index reaches this status.")
@click.option("--bands", type=click.IntRange(min=2), default=None,
              help="Score bands, cut at the baseline's score quantiles [default: 10].")
def compare(model, baseline, current, workbook, json_path, fail_on, bands):
    """Stability of MODEL's scores and characteristics from BASELINE to CURRENT."""
    from scorecard import api
    result = api.compare(model, baseline, current, bands=bands, json_path=json_path,
                         workbook=workbook)
    click.echo(result.text())
    if fail_on is not None and result.reached(fail_on):
        raise click.exceptions.Exit(1)


@main.command("strategy")
@click.argument("model", type=click.Path(dir_okay=False, path_type=Path))
@click.argument("data", type=click.Path(path_type=Path))
@click.option("--incumbent", metavar="COLUMN",
              help="Column of the score (or decision) in use today, for the swap set.")
@click.option("--incumbent-direction", type=click.Choice(["higher-is-better", "higher-is-riskier"]),
              help="Direction of the incumbent score [default: detected, and stated].")
@click.option("--incumbent-approved", multiple=True, metavar="VALUE",
              help="A value of a decision column that means approved (repeatable).")
@click.option("--gain-per-good", type=float, default=1.0, show_default=True,
              help="Gain from approving an applicant who repays.")
@click.option("--loss-per-bad", type=float, default=5.0, show_default=True,
              help="Loss from approving an applicant who defaults.")
@click.option("--target-approval", type=float, metavar="RATE",
              help="Choose the highest cut-off approving at least this share, in (0, 1).")
@click.option("--target-bad-rate", type=float, metavar="RATE",
              help="Choose the lowest cut-off whose approved bad rate is at most this, in (0, 1).")
@click.option("--refer-width", type=int, metavar="POINTS",
              help="Refer the applications this many points below the cut-off for review.")
@click.option("--step", type=int, metavar="POINTS",
              help="Points between the cut-offs listed [default: a round step, at most 60 rows].")
@click.option("--json", "json_path", type=click.Path(dir_okay=False, path_type=Path),
              help="Write the cut-offs, the chosen one and the swap set as JSON here.")
@click.option("--workbook", type=click.Path(dir_okay=False, path_type=Path),
              help="Write the strategy workbook (.xlsx) here.")
def strategy(model, data, incumbent, incumbent_direction, incumbent_approved, gain_per_good,
             loss_per_bad, target_approval, target_bad_rate, refer_width, step, json_path,
             workbook):
    """Cut-offs of MODEL on DATA: approval and bad rates, profit, and swap sets.

    Applications scoring at or above the cut-off are approved. The chosen cut-off meets
    --target-approval if given, else --target-bad-rate, else maximises profit.
    """
    from scorecard import api
    result = api.strategy(model, data, json_path=json_path, workbook=workbook,
                          incumbent=incumbent, incumbent_direction=incumbent_direction,
                          incumbent_approved=incumbent_approved, gain_per_good=gain_per_good,
                          loss_per_bad=loss_per_bad, target_approval=target_approval,
                          target_bad_rate=target_bad_rate, refer_width=refer_width, step=step)
    click.echo(result.text())
    for kind, path in (("workbook", workbook), ("json", json_path)):
        if path is not None:
            click.echo(f"  {kind}: {path}")


@main.command("monitor")
@click.argument("model", type=click.Path(dir_okay=False, path_type=Path))
@click.argument("data", type=click.Path(path_type=Path))
@click.option("--period", required=True, help="Column of dates that places each row in a period.")
@click.option("--every", type=click.Choice(["month", "quarter"]), default="month",
              show_default=True)
@click.option("--baseline", type=click.Path(path_type=Path),
              help="Compare with this data file instead of the development sample stored in "
                   "the model file.")
@click.option("--cutoff", type=int, help="Score at or above which applications are approved.")
@click.option("--min-bads", type=click.IntRange(min=2), default=None,
              help="Fewest goods and bads a period needs for its bad rate and Gini [default: 30].")
@click.option("--bands", type=click.IntRange(min=2), default=None,
              help="Score bands, cut at the baseline's score quantiles [default: 10].")
@click.option("--json", "json_path", type=click.Path(dir_okay=False, path_type=Path),
              help="Write the periods as JSON here.")
@click.option("--workbook", type=click.Path(dir_okay=False, path_type=Path),
              help="Write the monitoring workbook (.xlsx) here.")
@click.option("--fail-on", type=click.Choice(["watch", "shift"]),
              help="Exit with status 1 when an index of the latest period reaches this status.")
@click.option("--dask", metavar="ADDRESS",
              help="Run the pass on Dask: 'local' or a scheduler address (Parquet data).")
def monitor(model, data, period, every, baseline, cutoff, min_bads, bands, json_path, workbook,
            fail_on, dask):
    """Stability and performance of MODEL for every period of DATA."""
    from scorecard import api
    result = api.monitor(model, data, period, every=every, baseline=baseline, cutoff=cutoff,
                         bands=bands, min_bads=min_bads, json_path=json_path,
                         workbook=workbook, dask=dask)
    click.echo(result.text())
    if fail_on is not None and result.latest.reached(fail_on):
        raise click.exceptions.Exit(1)


@main.command("challenge")
@click.argument("champion", type=click.Path(dir_okay=False, path_type=Path))
@click.argument("challenger", type=click.Path(dir_okay=False, path_type=Path))
@click.argument("data", type=click.Path(path_type=Path))
@click.option("--approval-rate", type=float, default=None, metavar="RATE",
              help="Approval rate of the swap set, in (0, 1) [default: 0.75, a placeholder].")
@click.option("--json", "json_path", type=click.Path(dir_okay=False, path_type=Path),
              help="Write both cards' measures, the difference and the swap set as JSON here.")
@click.option("--workbook", type=click.Path(dir_okay=False, path_type=Path),
              help="Write the validator's review workbook (.xlsx) here.")
def challenge(champion, challenger, data, approval_rate, json_path, workbook):
    """Does CHALLENGER rank the rows of DATA better than CHAMPION (DeLong's paired test)?"""
    from scorecard import api
    result = api.challenge(champion, challenger, data, approval_rate=approval_rate,
                           json_path=json_path, workbook=workbook)
    click.echo(result.text())


@main.command("diff")
@click.argument("old_model", type=click.Path(dir_okay=False, path_type=Path))
@click.argument("new_model", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--json", "json_path", type=click.Path(dir_okay=False, path_type=Path),
              help="Write the changes as JSON here.")
def diff(old_model, new_model, json_path):
    """What changed from OLD_MODEL to NEW_MODEL, one line per change."""
    from scorecard import api
    click.echo(api.diff(old_model, new_model, json_path=json_path).text())


@main.command("export")
@click.argument("model", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--format", "form", required=True, type=click.Choice(["pmml", "sql"]),
              help="pmml: a PMML 4.4 Scorecard document; sql: one standard SQL query.")
@click.option("--out", required=True, type=click.Path(path_type=Path),
              help="File to write.")
@click.option("--table", default="applications", show_default=True,
              help="sql: the table of applications to score.")
@click.option("--keep", multiple=True,
              help="sql: a column of the table to copy to the result, e.g. its key (repeatable).")
@click.option("--reasons", type=click.IntRange(min=0), default=None,
              help="Reason codes per row [default: the model's, from scoring.reasons].")
def export(model, form, out, table, keep, reasons):
    """Write the scorecard MODEL in a deployable form: PMML or SQL."""
    from scorecard import api
    api.export(model, form, out, table=table, keep=keep, reasons=reasons)
    click.echo(f"wrote {out}")


if __name__ == "__main__":
    sys.exit(main())
