"""A segmented model: one scorecard per segment of the applicants, all on one scale.

A :class:`SegmentRule` picks each row's segment from one column (groups of levels, or cuts of a
numeric column); a :class:`SegmentedScorecard` holds the rule and one :class:`Scorecard` per
segment, in order. Every card carries the same scaling (base score, base odds, points to double
the odds), so a score means the same odds whichever card gave it, and one cut-off serves all.

A row whose segment column is missing, or holds a level no group lists, has no segment: it gets
no score, as a row a card refuses. The model file is JSON with ``format_version`` 2 and
``kind: segmented``; a single card's file (``format_version`` 1) loads as before, so
:func:`load_model` reads both.
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from pathlib import Path
from typing import NamedTuple

import numpy as np

from scorecard.card.scorecard import Characteristic, Scorecard, _scorecard_from_dict
from scorecard.card.scoring import apply_scorecard
from scorecard.data.coding import categorical_codes, grid_cells, numeric_values
from scorecard.errors import InputError

FORMAT_VERSION = 2
KIND = "segmented"
NO_SEGMENT = -1


@dataclass(frozen=True)
class SegmentRule:
    """Which segment a row belongs to, from one column.

    ``groups`` lists each segment's levels (a categorical column); ``cuts`` split a numeric one
    into ``len(cuts) + 1`` segments, ``lower <= x < upper``. ``names`` are the segments in order.

    Examples
    --------
    >>> import pandas as pd
    >>> rule = SegmentRule("tenure", ("new", "existing"), cuts=(1.0,))
    >>> rule.codes(pd.Series([0.0, 3.0, None])).tolist()
    [0, 1, -1]
    >>> SegmentRule("customer", ("a", "b"), groups=(("x",), ("y", "z"))).codes(
    ...     pd.Series(["z", "x", "q", None])).tolist()
    [1, 0, -1, -1]
    """

    column: str
    names: tuple[str, ...]
    groups: tuple[tuple[str, ...], ...] | None = None
    cuts: tuple[float, ...] | None = None

    @property
    def kind(self) -> str:
        return "numeric" if self.cuts is not None else "categorical"

    def codes(self, series) -> np.ndarray:
        """Segment index of every row; :data:`NO_SEGMENT` where the column picks none.

        ``series`` as for :func:`scorecard.card.scoring.bin_codes`.
        """
        if self.cuts is not None:
            x = numeric_values(series, self.column)
            out = grid_cells(x, np.asarray(self.cuts, dtype=float)).astype(np.intp)
            out[np.isnan(x)] = NO_SEGMENT
            return out
        levels = [lv for group in self.groups for lv in group]
        segment_of = np.array([i for i, g in enumerate(self.groups) for _ in g] + [NO_SEGMENT],
                              dtype=np.intp)
        idx = categorical_codes(series, levels)
        return segment_of[np.where(idx < 0, len(levels), idx)]

    def bounds(self, index: int) -> tuple[float | None, float | None]:
        """Lower (inclusive) and upper (exclusive) bound of a segment of a numeric rule."""
        cuts = self.cuts
        return (None if index == 0 else cuts[index - 1],
                None if index == len(cuts) else cuts[index])

    def to_dict(self) -> dict:
        out = {"column": self.column, "names": list(self.names)}
        if self.cuts is not None:
            out["cuts"] = list(self.cuts)
        else:
            out["groups"] = [list(g) for g in self.groups]
        return out


@dataclass(frozen=True)
class SegmentedScorecard:
    """One scorecard per segment, picked by ``rule``; the scoring interface of a Scorecard.

    ``cards`` holds a card for every name of ``rule.names``, in the same order.
    """

    name: str
    rule: SegmentRule
    cards: tuple[Scorecard, ...]

    def __post_init__(self):
        if len(self.cards) != len(self.rule.names):
            raise ValueError("one card per segment is needed")

    @property
    def segments(self) -> dict[str, Scorecard]:
        return dict(zip(self.rule.names, self.cards))

    @property
    def scaling(self):
        return self.cards[0].scaling

    @property
    def reasons(self) -> int:
        return self.cards[0].reasons

    @property
    def target(self) -> dict:
        return self.cards[0].target

    @property
    def exclusions(self) -> tuple:
        """The build's exclusion rules (the same in every card)."""
        return self.cards[0].exclusions

    @property
    def characteristics(self) -> tuple[Characteristic, ...]:
        """Every characteristic any card uses, once, in order of first use."""
        seen: dict[str, Characteristic] = {}
        for card in self.cards:
            for char in card.characteristics:
                seen.setdefault(char.name, char)
        return tuple(seen.values())

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(c.name for c in self.characteristics)

    @property
    def min_score(self) -> int:
        return min(card.min_score for card in self.cards)

    @property
    def max_score(self) -> int:
        return max(card.max_score for card in self.cards)

    def to_dict(self) -> dict:
        return {"format_version": FORMAT_VERSION, "kind": KIND, "name": self.name,
                "segments": self.rule.to_dict(),
                "cards": [card.to_dict() for card in self.cards]}

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=1, allow_nan=False) + "\n"


class SegmentedScores(NamedTuple):
    """Scores of a batch of rows under a segmented model.

    ``points``, ``used`` and ``refused`` have one column per characteristic of
    :attr:`SegmentedScorecard.characteristics`; ``used`` is False where the row's card lacks the
    characteristic. ``parts`` holds, per segment, the row positions and that card's
    :class:`~scorecard.card.scoring.Scores`, for reasons.
    """

    segment: np.ndarray
    score: np.ndarray
    rejected: np.ndarray
    points: np.ndarray
    used: np.ndarray
    refused: np.ndarray
    unusual: dict
    parts: tuple


def apply_model(model, frame):
    """Scores of ``frame`` under a Scorecard or a SegmentedScorecard (same fields used by both:
    ``score``, ``rejected``, ``points``, ``refused``, ``unusual``)."""
    if isinstance(model, SegmentedScorecard):
        return apply_segmented(model, frame)
    return apply_scorecard(model, frame)


def apply_segmented(model: SegmentedScorecard, frame) -> SegmentedScores:
    """Score every row of ``frame`` with the card of its segment.

    ``frame`` is a pandas DataFrame or :class:`scorecard.data.coding.Columns`.

    Examples
    --------
    >>> from scorecard.card.scorecard import Bin, RANGE
    >>> from scorecard.card.points import scaling
    >>> def card(low, high):
    ...     b = (Bin("< 1", RANGE, 5, 5, 0.0, low, upper=1.0), Bin(">= 1", RANGE, 5, 5, 0.0, high, lower=1.0))
    ...     c = Characteristic("x", "numeric", b, 1.0, "R01", "x", cuts=(1.0,))
    ...     return Scorecard("demo", scaling(600, 50, 20), 0.0, (c,))
    >>> model = SegmentedScorecard("demo", SegmentRule("s", ("a", "b"), groups=(("a",), ("b",))),
    ...                            (card(10, 30), card(30, 10)))
    >>> import pandas as pd
    >>> s = apply_segmented(model, pd.DataFrame({"s": ["a", "b", "c"], "x": [0.0, 0.0, 0.0]}))
    >>> s.segment.tolist(), s.score.tolist(), s.rejected.tolist()
    ([0, 1, -1], [10, 30, 0], [False, False, True])
    """
    rule = model.rule
    if rule.column not in frame.columns:
        raise InputError(f"column {rule.column}: the segmented model picks its card by it but "
                         "the data lacks it")
    chars = model.names
    n, k = len(frame), len(chars)
    segment = rule.codes(frame[rule.column])
    score = np.zeros(n, dtype=np.int64)
    rejected = segment == NO_SEGMENT
    points = np.zeros((n, k), dtype=np.int64)
    used = np.zeros((n, k), dtype=bool)
    refused = np.zeros((n, k), dtype=bool)
    unusual: dict = {}
    parts = []
    for index, card in enumerate(model.cards):
        rows = np.flatnonzero(segment == index)
        part = frame.iloc[rows] if hasattr(frame, "iloc") else frame.take(rows)
        s = apply_scorecard(card, part)
        columns = [chars.index(name) for name in card.names]
        score[rows] = s.score
        rejected[rows] = s.rejected
        points[np.ix_(rows, columns)] = s.points
        used[np.ix_(rows, columns)] = True
        refused[np.ix_(rows, columns)] = s.refused
        for name, counts in s.unusual.items():
            before = unusual.get(name)
            unusual[name] = counts if before is None else type(counts)(
                *(a + b for a, b in zip(before, counts)))
        parts.append((rows, s))
    return SegmentedScores(segment, score, rejected, points, used, refused, unusual, tuple(parts))


def segmented_from_dict(raw: dict, source: str) -> SegmentedScorecard:
    """The segmented model of a parsed model file; InputError when malformed."""
    try:
        spec = raw["segments"]
        names = tuple(str(n) for n in spec["names"])
        if "cuts" in spec:
            cuts = tuple(float(c) for c in spec["cuts"])
            rule = SegmentRule(str(spec["column"]), names, cuts=cuts)
            fits = len(cuts) + 1 == len(names) and list(cuts) == sorted(set(cuts))
        else:
            groups = tuple(tuple(str(lv) for lv in g) for g in spec["groups"])
            rule = SegmentRule(str(spec["column"]), names, groups=groups)
            fits = len(groups) == len(names)
        cards = tuple(_scorecard_from_dict(c, f"{source}: segment {n}")
                      for n, c in zip(names, raw["cards"]))
        if not fits or len(cards) != len(names) or len(raw["cards"]) != len(names):
            raise ValueError("the segments, their rule and the cards do not match")
    except (KeyError, TypeError, ValueError) as exc:
        raise InputError(f"{source}: model file is incomplete or malformed ({exc})") from None
    if len({card.scaling for card in cards}) != 1:
        raise InputError(f"{source}: the segments' cards have different scalings; one cut-off "
                         "would mean different odds")
    return SegmentedScorecard(str(raw.get("name", "")), rule, cards)


def model_from_json(text: str, source: str = "model"):
    """A Scorecard (format_version 1) or a SegmentedScorecard (format_version 2)."""
    try:
        raw = json.loads(text)
    except json.JSONDecodeError as exc:
        raise InputError(f"{source}: not a model file: invalid JSON at line {exc.lineno}") from None
    if isinstance(raw, dict) and raw.get("format_version") == FORMAT_VERSION:
        if raw.get("kind") != KIND:
            raise InputError(f"{source}: format_version 2 must be a segmented model "
                             "(kind: segmented)")
        return segmented_from_dict(raw, source)
    return _scorecard_from_dict(raw, source)


def load_model(path):
    """Read a model file written by ``scorecard build``: one card or a segmented model."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"{path}: cannot read the model file ({exc.__class__.__name__})") from None
    return model_from_json(text, str(path))

