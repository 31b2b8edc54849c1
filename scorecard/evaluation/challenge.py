"""``scorecard challenge``: does a new card (the challenger) beat the one in use (the champion)?

Both model files score the same rows of one file with outcomes, once each. Everything after
that works on counts: each card's AUC, Gini and KS from its score histograms; DeLong's paired
test of the AUC difference from counts per pair of scores (:func:`scorecard.measures.paired_auc`,
which accounts for the two cards ranking the same applicants); and the swap set at one approval
rate, each card cut at its own score nearest that rate (:func:`strategy.swap_table`).

Only rows that both cards score and whose outcome is good or bad enter the comparison; the
counts of the others are reported.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import NamedTuple

import numpy as np
import pandas as pd

from scorecard.card.segmented import load_model
from scorecard.data.outcome import BAD, GOOD
from scorecard.errors import InputError
from scorecard.evaluation.scored_rows import outcome_labels, read_rows, score_rows
from scorecard.evaluation.strategy import SWAP_CELLS, nearest_cut, swap_table
from scorecard.measures.ranking import Discrimination, PairedAUC, discrimination, paired_auc

# The approval rate of the swap set when none is given: a common order of magnitude for
# application scorecards, a placeholder for the lender's own (stated in every output).
DEFAULT_APPROVAL_RATE = 0.75


class Challenge(NamedTuple):
    """Champion against challenger on the same rows."""

    champion: Discrimination
    challenger: Discrimination
    difference: PairedAUC
    approval_rate: float
    cutoffs: dict               # "champion" / "challenger" -> score cut at the approval rate
    swap: pd.DataFrame          # swap_table: champion as incumbent, challenger as the new card
    rows: int                   # rows compared
    left_out: int               # refused by either card, or outcome neither good nor bad
    # When either card is segmented: per segment name, (champion, challenger, difference, rows)
    # on that segment's rows alone; the measures above are pooled over every segment.
    segments: dict = {}
    # "champion" / "challenger" / "data" -> the file's name (no folder: a report may travel).
    files: dict = {}

    def to_dict(self) -> dict:
        def measures(d: Discrimination) -> dict:
            return {"auc": d.auc, "gini": d.gini, "ks": d.ks}

        diff = self.difference
        return {
            "champion": measures(self.champion), "challenger": measures(self.challenger),
            "difference": _difference(diff),
            "swap": {row.cell: {"count": row.rows,
                                "bad_rate": None if math.isnan(row.bad_rate) else row.bad_rate}
                     for row in self.swap.itertuples()},
            "approval_rate": self.approval_rate, "cutoffs": self.cutoffs,
            "rows": self.rows, "left_out": self.left_out, "files": dict(self.files),
            **({"segments": {name: {"champion": measures(a), "challenger": measures(b),
                                    "difference": _difference(d), "rows": n}
                             for name, (a, b, d, n) in self.segments.items()}}
               if self.segments else {}),
        }

    def to_json(self) -> str:
        return json.dumps(self.to_dict(), indent=1, allow_nan=False) + "\n"

    def text(self) -> str:
        d = self.difference
        said = verdict(d)
        lines = [*([files_line(self.files)] if self.files else []),
                 f"{self.rows:,} rows compared ({self.left_out:,} left out)",
                 f"  champion    AUC {self.champion.auc:.4f}  Gini {self.champion.gini:.4f}  "
                 f"KS {self.champion.ks:.4f}",
                 f"  challenger  AUC {self.challenger.auc:.4f}  Gini {self.challenger.gini:.4f}  "
                 f"KS {self.challenger.ks:.4f}",
                 f"  AUC difference {d.difference:+.4f} (95% interval {d.ci_low:+.4f} to "
                 f"{d.ci_high:+.4f}, DeLong p {d.p_value:.4g}): {said}",
                 f"  swap set at {self.approval_rate:.0%} approved (champion cut at "
                 f"{self.cutoffs['champion']:g}, challenger at {self.cutoffs['challenger']:g}):"]
        for row in self.swap.itertuples():
            rate = "n/a" if math.isnan(row.bad_rate) else f"{row.bad_rate:.2%}"
            lines.append(f"    {row.cell.replace('_', ' '):12s} {row.rows:>9,.0f}  bad rate {rate}")
        if self.segments:
            lines.append("  by segment (AUC champion, challenger; difference, DeLong p):")
        for name, (a, b, d, n) in self.segments.items():
            lines.append(f"    {name:12s} {n:>9,} rows  {a.auc:.4f}  {b.auc:.4f}  "
                         f"{d.difference:+.4f} (p {d.p_value:.4g}): {verdict(d)}")
        return "\n".join(lines)


def files_line(files: dict) -> str:
    """The files compared, by name."""
    return (f"champion {files['champion']} against challenger {files['challenger']} on "
            f"{files['data']}")


def challenge(champion_path, challenger_path, data_path, *,
              approval_rate: float | None = None) -> Challenge:
    """Compare two model files on the rows of ``data_path``, which must hold the outcome.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from scorecard.card.scorecard import Bin, Characteristic, Scorecard, RANGE, MISSING
    >>> from scorecard.card.points import scaling
    >>> b = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0),
    ...      Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0), Bin("missing", MISSING, 0, 0, 0.0, 20))
    >>> card = Scorecard("demo", scaling(600, 50, 20), 0.5,
    ...                  (Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,)),),
    ...                  {"column": "y", "bad": ["b"], "good": ["g"]})
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "card.json").write_text(card.to_json())
    >>> _ = (folder / "a.csv").write_text("x,y\\n0.5,b\\n2,g\\n0.2,g\\n3,g\\n0.1,b\\n")
    >>> r = challenge(folder / "card.json", folder / "card.json", folder / "a.csv")
    >>> r.difference.difference, int(r.swap["rows"].sum())
    (0.0, 5)
    """
    rate = DEFAULT_APPROVAL_RATE if approval_rate is None else approval_rate
    if not (isinstance(rate, (int, float)) and 0 < rate < 1):
        raise InputError(f"--approval-rate {rate!r}: must lie strictly between 0 and 1")
    champion = load_model(champion_path)
    challenger = load_model(challenger_path)
    frame = read_rows(data_path)
    first = score_rows(champion, data_path, frame)
    second = score_rows(challenger, data_path, frame)
    label = outcome_labels(challenger, frame)
    column = (challenger.target or {}).get("column")
    if label is None:
        raise InputError(f"{data_path}: column {column}: the outcome column of the challenger's "
                         "model file is not in the file; challenge needs outcomes")
    used = ~first.rejected & ~second.rejected & ((label == GOOD) | (label == BAD))
    is_bad = label[used] == BAD
    if is_bad.sum() < 2 or (~is_bad).sum() < 2:
        raise InputError(f"{data_path}: column {column}: needs at least two goods and two bads "
                         "that both cards score")
    a, b = first.score[used].astype(float), second.score[used].astype(float)
    segmented = second if hasattr(second, "segment") else first
    by_segment = {}
    if hasattr(segmented, "segment"):
        names = (challenger if segmented is second else champion).rule.names
        code = segmented.segment[used]
        for index, name in enumerate(names):
            own = code == index
            if is_bad[own].sum() >= 2 and (~is_bad[own]).sum() >= 2:
                by_segment[name] = (_discrimination(a[own], is_bad[own]),
                                    _discrimination(b[own], is_bad[own]),
                                    _paired(a[own], b[own], is_bad[own]), int(own.sum()))
    cut_a, _ = nearest_cut(a, rate, len(a))
    cut_b, _ = nearest_cut(b, rate, len(b))
    swap = swap_table(b >= cut_b, a >= cut_a, label[used])
    return Challenge(
        champion=_discrimination(a, is_bad), challenger=_discrimination(b, is_bad),
        difference=_paired(a, b, is_bad),
        approval_rate=float(rate), cutoffs={"champion": cut_a, "challenger": cut_b},
        swap=swap.set_index("cell").loc[list(SWAP_CELLS)].reset_index(),
        rows=int(used.sum()), left_out=int((~used).sum()), segments=by_segment,
        files={"champion": Path(champion_path).name, "challenger": Path(challenger_path).name,
               "data": Path(data_path).name})


def _paired(a: np.ndarray, b: np.ndarray, is_bad: np.ndarray) -> PairedAUC:
    """DeLong's paired test from counts per distinct pair of scores."""
    pairs, index = np.unique(np.column_stack([a, b]), axis=0, return_inverse=True)
    index = index.ravel()
    goods = np.bincount(index, weights=~is_bad, minlength=len(pairs))
    bads = np.bincount(index, weights=is_bad, minlength=len(pairs))
    return paired_auc(pairs[:, 0], pairs[:, 1], goods, bads)


def verdict(d: PairedAUC) -> str:
    """The paired test in plain words: which card ranks better, by the 95% interval."""
    return ("the challenger ranks better" if d.ci_low > 0 else
            "the champion ranks better" if d.ci_high < 0 else
            "no difference in ranking at the 5% level")


def _difference(d: PairedAUC) -> dict:
    return {"auc": d.difference, "ci_low": d.ci_low, "ci_high": d.ci_high,
            "p_value": None if math.isnan(d.p_value) else d.p_value}


def _discrimination(scores: np.ndarray, is_bad: np.ndarray) -> Discrimination:
    values, index = np.unique(scores, return_inverse=True)
    return discrimination(np.bincount(index, weights=~is_bad, minlength=len(values)),
                          np.bincount(index, weights=is_bad, minlength=len(values)))
