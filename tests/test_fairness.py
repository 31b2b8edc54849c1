"""The fair-lending check: counts by protected group, proxies, adverse impact, the sheet."""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from openpyxl import Workbook, load_workbook
from scipy.stats.contingency import association
from sklearn.metrics import mutual_info_score

from scorecard.api import open_engine
from scorecard.build.pipeline import _outcome_facts, build_scorecard
from scorecard.card.points import scaling
from scorecard.card.scorecard import LEVELS, MISSING, RANGE, UNSEEN, Bin, Characteristic, Scorecard
from scorecard.cli import main
from scorecard.config.loading import load_config
from scorecard.data.samples import DEVELOPMENT, HOLDOUT
from scorecard.demo.files import write_demo
from scorecard.engines.local import LocalEngine
from scorecard.engines.passes import RowFacts
from scorecard.errors import InputError
from scorecard.evaluation.fairness import (
    IMPACT_FLAG,
    PROXY_FLAG,
    FairnessReport,
    choose_cutoffs,
    compute_fairness,
    impact_table,
    merge_protected_counts,
    protected_counts,
    protected_levels,
    proxy_table,
    risk_table,
)
from scorecard.outputs.workbook.fairness_sheet import CAUTION, write_fairness_sheet

GROUPS = ("p", "q", "r")


def _card() -> Scorecard:
    """x: 10 points below 1, 30 at or above, 20 missing; c: a or b 0, c 5, unseen 2, missing 1."""
    x = Characteristic("x", "numeric", (
        Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0),
        Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0),
        Bin("missing", MISSING, 5, 5, 0.0, 20)), 1.0, "R01", "x is low", cuts=(1.0,))
    c = Characteristic("c", "categorical", (
        Bin("a, b", LEVELS, 50, 20, -0.2, 0, levels=("a", "b")),
        Bin("c", LEVELS, 80, 10, 0.6, 5, levels=("c",)),
        Bin("unseen", UNSEEN, 0, 0, 0.0, 2),
        Bin("missing", MISSING, 5, 5, 0.0, 1)), 1.0, "R02", "c is poor")
    return Scorecard("test", scaling(600, 50, 20), 0.5, (x, c))


def _reference_bins(chunk: pd.DataFrame) -> tuple[np.ndarray, np.ndarray]:
    """Bins of x and c by the card's rules, written out independently of the scoring module."""
    x = chunk["x"].to_numpy(dtype=float)
    x_bin = np.where(np.isnan(x), 2, np.where(x >= 1.0, 1, 0))
    # As plain objects: a categorical column would map to a categorical that refuses the
    # fill value 3 when no level maps to it.
    levels = chunk["c"].astype(object)
    c_bin = levels.map({"a": 0, "b": 0, "c": 1, "d": 2}).fillna(3).to_numpy(dtype=int)
    return x_bin, c_bin


def _random_rows(seed: int, n: int):
    rng = np.random.default_rng(seed)
    group = rng.choice(np.array(["p", "q", "r", None], dtype=object), n, p=[0.4, 0.3, 0.2, 0.1])
    x = np.where(rng.random(n) < 0.1, np.nan, rng.exponential(1.0, n))
    c = rng.choice(np.array(["a", "b", "c", "d", None], dtype=object), n)
    chunk = pd.DataFrame({"g": pd.Categorical(group), "x": x, "c": pd.Categorical(c)})
    sample = rng.integers(-1, 3, n).astype(np.int8)
    label = np.where(sample < 0, -1, rng.integers(0, 2, n)).astype(np.int8)
    weight = rng.integers(1, 4, n).astype(float)
    return chunk, RowFacts(label, weight, sample)


def _counts(chunk, rows):
    return protected_counts(chunk, rows, _card(), {"g": GROUPS})


# --- counts and association --------------------------------------------------------------


# Draws with a single group or bin are skipped below; their documented warning is expected.
@pytest.mark.filterwarnings("ignore:fairness.*association is not measured:UserWarning")
@settings(max_examples=30, deadline=None)
@given(st.integers(0, 2**32 - 1), st.integers(30, 400))
def test_association_matches_scipy_and_sklearn_on_the_development_rows(seed, n):
    chunk, rows = _random_rows(seed, n)
    rows = RowFacts(rows.label, np.ones(n), rows.sample)   # the references count rows, unweighted
    table = proxy_table(_counts(chunk, rows), _card(), threshold=0.15).set_index("Characteristic")
    dev = rows.sample == DEVELOPMENT
    group = chunk["g"].astype(object).where(chunk["g"].notna(), "missing").to_numpy()[dev]
    for name, bins in zip(("x", "c"), _reference_bins(chunk)):
        crosstab = pd.crosstab(group, bins[dev]).to_numpy()
        assume(min(crosstab.shape) >= 2)
        # Reference library: scipy's Cramér's V (no correction) and sklearn's MI in nats.
        assert table.loc[name, "Cramér's V"] == pytest.approx(
            association(crosstab, method="cramer"), rel=1e-9, abs=1e-12)
        assert table.loc[name, "Mutual information (bits)"] == pytest.approx(
            mutual_info_score(group, bins[dev]) / math.log(2), rel=1e-9, abs=1e-12)


@settings(max_examples=30, deadline=None)
@given(st.integers(0, 2**32 - 1), st.integers(2, 300), st.data())
def test_counts_of_two_chunks_merge_to_the_counts_of_the_whole(seed, n, data):
    chunk, rows = _random_rows(seed, n)
    cut = data.draw(st.integers(1, n - 1))
    first = _counts(chunk.iloc[:cut], RowFacts(*(a[:cut] for a in rows)))
    second = _counts(chunk.iloc[cut:], RowFacts(*(a[cut:] for a in rows)))
    merged, whole = merge_protected_counts(first, second)["g"], _counts(chunk, rows)["g"]
    # Integer weights sum exactly, so the merge must equal the whole to the last bit.
    assert np.array_equal(merged.scores, whole.scores)
    assert np.array_equal(merged.rows, whole.rows)
    assert all(np.array_equal(a, b) for a, b in zip(merged.bins, whole.bins))
    kept = rows.sample >= 0
    assert whole.rows.sum() == kept.sum()
    assert whole.scores.sum() == pytest.approx(rows.weight[kept].sum())


def test_a_missing_protected_value_is_its_own_group():
    chunk = pd.DataFrame({"g": pd.Categorical(["p", None, None, "q"]), "x": [0.5, 2.0, 2.0, 0.5],
                          "c": pd.Categorical(["a", "a", "c", "c"])})
    rows = RowFacts(np.zeros(4, np.int8), np.ones(4), np.zeros(4, np.int8))
    counts = _counts(chunk, rows)["g"]
    assert counts.groups == ("p", "q", "r", "missing")
    assert counts.rows[:, DEVELOPMENT].tolist() == [1, 1, 0, 2]
    # Both missing rows have x >= 1: the second bin of x.
    assert counts.bins[0][3].tolist() == [0.0, 2.0, 0.0]


def test_levels_are_gathered_from_the_chunk_and_an_absent_column_is_named():
    chunk = pd.DataFrame({"g": pd.Categorical(["q", None, "p"], categories=["p", "q", "z"])})
    assert protected_levels(chunk, ["g"]) == {"g": frozenset({"p", "q"})}
    with pytest.raises(InputError, match="column sex: named in data.protected"):
        protected_levels(chunk, ["sex"])


# --- cut-offs and adverse impact ------------------------------------------------------------


def _approvals(groups: dict, sample=HOLDOUT):
    """Rows that pass a cut-off of 30 (x >= 1) or not, per group: {group: (approved, rows)}."""
    labels, x = [], []
    for group, (approved, total) in groups.items():
        labels += [group] * total
        x += [2.0] * approved + [0.5] * (total - approved)
    n = len(x)
    chunk = pd.DataFrame({"g": pd.Categorical(labels), "x": x, "c": pd.Categorical(["a"] * n)})
    rows = RowFacts(np.zeros(n, np.int8), np.ones(n), np.full(n, sample, np.int8))
    return protected_counts(chunk, rows, _card(), {"g": tuple(sorted(groups))})


def _impact(groups: dict, min_group_size=1, impact_ratio=0.8):
    frame = impact_table(_approvals(groups), [30], HOLDOUT, impact_ratio, min_group_size,
                         _card().min_score)
    return frame.set_index("Group")


def test_approval_rates_and_ratios_on_a_hand_built_example():
    table = _impact({"p": (40, 50), "q": (30, 60), "r": (9, 10)}, min_group_size=20)
    # Definition: rate = approved / rows; ratio to the best rate among groups judged (p: 0.8).
    assert table["Approval rate"].to_dict() == pytest.approx({"p": 0.8, "q": 0.5, "r": 0.9})
    assert table.loc["q", "Ratio to most favoured"] == pytest.approx(0.5 / 0.8)
    assert table.loc["p", "Note"] == "most favoured group"
    assert table.loc["q", "Flag"] == IMPACT_FLAG
    # r approves more but has 10 rows: too small to judge, so neither favoured nor flagged.
    assert table.loc["r", "Note"] == "too small to judge: 10 rows, fewer than 20"
    assert table.loc["r", "Flag"] == ""
    assert table["Rows"].to_dict() == {"p": 50, "q": 60, "r": 10}


def test_four_fifths_boundary_is_exact():
    # Common practice (US Uniform Guidelines, 29 CFR 1607.4(D), from memory): below 4/5 is
    # adverse impact, so a ratio of exactly 0.8 is not flagged and 0.7999 is.
    exact = _impact({"p": (50, 100), "q": (40, 100)})
    assert exact.loc["q", "Ratio to most favoured"] == 0.8
    assert exact.loc["q", "Flag"] == ""
    # 0.6 / 0.75 is 0.7999999999999999 in floating point, yet exactly 4/5.
    trap = _impact({"p": (15, 20), "q": (12, 20)})
    assert (0.6 / 0.75) < 0.8 and trap.loc["q", "Flag"] == ""
    just_below = _impact({"p": (10000, 10000), "q": (7999, 10000)})
    assert just_below.loc["q", "Ratio to most favoured"] == pytest.approx(0.7999, abs=1e-15)
    assert just_below.loc["q", "Flag"] == IMPACT_FLAG


def test_impact_ratio_is_read_as_written_at_other_limits():
    table = _impact({"p": (10, 10), "q": (7, 10), "r": (6, 10)}, impact_ratio=0.7)
    assert table.loc["q", "Flag"] == "" and table.loc["r", "Flag"] == IMPACT_FLAG


def test_nobody_approved_means_no_ratio_and_no_flag():
    frame = impact_table(_approvals({"p": (0, 10), "q": (0, 10)}), [30], HOLDOUT, 0.8, 1,
                         _card().min_score)
    assert frame["Ratio to most favoured"].isna().all() and (frame["Flag"] == "").all()


def test_cutoffs_are_the_integer_scores_closest_to_the_target_shares():
    scores = np.zeros((2, 2, 5))
    scores[0, 0] = [10, 20, 30, 25, 15]         # scores 600..604, 100 rows in all
    scores[1, 1, 0] = 20                        # 20 refused rows at 600: never approved
    frame = choose_cutoffs(scores, 600, targets=(0.1, 0.5, 0.75))
    # Definition: share approved at c = scored weight at scores >= c / all weight (120).
    shares = {600: 100 / 120, 601: 90 / 120, 602: 70 / 120, 603: 40 / 120, 604: 15 / 120,
              605: 0.0}
    assert frame["Cut-off"].tolist() == [604, 602, 601]
    assert frame["Achieved approval share"].tolist() == pytest.approx(
        [shares[604], shares[602], shares[601]])
    fixed = choose_cutoffs(scores, 600, targets=(0.5,), fixed=(601.5, 590.0, 700.0))
    assert fixed["Achieved approval share"].tolist() == pytest.approx(
        [shares[602], shares[600], 0.0])
    assert fixed["Target approval share"].isna().all()


def test_a_tie_between_two_cutoffs_goes_to_the_higher():
    scores = np.zeros((2, 2, 2))
    scores[0, 0] = [1, 1]                       # shares 1.0, 0.5, 0.0 at 600, 601, 602
    assert choose_cutoffs(scores, 600, targets=(0.25, 0.75))["Cut-off"].tolist() == [602, 601]


def test_an_empty_sample_for_the_cutoffs_is_an_input_error():
    with pytest.raises(InputError, match="fairness"):
        choose_cutoffs(np.zeros((2, 2, 3)), 600, targets=(0.5,))


def test_risk_table_has_the_definitions_of_bad_rate_and_average_score():
    chunk = pd.DataFrame({"g": pd.Categorical(["p", "p", "p", "q"]), "x": [2.0, 0.5, 0.5, 2.0],
                          "c": pd.Categorical(["a", "a", "c", "c"])})
    rows = RowFacts(np.array([0, 1, 1, 0], np.int8), np.ones(4), np.full(4, HOLDOUT, np.int8))
    card = _card()
    table = risk_table(protected_counts(chunk, rows, card, {"g": ("p", "q")}), card)
    table = table.set_index("Group")
    assert table["Sample"].unique().tolist() == ["holdout"]
    # Scores: x points + c points = 30, 10, 15 for p and 35 for q.
    assert table.loc["p", "Average score"] == pytest.approx((30 + 10 + 15) / 3)
    assert table.loc["all rows", "Average score"] == pytest.approx((30 + 10 + 15 + 35) / 4)
    assert table.loc["p", "Bad rate"] == pytest.approx(2 / 3)
    assert table.loc["q", "Bads"] == 0


# --- the demo --------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    config = load_config(write_demo(tmp_path_factory.mktemp("demo")))
    engine = open_engine(config)
    result = build_scorecard(config, engine)
    rows, _ = _outcome_facts(config, engine)
    return config, engine, result, rows, compute_fairness(config, engine, rows, result.card)


def test_the_demo_proxy_is_found(demo):
    config, _, _, _, report = demo
    proxies = report.proxies
    assert set(proxies["Protected column"]) == {"age_band"}
    # The demo draws months_at_address from age band, and nothing else from it.
    top = proxies.iloc[0]
    assert top["Characteristic"] == "months_at_address"
    assert top["Cramér's V"] > 2 * proxies["Cramér's V"].iloc[1]
    assert top["Mutual information (bits)"] == proxies["Mutual information (bits)"].max()
    flagged = proxies["Cramér's V"] >= config.fairness.proxy_cramers_v
    assert (proxies["Flag"] == np.where(flagged, PROXY_FLAG, "")).all()


def test_the_protected_column_is_never_a_characteristic(demo):
    _, _, result, _, _ = demo
    assert "age_band" not in result.card.names
    assert "age_band" not in [r.name for r in result.reports]
    assert "age_band" not in result.card.to_json()


def test_the_demo_tables_agree_with_the_build(demo):
    config, _, result, _, report = demo
    assert report.sample == "holdout"
    risk = report.risk[report.risk["Group"] == "all rows"].set_index("Sample")
    for sample, hist in result.histograms.items():
        assert risk.loc[sample, "Rows"] == result.samples.rows[sample]
        assert risk.loc[sample, "Bads"] == pytest.approx(hist.bads.sum())
        weights = hist.goods + hist.bads
        assert risk.loc[sample, "Average score"] == pytest.approx(
            (weights * hist.scores).sum() / weights.sum())
    impact = report.impact
    assert impact["Cut-off"].unique().tolist() == report.cutoffs["Cut-off"].tolist()
    by_cutoff = impact.groupby("Cut-off")["Rows"].sum()
    assert (by_cutoff == result.samples.rows["holdout"]).all()
    achieved = report.cutoffs["Achieved approval share"].to_numpy()
    assert np.abs(achieved - np.array(config.fairness.approval_rates)).max() < 0.02


def test_chunked_engine_gives_the_same_report(demo):
    config, engine, result, rows, report = demo
    chunked = compute_fairness(config, LocalEngine(engine.frame, chunk_rows=3001), rows,
                               result.card)
    for name in ("proxies", "cutoffs", "impact", "risk"):
        pd.testing.assert_frame_equal(getattr(chunked, name), getattr(report, name))


def test_no_protected_columns_means_no_report(demo):
    config, engine, result, rows, _ = demo
    plain = dataclasses.replace(config, data=dataclasses.replace(config.data, protected=()))
    assert compute_fairness(plain, engine, rows, result.card) is None


def test_a_protected_column_with_too_many_values_is_refused(demo):
    config, engine, result, rows, _ = demo
    frame = engine.frame.assign(age_band=np.arange(len(engine.frame)) % 200)
    with pytest.raises(InputError, match="column age_band has 200 distinct values"):
        compute_fairness(config, LocalEngine(frame), rows, result.card)


def test_a_protected_column_as_a_characteristic_override_is_a_cli_error(tmp_path):
    path = write_demo(tmp_path, rows=500)
    text = path.read_text(encoding="utf-8")
    path.write_text(text.replace("characteristics:\n",
                                 "characteristics:\n  age_band: {kind: categorical}\n", 1),
                    encoding="utf-8")
    result = CliRunner().invoke(main, ["build", str(path), "--quiet"])
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error:")
    assert "characteristics.age_band" in lines[0] and "data.protected" in lines[0]
    assert not (tmp_path / "out").exists()


# --- the sheet -------------------------------------------------------------------------------


def test_the_sheet_states_the_caution_and_every_flag_in_words(tmp_path):
    groups = {"p": (40, 50), "q": (30, 60)}
    holdout, development = _approvals(groups), _approvals(groups, DEVELOPMENT)
    with pytest.warns(UserWarning, match="g and c: fewer than two groups or bins"):
        proxies = proxy_table(development, _card(), threshold=0.0)   # c: one bin only
    report = FairnessReport(
        proxies, choose_cutoffs(holdout["g"].scores[:, HOLDOUT].sum(0), 10, targets=(0.5,)),
        _impact(groups).reset_index(), risk_table(holdout, _card()), "holdout",
        ("q: below four-fifths", "=x may stand in for g"), ("note one",))
    wb = Workbook()
    ws = wb.active
    ws.title = "Fairness"
    last = write_fairness_sheet(ws, report)
    wb.save(tmp_path / "f.xlsx")
    ws = load_workbook(tmp_path / "f.xlsx")["Fairness"]
    cells = [c.value for row in ws.iter_rows(max_row=last) for c in row if c.value is not None]
    assert ws["A2"].value == CAUTION
    assert CAUTION.endswith("This check is a screen, not a legal opinion.")
    assert "=x may stand in for g" in cells            # text from data stays text
    assert ws["A6"].data_type == "s"
    assert cells.count(IMPACT_FLAG) == 1                # the flag column of the impact table
    assert cells.count(PROXY_FLAG) == 1                 # threshold 0: x; c is not measured
    assert "Approval rate by group at each cut-off (holdout sample)" in cells
    assert ws.max_row == last
