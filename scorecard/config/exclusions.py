"""The ``data.exclude`` list: rules that keep rows out of a build, each with its reason.

A rule names one column and one condition from :data:`scorecard.constraints.EXCLUSION_CONDITIONS`
(the value is one of a list, below a bound, at least a bound, or missing) and says why in
plain words. Rules are data, never code: nothing in a config is evaluated. The rows a rule
catches are counted in the build's exclusion waterfall; the model file records the rules, so
that scoring can name them (:mod:`scorecard.data.exclusions` evaluates them on rows).
"""

from __future__ import annotations

import yaml

from scorecard.config import values as v
from scorecard.config.exclusion_rule import ExclusionRule
from scorecard.config.messages import shorten
from scorecard.config.nodes import Source
from scorecard.constraints import EXCLUSION_CONDITIONS

__all__ = ["ExclusionRule", "read_exclusions"]


def _listed(source: Source, path: tuple, node: yaml.Node) -> tuple:
    return v.list_of(v.outcome_value, unique=True, nonempty=True)(source, path, node)


def _true(source: Source, path: tuple, node: yaml.Node) -> bool:
    if not v.flag(source, path, node):
        source.fail(path, "must be true (a rule catches rows whose value is missing); "
                          "leave the rule out to keep them")
    return True


_READERS = {"in": _listed, "below": v.finite, "at_least": v.finite, "missing": _true}
_RULE_SCHEMA = {"column": v.text, **_READERS, "reason": v.text}


def read_exclusions(source: Source, path: tuple, node: yaml.Node) -> tuple[ExclusionRule, ...]:
    """The rules of a ``data.exclude`` list, each checked: a column, one condition, a reason.

    Examples
    --------
    >>> rules = read_exclusions(Source("lease.yaml"), ("data", "exclude"), yaml.compose(
    ...     "[{column: deposit_share, below: 0.05, reason: No deposit taken}]"))
    >>> rules[0].describe()
    'deposit_share below 0.05'
    >>> read_exclusions(Source("lease.yaml"), ("data", "exclude"), yaml.compose(
    ...     "[{column: age, below: 18, at_least: 90, reason: Out of range}]"))
    Traceback (most recent call last):
    ...
    scorecard.errors.InputError: lease.yaml: data.exclude[0].at_least: a rule has one condition; it already has below (give a second rule instead) (line 1)
    """
    rules = []
    for rule_path, rule_node in source.items(path, node):
        values = v.section(source, rule_path, rule_node, _RULE_SCHEMA)
        conditions = [key for key in values if key in _READERS]
        if len(conditions) > 1:
            source.fail(rule_path + (conditions[1],), f"a rule has one condition; it already "
                                                      f"has {conditions[0]} (give a second rule "
                                                      "instead)")
        v.require(source, rule_path, values, ("column",))
        if not conditions:
            source.fail(rule_path, "needs one condition: " + ", ".join(EXCLUSION_CONDITIONS))
        v.require(source, rule_path, values, ("reason",))
        if not values["reason"].strip():
            source.fail(rule_path + ("reason",), "must say why the rows are excluded, got "
                                                 f"'{shorten(values['reason'])}'")
        condition = conditions[0]
        rules.append(ExclusionRule(values["column"], condition, values[condition],
                                   values["reason"].strip()))
    return tuple(rules)
