"""Coarse classing: from fine-class counts to the bins of one characteristic.

Numeric fine classes are merged in value order, categorical levels in order of bad rate, by the
exact optimiser of :mod:`scorecard.binning.optimal`, with at most ``max_bins`` bins, or a limit
chosen for the characteristic on held-out folds (:mod:`scorecard.binning.bin_count`). Missing
values and each sentinel keep bins of their own. Manual ``cuts`` and ``groups`` from the config replace the optimiser. The result is a
draft :class:`~scorecard.card.scorecard.Characteristic` whose bins carry rules only; counts, weights of
evidence and points are filled in once the rows have been coded (see :mod:`scorecard.build.pipeline`).
"""

from __future__ import annotations

import zlib
from typing import NamedTuple

import numpy as np
import pandas as pd

from scorecard.binning.bin_count import (
    characteristic_seed,
    choose_bin_count,
    held_out_log_likelihoods,
)
from scorecard.binning.fine import NumericLayout, quantile_starts
from scorecard.binning.optimal import bin_of_fine_class, optimal_bins_each
from scorecard.card.scorecard import (
    LEVELS,
    MISSING,
    OUT_OF_RANGE,
    RANGE,
    SENTINEL,
    UNSEEN,
    Bin,
    Characteristic,
)
from scorecard.card.scoring import bin_codes
from scorecard.constraints import BIN_COUNT_FOLDS, CHOSEN_BINS_UP_TO
from scorecard.data.coding import grid_cells
from scorecard.errors import InputError
from scorecard.measures.information import shrunk_woe, woe_of_shares

OTHER_LEVELS = "other levels"
UNSEEN_NOTE = "not seen in development: weight of evidence 0 (average risk)"


class BinningOutcome(NamedTuple):
    """How one characteristic was classed."""

    draft: Characteristic | None   # None when it cannot form two bins
    fine_classes: int
    trend: str                     # trend used ('manual' for config cuts or groups)
    reason: str                    # '' when binned, else why not
    bins_reason: str = ""          # how the number of bins was chosen


class Limits(NamedTuple):
    """Size limits of a coarse bin, in development weight, and the prior on its WoE.

    ``max_bins`` None: the limit on the number of bins is chosen for each characteristic by
    held-out log-likelihood (:mod:`scorecard.binning.bin_count`), up to
    :data:`~scorecard.constraints.CHOSEN_BINS_UP_TO`, on folds seeded by ``seed``.
    """

    max_bins: int | None
    min_count: float
    min_goods: float
    min_bads: float
    prior_rows: float = 0.0
    seed: int = 0


def format_number(value: float) -> str:
    return f"{value:.6g}"


def range_label(lower: float | None, upper: float | None) -> str:
    """Plain text of a value range ``lower <= x < upper``."""
    if lower is None and upper is None:
        return "any value"
    if lower is None:
        return f"< {format_number(upper)}"
    if upper is None:
        return f">= {format_number(lower)}"
    return f"{format_number(lower)} to < {format_number(upper)}"


def _empty_bin(label: str, kind: str, **rule) -> Bin:
    return Bin(label=label, kind=kind, goods=0.0, bads=0.0, woe=0.0, points=0, **rule)


def numeric_draft(name: str, cuts, sentinels, development_range,
                  out_of_range_bin: bool) -> Characteristic:
    """Draft numeric characteristic: range bins from ``cuts``, then missing and sentinel bins."""
    cuts = tuple(float(c) for c in cuts)
    bounds = list(zip((None,) + cuts, cuts + (None,)))
    bins = [_empty_bin(range_label(lo, hi), RANGE, lower=lo, upper=hi) for lo, hi in bounds]
    bins.append(_empty_bin("missing", MISSING))
    bins += [_empty_bin(f"sentinel {format_number(v)}", SENTINEL, value=float(v))
             for v in sentinels]
    if out_of_range_bin:
        bins.append(_empty_bin("outside the development range", OUT_OF_RANGE))
    return Characteristic(name, "numeric", tuple(bins), 0.0, "", "", cuts=cuts,
                          sentinels=tuple(float(v) for v in sentinels),
                          development_range=development_range)


def categorical_draft(name: str, groups) -> Characteristic:
    """Draft categorical characteristic: one bin per group of levels, then missing and unseen."""
    bins = [_empty_bin(label, LEVELS, levels=tuple(levels)) for label, levels in groups]
    bins.append(_empty_bin("missing", MISSING))
    bins.append(_empty_bin("level not seen in development", UNSEEN))
    return Characteristic(name, "categorical", tuple(bins), 0.0, "", "")


def information_starts(goods: np.ndarray, bads: np.ndarray, fine_bins: int) -> np.ndarray:
    """First grid cell of each fine class: quantiles of the goods and, apart, of the bads.

    Equal shares of all rows put a tail that holds few rows but many bads into one fine class,
    where no coarse bin can split it; quantiles of each outcome place classes where either
    outcome is dense, so such a tail is cut as finely as the bulk. At most ``2 * fine_bins``
    classes; none starts on an empty cell.

    Examples
    --------
    >>> goods = np.array([40., 30, 20, 5, 4, 1])
    >>> bads = np.array([1., 1, 1, 4, 6, 7])
    >>> information_starts(goods, bads, 2).tolist()
    [0, 2, 5]
    """
    first = quantile_starts(goods + bads, 1)
    return np.unique(np.concatenate([first, quantile_starts(goods, fine_bins),
                                     quantile_starts(bads, fine_bins)]))


def class_numeric(name: str, layout: NumericLayout, goods: np.ndarray, bads: np.ndarray,
                  *, fine_bins: int, trend: str, limits: Limits, development_range,
                  manual_cuts=None, out_of_range_bin: bool = False) -> BinningOutcome:
    """Bins of a numeric characteristic from its grid-cell counts (development sample)."""
    cells = layout.n_cells
    regular = goods[:cells] + bads[:cells]
    # A declared sentinel the development rows never take gets no bin of its own.
    sentinels = tuple(v for i, v in enumerate(layout.sentinels)
                     if goods[cells + 1 + i] + bads[cells + 1 + i] > 0)
    if manual_cuts is not None:
        draft = numeric_draft(name, manual_cuts, sentinels, development_range, out_of_range_bin)
        return BinningOutcome(draft, 0, "manual", "")
    if regular.sum() <= 0:
        return BinningOutcome(None, 0, trend, "no values besides missing values and sentinels")
    starts = information_starts(goods[:cells], bads[:cells], fine_bins)
    fine_goods = np.add.reduceat(goods[:cells], starts)
    fine_bads = np.add.reduceat(bads[:cells], starts)
    def fit(g, b, total_goods, total_bads, max_bins, share=1.0):
        return optimal_bins_each(
            g, b, total_goods=total_goods, total_bads=total_bads, trend=trend,
            max_bins=max_bins, min_bin_count=limits.min_count * share,
            min_bin_goods=limits.min_goods, min_bin_bads=limits.min_bads,
            prior_rows=limits.prior_rows)

    # A fine class's key is the first grid cell it holds, which the grid fixes.
    result, bins_reason = _classed(name, fine_goods, fine_bads, starts, goods.sum(), bads.sum(),
                                   fit, limits, lambda g, b: np.arange(len(g)))
    if not result.feasible:
        reason = "a single value" if len(starts) == 1 else result.reason
        return BinningOutcome(None, len(starts), result.trend, f"cannot form two bins: {reason}")
    cut_cells = starts[list(result.starts[1:])]
    cuts = layout.cuts[cut_cells - 1]
    draft = numeric_draft(name, cuts, sentinels, development_range, out_of_range_bin)
    return BinningOutcome(draft, len(starts), result.trend, "", bins_reason)


def _classed(name, fine_goods, fine_bads, cells, total_goods, total_bads, fit, limits, order):
    """The optimal bins of the fine classes (``fit`` at the limit) and a note on the limit.

    ``fit(goods, bads, total_goods, total_bads, max_bins, share)`` gives the optimum at every
    limit up to ``max_bins``, the smallest bin being ``share`` of the development one (the
    training folds hold a share of the rows). ``order(goods, bads)``: the order in which the
    optimiser takes the fine classes, found again on each fold's training counts (categorical
    levels go by their bad rate there). With a fixed ``limits.max_bins`` that limit is used as
    it is; else it is chosen by held-out log-likelihood on folds of the fine classes' counts.
    """
    if limits.max_bins is not None:
        found = order(fine_goods, fine_bads)
        result = fit(fine_goods[found], fine_bads[found], total_goods, total_bads,
                     limits.max_bins)[-1]
        return result, "" if not result.feasible else \
            f"{len(result.starts)} bins: at most binning.max_bins ({limits.max_bins})"
    upper = CHOSEN_BINS_UP_TO.default
    other_goods = total_goods - fine_goods.sum()
    other_bads = total_bads - fine_bads.sum()

    def bins_of_each_limit(g, b, tg, tb):
        found = order(g, b)
        place = np.empty(len(found), dtype=np.intp)
        place[found] = np.arange(len(found))
        share = (tg + tb) / (total_goods + total_bads)
        return [bin_of_fine_class(r.starts, len(g))[place]
                for r in fit(g[found], b[found], tg, tb, upper, share)]

    per_fold = held_out_log_likelihoods(
        fine_goods, fine_bads, cells, bins_of_each_limit, characteristic_seed(limits.seed, name),
        BIN_COUNT_FOLDS.default, limits.prior_rows, other_goods, other_bads)
    choice = choose_bin_count(per_fold, range(2, upper + 1))
    found = order(fine_goods, fine_bads)
    result = fit(fine_goods[found], fine_bads[found], total_goods, total_bads,
                 upper)[choice.bins - 2]
    return result, choice.reason(len(result.starts)) if result.feasible else ""


def class_categorical(name: str, levels, goods: np.ndarray, bads: np.ndarray, *,
                      rare_share: float, limits: Limits, manual_groups=None,
                      override_key: str = "") -> BinningOutcome:
    """Bins of a categorical characteristic from its level counts (last entry: missing)."""
    levels = list(levels)
    lg, lb = goods[: len(levels)], bads[: len(levels)]
    counts = lg + lb
    present = [lv for lv, c in zip(levels, counts) if c > 0]
    if manual_groups is not None:
        listed = {lv for g in manual_groups for lv in g}
        lost = [lv for lv in present if lv not in listed]
        if lost:
            raise InputError(f"{override_key}.groups: level {lost[0]!r} of {name} is in the "
                             "data but in no group")
        groups = [(", ".join(g), tuple(g)) for g in manual_groups]
        return BinningOutcome(categorical_draft(name, groups), len(present), "manual", "")
    total = counts.sum()
    if total <= 0:
        return BinningOutcome(None, 0, "rises", "no values besides missing")
    rare = (counts > 0) & (counts < rare_share * total)
    classes = [(lv, (lv,), g, b) for lv, g, b, c, r in zip(levels, lg, lb, counts, rare)
               if c > 0 and not r]
    if rare.any():
        pooled = tuple(lv for lv, r in zip(levels, rare) if r)
        classes.append((OTHER_LEVELS, pooled, lg[rare].sum(), lb[rare].sum()))
    # Labels sorted once, so that the order of levels in the file never matters.
    classes.sort(key=lambda c: c[0])
    labels = [c[0] for c in classes]
    fine_goods = np.array([c[2] for c in classes], dtype=float)
    fine_bads = np.array([c[3] for c in classes], dtype=float)
    def by_bad_rate(g, b):
        # Order by bad rate, then by label (the classes are in label order), so that ties
        # never depend on the file's level order. A class with no rows here goes last.
        n = g + b
        rate = np.divide(b, n, out=np.full(len(n), np.inf), where=n > 0)
        return np.lexsort((np.arange(len(n)), rate))

    def fit(g, b, total_goods, total_bads, max_bins, share=1.0):
        return optimal_bins_each(
            g, b, total_goods=total_goods, total_bads=total_bads, trend="rises",
            max_bins=max_bins, min_bin_count=limits.min_count * share,
            min_bin_goods=limits.min_goods, min_bin_bads=limits.min_bads,
            prior_rows=limits.prior_rows)

    # A class's key is a hash of its label, which no other class's presence changes.
    cells = np.array([zlib.crc32(label.encode("utf-8")) for label in labels], dtype=np.uint64)
    result, bins_reason = _classed(name, fine_goods, fine_bads, cells, goods.sum(), bads.sum(),
                                   fit, limits, by_bad_rate)
    if not result.feasible:
        reason = "a single level" if len(classes) == 1 else result.reason
        return BinningOutcome(None, len(classes), "rises", f"cannot form two bins: {reason}")
    ordered = [classes[i] for i in by_bad_rate(fine_goods, fine_bads)]
    bounds = list(result.starts) + [len(ordered)]
    groups = [(", ".join(c[0] for c in ordered[lo:hi]),
               tuple(lv for c in ordered[lo:hi] for lv in c[1]))
              for lo, hi in zip(bounds[:-1], bounds[1:])]
    return BinningOutcome(categorical_draft(name, groups), len(classes), "rises", "",
                          bins_reason)


def bins_of_fine_classes(char: Characteristic, layout) -> np.ndarray | None:
    """The bin of each fine code, when every fine class falls whole into one bin; else None.

    Then a characteristic's counts by bin are sums of its fine-class counts, exactly, and need
    no pass over the rows. That holds when every cut is a cut of the fine grid (manual cuts may
    not be), and when no bin depends on the development range, as an out-of-range bin does:
    a grid cell can straddle the range's end. Categorical fine classes are the levels, whose
    bins :func:`scorecard.card.scoring.bin_codes` gives by the same text matching as for rows.

    Examples
    --------
    >>> char = numeric_draft("x", [2.0], (), (0.0, 9.0), out_of_range_bin=False)
    >>> bins_of_fine_classes(char, NumericLayout(np.array([1.0, 2.0, 3.0]), ())).tolist()
    [0, 0, 1, 1, 2]
    """
    missing = char.bin_index(MISSING)
    if missing is None:
        return None
    if isinstance(layout, NumericLayout):
        cuts = np.asarray(char.cuts, dtype=float)
        if char.bin_index(OUT_OF_RANGE) is not None or not np.isin(cuts, layout.cuts).all():
            return None
        # A cell's lower edge stands for the whole cell: no bin cut falls inside a cell.
        cells = grid_cells(np.concatenate([[-np.inf], layout.cuts]), cuts)
        own_bin = {b.value: i for i, b in enumerate(char.bins) if b.kind == SENTINEL}
        # A declared sentinel with no bin of its own is scored by its value.
        sentinels = [own_bin.get(v, int(grid_cells(np.array([v]), cuts)[0]))
                    for v in layout.sentinels]
        return np.concatenate([cells, [missing], sentinels]).astype(np.intp)
    if char.bin_index(UNSEEN) is None:
        return None
    levels = pd.Series(list(layout) + [None], dtype=object)
    return bin_codes(char, levels)[0].astype(np.intp)


def limits_from(total_weight: float, max_bins: int | None, min_share: float, min_goods: float,
                min_bads: float, prior_rows: float = 0.0, seed: int = 0) -> Limits:
    return Limits(max_bins, min_share * total_weight, max(min_goods, 1.0), max(min_bads, 1.0),
                  prior_rows, seed)


def bin_weights_of_evidence(goods: np.ndarray, bads: np.ndarray, kinds, limits: Limits,
                            ) -> tuple[np.ndarray, list[str]]:
    """WoE of each bin, with the documented fallbacks and a note per bin.

    With a prior (``limits.prior_rows > 0``) every bin's WoE is shrunk toward 0 by it
    (:func:`scorecard.measures.information.shrunk_woe`), which is finite for any bin with rows,
    however small or one-sided, and 0 for a bin with none. Without a prior, a range or group bin with no goods or no bads (possible only with manual cuts or groups) gets
    0.5 added to its goods and bads. A missing, sentinel, unseen or out-of-range bin with
    fewer goods or bads than the bin limits is too small to estimate and gets WoE 0, the average
    risk of the development sample.
    """
    kinds = np.asarray(kinds, dtype=object)
    if limits.prior_rows > 0:
        unseen = goods + bads <= 0
        woe = np.where(unseen, 0.0, shrunk_woe(goods, bads, goods.sum(), bads.sum(),
                                               limits.prior_rows))
        notes = np.where(unseen, UNSEEN_NOTE, "")
        return woe, notes.tolist()
    grouped = np.isin(kinds, (RANGE, LEVELS))
    one_sided = grouped & ((goods <= 0) | (bads <= 0))
    unseen = ~grouped & (goods + bads <= 0)
    too_small = ~grouped & ~unseen & ((goods < limits.min_goods) | (bads < limits.min_bads))
    # The 0.5 goes to the bin only: the shares stay those of the development totals.
    g = np.where(one_sided, goods + 0.5, goods)
    b = np.where(one_sided, bads + 0.5, bads)
    estimated = ~(unseen | too_small)
    woe = np.where(estimated, woe_of_shares(g / goods.sum(), b / bads.sum()), 0.0)
    notes = np.select(
        [one_sided, unseen, too_small],
        ["no goods or no bads: 0.5 added to each before the weight of evidence",
         UNSEEN_NOTE,
         "too few rows to estimate: weight of evidence 0 (average risk)"], "")
    return woe, notes.tolist()
