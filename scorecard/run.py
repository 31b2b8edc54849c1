"""The importable entry points behind the commands: build, score a file, write the demo."""

from __future__ import annotations

from pathlib import Path

from .atomic import write_text
from .build import BuildResult, build_scorecard
from .config import check_columns, load_config
from .data import read_frame
from .engine import LocalEngine


def open_engine(config):
    """The engine named by the config, holding the development data."""
    d = config.data
    if config.engine.dask is None:
        return LocalEngine(read_frame(d.source, encoding=d.encoding, delimiter=d.delimiter))
    from .dask_engine import DaskEngine
    return DaskEngine(d.source, config.engine.dask)


def _write_workbook(result, path):
    from .workbook import write_workbook
    write_workbook(result, path)


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
    config = load_config(config_path)
    engine = open_engine(config)
    check_columns(config, engine.columns)
    if progress:
        progress(f"read {engine.n_rows} rows from {config.data.source}")
    result = build_scorecard(config, engine, progress)
    model_path = Path(model) if model else config.output.model
    workbook_path = Path(workbook) if workbook else config.output.workbook
    _write_workbook(result, workbook_path)
    write_text(model_path, result.card.to_json())
    if progress:
        progress(f"wrote {workbook_path} and {model_path}")
    result.outputs = {"workbook": workbook_path, "model": model_path}
    return result
