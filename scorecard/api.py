"""Plain functions behind every command: build, score, compare, strategy, monitor, challenge,
diff, export, init, demo.

Each takes paths and options, does the whole job and returns a result object; the click layer
in :mod:`scorecard.cli` only parses arguments and prints. Heavy modules are imported inside the
functions, so that a command loads only what it needs.
"""

from __future__ import annotations

import contextlib
from dataclasses import replace
from pathlib import Path
from typing import TYPE_CHECKING

from scorecard.errors import InputError
from scorecard.outputs.atomic import Output, check_outputs, staged

if TYPE_CHECKING:
    from scorecard.build.result import BuildResult


def open_engine(config, progress=None):
    """The engine named by the config, holding the development data; use it in ``with``."""
    d = config.data
    if config.engine.dask is None:
        from scorecard.data.read import read_source
        from scorecard.engines.local import LocalEngine
        return LocalEngine(read_source(d.source, encoding=d.encoding, delimiter=d.delimiter,
                                       decimal=d.decimal, sheet=d.sheet),
                           progress=progress)
    from scorecard.engines.dask_engine import DaskEngine
    return DaskEngine(d.source, config.engine.dask, progress=progress)


WORKBOOK, MODEL_FILE = (".xlsx",), (".json",)
EXPORT_SUFFIXES = {"pmml": (".pmml", ".xml"), "sql": (".sql",)}
CONFIG_SUFFIXES = (".yaml", ".yml")


def _build_outputs(config, workbook, model) -> tuple[Output, Output]:
    """The workbook and model file of a build: from the options, else from the config."""
    return (Output("--workbook", Path(workbook), WORKBOOK) if workbook
            else Output("output.workbook", config.output.workbook, WORKBOOK),
            Output("--model", Path(model), MODEL_FILE) if model
            else Output("output.model", config.output.model, MODEL_FILE))


def _report_outputs(json_path, workbook) -> list:
    """The JSON and workbook outputs of a report command, those that were asked for."""
    wanted = [Output("--json", Path(json_path), (".json",))] if json_path is not None else []
    if workbook is not None:
        wanted.append(Output("--workbook", Path(workbook), WORKBOOK))
    return wanted


def _write_report(outputs, result, write_workbook) -> None:
    """Write a report's JSON and workbook, both or neither (``outputs`` as checked)."""
    with staged(outputs) as out:
        for output in outputs:
            if output.name == "--json":
                out.write_text("--json", result.to_json())
            else:
                out.write("--workbook", lambda tmp: write_workbook(result, tmp))


def open_rejects_engine(config, engine, progress=None):
    """The engine holding the declined applications (``rejects.source``), or None without them.

    On Dask it joins the cluster of ``engine``, the engine of the accepts.
    """
    r = config.rejects
    if r is None:
        return contextlib.nullcontext(None)
    if config.engine.dask is None:
        from scorecard.data.read import read_source
        from scorecard.engines.local import LocalEngine
        return LocalEngine(read_source(r.source, encoding=r.encoding, delimiter=r.delimiter),
                           progress=progress)
    from scorecard.engines.dask_engine import DaskEngine
    return DaskEngine(r.source, engine.client.scheduler.address, progress=progress)


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
    BuildResult or SegmentedBuildResult
        The scorecard (``.card``), the facts behind it (``.stability`` among them: what the
        workbook's Stability sheet shows) and the paths written (``.outputs``). With a
        ``segments`` section: the segmented model (``.card``), each segment's own build
        (``.segments``) and the pooled measures (``.performance``).
    """
    from scorecard.build.pipeline import build_scorecard
    from scorecard.config import check_columns, load_config
    from scorecard.config.sources import is_query
    from scorecard.data.database import rows_sha256
    from scorecard.outputs.workbook import write_workbook
    config = load_config(config_path)
    inputs = {"the config": config.config_file, "the data": _input_file(config.data.source)}
    if config.rejects is not None:
        inputs["the declined applications"] = _input_file(config.rejects.source)
    outputs = check_outputs(_build_outputs(config, workbook, model), inputs)
    previous = _previous_card(outputs[1].path)
    waterfall = None
    with open_engine(config, progress) as engine:
        check_columns(config, engine.columns)
        if progress:
            progress(f"read {engine.n_rows} rows from {config.data.source}")
        with open_rejects_engine(config, engine, progress) as rejects_engine:
            if config.segments is not None:
                from scorecard.build.segments import build_segmented
                result = build_segmented(config, engine, progress, rejects_engine)
                waterfall = _segmented_waterfall(config, engine, result, rejects_engine)
            else:
                result = build_scorecard(config, engine, progress, rejects_engine)
        if is_query(config.data.source):
            # A query cannot be read again for the manifest: hash the rows the build read.
            result = replace(result, rows_sha256=rows_sha256(engine.frame))
    # Both files are finished before either moves into place: a failure anywhere leaves the
    # previous pair of outputs as it was.
    book, card = outputs
    with staged(outputs) as out:
        out.write(book.name, lambda tmp: write_workbook(result, tmp, waterfall))
        out.write_text(card.name, result.card.to_json())
    if progress:
        progress(f"wrote {book.path} and {card.path}")
    return replace(result, outputs={"workbook": book.path, "model": card.path}, previous=previous)


def _segmented_waterfall(config, engine, result, rejects_engine=None):
    """The exclusion waterfall of a segmented build's rows, for its Overview.

    The rows each ``data.exclude`` rule catches first (one pass over the rules' columns, only
    when there are rules), then the rows every segment's card used, per sample; the rest had an
    outcome neither good nor bad; with declined applications and rules, the declined rows each
    rule removes (one more pass over the declined file's rule columns). (The segmented build
    does not keep the outcome pass's rule of each row; once it does, these passes can go.)
    """
    from dataclasses import replace as replaced

    import numpy as np

    from scorecard.data.exclusions import declined_rows, exclusion_waterfall, first_rule
    rules = config.data.exclude
    columns = list(dict.fromkeys(r.column for r in rules))

    def caught_by(source):
        return source.collect(lambda chunk: (first_rule(chunk, rules),), columns=columns)[0]

    caught = caught_by(engine) if rules else np.zeros(engine.n_rows, dtype=np.int64)
    parts = result.segments.values()
    used = {name: sum(p.samples.rows.get(name, 0) for p in parts)
            for name in next(iter(parts)).samples.rows}
    used = {name: rows for name, rows in used.items() if rows}
    other = len(caught) - int(np.count_nonzero(caught)) - sum(used.values())
    waterfall = exclusion_waterfall(rules, caught, other, used)
    if rejects_engine is not None and rules:
        waterfall = replaced(waterfall, declined=declined_rows(rules, caught_by(rejects_engine)))
    return waterfall


def _input_file(source):
    """The file behind a source: the file itself, an SQLite query's database file, or None."""
    from scorecard.config.sources import is_query
    return source.database_file if is_query(source) else source


def _previous_card(model_path: Path):
    """The model file a build is about to replace, if there is one that loads; else None."""
    if not model_path.is_file():
        return None
    from scorecard.card.segmented import load_model
    try:
        return load_model(model_path)
    except InputError:
        return None


def score(model, data, out, *, keep=(), reasons=None, reason_text=False,
          apply_exclusions=False):
    """Score every row of ``data`` with the model file ``model`` and write ``out``.

    Returns the :class:`~scorecard.outputs.scored_file.ScoringSummary` of the run;
    ``reasons`` defaults to the model's own number of reason codes. Every row is scored unless
    ``apply_exclusions``: then a row one of the model's exclusion rules catches gets the rule's
    reason in the ``exclusion_reason`` column and no score.
    """
    from scorecard.outputs.scored_file import score_file
    return score_file(model, data, out, keep=keep, reasons=reasons, reason_text=reason_text,
                      apply_exclusions=apply_exclusions)


def compare(model, baseline, current, *, bands=None, json_path=None, workbook=None):
    """Stability and performance of ``model`` from ``baseline`` to ``current``.

    Writes the JSON and the validator's workbook when their paths are given; returns the
    :class:`~scorecard.evaluation.comparison.Comparison`.
    """
    from scorecard.evaluation.comparison import compare as compare_files
    from scorecard.outputs.comparison_workbook import write_compare_workbook
    outputs = check_outputs(_report_outputs(json_path, workbook),
                            {"the model file": model, "the baseline": baseline,
                             "the current file": current})
    result = compare_files(model, baseline, current, bands=bands)
    _write_report(outputs, result, write_compare_workbook)
    return result


def strategy(model, data, *, json_path=None, workbook=None, **options):
    """Cut-offs, profit and swap sets of ``model`` on the rows of ``data``.

    ``options`` are those of :func:`scorecard.evaluation.strategy.strategy`. Writes the JSON
    and the workbook when their paths are given (never over the model or the data); returns the
    :class:`~scorecard.evaluation.strategy.Strategy`.
    """
    from scorecard.evaluation.strategy import strategy as cut_offs
    from scorecard.outputs.strategy_workbook import write_strategy_workbook
    outputs = check_outputs(_report_outputs(json_path, workbook),
                            {"the model file": model, "the data": data})
    result = cut_offs(model, data, **options)
    _write_report(outputs, result, write_strategy_workbook)
    return result


def monitor(model, data, period, *, every="month", baseline=None, cutoff=None, bands=None,
            min_bads=None, json_path=None, workbook=None, dask=None):
    """Stability and performance of ``model`` for every period of ``data``.

    Writes the JSON and the monitoring workbook when their paths are given; ``dask`` is
    ``"local"`` or a scheduler address to run the pass on a Dask cluster (Parquet data).
    Returns the :class:`~scorecard.evaluation.monitoring.Monitoring`.
    """
    from scorecard.evaluation.monitoring import DEFAULT_MIN_BADS
    from scorecard.evaluation.monitoring import monitor as monitor_periods
    outputs = check_outputs(_report_outputs(json_path, workbook),
                            {"the model": model, "the data": data,
                             **({"the baseline": baseline} if baseline else {})})
    options = {"every": every, "baseline": baseline, "cutoff": cutoff, "bands": bands,
               "min_bads": DEFAULT_MIN_BADS if min_bads is None else min_bads}
    if dask is None:
        result = monitor_periods(model, data, period, **options)
    else:
        from scorecard.engines.dask_engine import DaskEngine
        with DaskEngine(data, dask) as engine:
            result = monitor_periods(model, data, period, engine=engine, **options)
    from scorecard.outputs.monitoring_workbook import write_monitoring_workbook
    _write_report(outputs, result, write_monitoring_workbook)
    return result


def challenge(champion, challenger, data, *, approval_rate=None, json_path=None,
              workbook=None):
    """Champion against challenger on the rows of ``data``: AUC, Gini, KS of each, DeLong's
    paired test of the AUC difference and the swap set; JSON and workbook written if asked
    (never over an input).

    Returns the :class:`~scorecard.evaluation.challenge.Challenge`.
    """
    from scorecard.evaluation.challenge import challenge as compare_cards
    from scorecard.outputs.challenge_workbook import write_challenge_workbook
    outputs = check_outputs(_report_outputs(json_path, workbook),
                            {"the champion": champion, "the challenger": challenger,
                             "the data": data})
    result = compare_cards(champion, challenger, data, approval_rate=approval_rate)
    _write_report(outputs, result, write_challenge_workbook)
    return result


def diff(old_model, new_model, *, json_path=None):
    """What changed from the model file ``old_model`` to ``new_model``; JSON written if asked.

    Two single cards give a :class:`~scorecard.evaluation.model_diff.ModelDiff`, two segmented
    models a :class:`~scorecard.evaluation.model_diff.SegmentedDiff` (cards matched by segment
    name); one of each is refused with an InputError.
    """
    from scorecard.card.segmented import load_model
    from scorecard.evaluation.model_diff import diff_models
    outputs = check_outputs(_report_outputs(json_path, None),
                            {"the older model": old_model, "the newer model": new_model})
    result = diff_models(load_model(old_model), load_model(new_model), str(old_model),
                         str(new_model))
    _write_report(outputs, result, None)
    return result


def export(model, form, out, *, table="applications", keep=(), reasons=None) -> None:
    """Write the model file ``model`` as a PMML document (``form="pmml"``) or a SQL query."""
    from scorecard.card.segmented import load_model
    from scorecard.outputs.pmml import write_pmml
    from scorecard.outputs.sql import write_sql
    if form not in EXPORT_SUFFIXES:
        raise InputError(f"--format {form}: must be pmml or sql")
    if form == "pmml" and keep:
        raise InputError("--keep: applies to --format sql only")
    target = check_outputs([Output("--out", Path(out), EXPORT_SUFFIXES[form])],
                           {"the model file": model})
    card = load_model(model)
    reasons = card.reasons if reasons is None else reasons
    with staged(target) as pending:
        if form == "pmml":
            pending.write("--out", lambda tmp: write_pmml(card, tmp, reasons))
        else:
            pending.write("--out", lambda tmp: write_sql(card, tmp, table, keep, reasons))


def init(data, target, out=None) -> str:
    """A starter config for ``data`` with outcome column ``target``; written to ``out`` if given."""
    from scorecard.outputs.starter_config import starter_config
    outputs = () if out is None else check_outputs([Output("--out", Path(out), CONFIG_SUFFIXES)],
                                                   {"the data": data})
    text = starter_config(data, target, out)
    with staged(outputs) as pending:
        for config in outputs:
            pending.write_text(config.name, text)
    return text


def demo(directory, *, rows=20_000, seed=2024, progress=None) -> BuildResult:
    """Write the invented demo sample and its config into ``directory`` and build it."""
    from scorecard.demo.files import write_demo
    return build(write_demo(directory, rows=rows, seed=seed), progress=progress)
