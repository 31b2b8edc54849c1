"""The build's tables as plain DataFrames: characteristics and their fates, bins, the fit,
the stepwise log, score distributions, samples and discrimination.

Each function here is pure: it reads the build result and returns one table with the column
names the workbook's sheets show, so a notebook gets the same tables as the reviewer and the
tables can be tested apart from the cell writing. The scorecard's own tables (points, odds, a
characteristic's bins) are in :mod:`scorecard.card.frames`.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from scorecard.card.frames import BIN_COLUMNS, round_step
from scorecard.card.frames import bins_frame as char_bins_frame
from scorecard.evaluation.histograms import ScoreHistogram

IN_MODEL = "in model"

CHARACTERISTIC_COLUMNS = ["Characteristic", "Kind", "Status", "Stage", "Reason", "Fine classes",
                          "Trend", "Bins", "Information value", "Strength",
                          "Mutual information (nats)", "Mutual information (bits)"]
DISTRIBUTION_COLUMNS = ["Score from", "Score to", "Goods", "Bads", "Share of goods",
                        "Share of bads", "Cumulative share of goods", "Cumulative share of bads",
                        "Gap (KS)"]



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
        "Bins": r.bins_reason or None, "Information value": r.information_value,
        "Strength": r.strength,
        "Mutual information (nats)": r.mutual_information_nats,
        "Mutual information (bits)": r.mutual_information_bits,
    } for r in ranked_reports(reports)]
    return pd.DataFrame(rows, columns=CHARACTERISTIC_COLUMNS)


def binned_reports(reports) -> list:
    """The reports that carry bins, ranked by information value."""
    return [r for r in ranked_reports(reports) if r.characteristic is not None]


def bins_frame(reports) -> pd.DataFrame:
    """Every binned characteristic's bins with development counts, WoE and points."""
    frames = [char_bins_frame(r.characteristic, r.status == IN_MODEL)
              for r in binned_reports(reports)]
    if not frames:
        return pd.DataFrame(columns=BIN_COLUMNS)
    return pd.concat(frames, ignore_index=True)



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
        # Blank where the score test sufficed and no gain was measured.
        "Held-out gain": [math.nan if s.get("held_out_gain") is None else s["held_out_gain"]
                          for s in selection.steps],
        "In final model": ["yes" if s["entered"] in chosen else "no, removed later"
                           for s in selection.steps],
    }, columns=["Step", "Entered", "Score-test p-value", "Log-likelihood", "Held-out gain",
                "In final model"])





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
