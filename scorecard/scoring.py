"""Apply a built scorecard to rows: bin codes, points, score and reasons.

This is the one place that decides which bin a value falls in. The build uses it for its own
passes over the rows, so the scores behind the workbook and those of ``scorecard score`` agree
by construction.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import pandas as pd

from .errors import InputError
from .model import MISSING, OUT_OF_RANGE, SPECIAL, UNSEEN, Characteristic, Scorecard
from .points import bad_probability_of_score


class UnusualValues(NamedTuple):
    """Counts of values that the development sample never showed, for one characteristic."""

    unseen_levels: int
    unseen_missing: int
    out_of_range: int


def level_labels(values) -> list[str]:
    """Text labels of categorical levels; whole floats print without a trailing ``.0``."""
    out = []
    for v in values:
        if isinstance(v, (float, np.floating)) and float(v).is_integer():
            v = int(v)
        out.append(str(v))
    return out


def numeric_values(series: pd.Series, name: str) -> np.ndarray:
    """A column as float64 with NaN for missing; InputError if it is not numeric."""
    if isinstance(series.dtype, pd.CategoricalDtype) or not (
            pd.api.types.is_numeric_dtype(series.dtype) or pd.api.types.is_bool_dtype(series.dtype)):
        raise InputError(f"column {name}: expected numbers, found {series.dtype} values")
    return series.to_numpy(dtype=np.float64, na_value=np.nan)


def categorical_codes(series: pd.Series, levels) -> np.ndarray:
    """Index of each row's level in ``levels``; -1 for missing, -2 for a level not in ``levels``."""
    cat = series if isinstance(series.dtype, pd.CategoricalDtype) else series.astype("category")
    lookup = pd.Index(list(levels)).get_indexer(level_labels(cat.cat.categories))
    lookup = np.where(lookup < 0, -2, lookup)
    codes = cat.cat.codes.to_numpy()
    return np.where(codes < 0, -1, lookup[codes] if len(lookup) else -2)


def bin_codes(char: Characteristic, series: pd.Series) -> tuple[np.ndarray, UnusualValues]:
    """Bin index of every row for one characteristic, and counts of unseen values."""
    missing_bin = char.bin_index(MISSING)
    empty_missing = char.bins[missing_bin].count == 0
    if char.kind == "numeric":
        x = numeric_values(series, char.name)
        codes = np.searchsorted(np.asarray(char.cuts, dtype=float), x, side="right")
        missing = np.isnan(x)
        codes[missing] = missing_bin
        outside = 0
        oor = char.bin_index(OUT_OF_RANGE)
        if char.development_range is not None:
            low, high = char.development_range
            beyond = ~missing & ((x < low) | (x > high))
            outside_mask = beyond
            if oor is not None:
                codes[beyond] = oor
        else:
            outside_mask = np.zeros(len(x), dtype=bool)
        for i, b in enumerate(char.bins):
            if b.kind == SPECIAL:
                hit = x == b.value
                codes[hit] = i
                outside_mask &= ~hit
        outside = int(outside_mask.sum())
        unusual = UnusualValues(0, int(missing.sum()) if empty_missing else 0, outside)
        return codes.astype(np.int16), unusual
    level_bin = {lv: i for i, b in enumerate(char.bins) for lv in b.levels}
    levels = list(level_bin)
    idx = categorical_codes(series, levels)
    to_bin = np.array([level_bin[lv] for lv in levels] + [char.bin_index(UNSEEN), missing_bin],
                      dtype=np.int16)
    # -2 (unseen level) maps to the unseen bin, -1 (missing) to the missing bin.
    codes = to_bin[np.where(idx < 0, len(levels) + (idx == -1), idx)]
    unusual = UnusualValues(int((idx == -2).sum()),
                            int((idx == -1).sum()) if empty_missing else 0, 0)
    return codes, unusual


class Scores(NamedTuple):
    """Scores of a batch of rows."""

    score: np.ndarray            # int64 total points
    points: np.ndarray           # (rows, characteristics) int64
    codes: np.ndarray            # (rows, characteristics) bin indices
    rejected: np.ndarray         # bool: a row fell in a bin the scorecard refuses
    unusual: dict                # name -> UnusualValues


def points_tables(card: Scorecard) -> list[np.ndarray]:
    return [np.array([b.points for b in c.bins], dtype=np.int64) for c in card.characteristics]


def apply_scorecard(card: Scorecard, frame: pd.DataFrame) -> Scores:
    """Score every row of ``frame``.

    Examples
    --------
    >>> from scorecard.model import Bin, Characteristic, Scorecard, RANGE, MISSING
    >>> from scorecard.points import scaling
    >>> b = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0), Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0),
    ...      Bin("missing", MISSING, 5, 5, 0.0, 20))
    >>> c = Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,))
    >>> card = Scorecard("demo", scaling(600, 50, 20), 0.5, (c,))
    >>> apply_scorecard(card, pd.DataFrame({"x": [0.5, 2.0, None]})).score.tolist()
    [10, 30, 20]
    """
    missing = [c.name for c in card.characteristics if c.name not in frame.columns]
    if missing:
        raise InputError(f"column {missing[0]}: the scorecard needs it but the data lacks it")
    n, k = len(frame), len(card.characteristics)
    codes = np.empty((n, k), dtype=np.int16)
    points = np.empty((n, k), dtype=np.int64)
    rejected = np.zeros(n, dtype=bool)
    unusual = {}
    for j, (char, table) in enumerate(zip(card.characteristics, points_tables(card))):
        codes[:, j], unusual[char.name] = bin_codes(char, frame[char.name])
        points[:, j] = table[codes[:, j]]
        refused = np.array([b.rejected for b in char.bins])
        if refused.any():
            rejected |= refused[codes[:, j]]
    return Scores(points.sum(axis=1), points, codes, rejected, unusual)


def bad_probability(card: Scorecard, score) -> np.ndarray:
    """Probability of bad implied by an integer score under the card's scaling."""
    return bad_probability_of_score(score, card.scaling)


def reasons(card: Scorecard, points: np.ndarray, n: int = 4) -> np.ndarray:
    """Reason codes per row: the characteristics that lost most points against their maximum.

    A characteristic where the row scored its maximum is never a reason. Ties in the shortfall
    are broken by the characteristic's order in the scorecard (earlier first). Returns an
    object array (rows, n) of reason codes, with ``""`` where fewer than n reasons apply.
    """
    maxima = np.array([c.max_points for c in card.characteristics], dtype=np.int64)
    shortfall = maxima - points
    order = np.argsort(-shortfall, axis=1, kind="stable")[:, :n]
    lost = np.take_along_axis(shortfall, order, axis=1) > 0
    codes = np.array([c.reason_code for c in card.characteristics], dtype=object)
    out = np.where(lost, codes[order], "")
    if out.shape[1] < n:
        out = np.hstack([out, np.full((len(points), n - out.shape[1]), "", dtype=object)])
    return out
