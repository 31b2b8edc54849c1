"""The workbook's tables as plain DataFrames, built from a build result and its scorecard.

Each function here is pure: it reads the result and returns one table with the column names
the sheets show. Keeping the tables apart from the cell writing lets them be tested alone.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from scorecard.card.points import bad_probability_of_score, odds_of_score
from scorecard.card.scorecard import Characteristic, Scorecard
from scorecard.evaluation.histograms import ScoreHistogram

IN_MODEL = "in model"
# Steps between the scores of the distribution table and of the score-to-odds table: the
# smallest of these that keeps the table within the given number of rows. Odds are read at
# scores that are multiples of ten.
ROUND_STEPS = (1, 2, 5, 10, 20, 25, 50, 100, 200, 500, 1000)
ODDS_STEPS = (10, 20, 50, 100, 200, 500, 1000)

CHARACTERISTIC_COLUMNS = ["Characteristic", "Kind", "Status", "Stage", "Reason", "Fine classes",
                          "Trend", "Information value", "Strength", "Mutual information (nats)",
                          "Mutual information (bits)"]
BIN_COLUMNS = ["Characteristic", "Attribute", "Kind", "Rows", "Goods", "Bads", "Bad rate",
               "Share of rows", "Weight of evidence", "IV contribution", "Points", "Note"]
POINT_COLUMNS = ["Characteristic", "Attribute", "Points", "Reason code", "Reason",
                 "Weight of evidence", "Coefficient", "Note"]
DISTRIBUTION_COLUMNS = ["Score from", "Score to", "Goods", "Bads", "Share of goods",
                        "Share of bads", "Cumulative share of goods", "Cumulative share of bads",
                        "Gap (KS)"]


def attribute_labels(char: Characteristic) -> list[str]:
    """Labels of the bins of ``char``, made unique within the characteristic.

    A categorical level can carry the same text as a bin of another kind (a level named
    ``missing``); the spreadsheet looks attributes up by label, so a repeated label gets its
    bin kind appended.

    Examples
    --------
    >>> from scorecard.card.scorecard import Bin, LEVELS, MISSING
    >>> bins = (Bin("missing", LEVELS, 1, 1, 0.0, 1, levels=("missing",)),
    ...         Bin("missing", MISSING, 1, 1, 0.0, 2))
    >>> attribute_labels(Characteristic("x", "categorical", bins, 1.0, "R01", "x"))
    ['missing (levels)', 'missing (missing)']
    """
    labels = [b.label for b in char.bins]
    repeated = {label for label in labels if labels.count(label) > 1}
    out = [f"{b.label} ({b.kind})" if b.label in repeated else b.label for b in char.bins]
    seen: dict[str, int] = {}
    for i, label in enumerate(out):
        seen[label] = seen.get(label, 0) + 1
        if seen[label] > 1:
            out[i] = f"{label} [{seen[label]}]"
    return out


def ranked_reports(reports) -> list:
    """Reports by information value, highest first; columns without one last, in file order."""
    keyed = [(-r.information_value if not math.isnan(r.information_value) else math.inf, i, r)
             for i, r in enumerate(reports)]
    return [r for _, _, r in sorted(keyed, key=lambda t: (t[0], t[1]))]


def characteristics_frame(reports) -> pd.DataFrame:
    """One row per column of the data, ranked by information value."""
    rows = [{
        "Characteristic": r.name, "Kind": r.kind, "Status": r.status, "Stage": r.stage,
        "Reason": r.reason, "Fine classes": r.fine_classes or None, "Trend": r.trend,
        "Information value": r.information_value, "Strength": r.strength,
        "Mutual information (nats)": r.mutual_information_nats,
        "Mutual information (bits)": r.mutual_information_bits,
    } for r in ranked_reports(reports)]
    return pd.DataFrame(rows, columns=CHARACTERISTIC_COLUMNS)


def binned_reports(reports) -> list:
    """The reports that carry bins, ranked by information value."""
    return [r for r in ranked_reports(reports) if r.characteristic is not None]


def bins_frame(reports) -> pd.DataFrame:
    """Every binned characteristic's bins with development counts, WoE and points."""
    frames = [_bins_of(r) for r in binned_reports(reports)]
    if not frames:
        return pd.DataFrame(columns=BIN_COLUMNS)
    return pd.concat(frames, ignore_index=True)


def _bins_of(report) -> pd.DataFrame:
    char = report.characteristic
    goods = np.array([b.goods for b in char.bins], dtype=float)
    bads = np.array([b.bads for b in char.bins], dtype=float)
    woe = np.array([b.woe for b in char.bins], dtype=float)
    rows = goods + bads
    share_goods = goods / max(goods.sum(), np.finfo(float).tiny)
    share_bads = bads / max(bads.sum(), np.finfo(float).tiny)
    with np.errstate(invalid="ignore", divide="ignore"):
        bad_rate = np.where(rows > 0, bads / rows, np.nan)
    points = [b.points if report.status == IN_MODEL else None for b in char.bins]
    return pd.DataFrame({
        "Characteristic": char.name, "Attribute": attribute_labels(char),
        "Kind": [b.kind for b in char.bins], "Rows": rows, "Goods": goods, "Bads": bads,
        "Bad rate": bad_rate, "Share of rows": rows / max(rows.sum(), np.finfo(float).tiny),
        "Weight of evidence": woe, "IV contribution": (share_goods - share_bads) * woe,
        "Points": pd.array(points, dtype="Int64"), "Note": [b.note for b in char.bins],
    }, columns=BIN_COLUMNS)


def coefficients_frame(selection) -> pd.DataFrame:
    """The final fit: one row per term, the intercept first, with each column's VIF."""
    fit = selection.fit
    return pd.DataFrame({
        "Name": list(fit.names), "Coefficient": fit.coefficients,
        "Standard error": fit.standard_errors, "z": fit.z_values, "p-value": fit.p_values,
        "VIF": [selection.vif.get(n, math.nan) for n in fit.names],
    })


def steps_frame(selection) -> pd.DataFrame:
    """The stepwise log, one row per entry, saying whether the entry stayed in the model."""
    chosen = set(selection.selected)
    return pd.DataFrame({
        "Step": [s["step"] for s in selection.steps],
        "Entered": [s["entered"] for s in selection.steps],
        "Score-test p-value": [s["p_value"] for s in selection.steps],
        "Log-likelihood": [s["log_likelihood"] for s in selection.steps],
        "In final model": ["yes" if s["entered"] in chosen else "no, removed later"
                           for s in selection.steps],
    }, columns=["Step", "Entered", "Score-test p-value", "Log-likelihood", "In final model"])


def points_frame(card: Scorecard) -> pd.DataFrame:
    """One row per attribute of every characteristic in the model, in scorecard order."""
    frames = [pd.DataFrame({
        "Characteristic": c.name, "Attribute": attribute_labels(c),
        "Points": [b.points for b in c.bins], "Reason code": c.reason_code, "Reason": c.reason,
        "Weight of evidence": [b.woe for b in c.bins], "Coefficient": c.coefficient,
        "Note": [b.note for b in c.bins],
    }, columns=POINT_COLUMNS) for c in card.characteristics]
    return pd.concat(frames, ignore_index=True)


def round_step(span: float, max_rows: int, steps=ROUND_STEPS) -> int:
    """The smallest of ``steps`` that covers ``span`` points in at most ``max_rows`` rows.

    Examples
    --------
    >>> round_step(377, 40), round_step(377, 20), round_step(3, 40), round_step(3, 40, ODDS_STEPS)
    (10, 20, 1, 10)
    """
    return next((s for s in steps if span / s + 1 <= max_rows), steps[-1])


def odds_frame(card: Scorecard, max_rows: int = 40) -> pd.DataFrame:
    """Score, good:bad odds and bad probability at round scores across the attainable range."""
    low, high = card.min_score, card.max_score
    step = round_step(high - low, max_rows, ODDS_STEPS)
    scores = np.arange(math.ceil(low / step) * step, high + 1, step)
    if scores.size == 0:
        # A range narrower than one step holds no multiple of it: show its two ends.
        scores = np.unique([low, high])
    return pd.DataFrame({
        "Score": scores,
        "Good:bad odds": odds_of_score(scores, card.scaling),
        "Bad probability": bad_probability_of_score(scores, card.scaling),
    })


def distribution_frame(hist: ScoreHistogram, max_rows: int = 50) -> pd.DataFrame:
    """Goods and bads of one sample in round score groups, with cumulative shares and gap."""
    scores = hist.scores
    step = round_step(scores[-1] - scores[0], max_rows)
    group = scores // step - scores[0] // step
    n = int(group[-1]) + 1
    goods = np.bincount(group, weights=hist.goods, minlength=n)
    bads = np.bincount(group, weights=hist.bads, minlength=n)
    start = (scores[0] // step + np.arange(n)) * step
    total_goods, total_bads = max(goods.sum(), 1e-300), max(bads.sum(), 1e-300)
    cum_goods, cum_bads = np.cumsum(goods) / total_goods, np.cumsum(bads) / total_bads
    return pd.DataFrame({
        "Score from": np.maximum(start, scores[0]),
        "Score to": np.minimum(start + step - 1, scores[-1]),
        "Goods": goods, "Bads": bads,
        "Share of goods": goods / total_goods, "Share of bads": bads / total_bads,
        "Cumulative share of goods": cum_goods, "Cumulative share of bads": cum_bads,
        "Gap (KS)": cum_bads - cum_goods,
    }, columns=DISTRIBUTION_COLUMNS)


def samples_frame(samples) -> pd.DataFrame:
    """Rows, goods, bads and bad rate of each sample."""
    names = list(samples.rows)
    goods = np.array([samples.goods[n] for n in names], dtype=float)
    bads = np.array([samples.bads[n] for n in names], dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        rate = np.where(goods + bads > 0, bads / (goods + bads), np.nan)
    return pd.DataFrame({"Sample": names, "Rows": [samples.rows[n] for n in names],
                         "Goods": goods, "Bads": bads, "Bad rate": rate})


def discrimination_frame(performance: dict) -> pd.DataFrame:
    """AUC, Gini and KS of each sample that was scored."""
    names = list(performance)
    return pd.DataFrame({"Sample": names,
                         "AUC": [performance[n].auc for n in names],
                         "Gini": [performance[n].gini for n in names],
                         "KS": [performance[n].ks for n in names]})


def model_frame(card: Scorecard) -> pd.DataFrame:
    """The characteristics in the model with their reason code, strength and points range."""
    chars = card.characteristics
    return pd.DataFrame({
        "Characteristic": [c.name for c in chars],
        "Reason code": [c.reason_code for c in chars],
        "Information value": [c.information_value for c in chars],
        "Coefficient": [c.coefficient for c in chars],
        "Lowest points": [min(b.points for b in c.bins) for c in chars],
        "Highest points": [max(b.points for b in c.bins) for c in chars],
    })
