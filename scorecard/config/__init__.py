"""The YAML config of a build: its schema, safe loading and every rule.

``load_config(path)`` returns plain frozen objects; every problem is one
:class:`scorecard.errors.InputError` naming the file, key path and line.

Modules, one idea each: ``schema`` (the config objects), ``safe_yaml`` (reading the text and
the checks against hostile YAML), ``nodes`` and ``values`` (reading values from YAML nodes),
``reading`` (the sections and the rules across keys), ``columns`` (columns named against the
data), ``messages`` (one-line errors) and ``loading`` (the entry points). Defaults and limits
shared with the algorithms are declared in :mod:`scorecard.constraints`.
"""

import importlib

# Where each public name lives. The names are looked up on first use (PEP 562), so importing one
# module of the package (the exclusion rules a model file records, say) does not read the
# whole config machinery and YAML with it: ``scorecard score`` starts faster.
_HOMES = {"check_columns": "columns", "load_config": "loading", "parse_config": "loading"}


def __getattr__(name: str):
    if name not in __all__:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    module = importlib.import_module(f"{__name__}.{_HOMES.get(name, 'schema')}")
    return getattr(module, name)


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
