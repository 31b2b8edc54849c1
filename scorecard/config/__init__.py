"""The YAML config of a build: its schema, safe loading and every rule.

``load_config(path)`` returns plain frozen objects; every problem is one
:class:`scorecard.errors.InputError` naming the file, key path and line.

Modules, one idea each: ``schema`` (the config objects), ``safe_yaml`` (reading the text and
the checks against hostile YAML), ``nodes`` and ``values`` (reading values from YAML nodes),
``reading`` (the sections and the rules across keys), ``columns`` (columns named against the
data), ``messages`` (one-line errors) and ``loading`` (the entry points). Defaults and limits
shared with the algorithms are declared in :mod:`scorecard.constraints`.
"""

from scorecard.config.columns import check_columns
from scorecard.config.loading import load_config, parse_config
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
    RejectsConfig,
    SamplesConfig,
    ScalingConfig,
    ScoringConfig,
    SelectionConfig,
    StabilityConfig,
)

__all__ = [
    "BinningConfig",
    "CharacteristicOverride",
    "Config",
    "DataConfig",
    "EngineConfig",
    "EvaluationConfig",
    "FairnessConfig",
    "FrozenMapping",
    "GradesConfig",
    "OutOfTime",
    "OutputConfig",
    "SamplesConfig",
    "RejectsConfig",
    "ScalingConfig",
    "ScoringConfig",
    "SelectionConfig",
    "StabilityConfig",
    "check_columns",
    "load_config",
    "parse_config",
]
