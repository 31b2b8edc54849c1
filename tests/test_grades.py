"""Risk grades: calibration to a long-run rate, order of the grades, intervals, the sheet."""

from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from openpyxl import load_workbook
from statsmodels.stats.proportion import proportion_confint

from scorecard.card.points import scaling
from scorecard.config import GradesConfig
from scorecard.evaluation.grades import grade_table, wilson_interval
from scorecard.evaluation.histograms import ScoreHistogram
from scorecard.outputs.workbook import SHEETS, write_workbook

SCALE = scaling(600, 50, 20)


def holdout(build) -> ScoreHistogram:
    return build.histograms["holdout"]


def test_calibrated_pds_average_to_the_long_run_rate(demo_build):
    # Definition: calibration to a long-run rate makes the row-weighted mean PD that rate.
    grades = grade_table(holdout(demo_build), demo_build.card.scaling, count=8,
                         long_run_bad_rate=0.04)
    t = grades.table
    assert (t["Share of rows"] * t["Calibrated PD"]).sum() == pytest.approx(0.04, abs=1e-12)
    assert (t["Rows"] * t["Calibrated PD"]).sum() / t["Rows"].sum() == pytest.approx(0.04)
    # A lower long-run rate than the sample's moves the log-odds of bad down (scores up).
    assert grades.shift < 0 < grades.shift_points
    assert t["Share of rows"].sum() == pytest.approx(1.0)
    assert t["Rows"].sum() == holdout(demo_build).goods.sum() + holdout(demo_build).bads.sum()


def test_grades_cover_the_scores_once_and_hold_about_equal_shares(demo_build):
    t = grade_table(holdout(demo_build), demo_build.card.scaling, count=5).table
    assert t["Grade"].tolist() == [1, 2, 3, 4, 5]
    # Grade 1 holds the highest scores; ranges are contiguous.
    assert (t["Lowest score"].to_numpy()[:-1] == t["Highest score"].to_numpy()[1:] + 1).all()
    assert t["Share of rows"].between(0.15, 0.25).all()


def test_explicit_edges_start_the_grades():
    hist = ScoreHistogram(500, np.ones(100), np.ones(100))
    t = grade_table(hist, SCALE, edges=(520.0, 549.5, 700.0)).table
    assert t["Lowest score"].tolist() == [550, 520, 500]
    assert t["Highest score"].tolist() == [599, 549, 519]


@settings(max_examples=30, deadline=None, derandomize=True)
@given(st.lists(st.tuples(st.integers(0, 50), st.integers(0, 50)), min_size=3, max_size=60),
       st.integers(2, 8), st.floats(0.01, 0.5))
def test_a_worse_grade_never_has_a_lower_pd(cells, count, rate):
    # Invariant: predicted and calibrated PDs rise with the grade number, whatever the counts.
    goods = np.array([g for g, _ in cells], float)
    bads = np.array([b for _, b in cells], float)
    if goods.sum() + bads.sum() == 0:
        return
    hist = ScoreHistogram(560, goods, bads)
    t = grade_table(hist, SCALE, count=count, long_run_bad_rate=rate).table
    assert (np.diff(t["Predicted PD"]) >= 0).all()
    assert (np.diff(t["Calibrated PD"]) >= 0).all()


def test_wilson_interval_matches_statsmodels():
    # Reference library: statsmodels' Wilson interval for a binomial proportion.
    for bads, rows in ((0, 40), (3, 40), (57, 600), (600, 600)):
        low, high = proportion_confint(bads, rows, alpha=0.05, method="wilson")
        ours = wilson_interval(bads, rows)
        assert float(ours[0]) == pytest.approx(low, abs=1e-12)
        assert float(ours[1]) == pytest.approx(high, abs=1e-12)


def test_the_sheet_appears_last_only_when_grades_are_configured(demo_build, tmp_path):
    plain = write_workbook(demo_build, tmp_path / "plain.xlsx")
    assert "Risk grades" not in load_workbook(plain).sheetnames
    graded = dataclasses.replace(demo_build, config=dataclasses.replace(
        demo_build.config, grades=GradesConfig(count=6, long_run_bad_rate=0.05)))
    book = load_workbook(write_workbook(graded, tmp_path / "graded.xlsx"))
    assert book.sheetnames[:len(SHEETS)] == list(SHEETS)
    assert book.sheetnames[-1] == "Risk grades"
    ws = book["Risk grades"]
    assert ws["A1"].value == "Grade" and ws["L1"].value == "Calibrated PD"
    assert [ws.cell(r, 1).value for r in range(2, 8)] == [1, 2, 3, 4, 5, 6]
