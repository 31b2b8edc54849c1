"""Settings are declared once: the config and the algorithms share defaults and limits."""

import dataclasses
import inspect
import warnings

import numpy as np
import pytest

from scorecard import constraints
from scorecard.binning.optimal import optimal_bins
from scorecard.config import (
    BinningConfig,
    SelectionConfig,
    StabilityConfig,
    parse_config,
)
from scorecard.errors import InputError
from scorecard.evaluation.stability import characteristic_stability, score_stability
from scorecard.fit.selection import select_characteristics
from scorecard.measures.stability import stability_status

MINIMAL = "data: {source: x.csv, target: y, bad: [1], good: [0]}\n"


def _defaults(function) -> dict:
    return {name: p.default for name, p in inspect.signature(function).parameters.items()
            if p.default is not inspect.Parameter.empty}


def _config_defaults(cls) -> dict:
    return {f.name: f.default for f in dataclasses.fields(cls)}


def test_selection_defaults_are_the_config_defaults():
    function, config = _defaults(select_characteristics), _config_defaults(SelectionConfig)
    shared = set(function) & set(config) - {"keep"}
    assert shared == {"min_iv", "max_correlation", "max_vif", "method", "entry", "entry_p_value",
                      "max_characteristics"}
    assert {k: function[k] for k in shared} == {k: config[k] for k in shared}


def test_binning_and_stability_defaults_are_the_config_defaults():
    optimal, binning = _defaults(optimal_bins), _config_defaults(BinningConfig)
    assert (optimal["trend"], optimal["max_bins"]) == (binning["trend"], binning["max_bins"])
    stability = _config_defaults(StabilityConfig)
    for function in (stability_status, score_stability, characteristic_stability):
        found = _defaults(function)
        assert (found["watch"], found["shift"]) == (stability["watch"], stability["shift"])
    # Common practice: PSI below 0.10 stable, 0.10 to 0.25 watch, 0.25 and above a shift.
    assert (stability["watch"], stability["shift"]) == (0.10, 0.25)


def _selection_refuses(**setting) -> bool:
    rng = np.random.default_rng(0)
    X = rng.normal(size=(40, 2))
    goods = rng.integers(1, 5, size=40).astype(float)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", UserWarning)  # noise columns: nothing may be selected
            select_characteristics(X, goods, 5 - goods, ["a", "b"], [0.3, 0.2], **setting)
    except InputError:
        return True
    return False


def _config_refuses(section: str, key: str, value) -> bool:
    try:
        parse_config(MINIMAL + f"{section}: {{{key}: {value}}}\n", "c.yaml")
    except InputError:
        return True
    return False


@pytest.mark.parametrize("key, value", [
    ("max_vif", 1), ("max_vif", 1.0001), ("min_iv", 0), ("min_iv", -0.01),
    ("max_correlation", 1), ("max_correlation", 0), ("entry_p_value", 1),
    ("entry_p_value", 0), ("max_characteristics", 1), ("max_characteristics", 0),
    ("method", "all"), ("method", "backward"),
])
def test_selection_and_config_refuse_the_same_values(key, value):
    assert _selection_refuses(**{key: value}) == _config_refuses("selection", key, value)


def test_a_vif_ceiling_of_one_is_refused_everywhere():
    # A VIF is at least 1 by definition, so a ceiling of 1 would drop every correlated column.
    assert _selection_refuses(max_vif=1.0) and _config_refuses("selection", "max_vif", 1)
    assert not _selection_refuses(max_vif=1.5) and not _config_refuses("selection", "max_vif", 1.5)


@pytest.mark.parametrize("trend", constraints.TRENDS + ("ascending", "auto"))
def test_optimal_and_config_take_the_same_trend_words(trend):
    try:
        optimal_bins([40, 30, 20], [2, 3, 5], trend=trend)
        optimal_refuses = False
    except InputError:
        optimal_refuses = True
    assert optimal_refuses == _config_refuses("binning", "trend", trend)
    assert optimal_refuses == (trend not in ("detect", "rises", "falls", "any"))


@pytest.mark.parametrize("watch, shift", [(0.1, 0.25), (0.2, 0.2), (0.3, 0.2)])
def test_stability_cutoffs_are_checked_alike(watch, shift):
    try:
        stability_status(0.05, watch=watch, shift=shift)
        measure_refuses = False
    except ValueError:
        measure_refuses = True
    try:
        parse_config(MINIMAL + f"stability: {{watch: {watch}, shift: {shift}}}\n", "c.yaml")
        config_refuses = False
    except InputError:
        config_refuses = True
    assert measure_refuses == config_refuses == (watch >= shift)
