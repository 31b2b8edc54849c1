"""Reason codes: ranking by points lost, ties, pooled codes, refusals, on hand-built scorecards."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from scorecard.card.points import scaling
from scorecard.card.scorecard import LEVELS, MISSING, RANGE, UNSEEN, Bin, Characteristic, Scorecard
from scorecard.card.scoring import apply_scorecard, reason_codes, reason_groups, reasons


def numeric(name, code, points, reason="", rejected_missing=False):
    """A numeric characteristic with cuts 1, 2, ... and one range bin per entry of ``points``."""
    cuts = tuple(float(i) for i in range(1, len(points)))
    bounds = list(zip((None,) + cuts, cuts + (None,)))
    bins = tuple(Bin(f"bin {i}", RANGE, 10, 10, 0.0, p, lower=lo, upper=hi)
                 for i, (p, (lo, hi)) in enumerate(zip(points, bounds)))
    bins += (Bin("missing", MISSING, 0, 0, 0.0, 0, rejected=rejected_missing),)
    return Characteristic(name, "numeric", bins, 1.0, code, reason or f"{name} is low", cuts=cuts)


def card_of(*chars):
    return Scorecard("hand-built", scaling(600, 50, 20), 0.0, tuple(chars))


THREE = card_of(numeric("a", "RA", [0, 10, 30]), numeric("b", "RB", [5, 25]),
                numeric("c", "RC", [40, 0, 20]))


def test_a_row_at_every_maximum_gets_no_reason():
    # maxima: a 30, b 25, c 40
    got = reasons(THREE, np.array([[30, 25, 40]]), 3)
    assert got.tolist() == [["", "", ""]]


def test_reasons_are_ranked_by_points_lost_largest_first():
    # Shortfalls worked by hand against the maxima a 30, b 25, c 40. Row 1: a 30, b 20, c 20
    # (b and c tie; b is first in the card). Row 2: a 0, b 20, c 40. Row 3: only a loses (20).
    got = reasons(THREE, np.array([[0, 5, 20], [30, 5, 0], [10, 25, 40]]), 3)
    assert got.tolist() == [["RA", "RB", "RC"], ["RC", "RB", ""], ["RA", "", ""]]


def test_ties_go_to_the_characteristic_first_in_the_scorecard():
    # b and c lose 20 each; in the reversed card c comes first and must lead.
    tie = np.array([[30, 5, 20]])
    assert reasons(THREE, tie, 2).tolist() == [["RB", "RC"]]
    reversed_card = card_of(*reversed(THREE.characteristics))
    assert reasons(reversed_card, tie[:, ::-1], 2).tolist() == [["RC", "RB"]]


def test_more_reasons_asked_than_characteristics_pads_with_empty_and_none_gives_no_columns():
    assert reasons(THREE, np.array([[0, 5, 0]]), 5).tolist() == [["RC", "RA", "RB", "", ""]]
    assert reasons(THREE, np.array([[0, 5, 0]]), 0).shape == (1, 0)


def test_default_is_at_most_four_reasons():
    # More than four principal reasons are not likely to help an applicant
    # (US Regulation B, 12 CFR 1002.9(b)(2) and its official interpretation; from memory).
    card = card_of(*(numeric(f"x{i}", f"R{i}", [0, 10]) for i in range(6)))
    got = reasons(card, np.zeros((1, 6), dtype=int))
    assert got.tolist() == [["R0", "R1", "R2", "R3"]]


def test_characteristics_sharing_a_code_pool_their_shortfall_and_the_code_appears_once():
    card = card_of(numeric("a", "R_CREDIT", [0, 10]), numeric("b", "R_HOME", [0, 15]),
                   numeric("c", "R_CREDIT", [0, 10]))
    labels, group = reason_groups(card)
    assert labels == ("R_CREDIT", "R_HOME") and group.tolist() == [0, 1, 0]
    # R_CREDIT loses 10 + 10 = 20 > R_HOME 15; alone (c at its maximum) it loses 10 < 15.
    got = reasons(card, np.array([[0, 0, 0], [0, 0, 10], [10, 15, 10]]), 3)
    assert got.tolist() == [["R_CREDIT", "R_HOME", ""], ["R_HOME", "R_CREDIT", ""], ["", "", ""]]


def test_reason_text_joins_the_distinct_texts_of_a_shared_code():
    card = card_of(numeric("a", "R1", [0, 10], "Short credit history"),
                   numeric("b", "R2", [0, 10], "Low income"),
                   numeric("c", "R1", [0, 10], "Few accounts"))
    got = reason_codes(card, np.array([[0, 10, 10]]), 2, text=True).as_text()
    assert got.tolist() == [["Short credit history; Few accounts", ""]]


def test_a_refused_row_names_each_refusing_characteristic_and_nothing_else():
    card = card_of(numeric("a", "RA", [0, 10], rejected_missing=True),
                   numeric("b", "RB", [0, 10]),
                   numeric("c", "RC", [0, 10], rejected_missing=True))
    frame = pd.DataFrame({"a": [None, None, 0.5], "b": [0.5, 0.5, 0.5], "c": [None, 2.0, 2.0]})
    s = apply_scorecard(card, frame)
    assert s.rejected.tolist() == [True, True, False]
    assert s.refused.tolist() == [[True, False, True], [True, False, False], [False] * 3]
    got = reason_codes(card, s.points, 3, s.refused).as_text()
    assert got.tolist() == [["REJECTED:a", "REJECTED:c", ""], ["REJECTED:a", "", ""],
                            ["RA", "RB", ""]]


def test_negative_n_is_refused():
    with pytest.raises(ValueError):
        reason_codes(THREE, np.zeros((1, 3), dtype=int), -1)


def _reference(card, points, n):
    """Plain-Python ranking straight from the rule, one row at a time (test only)."""
    labels, group = reason_groups(card)
    maxima = [c.max_points for c in card.characteristics]
    out = []
    for row in points:
        lost = [0] * len(labels)
        for j, p in enumerate(row):
            lost[group[j]] += maxima[j] - int(p)
        ranked = sorted((g for g in range(len(labels)) if lost[g] > 0),
                        key=lambda g: (-lost[g], g))[:n]
        out.append([labels[g] for g in ranked] + [""] * (n - len(ranked)))
    return out


POINT_CHOICES = [[0, 10, 30], [5, 25], [40, 0, 20], [7, 7, 3]]


@st.composite
def cards_and_points(draw):
    k = draw(st.integers(1, 6))
    shapes = [draw(st.sampled_from(POINT_CHOICES)) for _ in range(k)]
    codes = [draw(st.sampled_from(["R1", "R2", "R3", "R4", "R5"])) for _ in range(k)]
    card = card_of(*(numeric(f"x{j}", code, pts)
                     for j, (code, pts) in enumerate(zip(codes, shapes))))
    rows = draw(st.integers(1, 12))
    picks = draw(arrays(np.int64, (rows, k), elements=st.integers(0, 2)))
    points = np.array([[shapes[j][min(i, len(shapes[j]) - 1)] for j, i in enumerate(r)]
                       for r in picks], dtype=np.int64).reshape(rows, k)
    return card, points, draw(st.integers(0, 7))


@settings(max_examples=200, deadline=None)
@given(cards_and_points())
def test_vectorised_ranking_equals_the_rule_applied_row_by_row(case):
    card, points, n = case
    assert reasons(card, points, n).tolist() == _reference(card, points, n)


@settings(max_examples=100, deadline=None)
@given(cards_and_points())
def test_reasons_are_distinct_codes_that_lost_points_in_non_increasing_order(case):
    card, points, n = case
    labels, group = reason_groups(card)
    maxima = np.array([c.max_points for c in card.characteristics])
    lost = np.zeros((len(points), len(labels)), dtype=np.int64)
    for j, g in enumerate(group):
        lost[:, g] += maxima[j] - points[:, j]
    got = reason_codes(card, points, n)
    for row, idx in enumerate(got.index):
        given_codes = [i for i in idx if i >= 0]
        assert len(set(given_codes)) == len(given_codes)
        assert all(lost[row, i] > 0 for i in given_codes)
        assert len(given_codes) == min(n, int((lost[row] > 0).sum()))
        shortfalls = [lost[row, i] for i in given_codes]
        assert shortfalls == sorted(shortfalls, reverse=True)
        assert list(idx[len(given_codes):]) == [-1] * (n - len(given_codes))


def test_unseen_and_missing_bins_are_reasons_when_they_lose_points():
    levels = (Bin("owner", LEVELS, 50, 5, 0.5, 60, levels=("owner",)),
              Bin("renter", LEVELS, 40, 15, -0.3, 40, levels=("renter",)),
              Bin("missing", MISSING, 0, 0, 0.0, 50),
              Bin("unseen", UNSEEN, 0, 0, 0.0, 50))
    housing = Characteristic("housing", "categorical", levels, 1.0, "RH", "Housing")
    card = card_of(housing)
    s = apply_scorecard(card, pd.DataFrame({"housing": ["owner", "boat", None, "renter"]}))
    # maximum 60 over the bins with development rows; unseen and missing score 50, renter 40.
    assert s.points[:, 0].tolist() == [60, 50, 50, 40]
    assert reasons(card, s.points, 1).tolist() == [[""], ["RH"], ["RH"], ["RH"]]
