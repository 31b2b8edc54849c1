"""Turning the composed YAML into the config objects, and the rules across keys.

Each section is read key by key by the readers of :mod:`scorecard.config.values`, with the
limits declared in :mod:`scorecard.constraints`; then the rules that span keys are checked
(``fine_bins`` at least ``max_bins``, a column used in two roles, a forced-in characteristic
that is also left out, ``watch`` below ``shift``...). Every problem names its key and line.
"""

from __future__ import annotations

import warnings
from collections.abc import Mapping
from pathlib import Path

import yaml

from scorecard import constraints as c
from scorecard.config import values as v
from scorecard.config.exclusions import read_exclusions
from scorecard.config.messages import display, message, shorten
from scorecard.config.nodes import Source, describe, is_null
from scorecard.config.rejects import METHOD_SETTINGS, REJECT_METHODS, RejectsConfig
from scorecard.config.segments import read_segments
from scorecard.config.schema import (
    BinningConfig,
    CharacteristicOverride,
    Config,
    DataConfig,
    EngineConfig,
    EvaluationConfig,
    FairnessConfig,
    FrozenMapping,
    GradesConfig,
    OutOfTime,
    OutputConfig,
    SamplesConfig,
    ScalingConfig,
    ScoringConfig,
    SelectionConfig,
    StabilityConfig,
)
from scorecard.config.sources import FILE_SETTINGS, is_query, resolve_source, source_value

__all__ = ["read_config"]


def _engine(source: Source, path: tuple, node: yaml.Node) -> EngineConfig:
    if isinstance(node, yaml.ScalarNode) and not is_null(node):
        if source.text(path, node) != "local":
            source.fail(path, "must be local, {dask: local} or {dask: 'tcp://host:8786'}, "
                              f"got {describe(node)}")
        return EngineConfig()
    values = v.section(source, path, node, {"dask": v.dask_address})
    return EngineConfig(**values)


def _refuse_dask_query(source: Source, config: Config) -> None:
    if config.engine.dask is None:
        return
    rejects = config.rejects
    for key, given in (("data", config.data.source), ("rejects", rejects and rejects.source)):
        if is_query(given):
            source.fail(("engine",), f"the Dask engine reads Parquet files, and {key}.source is a "
                                     "database query: use engine: local")


def _out_of_time(source: Source, path: tuple, node: yaml.Node) -> OutOfTime:
    values = v.section(source, path, node, {"column": v.text, "from": v.date})
    v.require(source, path, values, ("column", "from"))
    return OutOfTime(column=values["column"], from_date=values["from"])


_columns = v.list_of(v.text, unique=True)
_outcomes = v.list_of(v.outcome_value, unique=True, nonempty=True)
_sentinels = v.list_of(v.sentinel, unique=True)

# Keys of the binning section and of the overrides that were renamed: a config that still uses
# the old name is refused with the new one, rather than told the key is unknown.
_RENAMED_KEYS = {"special_values": "sentinels"}

_DATA_SCHEMA = {
    "source": source_value("data.source"), "target": v.text, "bad": _outcomes, "good": _outcomes,
    "weight": v.optional(v.text), "ignore": _columns, "protected": _columns,
    "encoding": v.encoding, "delimiter": v.delimiter, "decimal": v.choice((".", ",")),
    "sheet": v.optional(v.text), "exclude": read_exclusions,
}
_SAMPLES_SCHEMA = {
    "holdout": v.optional(v.setting(c.HOLDOUT)),
    "seed": v.setting(c.SEED),
    "out_of_time": v.optional(_out_of_time),
}
_BINNING_SCHEMA = {
    "fine_bins": v.setting(c.FINE_BINS), "max_bins": v.setting(c.MAX_BINS),
    "choose_max_bins": v.flag,
    "min_bin_share": v.setting(c.MIN_BIN_SHARE),
    "min_bin_goods": v.setting(c.MIN_BIN_GOODS), "min_bin_bads": v.setting(c.MIN_BIN_BADS),
    "prior_rows": v.setting(c.PRIOR_ROWS),
    "trend": v.setting(c.TREND), "sentinels": _sentinels,
    "rare_level_share": v.setting(c.RARE_LEVEL_SHARE),
    "max_levels": v.setting(c.MAX_LEVELS),
}
_OVERRIDE_SCHEMA = {
    "kind": v.optional(v.choice(c.KINDS)), "trend": v.optional(v.setting(c.TREND)),
    "cuts": v.optional(v.list_of(v.finite, increasing=True, nonempty=True)),
    "groups": v.optional(v.list_of(v.list_of(v.text, nonempty=True), nonempty=True)),
    "sentinels": v.optional(_sentinels), "use": v.flag,
    "reason": v.optional(v.text), "reason_code": v.optional(v.text),
}
_SELECTION_SCHEMA = {
    "min_iv": v.setting(c.MIN_IV), "max_correlation": v.setting(c.MAX_CORRELATION),
    "max_vif": v.setting(c.MAX_VIF),
    "method": v.setting(c.METHOD), "entry": v.setting(c.ENTRY),
    "entry_p_value": v.setting(c.ENTRY_P_VALUE),
    "max_characteristics": v.setting(c.MAX_CHARACTERISTICS), "keep": _columns,
}
_SCALING_SCHEMA = {
    "base_score": v.setting(c.BASE_SCORE), "base_odds": v.setting(c.BASE_ODDS),
    "pdo": v.setting(c.PDO),
}
_OUTPUT_SCHEMA = {"workbook": v.text, "model": v.text}
_SCORING_SCHEMA = {
    "unseen_level": v.setting(c.UNSEEN_LEVEL), "unseen_missing": v.setting(c.UNSEEN_MISSING),
    "out_of_range": v.setting(c.OUT_OF_RANGE), "reasons": v.setting(c.REASONS),
}
_EVALUATION_SCHEMA = {"score_bands": v.setting(c.SCORE_BANDS)}
_STABILITY_SCHEMA = {
    "watch": v.setting(c.WATCH), "shift": v.setting(c.SHIFT),
    "score_bands": v.setting(c.SCORE_BANDS),
}
_FAIRNESS_SCHEMA = {
    "approval_rates": v.list_of(v.setting(c.APPROVAL_RATE), increasing=True, nonempty=True),
    "cutoffs": v.list_of(v.finite, increasing=True),
    "proxy_cramers_v": v.setting(c.PROXY_CRAMERS_V),
    "min_group_size": v.setting(c.MIN_GROUP_SIZE),
    "impact_ratio": v.setting(c.IMPACT_RATIO),
}
_TOP_KEYS = (
    "name", "data", "samples", "binning", "characteristics", "selection", "scaling", "output",
    "engine", "scoring", "evaluation", "stability", "fairness", "grades", "rejects",
    "segments",
)
_GRADES_SCHEMA = {
    "count": v.whole(c.Interval(2)),
    "edges": v.list_of(v.finite, increasing=True, nonempty=True),
    "long_run_bad_rate": v.number(c.Interval(0, 1, low_open=True, high_open=True)),
}


def read_config(source: Source, root: yaml.MappingNode, base: Path, default_name: str) -> Config:
    """The config objects of a composed and checked document, every cross-key rule applied.

    Parameters
    ----------
    source : Source
        The config being read; it collects the line of every key.
    root : yaml.MappingNode
        The document, already through :func:`scorecard.config.safe_yaml.check_graph`.
    base : Path
        Folder that relative paths in the config are resolved against.
    default_name : str
        The ``name`` when the config gives none.

    Returns
    -------
    Config

    Examples
    --------
    >>> root = yaml.compose("data: {source: x.csv, target: y, bad: [1], good: [0]}")
    >>> config = read_config(Source("c.yaml"), root, Path("/data"), "c")
    >>> config.data.source, config.key_lines["data.target"]
    (PosixPath('/data/x.csv'), 1)
    """
    top = source.mapping((), root, _TOP_KEYS)
    name = v.text(source, ("name",), top["name"]) if "name" in top else default_name
    data = _read_data(source, top.get("data"), base)
    samples = _read_samples(source, top.get("samples"))
    characteristics = _read_characteristics(source, top.get("characteristics"))
    selection = SelectionConfig(**v.section(source, ("selection",), top.get("selection"),
                                           _SELECTION_SCHEMA))
    segments = read_segments(source, top.get("segments"))
    reserved = _reserved_columns(data, samples, segments)
    if segments is not None and reserved[segments.column] != "segments.column":
        source.fail(("segments", "column"), f"'{segments.column}' is named in "
                                            f"{reserved[segments.column]}; a segment column "
                                            "must have no other role")
    _check_overrides(source, characteristics, reserved)
    _check_keep(source, selection, characteristics, reserved)
    engine = top.get("engine")
    config = Config(
        data=data,
        name=name,
        samples=samples,
        binning=_read_binning(source, top.get("binning")),
        characteristics=characteristics,
        selection=selection,
        scaling=ScalingConfig(**v.section(source, ("scaling",), top.get("scaling"),
                                         _SCALING_SCHEMA)),
        output=_read_output(source, top.get("output"), base),
        engine=EngineConfig() if engine is None else _engine(source, ("engine",), engine),
        scoring=ScoringConfig(**v.section(source, ("scoring",), top.get("scoring"),
                                         _SCORING_SCHEMA)),
        evaluation=EvaluationConfig(**v.section(source, ("evaluation",), top.get("evaluation"),
                                               _EVALUATION_SCHEMA)),
        stability=_read_stability(source, top.get("stability")),
        fairness=FairnessConfig(**v.section(source, ("fairness",), top.get("fairness"),
                                           _FAIRNESS_SCHEMA)),
        grades=_read_grades(source, top.get("grades")),
        rejects=_read_rejects(source, top.get("rejects"), base),
        segments=segments,
        config_file=source.file,
        key_lines=FrozenMapping((display(path), line) for path, line in source.lines.items()
                                if path),
    )
    _refuse_dask_query(source, config)
    return config


def _resolve(base: Path, written: str | Path) -> Path:
    return base / Path(written).expanduser()


def _read_data(source: Source, node: yaml.Node | None, base: Path) -> DataConfig:
    values = v.section(source, ("data",), node, _DATA_SCHEMA)
    v.require(source, ("data",), values, ("source", "target", "bad", "good"))
    data = DataConfig(**{**values, "source": resolve_source(base, values["source"])})
    _refuse_file_settings(source, ("data",), values)
    _refuse_shared(source, ("data", "good"), data.good, data.bad, "data.bad")
    _refuse_shared(source, ("data", "protected"), data.protected, data.ignore, "data.ignore")
    _refuse_shared(source, ("data", "ignore"), data.ignore, (data.target,), "data.target")
    _refuse_shared(source, ("data", "protected"), data.protected, (data.target,), "data.target")
    if data.weight is not None and data.weight == data.target:
        source.fail(("data", "weight"), f"'{data.weight}' is also data.target; "
                                        "the weight must be another column")
    return data


def _refuse_file_settings(source: Source, path: tuple, values: dict) -> None:
    """A database query has no encoding, delimiter, decimal mark or sheet: refuse them with it."""
    if not is_query(values["source"]):
        return
    for key in FILE_SETTINGS:
        if key in values:
            source.fail(path + (key,), f"applies to a data file; {display(path + ('source',))} "
                                       "is a database query")


def _refuse_shared(source: Source, path: tuple, values: tuple, others: tuple, where: str) -> None:
    # Equality as in Python: 1, 1.0 and true are one value, as they are when rows are matched.
    for index, value in enumerate(values):
        if value in others:
            source.fail(path + (index,), f"'{value}' is also in {where}")


def _read_samples(source: Source, node: yaml.Node | None) -> SamplesConfig:
    samples = SamplesConfig(**v.section(source, ("samples",), node, _SAMPLES_SCHEMA))
    if samples.holdout is None and samples.out_of_time is None:
        warnings.warn(
            message(source.file, "samples", "no holdout and no out-of-time sample; every figure "
                                             "will come from the rows the model was fitted on"),
            UserWarning,
            stacklevel=2,
        )
    return samples


def _read_binning(source: Source, node: yaml.Node | None) -> BinningConfig:
    values = v.section(source, ("binning",), node, _BINNING_SCHEMA, _RENAMED_KEYS)
    binning = BinningConfig(**values)
    if binning.choose_max_bins and "max_bins" in values:
        source.fail(("binning", "max_bins"), "leave it out with choose_max_bins: true (each "
                    "characteristic's limit is then chosen from 2 to "
                    f"{c.CHOSEN_BINS_UP_TO.default})")
    if not binning.choose_max_bins and binning.fine_bins < binning.max_bins:
        key = "fine_bins" if "fine_bins" in values else "max_bins"
        source.fail(("binning", key), f"fine_bins ({binning.fine_bins}) must be at least "
                                      f"max_bins ({binning.max_bins})")
    return binning


def _read_characteristics(source: Source, node: yaml.Node | None
                          ) -> FrozenMapping[str, CharacteristicOverride]:
    found = source.mapping(("characteristics",), node)
    return FrozenMapping(
        (name, _read_override(source, ("characteristics", name), value))
        for name, value in found.items()
    )


def _read_override(source: Source, path: tuple, node: yaml.Node) -> CharacteristicOverride:
    values = v.section(source, path, node, _OVERRIDE_SCHEMA, _RENAMED_KEYS)
    cuts, groups, kind = values.get("cuts"), values.get("groups"), values.get("kind")
    if cuts is not None and groups is not None:
        source.fail(path + ("groups",), "cannot be given with cuts: cuts class a numeric "
                                        "characteristic, groups a categorical one")
    if cuts is not None and kind == "categorical":
        source.fail(path + ("cuts",), "class numeric characteristics, but kind is categorical")
    if groups is not None and kind == "numeric":
        source.fail(path + ("groups",), "class categorical characteristics, but kind is numeric")
    if groups is not None:
        _check_groups(source, path + ("groups",), groups)
    implied = "numeric" if cuts is not None else "categorical" if groups is not None else None
    return CharacteristicOverride(**{**values, "kind": kind or implied})


def _check_groups(source: Source, path: tuple, groups: tuple[tuple[str, ...], ...]) -> None:
    first_at: dict[str, tuple] = {}
    for group_index, group in enumerate(groups):
        for level_index, level in enumerate(group):
            where = path + (group_index, level_index)
            if level in first_at:
                source.fail(where, f"level '{shorten(level)}' is already listed at "
                                   f"{display(first_at[level])}")
            first_at[level] = where


def _reserved_columns(data: DataConfig, samples: SamplesConfig, segments=None) -> dict[str, str]:
    """Columns that can never be characteristics, each with the key that reserves it."""
    reserved = {} if segments is None else {segments.column: "segments.column"}
    reserved.update({column: "data.protected" for column in data.protected})
    reserved.update({column: "data.ignore" for column in data.ignore})
    if samples.out_of_time is not None:
        reserved[samples.out_of_time.column] = "samples.out_of_time.column"
    if data.weight is not None:
        reserved[data.weight] = "data.weight"
    reserved[data.target] = "data.target"
    return reserved


def _check_overrides(source: Source, characteristics: Mapping[str, CharacteristicOverride],
                     reserved: dict[str, str]) -> None:
    for name in characteristics:
        if name in reserved:
            source.fail(("characteristics", name),
                        f"'{name}' is named in {reserved[name]}, so it is never a characteristic")


def _check_keep(source: Source, selection: SelectionConfig,
                characteristics: Mapping[str, CharacteristicOverride],
                reserved: dict[str, str]) -> None:
    path = ("selection", "keep")
    for index, column in enumerate(selection.keep):
        if column in reserved:
            source.fail(path + (index,), f"'{column}' is named in {reserved[column]}, "
                                         "so it cannot be forced in")
        if column in characteristics and not characteristics[column].use:
            source.fail(path + (index,), f"'{column}' has use: false under characteristics, "
                                         "so it cannot be forced in")
    if len(selection.keep) > selection.max_characteristics:
        source.fail(path, f"forces in {len(selection.keep)} characteristics, more than "
                          f"selection.max_characteristics ({selection.max_characteristics})")


def _read_output(source: Source, node: yaml.Node | None, base: Path) -> OutputConfig:
    values = v.section(source, ("output",), node, _OUTPUT_SCHEMA)
    defaults = OutputConfig()
    output = OutputConfig(
        workbook=_resolve(base, values.get("workbook", defaults.workbook)),
        model=_resolve(base, values.get("model", defaults.model)),
    )
    if output.workbook == output.model:
        source.fail(("output", "model"), "is the same file as output.workbook")
    return output


def _read_stability(source: Source, node: yaml.Node | None) -> StabilityConfig:
    values = v.section(source, ("stability",), node, _STABILITY_SCHEMA)
    stability = StabilityConfig(**values)
    if not c.cutoffs_in_order(stability.watch, stability.shift):
        key = "shift" if "shift" in values else "watch"
        source.fail(("stability", key), f"watch ({stability.watch:g}) must be below "
                                        f"shift ({stability.shift:g})")
    return stability


def _read_grades(source: Source, node: yaml.Node | None) -> GradesConfig | None:
    """The grades section, or None when absent: exactly one of count and edges."""
    if node is None or is_null(node):
        return None
    values = v.section(source, ("grades",), node, _GRADES_SCHEMA)
    if ("count" in values) == ("edges" in values):
        if "edges" in values:
            source.fail(("grades", "edges"), "give either count (a number of grades) or edges "
                                             "(the scores that start each grade), not both")
        source.fail(("grades", "count"), "is required: a number of grades (or give edges)")
    return GradesConfig(**values)


_REJECTS_SCHEMA = {
    "source": source_value("rejects.source"), "method": v.choice(REJECT_METHODS),
    "bands": v.whole(c.Interval(2)),
    "uplift": v.number(c.Interval(0, low_open=True)), "seed": v.optional(v.whole(c.Interval(0))),
    "cutoff": v.optional(v.finite),
    "reject_bad_rate": v.optional(v.number(c.Interval(0, 1, low_open=True, high_open=True))),
    "known_outcome": v.optional(v.text), "encoding": v.encoding, "delimiter": v.delimiter,
}


def _read_rejects(source: Source, node: yaml.Node | None, base: Path) -> RejectsConfig | None:
    """The rejects section, or None when absent; a setting of another method is refused."""
    if node is None or is_null(node):
        return None
    path = ("rejects",)
    values = v.section(source, path, node, _REJECTS_SCHEMA)
    v.require(source, path, values, ("source",))
    method = values.get("method", "fuzzy")
    for key in values:
        if key in METHOD_SETTINGS["parcelling"] + METHOD_SETTINGS["hard_cutoff"] \
                and key not in METHOD_SETTINGS[method]:
            users = [m for m, keys in METHOD_SETTINGS.items() if key in keys]
            source.fail(path + (key,), f"applies to method {' and '.join(users)} only, "
                                       f"not {method}")
    if values.get("cutoff") is not None and values.get("reject_bad_rate") is not None:
        source.fail(path + ("reject_bad_rate",), "cannot be given with cutoff: give the score "
                                                 "or the bad rate that sets it")
    _refuse_file_settings(source, path, values)
    return RejectsConfig(**{**values, "source": resolve_source(base, values["source"])})
