"""The ``scorecard`` command: a thin shell over the importable core.

Bad input ends with one ``error:`` line on stderr and exit status 2, never a traceback.
"""

from __future__ import annotations

import os
import signal
import sys
from pathlib import Path

import click

from .compare import compare_command
from .errors import InputError
from .export import export_command
from .progress import StageLog


class _Terminated(Exception):
    """SIGTERM, raised as an exception so that every ``finally`` removes its temporary files."""


def _raise_terminated(signum, frame):
    raise _Terminated()


class _Group(click.Group):
    """Turns bad input and usage mistakes into one ``error: ...`` line with exit status 2."""

    def invoke(self, ctx):
        previous = signal.signal(signal.SIGTERM, _raise_terminated)
        try:
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
@click.option("--workbook", type=click.Path(dir_okay=False, path_type=Path),
              help="Write the workbook here instead of output.workbook.")
@click.option("--model", type=click.Path(dir_okay=False, path_type=Path),
              help="Write the model file here instead of output.model.")
@click.option("--quiet", is_flag=True, help="Print nothing but errors.")
def build(config, workbook, model, quiet):
    """Build the scorecard that CONFIG describes."""
    from .run import build as run_build
    result = run_build(config, workbook=workbook, model=model, progress=StageLog(quiet))
    if not quiet:
        _print_summary(result)


def _print_summary(result) -> None:
    card = result.card
    click.echo(f"{card.name}: {len(card.characteristics)} characteristics, "
               f"scores {card.min_score} to {card.max_score}")
    for name, perf in result.performance.items():
        click.echo(f"  {name:12s} AUC {perf.auc:.4f}  Gini {perf.gini:.4f}  KS {perf.ks:.4f}")
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
    from .demo import write_demo
    from .run import build as run_build
    config = write_demo(directory, rows=rows, seed=seed)
    result = run_build(config, progress=StageLog(quiet))
    if not quiet:
        click.echo(f"demo config: {config}")
        _print_summary(result)


@main.command()
@click.argument("data", type=click.Path(path_type=Path))
@click.option("--target", required=True, help="The outcome column.")
@click.option("--out", type=click.Path(dir_okay=False, path_type=Path),
              help="Write the config here (default: print it).")
def init(data, target, out):
    """Write a starter config for DATA with every column classified."""
    from .starter import starter_config
    text = starter_config(data, target, out)
    if out is None:
        click.echo(text, nl=False)
    else:
        from .atomic import write_text
        write_text(out, text)
        click.echo(f"wrote {out}")


@main.command()
@click.argument("model", type=click.Path(dir_okay=False, path_type=Path))
@click.argument("data", type=click.Path(path_type=Path))
@click.option("--out", required=True, type=click.Path(dir_okay=False, path_type=Path),
              help="Scored file (.csv or .parquet).")
@click.option("--keep", multiple=True, help="Input column to copy to the output (repeatable).")
@click.option("--reasons", type=click.IntRange(min=0), default=None,
              help="Reason codes per row [default: the model's, from scoring.reasons].")
@click.option("--reason-text", is_flag=True, help="Write each reason's text instead of its code.")
def score(model, data, out, keep, reasons, reason_text):
    """Apply a built scorecard MODEL to the rows of DATA."""
    from .model import load_scorecard
    from .score_file import score_file
    card = load_scorecard(model)
    summary = score_file(card, data, out, keep=keep,
                         reasons=card.reasons if reasons is None else reasons,
                         reason_text=reason_text)
    click.echo(summary.text())


main.add_command(compare_command)
main.add_command(export_command)

if __name__ == "__main__":
    sys.exit(main())
