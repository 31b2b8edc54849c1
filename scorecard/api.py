"""Plain functions behind every command: build, score, compare, export, init, demo.

Each takes paths and options, does the whole job and returns a result object; the click layer
in :mod:`scorecard.cli` only parses arguments and prints. Heavy modules are imported inside the
functions, so that a command loads only what it needs.
"""

from __future__ import annotations

import contextlib
from pathlib import Path

from scorecard.build.pipeline import build_scorecard
from scorecard.build.result import BuildResult
from scorecard.config.loading import check_columns, load_config
from scorecard.data.read import read_frame
from scorecard.engines.local import LocalEngine
from scorecard.errors import InputError
from scorecard.outputs.atomic import atomic_path, write_text


def open_engine(config, progress=None):
    """The engine named by the config, holding the development data; use it in ``with``."""
    d = config.data
    if config.engine.dask is None:
        return LocalEngine(read_frame(d.source, encoding=d.encoding, delimiter=d.delimiter),
                           progress=progress)
    from scorecard.engines.dask_engine import DaskEngine
    return DaskEngine(d.source, config.engine.dask, progress=progress)


def open_rejects_engine(config, engine, progress=None):
    """The engine holding the declined applications (``rejects.source``), or None without them.

    On Dask it joins the cluster of ``engine``, the engine of the accepts.
    """
    r = config.rejects
    if r is None:
        return contextlib.nullcontext(None)
    if config.engine.dask is None:
        return LocalEngine(read_frame(r.source, encoding=r.encoding, delimiter=r.delimiter),
                           progress=progress)
    from scorecard.engines.dask_engine import DaskEngine
    return DaskEngine(r.source, engine.client.scheduler.address, progress=progress)


def _output_paths(config, workbook, model) -> tuple[Path, Path]:
    """Where the outputs go; InputError when one would overwrite an input or the other."""
    model_path = Path(model) if model else config.output.model
    workbook_path = Path(workbook) if workbook else config.output.workbook
    inputs = {Path(config.data.source).resolve(): "the data", Path(config.config_file).resolve(): "the config"}
    if config.rejects is not None:
        inputs[Path(config.rejects.source).resolve()] = "the declined applications"
    for option, path in (("--workbook", workbook_path), ("--model", model_path)):
        if path.resolve() in inputs:
            raise InputError(f"{option} {path}: would overwrite {inputs[path.resolve()]}")
        if path.is_dir():
            raise InputError(f"{option} {path}: is a folder")
    if model_path.resolve() == workbook_path.resolve():
        raise InputError(f"--model {model_path}: the same path as the workbook")
    return workbook_path, model_path


def build(config_path, *, workbook=None, model=None, progress=None) -> BuildResult:
    """Build the scorecard a config describes and write its workbook and model file.

    Parameters
    ----------
    config_path : path
        The YAML config.
    workbook, model : path, optional
        Override ``output.workbook`` and ``output.model``.
    progress : callable, optional
        Called with one line of text per finished stage.

    Returns
    -------
    BuildResult
        The scorecard (``.card``) and the facts behind it.
    """
    from scorecard.outputs.workbook import write_workbook
    config = load_config(config_path)
    workbook_path, model_path = _output_paths(config, workbook, model)
    with open_engine(config, progress) as engine:
        check_columns(config, engine.columns)
        if progress:
            progress(f"read {engine.n_rows} rows from {config.data.source}")
        with open_rejects_engine(config, engine, progress) as rejects_engine:
            result = build_scorecard(config, engine, progress, rejects_engine)
    # The workbook is finished in its temporary file before the model moves into place, and
    # moves in right after: a failure anywhere leaves the previous pair of outputs as it was.
    with atomic_path(workbook_path) as pending_workbook:
        write_workbook(result, pending_workbook)
        write_text(model_path, result.card.to_json())
    if progress:
        progress(f"wrote {workbook_path} and {model_path}")
    result.outputs = {"workbook": workbook_path, "model": model_path}
    return result


def score(model, data, out, *, keep=(), reasons=None, reason_text=False):
    """Score every row of ``data`` with the model file ``model`` and write ``out``.

    Returns the :class:`~scorecard.outputs.scored_file.ScoringSummary` of the run;
    ``reasons`` defaults to the model's own number of reason codes.
    """
    from scorecard.card.scorecard import load_scorecard
    from scorecard.outputs.scored_file import score_file
    card = load_scorecard(model)
    return score_file(card, data, out, keep=keep,
                      reasons=card.reasons if reasons is None else reasons,
                      reason_text=reason_text)


def compare(model, baseline, current, *, bands=None, json_path=None, workbook=None):
    """Stability and performance of ``model`` from ``baseline`` to ``current``.

    Writes the JSON and the validator's workbook when their paths are given; returns the
    :class:`~scorecard.evaluation.comparison.Comparison`.
    """
    from scorecard.evaluation.comparison import compare as compare_files
    result = compare_files(model, baseline, current, bands=bands)
    if json_path is not None:
        write_text(json_path, result.to_json())
    if workbook is not None:
        from scorecard.outputs.comparison_workbook import write_compare_workbook
        write_compare_workbook(result, workbook)
    return result


def export(model, form, out, *, table="applications", keep=(), reasons=None) -> None:
    """Write the model file ``model`` as a PMML document (``form="pmml"``) or a SQL query."""
    from scorecard.card.scorecard import load_scorecard
    card = load_scorecard(model)
    reasons = card.reasons if reasons is None else reasons
    if form == "pmml":
        if keep:
            raise InputError("--keep: applies to --format sql only")
        from scorecard.outputs.pmml import write_pmml
        write_pmml(card, out, reasons)
    elif form == "sql":
        from scorecard.outputs.sql import write_sql
        write_sql(card, out, table, keep, reasons)
    else:
        raise InputError(f"--format {form}: must be pmml or sql")


def init(data, target, out=None) -> str:
    """A starter config for ``data`` with outcome column ``target``; written to ``out`` if given."""
    from scorecard.outputs.starter_config import starter_config
    text = starter_config(data, target, out)
    if out is not None:
        write_text(out, text)
    return text


def demo(directory, *, rows=20_000, seed=2024, progress=None) -> BuildResult:
    """Write the invented demo sample and its config into ``directory`` and build it."""
    from scorecard.demo.files import write_demo
    return build(write_demo(directory, rows=rows, seed=seed), progress=progress)
