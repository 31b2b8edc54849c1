"""Points scaling against the published worked example and the definition of the scaling."""

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from scorecard.card.points import (
    attribute_points,
    bad_probability_of_score,
    largest_rounding_change,
    odds_of_score,
    scaling,
    score_of_odds,
)


def test_siddiqi_scaling_example():
    # Siddiqi, Credit Risk Scorecards (2006), scaling chapter (published, from memory):
    # 600 points at 50:1 with 20 points to double the odds.
    s = scaling(600, 50, 20)
    assert round(s.factor, 4) == 28.8539
    assert round(s.offset, 4) == 487.1229
    assert score_of_odds(100, s) == pytest.approx(620)
    assert score_of_odds(25, s) == pytest.approx(580)
    assert score_of_odds(50, s) == pytest.approx(600)


def test_odds_and_probability_invert_each_other():
    # Odds of 3:1 mean a bad probability of 1/4 (REFERENCES.md, common practice).
    s = scaling(600, 50, 20)
    score = score_of_odds(3.0, s)
    assert odds_of_score(score, s) == pytest.approx(3.0)
    assert bad_probability_of_score(score, s) == pytest.approx(0.25)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(-3, 3), min_size=1, max_size=12), st.floats(0.1, 3), st.floats(-4, 4))
def test_points_sum_to_the_scaled_log_odds_before_rounding(woe, beta, alpha):
    # Definition: one attribute from each of k characteristics; their exact points add up to
    # offset + factor * (alpha + sum beta * woe), and rounding moves each by at most 0.5.
    s = scaling(600, 50, 20)
    k = len(woe)
    parts = [attribute_points([w], beta, alpha, k, s) for w in woe]
    assert all(p.points.dtype.kind == "i" for p in parts)
    assert all(abs(p.points[0] - p.exact[0]) <= 0.5 for p in parts)
    total = sum(p.exact[0] for p in parts)
    assert total == pytest.approx(s.offset + s.factor * (alpha + beta * sum(woe)), abs=1e-9)


def test_largest_rounding_change_is_the_worst_combination():
    exact = [np.array([1.4, 2.6]), np.array([3.3, 0.2])]
    # Errors: [-0.4, 0.4] and [-0.3, -0.2]: worst total is -0.4 - 0.3 = -0.7.
    assert largest_rounding_change(exact) == pytest.approx(0.7)


def test_scaling_refuses_non_positive_pdo():
    with pytest.raises(ValueError):
        scaling(600, 50, 0)
    assert math.isfinite(scaling(600, 1, 20).offset)
