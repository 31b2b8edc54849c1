"""``scorecard export``: a model file as a PMML document or a SQL scoring query."""

from __future__ import annotations

from pathlib import Path

import click

from .errors import InputError
from .model import load_scorecard


@click.command("export")
@click.argument("model", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--format", "form", required=True, type=click.Choice(["pmml", "sql"]),
              help="pmml: a PMML 4.4 Scorecard document; sql: one standard SQL query.")
@click.option("--out", required=True, type=click.Path(dir_okay=False, path_type=Path),
              help="File to write.")
@click.option("--table", default="applications", show_default=True,
              help="sql: the table of applications to score.")
@click.option("--keep", multiple=True,
              help="sql: a column of the table to copy to the result, e.g. its key (repeatable).")
@click.option("--reasons", type=click.IntRange(min=0), default=None,
              help="Reason codes per row [default: the model's, from scoring.reasons].")
def export_command(model, form, out, table, keep, reasons):
    """Write the scorecard MODEL in a deployable form: PMML or SQL."""
    card = load_scorecard(model)
    reasons = card.reasons if reasons is None else reasons
    if form == "pmml":
        if keep:
            raise InputError("--keep: applies to --format sql only")
        from .export_pmml import write_pmml
        write_pmml(card, out, reasons)
    else:
        from .export_sql import write_sql
        write_sql(card, out, table, keep, reasons)
    click.echo(f"wrote {out}")
