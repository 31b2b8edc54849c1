"""Apply a built scorecard to rows: bin codes, points, score and reasons.

This is the one place that decides which bin a value falls in. The build uses it for its own
passes over the rows, so the scores behind the workbook and those of ``scorecard score`` agree
by construction.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from scorecard.card.points import bad_probability_of_score
from scorecard.card.scorecard import (
    MISSING,
    OUT_OF_RANGE,
    SENTINEL,
    UNSEEN,
    Characteristic,
    Scorecard,
)
from scorecard.data.coding import categorical_codes, grid_cells, numeric_values
from scorecard.errors import InputError


class UnusualValues(NamedTuple):
    """Counts of values that the development sample never showed, for one characteristic."""

    unseen_levels: int
    unseen_missing: int
    out_of_range: int


def _bin_or_refuse(char: Characteristic, kind: str, what: str) -> int:
    """Index of the bin of ``kind``; InputError when a hand-edited model lacks it."""
    index = char.bin_index(kind)
    if index is None:
        raise InputError(f"column {char.name}: {what}, and the scorecard has no {kind} bin "
                         "to put it in")
    return index


def bin_codes(char: Characteristic, series) -> tuple[np.ndarray, UnusualValues]:
    """Bin index of every row for one characteristic, and counts of unseen values.

    ``series`` is a pandas Series, an Arrow array, or a column prepared by
    :class:`scorecard.data.coding.Columns` (float64 numbers or levels): one lookup serves all.

    Numeric: a sentinel goes to its own bin, a missing value to the missing bin, a value
    beyond the development range to the out-of-range bin when the scorecard has one (else to
    the end range bin), any other value to the range bin ``lower <= x < upper``. Categorical:
    a level goes to the bin of its group, matched by level text; a missing value to the missing
    bin and a level not seen in development to the unseen bin.
    """
    empty_missing = (char.bin_index(MISSING) is not None
                     and char.bins[char.bin_index(MISSING)].count == 0)
    if char.kind == "numeric":
        return _numeric_codes(char, series, empty_missing)
    return _categorical_bin_codes(char, series, empty_missing)


def _numeric_codes(char: Characteristic, series, empty_missing: bool):
    x = numeric_values(series, char.name)
    codes = grid_cells(x, char.cuts)
    missing = np.isnan(x)
    if missing.any():
        codes[missing] = _bin_or_refuse(char, MISSING, "a value is missing")
    beyond = np.zeros(len(x), dtype=bool)
    if char.development_range is not None:
        low, high = char.development_range
        beyond = ~missing & ((x < low) | (x > high))
        oor = char.bin_index(OUT_OF_RANGE)
        if oor is not None:
            codes[beyond] = oor
    for i, b in enumerate(char.bins):
        if b.kind == SENTINEL:
            hit = x == b.value
            codes[hit] = i
            beyond &= ~hit
    unusual = UnusualValues(0, int(missing.sum()) if empty_missing else 0, int(beyond.sum()))
    return codes.astype(np.int16), unusual


def _categorical_bin_codes(char: Characteristic, series, empty_missing: bool):
    level_bin = {lv: i for i, b in enumerate(char.bins) for lv in b.levels}
    levels = list(level_bin)
    idx = categorical_codes(series, levels)
    unseen, missing = idx == -2, idx == -1
    unseen_bin = _bin_or_refuse(char, UNSEEN, "a level was not seen in development") \
        if unseen.any() else 0
    missing_bin = _bin_or_refuse(char, MISSING, "a value is missing") if missing.any() else 0
    to_bin = np.array([level_bin[lv] for lv in levels] + [unseen_bin, missing_bin],
                      dtype=np.int16)
    # -2 (unseen level) maps to the unseen bin, -1 (missing) to the missing bin.
    codes = to_bin[np.where(idx < 0, len(levels) + missing, idx)]
    unusual = UnusualValues(int(unseen.sum()), int(missing.sum()) if empty_missing else 0, 0)
    return codes, unusual


class Scores(NamedTuple):
    """Scores of a batch of rows."""

    score: np.ndarray            # int64 total points
    points: np.ndarray           # (rows, characteristics) int64
    codes: np.ndarray            # (rows, characteristics) bin indices
    rejected: np.ndarray         # bool: a row fell in a bin the scorecard refuses
    unusual: dict                # name -> UnusualValues
    refused: np.ndarray          # (rows, characteristics) bool: this characteristic refused the row


def points_tables(card: Scorecard) -> list[np.ndarray]:
    return [np.array([b.points for b in c.bins], dtype=np.int64) for c in card.characteristics]


def apply_scorecard(card: Scorecard, frame) -> Scores:
    """Score every row of ``frame``: a pandas DataFrame, an Arrow record batch or
    :class:`scorecard.data.coding.Columns`.

    Examples
    --------
    >>> from scorecard.card.scorecard import Bin, Characteristic, Scorecard, RANGE, MISSING
    >>> from scorecard.card.points import scaling
    >>> b = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0), Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0),
    ...      Bin("missing", MISSING, 5, 5, 0.0, 20))
    >>> c = Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,))
    >>> card = Scorecard("demo", scaling(600, 50, 20), 0.5, (c,))
    >>> import pandas as pd
    >>> apply_scorecard(card, pd.DataFrame({"x": [0.5, 2.0, None]})).score.tolist()
    [10, 30, 20]
    """
    names = frame.column_names if hasattr(frame, "column_names") else frame.columns
    missing = [c.name for c in card.characteristics if c.name not in names]
    if missing:
        raise InputError(f"column {missing[0]}: the scorecard needs it but the data lacks it")
    n, k = len(frame), len(card.characteristics)
    # Column-major, so that each characteristic's column is one contiguous block.
    codes = np.empty((n, k), dtype=np.int16, order="F")
    points = np.empty((n, k), dtype=np.int64, order="F")
    refused = np.zeros((n, k), dtype=bool, order="F")
    unusual = {}
    for j, (char, table) in enumerate(zip(card.characteristics, points_tables(card))):
        codes[:, j], unusual[char.name] = bin_codes(char, frame[char.name])
        points[:, j] = table[codes[:, j]]
        refusing = np.array([b.rejected for b in char.bins])
        if refusing.any():
            refused[:, j] = refusing[codes[:, j]]
    return Scores(points.sum(axis=1), points, codes, refused.any(axis=1), unusual, refused)


def bad_probability(card: Scorecard, score) -> np.ndarray:
    """Probability of bad implied by an integer score under the card's scaling."""
    return bad_probability_of_score(score, card.scaling)


REFUSED_PREFIX = "REJECTED:"


class ReasonCodes(NamedTuple):
    """Reasons of a batch of rows, as indices into a short list of labels.

    ``labels`` holds the distinct reason codes (or texts) in order of first appearance in the
    scorecard, then one ``REJECTED:<name>`` label per characteristic; ``index`` is (rows, n)
    int32 with -1 where fewer than n reasons apply. Labels stay few whatever the row count, so
    writers can store the reasons dictionary-encoded without touching a string per row.
    """

    labels: tuple[str, ...]
    index: np.ndarray

    def as_text(self) -> np.ndarray:
        """The reasons as an object array (rows, n), ``""`` where none applies."""
        table = np.array(self.labels + ("",), dtype=object)
        return table[self.index]


def reason_groups(card: Scorecard, text: bool = False) -> tuple[tuple[str, ...], np.ndarray]:
    """Distinct reason codes in order of first appearance, and each characteristic's group.

    Characteristics that share a reason code form one group. With ``text=True`` a group is
    labelled by the reason texts of its characteristics (distinct ones joined by ``"; "``).
    """
    codes = [c.reason_code for c in card.characteristics]
    distinct = list(dict.fromkeys(codes))
    group = np.array([distinct.index(code) for code in codes], dtype=np.intp)
    if not text:
        return tuple(distinct), group
    texts = [list(dict.fromkeys(c.reason for c, g in zip(card.characteristics, group) if g == i))
             for i in range(len(distinct))]
    return tuple("; ".join(t) for t in texts), group


def reason_codes(card: Scorecard, points: np.ndarray, n: int = 4,
                 refused: np.ndarray | None = None, text: bool = False) -> ReasonCodes:
    """Up to ``n`` reasons per row: the reason codes that lost most points against the maximum.

    A characteristic's shortfall is its maximum attainable points (over the bins that held
    development rows) minus the row's points. Characteristics sharing a reason code pool their
    shortfalls, so a code is given at most once. Codes are ranked by shortfall, largest first;
    ties go to the code that appears first in the scorecard. A code whose shortfall is not
    positive is never a reason, so a row at the maximum of every characteristic has none.
    A row that a characteristic refused gets ``REJECTED:<name>`` for each refusing
    characteristic instead, in scorecard order.

    Parameters
    ----------
    card : Scorecard
    points : ndarray (rows, characteristics)
        Points of every row, as in :attr:`Scores.points`.
    n : int
        Reasons per row, at least 0.
    refused : ndarray (rows, characteristics) of bool, optional
        As in :attr:`Scores.refused`.
    text : bool
        Label reasons by their reason text instead of their code.

    Examples
    --------
    >>> from scorecard.card.scorecard import Bin, Characteristic, Scorecard, RANGE
    >>> from scorecard.card.points import scaling
    >>> def char(name, code):
    ...     bins = (Bin("< 1", RANGE, 5, 5, 0.0, 10, upper=1.0), Bin(">= 1", RANGE, 5, 5, 0.0, 30, lower=1.0))
    ...     return Characteristic(name, "numeric", bins, 1.0, code, name + " is low", cuts=(1.0,))
    >>> card = Scorecard("demo", scaling(600, 50, 20), 0.0, (char("a", "RA"), char("b", "RB")))
    >>> reason_codes(card, np.array([[10, 10], [30, 10], [30, 30]]), 2).as_text().tolist()
    [['RA', 'RB'], ['RB', ''], ['', '']]
    """
    if n < 0:
        raise ValueError("n must be at least 0")
    labels, group = reason_groups(card, text)
    chars = card.characteristics
    rows, m = len(points), len(labels)
    maxima = np.array([c.max_points for c in chars], dtype=np.int64)
    # Codes along the first axis, rows along the second: every step below is then an
    # elementwise operation over long contiguous rows of numbers.
    lost = maxima[:, None] - np.ascontiguousarray(np.asarray(points, dtype=np.int64).T)
    if m < len(chars):
        member = np.zeros((m, len(chars)), dtype=np.int64)
        member[group, np.arange(len(chars))] = 1
        lost = member @ lost
    # One key per code: the shortfall, then earlier codes above later ones. The keys of a row
    # are distinct, and a key gives back its code (remainder) and its shortfall (quotient).
    spread = sum(c.max_points - min(b.points for b in c.bins) for c in chars)
    kind = np.int32 if (spread + 1) * m < np.iinfo(np.int32).max // 2 else np.int64
    key = lost.astype(kind)
    key *= m
    key += (m - 1 - np.arange(m, dtype=kind))[:, None]
    index = np.full((rows, n), -1, dtype=np.int32)
    flat = key.reshape(-1)
    every_row = np.arange(rows)
    for rank in range(min(n, m)):
        best = key.max(axis=0)
        code = (m - 1) - best % m
        index[:, rank] = np.where(best >= m, code, -1)   # best >= m: the shortfall is positive
        flat[code * rows + every_row] = np.iinfo(kind).min
    if refused is not None and refused.any():
        hit = np.flatnonzero(refused.any(axis=1))
        mask = refused[hit]
        first = np.argsort(~mask, axis=1, kind="stable")[:, :n]
        named = np.take_along_axis(mask, first, axis=1)
        index[hit] = -1
        index[hit, :first.shape[1]] = np.where(named, m + first, -1)
    return ReasonCodes(labels + tuple(REFUSED_PREFIX + c.name for c in chars), index)


def reasons(card: Scorecard, points: np.ndarray, n: int = 4) -> np.ndarray:
    """Reason codes per row as an object array (rows, n), ``""`` where fewer than n apply.

    The ranking is that of :func:`reason_codes`.
    """
    return reason_codes(card, points, n).as_text()
