"""One exclusion rule: a column, one condition, a reason; how the model file stores it.

The rule object alone, without the YAML reader of ``data.exclude``
(:mod:`scorecard.config.exclusions`): a model file records its rules, and scoring reads them
without loading the config machinery.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Union

from scorecard.constraints import EXCLUSION_CONDITIONS

__all__ = ["ExclusionRule", "ListedValue"]

ListedValue = Union[str, int, float, bool]


@dataclass(frozen=True, slots=True)
class ExclusionRule:
    """One rule of ``data.exclude``.

    Attributes
    ----------
    column : str
        The column the rule looks at.
    condition : str
        ``in``, ``below``, ``at_least`` or ``missing``.
    value : tuple or float or bool
        The listed values (``in``: matched as outcome values are), the bound (``below``,
        ``at_least``) or True (``missing``).
    reason : str
        Why such rows do not belong in the build, as the waterfall and scored files show it.

    Examples
    --------
    >>> rule = ExclusionRule("applicant_is_staff", "in", ("yes",), "Staff application")
    >>> rule.describe()
    'applicant_is_staff in [yes]'
    >>> ExclusionRule.from_record(rule.record()) == rule
    True
    """

    column: str
    condition: str
    value: tuple[ListedValue, ...] | float | bool
    reason: str

    def describe(self) -> str:
        """The rule in the words of the config: ``'deposit_share below 0.05'``."""
        if self.condition == "in":
            return f"{self.column} in [{', '.join(map(_shown, self.value))}]"
        if self.condition == "missing":
            return f"{self.column} missing"
        return f"{self.column} {self.condition.replace('_', ' ')} {self.value:g}"

    def record(self) -> dict:
        """The rule as the model file stores it: the config's own keys."""
        value = list(self.value) if self.condition == "in" else self.value
        return {"column": self.column, self.condition: value, "reason": self.reason}

    @classmethod
    def from_record(cls, raw: dict) -> "ExclusionRule":
        """The rule from :meth:`record`; ValueError when it is not one."""
        if not isinstance(raw, dict):
            raise ValueError(f"an exclusion rule must be an object, not {raw!r}")
        conditions = [key for key in raw if key in EXCLUSION_CONDITIONS]
        column, reason = raw.get("column"), raw.get("reason")
        if len(conditions) != 1 or set(raw) != {"column", "reason", *conditions} \
                or not isinstance(column, str) or not isinstance(reason, str):
            raise ValueError(f"malformed exclusion rule {raw!r}")
        condition = conditions[0]
        value = raw[condition]
        if condition == "in" and isinstance(value, list):
            value = tuple(value)
        elif condition in ("below", "at_least") and not isinstance(value, bool) \
                and isinstance(value, (int, float)):
            value = float(value)
        elif not (condition == "missing" and value is True):
            raise ValueError(f"malformed exclusion rule {raw!r}")
        return cls(column, condition, value, reason)


def _shown(value: ListedValue) -> str:
    # An unquoted yes or no in the config stands for every spelling of it, as in data.good.
    if isinstance(value, bool):
        return "yes" if value else "no"
    return f"{value:g}" if isinstance(value, float) else str(value)
