"""Exclusion rules on rows: which rule, if any, catches each row, and the waterfall of counts.

A build evaluates the rules of ``data.exclude`` chunk by chunk inside its outcome pass
(:func:`first_rule`, vectorised per rule, never per row), so the local and Dask engines see the
same rows caught; the rows a rule catches leave the build before any count is taken. What the
reviewer sees is a small table, :class:`Waterfall`: rows read, the rows each rule removes in
order, the rows whose outcome is neither good nor bad, and the rows used. Scoring evaluates
the same rules with the same function when asked to.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scorecard.config.exclusion_rule import ExclusionRule
from scorecard.data.coding import level_codes, missing_values, number_label, numeric_values
from scorecard.data.outcome import matching_levels
from scorecard.errors import InputError

__all__ = ["DeclinedRows", "ExclusionStep", "Waterfall", "declined_rows", "exclusion_waterfall",
           "first_rule", "rule_mask"]


def rule_mask(series, rule: ExclusionRule) -> np.ndarray:
    """True for each value of ``series`` (a pandas Series or an Arrow array) that ``rule``
    catches.

    ``in`` matches levels as ``data.good`` and ``data.bad`` do, and a number by its value
    whether the column holds it as a number or as text (``"1.0"`` is ``1``); ``below`` and
    ``at_least`` compare numbers, a missing value being neither; ``missing`` catches empty
    values. A bound on a text column is an InputError naming the column and the first row.

    Examples
    --------
    >>> import pandas as pd
    >>> rule_mask(pd.Series([0.0, 0.1, None]), ExclusionRule("deposit", "below", 0.05, "none"))
    array([ True, False, False])
    >>> rule_mask(pd.Series(["yes", "No", "1.0"]), ExclusionRule("staff", "in", (True, 1), "staff"))
    array([ True, False,  True])
    """
    if rule.condition == "missing":
        return missing_values(series)
    if rule.condition in ("below", "at_least"):
        try:
            x = numeric_values(series, rule.column)
        except InputError as exc:
            raise InputError(f"{exc} (data.exclude: '{rule.describe()}' compares it with a "
                             "number)") from None
        with np.errstate(invalid="ignore"):
            return x < rule.value if rule.condition == "below" else x >= rule.value
    # Work on the distinct levels, then look every row's level up: no Python per row.
    labels, codes = level_codes(series)
    numeric = [number_label(label) or label for label in labels]
    hit = matching_levels(labels, rule.value) | matching_levels(numeric, rule.value)
    # Code -1 (missing) takes the False appended at the end.
    return np.append(hit, False)[codes]


def first_rule(frame, rules) -> np.ndarray:
    """Number (from 1) of the first rule each row meets, or 0 where none does.

    ``frame`` is a pandas DataFrame or an Arrow record batch.

    Rule order matters: a row that several rules catch counts against the first.

    Examples
    --------
    >>> rules = (ExclusionRule("x", "below", 0, "negative"), ExclusionRule("x", "missing", True,
    ...          "blank"), ExclusionRule("x", "at_least", -5, "large"))
    >>> import pandas as pd
    >>> first_rule(pd.DataFrame({"x": [-1.0, None, 3.0]}), rules).tolist()
    [1, 2, 3]
    """
    caught = np.zeros(len(frame), dtype=np.int16)
    # Last rule first, so that each earlier rule overwrites: the first rule met wins.
    for number in range(len(rules), 0, -1):
        caught[rule_mask(frame[rules[number - 1].column], rules[number - 1])] = number
    return caught


@dataclass(frozen=True)
class ExclusionStep:
    """One rule's line of the waterfall: the rows it removed and the rows left after it."""

    rule: str
    reason: str
    removed: int
    left: int


@dataclass(frozen=True)
class DeclinedRows:
    """The declined applications' own lines: rows read, and removed by each rule in order."""

    rows_read: int
    steps: tuple[ExclusionStep, ...]

    @property
    def left(self) -> int:
        return self.rows_read - sum(step.removed for step in self.steps)


@dataclass(frozen=True)
class Waterfall:
    """Rows read, removed by each rule in order, with another outcome, and used.

    ``used`` holds (sample, rows) pairs; every row read is in exactly one line. ``declined``,
    when reject inference ran under exclusion rules, holds the declined applications' lines.
    """

    rows_read: int
    steps: tuple[ExclusionStep, ...]
    other_outcome: int
    used: tuple[tuple[str, int], ...]
    declined: DeclinedRows | None = None

    @property
    def rows_used(self) -> int:
        return sum(rows for _, rows in self.used)

    @property
    def excluded(self) -> int:
        """Rows removed by the rules, all together."""
        return sum(step.removed for step in self.steps)

    def frame(self):
        """The waterfall as the Overview shows it (a DataFrame): Step, Reason, Rows removed,
        Rows left."""
        import pandas as pd
        left_by_rules = self.rows_read - self.excluded
        samples = " + ".join(name for name, _ in self.used)
        lines = [("Rows read", "", None, self.rows_read)]
        lines += [(f"Rule {i}: {s.rule}", s.reason, s.removed, s.left)
                  for i, s in enumerate(self.steps, start=1)]
        lines += [("Outcome neither good nor bad", "not in data.good or data.bad",
                   self.other_outcome, left_by_rules - self.other_outcome),
                  (f"Rows used ({samples})",
                   "; ".join(f"{name} {rows:,}" for name, rows in self.used), None,
                   self.rows_used)]
        if self.declined is not None:
            d = self.declined
            lines += [("Declined applications read", "rejects.source", None, d.rows_read)]
            lines += [(f"Declined, rule {i}: {s.rule}", s.reason, s.removed, s.left)
                      for i, s in enumerate(d.steps, start=1)]
            lines += [("Declined applications left for reject inference", "", None, d.left)]
        frame = pd.DataFrame(lines, columns=["Step", "Reason", "Rows removed", "Rows left"])
        frame["Rows removed"] = frame["Rows removed"].astype("Int64")
        return frame


def _steps(rules, caught: np.ndarray) -> tuple[ExclusionStep, ...]:
    removed = np.bincount(caught, minlength=len(rules) + 1)[1:]
    left = len(caught) - np.cumsum(removed)
    return tuple(ExclusionStep(rule.describe(), rule.reason, int(r), int(n))
                 for rule, r, n in zip(rules, removed, left))


def declined_rows(rules, caught: np.ndarray) -> DeclinedRows:
    """The declined applications' lines from the rule number of every declined row read.

    Examples
    --------
    >>> d = declined_rows([ExclusionRule("x", "missing", True, "blank")], np.array([0, 1, 1]))
    >>> d.rows_read, [(s.removed, s.left) for s in d.steps], d.left
    (3, [(2, 1)], 1)
    """
    return DeclinedRows(len(caught), _steps(rules, caught))


def exclusion_waterfall(rules, caught: np.ndarray, other_outcome: int,
                        used: dict[str, int]) -> Waterfall:
    """The waterfall from the rule number of every row and the rows left in each sample.

    Parameters
    ----------
    rules : sequence of ExclusionRule
    caught : ndarray of int
        :func:`first_rule` of every row read (0: no rule).
    other_outcome : int
        Rows no rule caught whose outcome is neither good nor bad.
    used : dict
        Rows of each sample (development, holdout, out of time).

    Examples
    --------
    >>> w = exclusion_waterfall([ExclusionRule("x", "missing", True, "blank")],
    ...                         np.array([0, 1, 0, 0]), 1, {"development": 2})
    >>> [(s.removed, s.left) for s in w.steps], w.other_outcome, w.rows_used
    ([(1, 3)], 1, 2)
    """
    waterfall = Waterfall(len(caught), _steps(rules, caught), int(other_outcome),
                          tuple((name, int(rows)) for name, rows in used.items()))
    if waterfall.rows_read != waterfall.excluded + waterfall.other_outcome + waterfall.rows_used:
        raise ValueError("the exclusion waterfall does not add up to the rows read")
    return waterfall
