"""The importable entry points behind the commands: build, score a file, write the demo."""

from __future__ import annotations

from pathlib import Path

from .atomic import atomic_path, write_text
from .build import BuildResult, build_scorecard
from .config import check_columns, load_config
from .data import read_frame
from .engine import LocalEngine
from .errors import InputError


def open_engine(config, progress=None):
    """The engine named by the config, holding the development data; use it in ``with``."""
    d = config.data
    if config.engine.dask is None:
        return LocalEngine(read_frame(d.source, encoding=d.encoding, delimiter=d.delimiter),
                           progress=progress)
    from .dask_engine import DaskEngine
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
    from .workbook import write_workbook
    config = load_config(config_path)
    workbook_path, model_path = _output_paths(config, workbook, model)
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
    return result
