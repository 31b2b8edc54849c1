"""The fair-lending check: is a protected characteristic reached through the scorecard?

Protected columns (``data.protected``) never enter the model. This check looks at them
afterwards, from counts gathered in one pass over the rows:

* association of each protected column with the bins of each characteristic in the model
  (mutual information and Cramér's V on the development sample); a strong association marks a
  characteristic that may stand in for the protected one;
* adverse impact: each group's approval rate at a few cut-off scores, against the most favoured
  group's, flagged below four-fifths of it;
* bad rate, predicted bad rate and average score by group, so that a score gap that follows
  observed risk can be told from one that does not.

A missing protected value forms its own group, ``missing``.
"""

from __future__ import annotations

import math
import warnings
from fractions import Fraction
from typing import NamedTuple

import numpy as np
import pandas as pd

from scorecard.card.scoring import apply_scorecard, bad_probability
from scorecard.data.coding import categorical_codes, level_labels
from scorecard.data.outcome import BAD, GOOD
from scorecard.data.samples import DEVELOPMENT, EXCLUDED, HOLDOUT, SAMPLE_NAMES
from scorecard.engines.passes import N_SAMPLES
from scorecard.errors import InputError
from scorecard.measures.information import cramers_v, mutual_information

MISSING_GROUP = "missing"
PROXY_FLAG = "possible proxy"
IMPACT_FLAG = "below four-fifths"
SMALL_GROUP_NOTE = "too small to judge"
FAVOURED_NOTE = "most favoured group"


class ProtectedCounts(NamedTuple):
    """Counts of one protected column, gathered in one pass over the rows.

    ``groups`` are the level labels, then ``missing``. ``scores`` holds weights by (group,
    sample, outcome, refused, score - min score): ``refused`` is 1 where the row fell in a bin
    the scorecard refuses. ``rows`` counts rows (unweighted) by (group, sample). ``bins`` holds,
    per characteristic of the model, development weights by (group, bin).
    """

    groups: tuple[str, ...]
    scores: np.ndarray
    rows: np.ndarray
    bins: tuple[np.ndarray, ...]


class FairnessReport(NamedTuple):
    """The fair-lending check of a built scorecard.

    Attributes
    ----------
    proxies : DataFrame
        One row per protected column and model characteristic: mutual information (bits) and
        Cramér's V on the development sample, and the flag ``possible proxy``.
    cutoffs : DataFrame
        The cut-off scores examined, with the target and the achieved approval share.
    impact : DataFrame
        One row per cut-off, protected column and group: rows, approval rate, ratio to the most
        favoured group, the flag ``below four-fifths`` and a note.
    risk : DataFrame
        One row per protected column, sample and group: rows, goods, bads, observed and
        predicted bad rate, average score.
    sample : str
        The sample on which the cut-offs and the approval rates are measured.
    flags : tuple of str
        Each finding in one plain sentence.
    notes : tuple of str
        How the figures were made.
    """

    proxies: pd.DataFrame
    cutoffs: pd.DataFrame
    impact: pd.DataFrame
    risk: pd.DataFrame
    sample: str
    flags: tuple[str, ...]
    notes: tuple[str, ...]


def protected_levels(chunk: pd.DataFrame, columns) -> dict:
    """The set of level labels seen in each protected column of one chunk.

    Examples
    --------
    >>> sorted(protected_levels(pd.DataFrame({"g": ["a", "b", None, "a"]}), ["g"])["g"])
    ['a', 'b']
    """
    out = {}
    for name in columns:
        if name not in chunk.columns:
            raise InputError(f"column {name}: named in data.protected but not in the data")
        series = chunk[name]
        cat = series if isinstance(series.dtype, pd.CategoricalDtype) else series.astype("category")
        used = np.unique(cat.cat.codes.to_numpy())
        out[name] = frozenset(level_labels(cat.cat.categories[used[used >= 0]]))
    return out


def merge_level_sets(a: dict, b: dict) -> dict:
    """Union of the level sets of two chunks, column by column."""
    return {name: a[name] | b[name] for name in a}


def _group_labels(levels) -> tuple[str, ...]:
    # A real level spelled "missing" would merge with the missing values; keep them apart.
    missing = MISSING_GROUP if MISSING_GROUP not in levels else f"{MISSING_GROUP} value"
    return tuple(levels) + (missing,)


def protected_counts(chunk: pd.DataFrame, rows, card, protected_levels: dict) -> dict:
    """Counts of every protected column over one chunk of rows.

    Parameters
    ----------
    chunk : DataFrame
        The rows, with the protected columns and the model's characteristics.
    rows : RowFacts
        Outcome (0 good, 1 bad, -1 other), weight and sample of each row; rows outside every
        sample are not counted.
    card : Scorecard
    protected_levels : dict
        Column name -> sorted tuple of its level labels over the whole data.

    Returns
    -------
    dict
        Column name -> :class:`ProtectedCounts`.

    Examples
    --------
    >>> from scorecard.card.scorecard import Bin, Characteristic, Scorecard, RANGE, MISSING
    >>> from scorecard.card.points import scaling
    >>> from scorecard.engines.passes import RowFacts
    >>> b = (Bin("< 1", RANGE, 6, 4, -0.4, 10, upper=1.0),
    ...      Bin(">= 1", RANGE, 9, 1, 1.0, 30, lower=1.0), Bin("missing", MISSING, 0, 0, 0.0, 20))
    >>> card = Scorecard("demo", scaling(600, 50, 20), 0.5,
    ...                  (Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,)),))
    >>> chunk = pd.DataFrame({"x": [0.5, 2.0, 3.0], "g": ["a", "b", None]})
    >>> rows = RowFacts(np.array([0, 1, 0]), np.ones(3), np.array([0, 0, 0]))
    >>> protected_counts(chunk, rows, card, {"g": ("a", "b")})["g"].bins[0].tolist()
    [[1.0, 0.0, 0.0], [0.0, 1.0, 0.0], [0.0, 1.0, 0.0]]
    """
    keep = rows.sample != EXCLUDED
    sub = chunk[keep] if not keep.all() else chunk
    scored = apply_scorecard(card, sub)
    sample = rows.sample[keep].astype(np.int64)
    label = rows.label[keep].astype(np.int64)
    weight = rows.weight[keep]
    refused = scored.rejected.astype(np.int64)
    width = card.max_score - card.min_score + 1
    at = scored.score - card.min_score
    dev = sample == DEVELOPMENT
    out = {}
    for name, levels in protected_levels.items():
        groups = _group_labels(levels)
        n_groups = len(groups)
        idx = categorical_codes(sub[name], levels)
        group = np.where(idx < 0, len(levels), idx).astype(np.int64)
        key = (((group * N_SAMPLES + sample) * 2 + label) * 2 + refused) * width + at
        scores = np.bincount(key, weights=weight, minlength=n_groups * N_SAMPLES * 4 * width)
        counted = np.bincount(group * N_SAMPLES + sample, minlength=n_groups * N_SAMPLES)
        bins = tuple(
            np.bincount(group[dev] * len(c.bins) + scored.codes[dev, j], weights=weight[dev],
                        minlength=n_groups * len(c.bins)).reshape(n_groups, len(c.bins))
            for j, c in enumerate(card.characteristics))
        out[name] = ProtectedCounts(groups, scores.reshape(n_groups, N_SAMPLES, 2, 2, width),
                                    counted.reshape(n_groups, N_SAMPLES), bins)
    return out


def merge_protected_counts(a: dict, b: dict) -> dict:
    """Sum the counts of two chunks, column by column."""
    return {name: ProtectedCounts(ca.groups, ca.scores + b[name].scores, ca.rows + b[name].rows,
                                  tuple(x + y for x, y in zip(ca.bins, b[name].bins)))
            for name, ca in a.items()}


def proxy_table(counts: dict, card, threshold: float) -> pd.DataFrame:
    """Association of each protected column with the bins of each model characteristic.

    Measured on the development sample: mutual information in bits and Cramér's V (no bias
    correction). A characteristic with V at or above ``threshold`` is a ``possible proxy``.
    Rows are ordered by protected column, then by V, strongest first.
    """
    records = []
    for name, pc in counts.items():
        for char, table in zip(card.characteristics, pc.bins):
            v, bits = _association(name, char.name, table)
            records.append({"Protected column": name, "Characteristic": char.name,
                            "Mutual information (bits)": bits, "Cramér's V": v,
                            "Flag": PROXY_FLAG if v >= threshold else ""})
    frame = pd.DataFrame(records, columns=["Protected column", "Characteristic",
                                           "Mutual information (bits)", "Cramér's V", "Flag"])
    order = {name: i for i, name in enumerate(counts)}
    frame = frame.assign(_order=frame["Protected column"].map(order))
    frame = frame.sort_values(["_order", "Cramér's V"], ascending=[True, False], kind="stable")
    return frame.drop(columns="_order").reset_index(drop=True)


def _association(column: str, characteristic: str, table: np.ndarray) -> tuple[float, float]:
    """Cramér's V and mutual information (bits) of a (group, bin) table; nan if degenerate."""
    if min((table.sum(axis=0) > 0).sum(), (table.sum(axis=1) > 0).sum()) < 2:
        warnings.warn(f"fairness: {column} and {characteristic}: fewer than two groups or bins "
                      "hold development rows, so their association is not measured",
                      stacklevel=3)
        return math.nan, math.nan
    return cramers_v(table), mutual_information(table).bits


def _approved_by_cutoff(scores: np.ndarray) -> np.ndarray:
    """Approved weight at every integer cut-off from the minimum score up to one above the maximum.

    ``scores`` is (..., outcome, refused, score); approval is ``score >= cut-off`` and not refused.
    """
    scored = scores[..., :, 0, :].sum(axis=-2)
    tail = np.cumsum(scored[..., ::-1], axis=-1)[..., ::-1]
    return np.concatenate([tail, np.zeros(tail.shape[:-1] + (1,))], axis=-1)


def _cutoff_index(cutoff: float, low: int, width: int) -> int:
    return int(np.clip(math.ceil(cutoff - low), 0, width))


def choose_cutoffs(scores: np.ndarray, low: int, targets=(), fixed=()) -> pd.DataFrame:
    """Cut-off scores and the share of rows each approves (approve = score >= cut-off).

    Parameters
    ----------
    scores : ndarray
        Weights of one sample by (outcome, refused, score - ``low``).
    low : int
        The scorecard's lowest score.
    targets : sequence of float
        Approval shares; for each, the integer cut-off whose share is closest (ties go to the
        higher cut-off, which approves fewer).
    fixed : sequence of float
        Cut-offs given outright; used instead of ``targets`` when not empty.

    Returns
    -------
    DataFrame
        Columns ``Cut-off``, ``Target approval share`` (nan for fixed cut-offs) and
        ``Achieved approval share``.

    Examples
    --------
    >>> s = np.zeros((2, 2, 4)); s[0, 0] = [1, 1, 1, 1]
    >>> choose_cutoffs(s, 600, targets=(0.5,))["Cut-off"].tolist()
    [602]
    """
    total = scores.sum()
    if not total > 0:
        raise InputError("fairness: the sample for the cut-offs holds no rows")
    share = _approved_by_cutoff(scores) / total
    width = scores.shape[-1]
    if fixed:
        chosen = [(c, math.nan, share[_cutoff_index(c, low, width)]) for c in fixed]
    else:
        gap = np.abs(share[None, :] - np.asarray(targets, dtype=float)[:, None])
        # argmin keeps the first of equal gaps, so searching the reversed axis prefers the
        # higher cut-off.
        best = width - np.argmin(gap[:, ::-1], axis=1)
        chosen = [(low + int(i), t, share[i]) for t, i in zip(targets, best)]
    return pd.DataFrame(chosen, columns=["Cut-off", "Target approval share",
                                         "Achieved approval share"])


def _ratio(approved_g, total_g, approved_m, total_m) -> Fraction:
    """(approved_g / total_g) / (approved_m / total_m) in exact rational arithmetic."""
    return (Fraction(approved_g) * Fraction(total_m)) / (Fraction(total_g) * Fraction(approved_m))


def _below(approved_g, total_g, approved_m, total_m, impact_ratio: float) -> bool:
    """Exactly whether a group's rate ratio is below ``impact_ratio``.

    Floating-point division can land a ratio of exactly 4/5 a hair under 0.8; rational
    arithmetic, with the limit read as the decimal the user wrote, keeps the boundary exact.
    """
    return _ratio(approved_g, total_g, approved_m, total_m) < Fraction(str(impact_ratio))


def impact_table(counts: dict, cutoffs, sample: int, impact_ratio: float,
                 min_group_size: int, low: int) -> pd.DataFrame:
    """Approval rate of every group at every cut-off, against the most favoured group.

    The most favoured group is the one with the highest approval rate among the groups of at
    least ``min_group_size`` rows; smaller groups get the note ``too small to judge`` and no
    flag. A group is flagged ``below four-fifths`` when its rate divided by the most favoured
    rate is below ``impact_ratio``; a ratio exactly equal is not flagged. Groups without rows
    in the sample are left out.

    Parameters
    ----------
    counts : dict
        Column name -> :class:`ProtectedCounts`.
    cutoffs : sequence of float
        Cut-off scores; approve = score >= cut-off and the row not refused.
    sample : int
        Sample code (0 development, 1 holdout, 2 out of time).
    impact_ratio : float
    min_group_size : int
    low : int
        The scorecard's lowest score.
    """
    records = []
    for name, pc in counts.items():
        hist = pc.scores[:, sample]
        approved_all = _approved_by_cutoff(hist)
        totals = hist.sum(axis=(1, 2, 3))
        sizes = pc.rows[:, sample]
        present = np.flatnonzero(sizes > 0)
        judged = [g for g in present if sizes[g] >= min_group_size and totals[g] > 0]
        for cutoff in cutoffs:
            approved = approved_all[:, _cutoff_index(cutoff, low, hist.shape[-1])]
            rate = np.divide(approved, totals, out=np.full(len(totals), math.nan),
                             where=totals > 0)
            best = max(judged, key=lambda g: rate[g]) if judged else None
            for g in present:
                ratio, flag, note = _judge(g, best, sizes, approved, totals, impact_ratio,
                                           min_group_size)
                records.append({"Cut-off": cutoff, "Protected column": name,
                                "Group": pc.groups[g], "Rows": int(sizes[g]),
                                "Approval rate": rate[g], "Ratio to most favoured": ratio,
                                "Flag": flag, "Note": note})
    return pd.DataFrame(records, columns=["Cut-off", "Protected column", "Group", "Rows",
                                          "Approval rate", "Ratio to most favoured", "Flag",
                                          "Note"])


def _judge(g, best, sizes, approved, totals, impact_ratio, min_group_size):
    """Ratio to the most favoured group, the flag and the note of group ``g``."""
    favoured = best is not None and approved[best] > 0
    ratio = math.nan
    if favoured and totals[g] > 0:
        ratio = float(_ratio(approved[g], totals[g], approved[best], totals[best]))
    if sizes[g] < min_group_size:
        return ratio, "", f"{SMALL_GROUP_NOTE}: {int(sizes[g])} rows, fewer than {min_group_size}"
    if g == best:
        return ratio, "", FAVOURED_NOTE
    if favoured and totals[g] > 0 and _below(approved[g], totals[g], approved[best],
                                              totals[best], impact_ratio):
        return ratio, IMPACT_FLAG, ""
    return ratio, "", ""


def risk_table(counts: dict, card) -> pd.DataFrame:
    """Observed and predicted bad rate and average score by group, in every sample with rows.

    The predicted bad rate is the average of the bad probability that each row's score implies
    under the card's scaling. A group whose lower average score comes with a matching higher
    observed bad rate is scored in line with its risk; a gap between the observed and the
    predicted bad rate is not. Each sample starts with a row for all its rows.
    """
    scores = np.arange(card.min_score, card.max_score + 1)
    predicted = bad_probability(card, scores)
    records = []
    for name, pc in counts.items():
        for code, sample in SAMPLE_NAMES.items():
            sizes = pc.rows[:, code]
            if sizes.sum() == 0:
                continue
            hist = pc.scores[:, code]
            groups = [("all rows", int(sizes.sum()), hist.sum(axis=0))]
            groups += [(pc.groups[g], int(sizes[g]), hist[g]) for g in np.flatnonzero(sizes > 0)]
            for group, size, h in groups:
                records.append({"Protected column": name, "Sample": sample, "Group": group,
                                "Rows": size, **_risk_figures(h, scores, predicted)})
    return pd.DataFrame(records, columns=["Protected column", "Sample", "Group", "Rows", "Goods",
                                          "Bads", "Bad rate", "Predicted bad rate",
                                          "Average score"])


def _risk_figures(hist: np.ndarray, scores: np.ndarray, predicted: np.ndarray) -> dict:
    by_score = hist.sum(axis=(0, 1))
    total = by_score.sum()
    goods, bads = hist[GOOD].sum(), hist[BAD].sum()
    if not total > 0:
        return {"Goods": goods, "Bads": bads, "Bad rate": math.nan,
                "Predicted bad rate": math.nan, "Average score": math.nan}
    return {"Goods": goods, "Bads": bads, "Bad rate": bads / total,
            "Predicted bad rate": float(by_score @ predicted / total),
            "Average score": float(by_score @ scores / total)}


def compute_fairness(config, engine, rows, card) -> FairnessReport | None:
    """Run the fair-lending check of a built scorecard over the data on ``engine``.

    Parameters
    ----------
    config : Config
        Uses ``data.protected``, ``fairness`` and ``binning.max_levels``.
    engine : LocalEngine or another engine with ``reduce``
    rows : RowFacts
        Outcome, weight and sample of every row, as the build drew them.
    card : Scorecard

    Returns
    -------
    FairnessReport or None
        None when ``data.protected`` is empty.

    Examples
    --------
    >>> import tempfile
    >>> from scorecard.build.pipeline import build_scorecard, _outcome_facts
    >>> from scorecard.config.loading import load_config
    >>> from scorecard.demo.files import write_demo
    >>> from scorecard.api import open_engine
    >>> config = load_config(write_demo(tempfile.mkdtemp(), rows=3000))
    >>> engine = open_engine(config)
    >>> card = build_scorecard(config, engine).card
    >>> rows, _ = _outcome_facts(config, engine)
    >>> report = compute_fairness(config, engine, rows, card)
    >>> report.sample, report.proxies["Characteristic"].iloc[0]
    ('holdout', 'months_at_address')
    """
    columns = tuple(config.data.protected)
    if not columns:
        return None
    levels = _levels(config, engine, columns)
    counts = engine.reduce(protected_counts, merge_protected_counts, rows, card, levels)
    f = config.fairness
    first = counts[columns[0]]
    sample = HOLDOUT if first.rows[:, HOLDOUT].sum() > 0 else DEVELOPMENT
    cutoffs = choose_cutoffs(first.scores[:, sample].sum(axis=0), card.min_score,
                             f.approval_rates, f.cutoffs)
    impact = impact_table(counts, cutoffs["Cut-off"].tolist(), sample, f.impact_ratio,
                          f.min_group_size, card.min_score)
    proxies = proxy_table(counts, card, f.proxy_cramers_v)
    return FairnessReport(proxies, cutoffs, impact, risk_table(counts, card),
                          SAMPLE_NAMES[sample], _flags(proxies, impact, f),
                          _notes(config, SAMPLE_NAMES[sample]))


def _levels(config, engine, columns) -> dict:
    seen = engine.reduce(protected_levels, merge_level_sets, None, columns)
    most = config.binning.max_levels
    for name in columns:
        if len(seen[name]) > most:
            raise InputError(f"data.protected: column {name} has {len(seen[name])} distinct "
                             f"values (more than binning.max_levels {most}); put it into bands "
                             "such as age ranges for the fairness check")
    return {name: tuple(sorted(seen[name])) for name in columns}


def _flags(proxies: pd.DataFrame, impact: pd.DataFrame, f) -> tuple[str, ...]:
    proxy = proxies[proxies["Flag"] == PROXY_FLAG]
    out = [f"{char} may stand in for {column}: Cramér's V {v:.3f} (at or above "
           f"{f.proxy_cramers_v:g}) on the development sample"
           for column, char, v in zip(proxy["Protected column"], proxy["Characteristic"],
                                      proxy["Cramér's V"])]
    low = impact[impact["Flag"] == IMPACT_FLAG]
    out += [f"{column} = {group}: approval rate {rate:.1%} at cut-off {cutoff:g} is {ratio:.3f} "
            f"of the most favoured group's, {IMPACT_FLAG} (limit {f.impact_ratio:g})"
            for column, group, rate, cutoff, ratio in zip(
                low["Protected column"], low["Group"], low["Approval rate"], low["Cut-off"],
                low["Ratio to most favoured"])]
    return tuple(out)


def _notes(config, sample: str) -> tuple[str, ...]:
    f = config.fairness
    if f.cutoffs:
        how = "the cut-offs are those given in fairness.cutoffs"
    else:
        shares = ", ".join(f"{r:.0%}" for r in f.approval_rates)
        how = (f"each cut-off is the integer score whose approval share on the {sample} sample "
               f"is closest to {shares}")
    notes = [
        "Association is measured on the development sample, between each protected column and "
        "the bins of each characteristic in the model; Cramér's V is without bias correction.",
        f"Approval means a score at or above the cut-off, on the {sample} sample; rows in a bin "
        f"the scorecard refuses are never approved; {how}.",
        f"The most favoured group has the highest approval rate among groups of at least "
        f"{f.min_group_size} rows; smaller groups are {SMALL_GROUP_NOTE} and are not flagged.",
        "A missing protected value forms its own group, 'missing'.",
    ]
    if sample != "holdout":
        notes.append("There is no holdout sample, so cut-offs and approval rates come from the "
                     "development sample, on which the model was fitted.")
    return tuple(notes)
