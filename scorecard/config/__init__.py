"""The YAML config of a build: its schema, safe loading and every rule.

``load_config(path)`` returns plain frozen objects; every problem is one
:class:`scorecard.errors.InputError` naming the file, key path and line.
"""

from scorecard.config.loading import (
    BinningConfig,
    CharacteristicOverride,
    Config,
    DataConfig,
    EngineConfig,
    EvaluationConfig,
    FairnessConfig,
    FrozenMapping,
    OutOfTime,
    OutputConfig,
    SamplesConfig,
    RejectsConfig,
    ScalingConfig,
    ScoringConfig,
    SelectionConfig,
    StabilityConfig,
    check_columns,
    load_config,
    parse_config,
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
