"""Coarse classing of one characteristic from its counts."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from scorecard.binning.coarse import (
    OTHER_LEVELS,
    Limits,
    bin_weights_of_evidence,
    class_categorical,
    class_numeric,
)
from scorecard.binning.fine import NumericLayout
from scorecard.card.scorecard import LEVELS, MISSING, RANGE, SENTINEL
from scorecard.errors import InputError
from scorecard.measures.information import weight_of_evidence, woe_of_shares

LIMITS = Limits(max_bins=4, min_count=50, min_goods=5, min_bads=5)


def _numeric_counts(seed=0):
    rng = np.random.default_rng(seed)
    cuts = np.arange(1, 100, dtype=float)
    layout = NumericLayout(cuts, (-999.0, -1.0))
    x = rng.uniform(0, 100, 5000)
    bad = rng.random(5000) < 0.02 + 0.002 * x      # bad rate rises with x
    cell = np.searchsorted(cuts, x, side="right")
    n = layout.n_codes
    goods = np.bincount(cell[~bad], minlength=n).astype(float)
    bads = np.bincount(cell[bad], minlength=n).astype(float)
    goods[layout.missing_code] += 300
    bads[layout.missing_code] += 40
    goods[layout.missing_code + 1] += 100           # -999 present; -1 absent
    bads[layout.missing_code + 1] += 30
    return layout, goods, bads


def test_numeric_bins_are_monotone_and_missing_and_sentinels_stay_apart():
    layout, goods, bads = _numeric_counts()
    out = class_numeric("x", layout, goods, bads, fine_bins=20, trend="detect", limits=LIMITS,
                        development_range=(0.0, 100.0))
    assert out.trend == "rises" and out.reason == ""
    kinds = [b.kind for b in out.draft.bins]
    ranges = kinds.count(RANGE)
    assert 2 <= ranges <= LIMITS.max_bins
    # Sentinels the development rows never take get no bin (-1 here).
    assert kinds[ranges:] == [MISSING, SENTINEL]
    assert out.draft.sentinels == (-999.0,)
    assert list(out.draft.cuts) == sorted(out.draft.cuts)
    assert set(out.draft.cuts) <= set(layout.cuts)


def test_manual_cuts_override_the_optimiser():
    layout, goods, bads = _numeric_counts()
    out = class_numeric("x", layout, goods, bads, fine_bins=20, trend="detect", limits=LIMITS,
                        development_range=(0.0, 100.0), manual_cuts=(25.5, 60.0))
    assert out.trend == "manual"
    assert out.draft.cuts == (25.5, 60.0)
    assert [b.label for b in out.draft.bins][:3] == ["< 25.5", "25.5 to < 60", ">= 60"]


def test_a_single_value_cannot_form_two_bins_and_says_so():
    layout = NumericLayout(np.array([1.0, 2.0]), ())
    goods = np.array([0, 500, 0, 0], dtype=float)
    bads = np.array([0, 50, 0, 0], dtype=float)
    out = class_numeric("x", layout, goods, bads, fine_bins=10, trend="detect", limits=LIMITS,
                        development_range=(1.0, 1.0))
    assert out.draft is None and "cannot form two bins" in out.reason


def test_categorical_levels_ordered_by_bad_rate_and_rare_levels_pooled():
    levels = ("a", "b", "c", "d", "rare1", "rare2")
    goods = np.array([900, 700, 500, 300, 3, 2, 50], dtype=float)   # last entry: missing
    bads = np.array([20, 40, 60, 80, 1, 1, 10], dtype=float)
    out = class_categorical("k", levels, goods, bads, rare_share=0.01, limits=LIMITS)
    groups = [b for b in out.draft.bins if b.kind == LEVELS]
    members = [lv for g in groups for lv in g.levels]
    assert sorted(members) == sorted(levels)
    assert any(OTHER_LEVELS in g.label for g in groups)
    rates = [g.levels for g in groups]
    assert rates[0][0] == "a"            # lowest bad rate first


def test_manual_groups_must_cover_every_level():
    levels = ("owner", "renter", "boat")
    goods = np.array([100, 100, 100, 0], dtype=float)
    bads = np.array([10, 20, 30, 0], dtype=float)
    with pytest.raises(InputError, match="characteristics.housing.groups: level 'boat'"):
        class_categorical("housing", levels, goods, bads, rare_share=0.0, limits=LIMITS,
                          manual_groups=(("owner",), ("renter",)),
                          override_key="characteristics.housing")


def test_small_missing_bin_falls_back_to_average_risk():
    woe, notes = bin_weights_of_evidence(np.array([500., 400., 3.]), np.array([50., 80., 1.]),
                                         [RANGE, RANGE, MISSING], LIMITS)
    assert woe[2] == 0.0 and "too few rows" in notes[2]
    assert woe[0] == pytest.approx(np.log((500 / 903) / (50 / 131)))


@settings(deadline=None, max_examples=60)
@given(st.lists(st.tuples(st.integers(1, 400), st.integers(1, 400),
                          st.sampled_from((RANGE, LEVELS, MISSING, SENTINEL))),
                min_size=2, max_size=8))
def test_bin_woe_is_the_measure_wherever_no_fallback_applies(bins):
    # One implementation: a bin with goods and bads that the fallbacks leave alone gets exactly
    # measures.weight_of_evidence, ln((g_i / G) / (b_i / B)), the trade's definition (Siddiqi
    # 2006, published, from memory). Missing and sentinel bins below the limits get WoE 0.
    goods = np.array([b[0] for b in bins], dtype=float)
    bads = np.array([b[1] for b in bins], dtype=float)
    kinds = [b[2] for b in bins]
    woe, notes = bin_weights_of_evidence(goods, bads, kinds, LIMITS)
    estimated = np.array([k in (RANGE, LEVELS) or (g >= LIMITS.min_goods and b >= LIMITS.min_bads)
                          for g, b, k in bins])
    np.testing.assert_array_equal(woe[estimated], weight_of_evidence(goods, bads)[estimated])
    assert [n for n, e in zip(notes, estimated) if e] == [""] * estimated.sum()
    assert woe[~estimated].tolist() == [0.0] * (~estimated).sum()
    assert all("too few rows" in n for n, e in zip(notes, estimated) if not e)


def test_one_sided_range_bin_gets_half_added_to_its_own_counts_only():
    # The documented fallback: 0.5 added to the bin's goods and bads, shares of the unchanged
    # development totals (G = 600, B = 60).
    woe, notes = bin_weights_of_evidence(np.array([500., 100.]), np.array([60., 0.]),
                                         [RANGE, RANGE], LIMITS)
    assert woe[1] == woe_of_shares(100.5 / 600, 0.5 / 60) == pytest.approx(np.log(20.1), rel=1e-14)
    assert woe[0] == weight_of_evidence([500, 100], [60, 0])[0]
    assert notes == ["", "no goods or no bads: 0.5 added to each before the weight of evidence"]


def test_a_strong_small_level_gets_its_own_bin_under_the_default_prior():
    # Known truth (simulation): 1,700 applicants; a level held by 1.5% of them has a true bad
    # rate of 0.9 against 0.1 for the rest. Under the former rule (10 goods and 10 bads per
    # bin, no prior) it cannot form a bin, so the characteristic was lost; with the default
    # prior it forms one, scored well below average and short of its raw weight of evidence.
    from scorecard import constraints as c
    from scorecard.binning.coarse import limits_from
    from scorecard.measures.information import shrunk_woe

    rng = np.random.default_rng(5)
    held = rng.random(1700) < 0.015
    bad = rng.random(1700) < np.where(held, 0.9, 0.1)
    levels = ("no", "yes")
    goods = np.array([np.sum(~held & ~bad), np.sum(held & ~bad), 0.0])
    bads = np.array([np.sum(~held & bad), np.sum(held & bad), 0.0])
    assert goods[1] < 10
    total = goods.sum() + bads.sum()
    former = limits_from(total, c.MAX_BINS.default, c.MIN_BIN_SHARE.default, 10, 10, 0.0)
    assert class_categorical("cover", levels, goods, bads, rare_share=0.01,
                             limits=former).draft is None
    now = limits_from(total, c.MAX_BINS.default, c.MIN_BIN_SHARE.default,
                      c.MIN_BIN_GOODS.default, c.MIN_BIN_BADS.default, c.PRIOR_ROWS.default)
    draft = class_categorical("cover", levels, goods, bads, rare_share=0.01, limits=now).draft
    assert [b.levels for b in draft.bins if b.kind == LEVELS] == [("no",), ("yes",)]
    woe, _ = bin_weights_of_evidence(goods, bads, [LEVELS, LEVELS, MISSING], now)
    raw = woe_of_shares(goods[1] / goods.sum(), bads[1] / bads.sum())
    true_woe = np.log((0.1 / 0.9) / (goods.sum() / bads.sum()))
    assert raw < woe[1] < -1.5 and true_woe < -2.5
    assert woe[1] == pytest.approx(shrunk_woe(goods[1], bads[1], goods.sum(), bads.sum(), 20.0))
