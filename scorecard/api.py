"""Plain functions behind every command: build, score, compare, monitor, diff, export, init, demo.

Each takes paths and options, does the whole job and returns a result object; the click layer
in :mod:`scorecard.cli` only parses arguments and prints. Heavy modules are imported inside the
functions, so that a command loads only what it needs.
"""

from __future__ import annotations

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


def _output_paths(config, workbook, model) -> tuple[Path, Path]:
    """Where the outputs go; InputError when one would overwrite an input or the other."""
    model_path = Path(model) if model else config.output.model
    workbook_path = Path(workbook) if workbook else config.output.workbook
    inputs = {Path(config.data.source).resolve(): "the data", Path(config.config_file).resolve(): "the config"}
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
    previous = _previous_card(model_path)
    with open_engine(config, progress) as engine:
        check_columns(config, engine.columns)
        if progress:
            progress(f"read {engine.n_rows} rows from {config.data.source}")
        result = build_scorecard(config, engine, progress)
    # The workbook is finished in its temporary file before the model moves into place, and
    # moves in right after: a failure anywhere leaves the previous pair of outputs as it was.
    with atomic_path(workbook_path) as pending_workbook:
        write_workbook(result, pending_workbook)
        write_text(model_path, result.card.to_json())
    if progress:
        progress(f"wrote {workbook_path} and {model_path}")
    result.outputs = {"workbook": workbook_path, "model": model_path}
    result.previous = previous
    return result


def _previous_card(model_path: Path):
    """The model file a build is about to replace, if there is one that loads; else None."""
    if not model_path.is_file():
        return None
    from scorecard.card.scorecard import load_scorecard
    try:
        return load_scorecard(model_path)
    except InputError:
        return None


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


def _check_outputs(outputs: dict, inputs: dict) -> None:
    """InputError when an output would overwrite an input or another output."""
    taken = {Path(p).resolve(): what for what, p in inputs.items() if p is not None}
    for option, path in outputs.items():
        if path is None:
            continue
        where = Path(path).resolve()
        if where in taken:
            raise InputError(f"{option} {path}: would overwrite {taken[where]}")
        if Path(path).is_dir():
            raise InputError(f"{option} {path}: is a folder")
        taken[where] = f"the {option} output"


def monitor(model, data, period, *, every="month", baseline=None, cutoff=None, bands=None,
            min_bads=None, json_path=None, workbook=None, dask=None):
    """Stability and performance of ``model`` for every period of ``data``.

    Writes the JSON and the monitoring workbook when their paths are given; ``dask`` is
    ``"local"`` or a scheduler address to run the pass on a Dask cluster (Parquet data).
    Returns the :class:`~scorecard.evaluation.monitoring.Monitoring`.
    """
    from scorecard.evaluation.monitoring import DEFAULT_MIN_BADS
    from scorecard.evaluation.monitoring import monitor as monitor_periods
    _check_outputs({"--json": json_path, "--workbook": workbook},
                   {"the model": model, "the data": data, "the baseline": baseline})
    options = {"every": every, "baseline": baseline, "cutoff": cutoff, "bands": bands,
               "min_bads": DEFAULT_MIN_BADS if min_bads is None else min_bads}
    if dask is None:
        result = monitor_periods(model, data, period, **options)
    else:
        from scorecard.engines.dask_engine import DaskEngine
        with DaskEngine(data, dask) as engine:
            result = monitor_periods(model, data, period, engine=engine, **options)
    if json_path is not None:
        write_text(json_path, result.to_json())
    if workbook is not None:
        from scorecard.outputs.monitoring_workbook import write_monitoring_workbook
        write_monitoring_workbook(result, workbook)
    return result


def diff(old_model, new_model, *, json_path=None):
    """What changed from the model file ``old_model`` to ``new_model``; JSON written if asked.

    Returns the :class:`~scorecard.evaluation.model_diff.ModelDiff`.
    """
    from scorecard.card.scorecard import load_scorecard
    from scorecard.evaluation.model_diff import diff_scorecards
    _check_outputs({"--json": json_path}, {"the older model": old_model,
                                           "the newer model": new_model})
    result = diff_scorecards(load_scorecard(old_model), load_scorecard(new_model))
    if json_path is not None:
        write_text(json_path, result.to_json())
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
