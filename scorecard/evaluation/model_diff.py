"""What changed between two builds of a scorecard, from their model files alone.

Reported, in this order: scaling parameters that changed; characteristics that entered or
left the model (with the stage and reason the newer build recorded); for every characteristic
in both, whether its bins' rules (cuts, sentinels, groups of levels, refusals) changed,
the points of every attribute whose points changed, and the information value before and
after; the AUC, Gini and KS of each sample both builds measured.

Attributes are matched by their rule, not their position, so a moved cut names exactly the
bins on either side of it. A change of coefficients alone shows only as changed points, one line
per characteristic, never as coefficient noise.

Two segmented models (:func:`diff_models`) are compared segment by segment, cards matched by
segment name: first the rule that picks a card (its column, and each segment's levels or the
cuts), then the segments that entered or left, then, for every segment in both, the lines of
its two cards' diff, each prefixed ``segment <name>:``. A segmented model against a single card
has no card to match the single card with, so it is refused with one error line (``challenge``
compares the two on data instead).
"""

from __future__ import annotations

import json
import math
from typing import NamedTuple

from scorecard.card.scorecard import Bin, Characteristic, Scorecard
from scorecard.card.segmented import SegmentedScorecard
from scorecard.errors import InputError

# Information values and measures closer than this read as unchanged (they are printed to 4
# decimals; a difference below it is rounding, not an edit).
TOLERANCE = 5e-5
MEASURES = ("auc", "gini", "ks")


class AttributeChange(NamedTuple):
    """Points of one attribute before and after; None where the attribute does not exist."""

    attribute: str
    points_before: int | None
    points_after: int | None


class CharacteristicChange(NamedTuple):
    """One characteristic in both models that changed."""

    name: str
    rules_changed: bool
    rules_before: str
    rules_after: str
    attributes: tuple[AttributeChange, ...]
    information_value_before: float
    information_value_after: float


class Membership(NamedTuple):
    """A characteristic that entered or left, with the newer build's stage and reason."""

    name: str
    stage: str
    reason: str


class ModelDiff(NamedTuple):
    """The difference between an older and a newer scorecard (see the module docstring)."""

    scaling: dict                 # parameter -> (before, after)
    entered: tuple[Membership, ...]
    left: tuple[Membership, ...]
    changed: tuple[CharacteristicChange, ...]
    performance: dict             # sample -> {measure: (before, after)}

    @property
    def empty(self) -> bool:
        return not (self.scaling or self.entered or self.left or self.changed
                    or self.performance)

    def lines(self) -> list[str]:
        """One line per change, for a terminal."""
        out = [f"scaling {k}: {_num(a)} -> {_num(b)}" for k, (a, b) in self.scaling.items()]
        out += [f"entered: {m.name} ({m.stage}: {m.reason})" for m in self.entered]
        out += [f"left: {m.name} ({m.stage}: {m.reason})" for m in self.left]
        for c in self.changed:
            iv = (f"; information value {c.information_value_before:.4f} -> "
                  f"{c.information_value_after:.4f}"
                  if _differs(c.information_value_before, c.information_value_after) else "")
            if c.rules_changed:
                out.append(f"{c.name}: bins {c.rules_before} -> {c.rules_after}{iv}")
                out += [f"{c.name}: {a.attribute}: {_points(a.points_before)} -> "
                        f"{_points(a.points_after)}" for a in c.attributes]
            else:
                moved = ", ".join(f"{a.attribute} {a.points_before} -> {a.points_after}"
                                  for a in c.attributes)
                out.append(f"{c.name}: points {moved}{iv}" if moved else f"{c.name}:{iv[1:]}")
        for sample, measures in self.performance.items():
            parts = ", ".join(f"{k.upper() if k != 'gini' else 'Gini'} {a:.4f} -> {b:.4f}"
                              for k, (a, b) in measures.items())
            out.append(f"{sample}: {parts}")
        return out

    def text(self) -> str:
        return "\n".join(self.lines()) if not self.empty else "no changes"

    def to_dict(self) -> dict:
        return {
            "scaling": {k: {"before": a, "after": b} for k, (a, b) in self.scaling.items()},
            "entered": [m._asdict() for m in self.entered],
            "left": [m._asdict() for m in self.left],
            "changed": [{"characteristic": c.name, "bins_changed": c.rules_changed,
                         "bins_before": c.rules_before, "bins_after": c.rules_after,
                         "information_value": {"before": c.information_value_before,
                                               "after": c.information_value_after},
                         "attributes": [a._asdict() for a in c.attributes]}
                        for c in self.changed],
            "performance": {s: {k: {"before": a, "after": b} for k, (a, b) in m.items()}
                            for s, m in self.performance.items()},
        }

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=1, allow_nan=False) + "\n"


def _num(value) -> str:
    return f"{value:g}" if isinstance(value, (int, float)) else str(value)


def _points(value) -> str:
    return "absent" if value is None else f"{value} points"


def _differs(a, b) -> bool:
    if a is None or b is None:
        return (a is None) != (b is None)
    if math.isnan(a) or math.isnan(b):
        return math.isnan(a) != math.isnan(b)
    return abs(a - b) > TOLERANCE


def _rule(b: Bin) -> tuple:
    """What decides which rows fall in a bin (its counts, WoE and points aside)."""
    return (b.kind, b.lower, b.upper, b.value, tuple(sorted(b.levels)), b.rejected)


def _rules_text(c: Characteristic) -> str:
    if c.kind == "numeric":
        parts = ["cuts " + (", ".join(f"{x:g}" for x in c.cuts) or "none")]
        if c.sentinels:
            parts.append("sentinels " + ", ".join(f"{x:g}" for x in c.sentinels))
    else:
        groups = [b for b in c.bins if b.levels]
        parts = ["groups " + " | ".join(", ".join(b.levels) for b in groups)]
    refused = [b.label for b in c.bins if b.rejected]
    if refused:
        parts.append("refused " + ", ".join(refused))
    return "; ".join(parts)


def _characteristic_change(old: Characteristic, new: Characteristic):
    before = {_rule(b): b for b in old.bins}
    after = {_rule(b): b for b in new.bins}
    rules_changed = list(before) != list(after)
    attributes = []
    for key, b in before.items():
        a = after.get(key)
        if a is None:
            attributes.append(AttributeChange(b.label, b.points, None))
        elif a.points != b.points:
            attributes.append(AttributeChange(a.label, b.points, a.points))
    attributes += [AttributeChange(a.label, None, a.points)
                   for key, a in after.items() if key not in before]
    iv_changed = _differs(old.information_value, new.information_value)
    if not (rules_changed or attributes or iv_changed):
        return None
    return CharacteristicChange(new.name, rules_changed, _rules_text(old), _rules_text(new),
                                tuple(attributes), old.information_value, new.information_value)


def _membership(card: Scorecard, name: str) -> Membership:
    fate = next((f for f in card.fates if f.name == name), None)
    if fate is None:
        return Membership(name, "unknown", "not recorded in the newer model file")
    return Membership(name, fate.stage, fate.reason)


def _performance(old: Scorecard, new: Scorecard) -> dict:
    if old.development is None or new.development is None:
        return {}
    out = {}
    for sample, before in old.development.performance.items():
        after = new.development.performance.get(sample)
        if after is None:
            continue
        moved = {k: (before[k], after[k]) for k in MEASURES
                 if k in before and k in after and _differs(before[k], after[k])}
        if moved:
            out[sample] = {k: (before[k], after[k]) for k in MEASURES
                           if k in before and k in after}
    return out


def diff_scorecards(old: Scorecard, new: Scorecard) -> ModelDiff:
    """What changed from ``old`` to ``new``.

    Examples
    --------
    >>> from scorecard.card.scorecard import RANGE
    >>> from scorecard.card.points import scaling
    >>> def card(cut, points):
    ...     b = (Bin("low", RANGE, 60, 40, -0.4, points, upper=cut),
    ...          Bin("high", RANGE, 90, 10, 1.0, 30, lower=cut))
    ...     c = Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(cut,))
    ...     return Scorecard("demo", scaling(600, 50, 20), 0.5, (c,))
    >>> diff_scorecards(card(1.0, 10), card(1.0, 10)).empty
    True
    >>> print(diff_scorecards(card(1.0, 10), card(1.0, 12)).text())
    x: points low 10 -> 12
    """
    scaling = {k: (getattr(old.scaling, k), getattr(new.scaling, k))
               for k in ("base_score", "base_odds", "pdo")
               if getattr(old.scaling, k) != getattr(new.scaling, k)}
    old_chars = {c.name: c for c in old.characteristics}
    new_chars = {c.name: c for c in new.characteristics}
    entered = tuple(_membership(new, n) for n in new_chars if n not in old_chars)
    left = tuple(_membership(new, n) for n in old_chars if n not in new_chars)
    changed = tuple(change for n, c in new_chars.items() if n in old_chars
                    for change in (_characteristic_change(old_chars[n], c),) if change)
    return ModelDiff(scaling, entered, left, changed, _performance(old, new))


class SegmentedDiff(NamedTuple):
    """The difference between two segmented models (see the module docstring).

    ``rule`` maps what changed in the rule (``column``, ``levels <segment>`` or ``cuts``) to
    (before, after); ``entered`` and ``left`` name segments; ``cards`` maps every segment in
    both models to its :class:`ModelDiff`.
    """

    rule: dict
    entered: tuple[str, ...]
    left: tuple[str, ...]
    cards: dict

    @property
    def empty(self) -> bool:
        return not (self.rule or self.entered or self.left) and all(
            d.empty for d in self.cards.values())

    def lines(self) -> list[str]:
        """One line per change, for a terminal."""
        out = [f"segments {k}: {a} -> {b}" for k, (a, b) in self.rule.items()]
        out += [f"segment entered: {name}" for name in self.entered]
        out += [f"segment left: {name}" for name in self.left]
        out += [f"segment {name}: {line}" for name, d in self.cards.items()
                for line in d.lines()]
        return out

    def text(self) -> str:
        return "\n".join(self.lines()) if not self.empty else "no changes"

    def to_dict(self) -> dict:
        return {"segments": {
            "rule": {k: {"before": a, "after": b} for k, (a, b) in self.rule.items()},
            "entered": list(self.entered), "left": list(self.left),
            "cards": {name: d.to_dict() for name, d in self.cards.items()}}}

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=1, allow_nan=False) + "\n"


def _rule_text(rule, name: str) -> str:
    """What a segment takes: its levels, or its range of a numeric column."""
    index = rule.names.index(name)
    if rule.cuts is None:
        return ", ".join(rule.groups[index])
    low, high = rule.bounds(index)
    return " and ".join(part for part in (
        None if low is None else f">= {low:g}", None if high is None else f"< {high:g}") if part) \
        or "every value"


def diff_segmented(old: SegmentedScorecard, new: SegmentedScorecard) -> SegmentedDiff:
    """What changed from ``old`` to ``new``, segment by segment (cards matched by name).

    Examples
    --------
    >>> from scorecard.card.scorecard import RANGE
    >>> from scorecard.card.points import scaling
    >>> from scorecard.card.segmented import SegmentRule
    >>> def card(points):
    ...     b = (Bin("low", RANGE, 60, 40, -0.4, points, upper=1.0),
    ...          Bin("high", RANGE, 90, 10, 1.0, 30, lower=1.0))
    ...     c = Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,))
    ...     return Scorecard("demo", scaling(600, 50, 20), 0.5, (c,))
    >>> rule = SegmentRule("s", ("a", "b"), groups=(("a",), ("b",)))
    >>> old = SegmentedScorecard("demo", rule, (card(10), card(10)))
    >>> wider = SegmentRule("s", ("a", "b"), groups=(("a", "c"), ("b",)))
    >>> print(diff_segmented(old, SegmentedScorecard("demo", wider, (card(10), card(12)))).text())
    segments levels a: a -> a, c
    segment b: x: points low 10 -> 12
    """
    rule = {}
    if old.rule.column != new.rule.column:
        rule["column"] = (old.rule.column, new.rule.column)
    both = [n for n in new.rule.names if n in old.rule.names]
    if old.rule.kind != new.rule.kind or (old.rule.cuts is not None
                                          and old.rule.cuts != new.rule.cuts):
        rule["cuts" if new.rule.cuts is not None else "kind"] = (
            _kind_text(old.rule), _kind_text(new.rule))
    elif old.rule.groups is not None:
        for name in both:
            before, after = _rule_text(old.rule, name), _rule_text(new.rule, name)
            if before != after:
                rule[f"levels {name}"] = (before, after)
    old_cards, new_cards = old.segments, new.segments
    return SegmentedDiff(
        rule, tuple(n for n in new.rule.names if n not in old_cards),
        tuple(n for n in old.rule.names if n not in new_cards),
        {n: diff_scorecards(old_cards[n], new_cards[n]) for n in both})


def _kind_text(rule) -> str:
    if rule.cuts is None:
        return "groups of levels"
    return "cuts " + ", ".join(f"{c:g}" for c in rule.cuts)


def diff_models(old, new, old_source: str = "the older model",
                new_source: str = "the newer model"):
    """:func:`diff_scorecards` of two single cards, :func:`diff_segmented` of two segmented
    models; InputError for one of each."""
    old_split, new_split = isinstance(old, SegmentedScorecard), isinstance(new, SegmentedScorecard)
    if old_split and new_split:
        return diff_segmented(old, new)
    if not (old_split or new_split):
        return diff_scorecards(old, new)
    split, source = (old, old_source) if old_split else (new, new_source)
    raise InputError(f"{source}: a segmented model ({len(split.cards)} cards by "
                     f"{split.rule.column}) against a single card; diff matches cards by "
                     "segment, so it compares two single cards or two segmented models "
                     "(challenge compares any two on the same data)")
