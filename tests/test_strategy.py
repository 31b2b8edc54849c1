"""Cut-off strategy: the cut-off table, profit, the chosen cut-off, swap sets and the command."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st
from openpyxl import load_workbook

from scorecard import api
from scorecard.cli import main
from scorecard.demo.files import DRIFTED_FILE
from scorecard.evaluation.strategy import cutoff_table, strategy, swap_table
from scorecard.outputs.cautions import CAUTION
from scorecard.outputs.strategy_workbook import SHEETS

GAIN, LOSS = 1.5, 7.0


@pytest.fixture(scope="module")
def recent(demo_dir):
    return demo_dir / DRIFTED_FILE


@pytest.fixture(scope="module")
def scored(model_path, recent, tmp_path_factory):
    """The recent file scored by ``scorecard score``, with its outcome and incumbent kept."""
    out = tmp_path_factory.mktemp("scored") / "scored.csv"
    api.score(model_path, recent, out, keep=("outcome", "previous_score"), reasons=0)
    return pd.read_csv(out)


@pytest.fixture(scope="module")
def result(model_path, recent):
    return strategy(model_path, recent, incumbent="previous_score", gain_per_good=GAIN,
                    loss_per_bad=LOSS, refer_width=10)


# ---- the cut-off table ---------------------------------------------------------------------------

def test_cutoff_table_matches_an_independent_pandas_computation(result, scored):
    # Reference: pandas over the file scored row by row (reference library), one cut-off at a
    # time, with the definitions written out again: approved = score >= cut-off.
    total = len(scored)
    bad = scored["outcome"] == "defaulted"
    good = scored["outcome"] == "repaid"
    for row in result.grid.to_dict("records"):
        approved = scored["score"] >= row["score"]
        goods, bads = (good & approved).sum(), (bad & approved).sum()
        declined_goods, declined_bads = (good & ~approved).sum(), (bad & ~approved).sum()
        assert row["approved"] == approved.sum()
        assert row["approval_rate"] == pytest.approx(approved.sum() / total, abs=1e-12)
        if goods + bads:
            assert row["approved_bad_rate"] == pytest.approx(bads / (goods + bads), abs=1e-12)
        if declined_goods + declined_bads:
            assert row["declined_bad_rate"] == pytest.approx(
                declined_bads / (declined_goods + declined_bads), abs=1e-12)
        # Definition (Thomas, Crook and Edelman 2017, from memory): profit over the approved.
        assert row["profit"] == pytest.approx(goods * GAIN - bads * LOSS, abs=1e-9)


def test_the_table_spans_the_scores_of_the_file(result, scored):
    assert result.table["score"].iloc[0] == scored["score"].min()
    assert result.table["score"].iloc[-1] == scored["score"].max() + 1
    assert result.table["approval_rate"].iloc[0] == 1.0
    assert result.table["approval_rate"].iloc[-1] == 0.0


def test_approval_falls_and_expected_bad_rate_never_rises_on_a_monotone_card(
        model_path, recent, tmp_path):
    # Invariant: without outcomes the bad rate at each score is the card's probability, which
    # falls as the score rises, so the bad rate of those at or above a cut-off never rises.
    frame = pd.read_csv(recent).drop(columns="outcome")
    path = tmp_path / "no_outcome.csv"
    frame.to_csv(path, index=False)
    expected = strategy(model_path, path)
    assert expected.bad_rates == "expected"
    table = expected.table
    assert (np.diff(table["approval_rate"]) <= 0).all()
    rates = table["approved_bad_rate"].dropna().to_numpy()
    assert (np.diff(rates) <= 1e-15).all()
    assert (np.diff(table["declined_bad_rate"].dropna().to_numpy()) <= 1e-15).all()


@settings(max_examples=30, deadline=None, derandomize=True)
@given(st.lists(st.tuples(st.integers(1, 200), st.floats(0.0, 1.0)), min_size=1, max_size=40))
def test_monotone_bad_rates_by_score_give_a_bad_rate_of_the_approved_that_never_rises(cells):
    # Invariant: when the bad rate at each score falls with the score, pooling from the top
    # down can only raise it as lower scores join.
    rows = np.array([n for n, _ in cells], dtype=float)
    rates = np.sort(np.array([r for _, r in cells]))[::-1]
    bads = rows * rates
    table = cutoff_table(300, rows, rows - bads, bads)
    assert (np.diff(table["approval_rate"]) <= 1e-15).all()
    approved = table["approved_bad_rate"].dropna().to_numpy()
    assert (np.diff(approved) <= 1e-12).all()


def test_profit_is_goods_times_gain_minus_bads_times_loss():
    # Definition (Thomas, Crook and Edelman 2017, from memory), on counts worked by hand.
    table = cutoff_table(10, rows=[4, 3, 3], goods=[1, 2, 3], bads=[3, 1, 0],
                         gain_per_good=2.0, loss_per_bad=3.0)
    # Cut-off 10 approves all: 6 goods, 4 bads; 11: 5 goods, 1 bad; 12: 3, 0; 13: none.
    assert table["profit"].tolist() == [6 * 2 - 4 * 3, 5 * 2 - 1 * 3, 3 * 2, 0.0]
    assert table["approval_rate"].tolist() == [1.0, 0.6, 0.3, 0.0]


def test_refused_rows_are_declined_at_every_cutoff():
    table = cutoff_table(10, rows=[1, 1], goods=[1, 0], bads=[0, 1], refused=(2, 0, 2))
    assert table["approval_rate"].tolist() == [0.5, 0.25, 0.0]
    assert table["declined_bad_rate"].tolist()[0] == 1.0


# ---- the chosen cut-off --------------------------------------------------------------------------

def test_the_profit_maximum_is_chosen_without_targets(result):
    profit = result.table["profit"]
    assert result.chosen.rule == "profit maximum"
    assert result.at(result.chosen.score)["profit"] == profit.max()


def test_targets_choose_the_cutoffs_they_name(model_path, recent):
    by_approval = strategy(model_path, recent, target_approval=0.6)
    table = by_approval.table.set_index("score")
    c = by_approval.chosen.score
    assert table.loc[c, "approval_rate"] >= 0.6 > table.loc[c + 1, "approval_rate"]
    by_bad_rate = strategy(model_path, recent, target_bad_rate=0.05)
    c = by_bad_rate.chosen.score
    table = by_bad_rate.table.set_index("score")
    assert table.loc[c, "approved_bad_rate"] <= 0.05
    assert (table.loc[:c - 1, "approved_bad_rate"] > 0.05).all()


def test_the_refer_band_counts_the_rows_just_below_the_cutoff(result, scored):
    refer = result.refer
    c = result.chosen.score
    inside = scored["score"].between(c - 10, c - 1)
    assert refer["count"] == inside.sum()
    labelled = inside & scored["outcome"].isin(["repaid", "defaulted"])
    bads = (inside & (scored["outcome"] == "defaulted")).sum()
    assert refer["bad_rate"] == pytest.approx(bads / labelled.sum())


# ---- swap sets -----------------------------------------------------------------------------------

def test_swap_sets_add_up(result, scored):
    # Invariants: the four cells partition the file; kept in plus swapped in is the new
    # card's approvals, kept in plus swapped out the incumbent's.
    rows = result.swap.table.set_index("cell")["rows"]
    assert rows.sum() == len(scored)
    assert rows["kept_in"] + rows["swapped_in"] == result.at(result.chosen.score)["approved"]
    old = (scored["previous_score"] >= result.swap.cutoff).sum()
    assert rows["kept_in"] + rows["swapped_out"] == old


def test_the_incumbent_is_cut_at_the_nearest_approval_rate(result, scored):
    new_rate = result.at(result.chosen.score)["approval_rate"]
    rates = {v: (scored["previous_score"] >= v).mean() for v in scored["previous_score"].unique()}
    best = min(abs(r - new_rate) for r in rates.values())
    assert abs(result.swap.approval_rate - new_rate) == pytest.approx(best)
    assert result.swap.direction.startswith("higher-is-better (detected")


def test_the_older_score_is_weaker_on_the_demo(result):
    # The demo's incumbent sees four characteristics with noise: those it alone approves
    # default more often than those the new card alone approves.
    t = result.swap.table.set_index("cell")["bad_rate"]
    assert t["swapped_out"] > t["swapped_in"]


def test_swap_table_by_hand():
    new = np.array([1, 1, 1, 0, 0, 0], bool)
    old = np.array([1, 0, 0, 1, 1, 0], bool)
    label = np.array([0, 1, 0, 1, -1, 0])
    t = swap_table(new, old, label).set_index("cell")
    assert t["rows"].tolist() == [1, 1, 2, 2]
    assert t["bad_rate"].tolist()[2:] == [0.5, 1.0]
    assert t.loc["swapped_out", "other_outcome"] == 1


def test_a_decision_column_and_a_stated_direction(model_path, recent, tmp_path):
    frame = pd.read_csv(recent)
    frame["previous_decision"] = np.where(frame["previous_score"] >= 540, "approve", "decline")
    frame["previous_risk"] = -frame["previous_score"]
    path = tmp_path / "with_decision.csv"
    frame.to_csv(path, index=False)
    decision = strategy(model_path, path, incumbent="previous_decision",
                        incumbent_approved=["approve"])
    assert decision.swap.kind == "decision"
    assert decision.swap.approval_rate == pytest.approx((frame["previous_score"] >= 540).mean())
    as_score = strategy(model_path, path, incumbent="previous_score")
    as_risk = strategy(model_path, path, incumbent="previous_risk",
                       incumbent_direction="higher-is-riskier")
    assert as_risk.swap.direction == "higher-is-riskier (stated)"
    assert as_risk.swap.cutoff == -as_score.swap.cutoff
    pd.testing.assert_frame_equal(as_risk.swap.table, as_score.swap.table)


# ---- outputs -------------------------------------------------------------------------------------

def test_the_command_writes_the_json_and_workbook(model_path, recent, tmp_path):
    out_json, out_book = tmp_path / "strategy.json", tmp_path / "strategy.xlsx"
    run = CliRunner().invoke(main, ["strategy", str(model_path), str(recent), "--incumbent",
                                    "previous_score", "--json", str(out_json), "--workbook",
                                    str(out_book)])
    assert run.exit_code == 0, run.stderr
    assert "chosen cut-off" in run.stdout and "swapped out" in run.stdout
    data = json.loads(out_json.read_text())
    assert set(data) >= {"cutoffs", "chosen", "swap"}
    assert set(data["cutoffs"][0]) >= {"score", "approval_rate", "approved_bad_rate",
                                       "declined_bad_rate", "profit"}
    assert set(data["swap"]) == {"kept_in", "kept_out", "swapped_in", "swapped_out"}
    assert all(set(v) >= {"count", "bad_rate"} for v in data["swap"].values())
    assert sum(v["count"] for v in data["swap"].values()) == data["rows"]
    assert data["chosen"]["score"] in [c["score"] for c in data["cutoffs"]]
    book = load_workbook(out_book)
    assert book.sheetnames == list(SHEETS)
    assert book["Summary"]["A2"].value == CAUTION
    assert len(book["Cut-offs"]._charts) == 2


def test_the_build_workbook_shows_the_cutoff_view_at_each_band_edge(demo_build, tmp_path):
    # Same counts as the gains table: the approval rate at a band's lowest score is one minus
    # the cumulative share of the bands below it (invariant between the two tables).
    from scorecard.outputs.workbook import write_workbook
    ws = load_workbook(write_workbook(demo_build, tmp_path / "w.xlsx"))["Score bands"]
    title = next(r for r in range(1, ws.max_row + 1)
                 if str(ws.cell(r, 1).value).startswith("Cut-off at each band edge"))
    gains = demo_build.gains
    rows = gains["Rows"].to_numpy()
    below = np.concatenate([[0.0], np.cumsum(rows)[:-1]]) / rows.sum()
    for i, band in enumerate(gains.itertuples()):
        assert ws.cell(title + 2 + i, 1).value == band[2]      # the band's lowest score
        assert ws.cell(title + 2 + i, 2).value == pytest.approx(1 - below[i])
    bads = gains["Bads"].to_numpy()
    assert ws.cell(title + 2, 3).value == pytest.approx(bads.sum() / rows.sum())
