"""One scoring pass over a data file, shared by the reports that read a model and a file.

``compare`` and ``strategy`` both read a file, score every row once with
:func:`scorecard.card.scoring.apply_scorecard` and code the outcome column named in the model
file when the file holds it; everything after that works on counts.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from scorecard.card.scorecard import Scorecard
from scorecard.card.scoring import Scores
from scorecard.card.segmented import apply_model
from scorecard.data.outcome import code_outcome
from scorecard.data.read import read_frame
from scorecard.errors import InputError


def read_rows(path) -> pd.DataFrame:
    """The rows of a data file; InputError naming the file when it has none."""
    frame = read_frame(path)
    if len(frame) == 0:
        raise InputError(f"{path}: the file has no rows")
    return frame


def require_characteristics(card: Scorecard, path, frame: pd.DataFrame) -> None:
    """InputError naming the file and the first characteristic of the card it lacks."""
    rule = getattr(card, "rule", None)     # a segmented model also needs its segment column
    absent = [name for name in card.names + ((rule.column,) if rule else ())
              if name not in frame.columns]
    if absent:
        raise InputError(f"{path}: column {absent[0]}: the scorecard needs it but the file "
                         "lacks it")


def score_rows(card: Scorecard, path, frame: pd.DataFrame) -> Scores:
    """Score every row of ``frame`` (read from ``path``); errors name the file and column."""
    require_characteristics(card, path, frame)
    try:
        return apply_model(card, frame)
    except InputError as exc:
        raise InputError(f"{path}: {exc}") from None


def outcome_labels(card: Scorecard, frame: pd.DataFrame) -> np.ndarray | None:
    """Each row's outcome coded 1 bad, 0 good, -1 other; None without the outcome column."""
    target = card.target or {}
    column = target.get("column")
    if column is None or column not in frame.columns:
        return None
    return code_outcome(frame[column], target.get("bad", []), target.get("good", [])).label
