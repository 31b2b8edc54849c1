"""Odd but valid data: the build copes, and the Characteristics report says what it did.

Each test builds on a small seeded frame with one strong characteristic ``x`` (so that a model
always exists) and the odd column under test. Frames go through a CSV file and
:func:`scorecard.data.read.read_frame`, as a user's data would.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import openpyxl
import pandas as pd
import pytest

from scorecard.build.pipeline import build_scorecard
from scorecard.card.scorecard import LEVELS, OUT_OF_RANGE, RANGE
from scorecard.card.scoring import apply_scorecard, bin_codes
from scorecard.config.loading import parse_config
from scorecard.data.outcome import code_outcome
from scorecard.data.read import read_frame
from scorecard.data.samples import assign_samples
from scorecard.engines.local import LocalEngine
from scorecard.engines.passes import RowFacts, bin_counts
from scorecard.outputs.starter_config import starter_config

BASE = """\
data: {source: odd.csv, target: y, bad: [bad], good: [good]}
samples: {holdout: 0.3, seed: 7}
"""


def make_frame(n: int = 3000, seed: int = 1, bad_rate: float = 0.2) -> pd.DataFrame:
    """Outcome from a logistic design on ``x``; ``z`` is noise, ``channel`` a weak text column."""
    rng = np.random.default_rng(seed)
    x = rng.normal(size=n)
    channel = rng.choice(["shop", "online", "partner"], size=n)
    log_odds_good = math.log((1 - bad_rate) / bad_rate) + 1.2 * x + 0.3 * (channel == "shop")
    good = rng.random(n) < 1 / (1 + np.exp(-log_odds_good))
    return pd.DataFrame({"y": np.where(good, "good", "bad"), "x": np.round(x, 3),
                         "z": np.round(rng.normal(size=n), 3), "channel": channel})


def via_csv(frame: pd.DataFrame, tmp_path, name: str = "odd.csv") -> pd.DataFrame:
    path = tmp_path / name
    frame.to_csv(path, index=False)
    return read_frame(path)


def build(frame: pd.DataFrame, tmp_path, extra: str = "", chunk_rows: int = 2_000_000):
    config = parse_config(BASE + extra, tmp_path / "odd.yaml")
    return build_scorecard(config, LocalEngine(frame, chunk_rows=chunk_rows))


def report(result, name: str):
    return next(r for r in result.reports if r.name == name)


def assert_counts_conserved(result) -> None:
    facts = result.samples
    for rep in result.reports:
        if rep.characteristic is not None:
            assert sum(b.goods for b in rep.characteristic.bins) == pytest.approx(
                facts.goods["development"])
            assert sum(b.bads for b in rep.characteristic.bins) == pytest.approx(
                facts.bads["development"])
            assert all(math.isfinite(b.woe) for b in rep.characteristic.bins)


def assert_bins_meet_the_limits(result) -> None:
    b = result.config.binning
    total = result.samples.goods["development"] + result.samples.bads["development"]
    for rep in result.reports:
        if rep.characteristic is None or rep.trend == "manual":
            continue
        for bin_ in rep.characteristic.bins:
            if bin_.kind in (RANGE, LEVELS):
                assert bin_.goods >= b.min_bin_goods and bin_.bads >= b.min_bin_bads
                assert bin_.count >= b.min_bin_share * total - 1e-9


def test_constant_column_is_not_binned_and_says_why(tmp_path):
    frame = make_frame()
    frame["branch"] = 7
    result = build(via_csv(frame, tmp_path), tmp_path)
    rep = report(result, "branch")
    assert (rep.status, rep.stage) == ("not binned", "binning")
    assert "a single value" in rep.reason
    assert "branch" not in result.card.names


def test_all_missing_columns_are_not_binned_and_say_why(tmp_path):
    frame = make_frame()
    frame["income"] = np.nan           # a number column never filled in
    frame["employer"] = None           # a text column never filled in
    data = via_csv(frame, tmp_path)
    result = build(data, tmp_path)
    for name in ("income", "employer"):
        rep = report(result, name)
        assert rep.status == "not binned" and "no values besides missing" in rep.reason
    assert_counts_conserved(result)


def test_identifier_like_text_column_is_skipped_with_the_reason(tmp_path):
    frame = make_frame()
    frame["reference"] = [f"APP-{i:06d}" for i in range(len(frame))]
    result = build(via_csv(frame, tmp_path), tmp_path)
    rep = report(result, "reference")
    assert (rep.status, rep.stage) == ("not used", "data")
    assert "identifier-like" in rep.reason and "3000 distinct levels" in rep.reason


def mixed_frame() -> pd.DataFrame:
    frame = make_frame()
    # Mostly numbers, with a few rows of a text code: the file holds text in a number column.
    income = np.round(frame["x"] * 800 + 3000).astype(int).astype(str)
    income[::97] = "unknown"
    frame["income"] = income
    return frame


def test_mixed_numbers_and_text_are_read_as_text_and_kept_out(tmp_path):
    data = via_csv(mixed_frame(), tmp_path)
    assert isinstance(data["income"].dtype, pd.CategoricalDtype)
    result = build(data, tmp_path)
    rep = report(result, "income")
    assert rep.kind == "categorical" and rep.status == "not used"
    assert "income" not in result.card.names


def test_mixed_numbers_and_text_are_reported_as_such(tmp_path):
    result = build(via_csv(mixed_frame(), tmp_path), tmp_path)
    reason = report(result, "income").reason
    assert "text" in reason and "number" in reason


def test_the_starter_config_ignores_mixed_columns_with_the_reason(tmp_path):
    mixed_frame().to_csv(tmp_path / "odd.csv", index=False)
    text = starter_config(tmp_path / "odd.csv", "y", tmp_path / "odd.yaml")
    line = next(ln for ln in text.splitlines() if ln.strip().startswith("- income"))
    assert "numbers mixed with text such as 'unknown'" in line
    assert "income" in parse_config(text, tmp_path / "odd.yaml").data.ignore


def test_infinite_values_fall_in_the_end_bins_and_score_alike(tmp_path):
    frame = make_frame()
    frame["x"] = frame["x"].astype(object)
    frame.loc[:9, "x"] = "inf"
    frame.loc[10:19, "x"] = "-inf"
    data = via_csv(frame, tmp_path)
    assert np.isposinf(data["x"][:10]).all() and np.isneginf(data["x"][10:20]).all()
    result = build(data, tmp_path)
    assert_counts_conserved(result)
    char = next(c for c in result.card.characteristics if c.name == "x")
    low, high = char.development_range
    assert math.isfinite(low) and math.isfinite(high)
    codes, _ = bin_codes(char, data["x"])
    last_range = max(i for i, b in enumerate(char.bins) if b.kind == RANGE)
    assert (codes[:10] == last_range).all() and (codes[10:20] == 0).all()
    scores = apply_scorecard(result.card, data)
    assert np.isfinite(scores.score).all()


def test_extreme_values_do_not_break_the_build(tmp_path):
    frame = make_frame()
    frame.loc[:4, "z"] = 1e300
    frame.loc[5:9, "z"] = -1e300
    result = build(via_csv(frame, tmp_path), tmp_path)
    assert_counts_conserved(result)
    scores = apply_scorecard(result.card, frame)
    assert scores.score.min() >= result.card.min_score
    assert scores.score.max() <= result.card.max_score


def test_one_extreme_value_keeps_the_resolution_of_the_bins(tmp_path):
    frame = make_frame()
    frame["x"] = np.round(frame["x"] * 800 + 3000)
    clean = report(build(frame, tmp_path), "x")
    frame.loc[0, "x"] = 1e9
    spoiled = report(build(frame, tmp_path, "selection: {min_iv: 0}\n"), "x")
    assert spoiled.characteristic is not None
    assert spoiled.information_value >= 0.9 * clean.information_value


def test_a_perfectly_separating_characteristic_is_reported_not_binned(tmp_path):
    frame = make_frame()
    frame["oracle"] = np.where(frame["y"] == "bad", 1, 0)
    result = build(via_csv(frame, tmp_path), tmp_path)
    rep = report(result, "oracle")
    assert rep.status == "not binned"
    assert "no split leaves some goods and some bads on each side" in rep.reason
    assert "x" in result.card.names


@pytest.mark.parametrize("prior", [0, 20])
def test_a_forced_perfect_separation_fits_with_a_warning_and_sane_numbers(tmp_path, prior):
    frame = make_frame()
    frame["oracle"] = np.where(frame["y"] == "bad", 1.0, 0.0)
    extra = ("characteristics: {oracle: {cuts: [0.5]}}\nselection: {keep: [oracle]}\n"
             f"binning: {{prior_rows: {prior}}}\n")
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        result = build(via_csv(frame, tmp_path), tmp_path, extra)
    assert any("separated" in str(w.message) for w in caught)
    fit = result.selection.fit
    assert np.isfinite(fit.coefficients).all() and np.isfinite(fit.standard_errors).all()
    # A characteristic coded by its own WoE gets a coefficient near 1 (common practice); under
    # separation it must not run away.
    assert np.abs(fit.coefficients[1:]).max() < 5
    char = next(c for c in result.card.characteristics if c.name == "oracle")
    if prior:
        # The prior keeps one-sided bins finite: no fallback is needed.
        assert [b.note for b in char.bins[:2]] == ["", ""]
        assert np.isfinite([b.woe for b in char.bins[:2]]).all()
    else:
        assert [b.note.startswith("no goods or no bads") for b in char.bins[:2]] == [True, True]
    assert all(isinstance(b.points, int) for b in char.bins)


def test_very_rare_bads_still_give_bins_with_enough_bads(tmp_path):
    frame = make_frame(n=20_000, seed=3, bad_rate=0.003)
    bads = int((frame["y"] == "bad").sum())
    assert bads < 0.01 * len(frame)
    result = build(via_csv(frame, tmp_path), tmp_path)
    assert_counts_conserved(result)
    assert_bins_meet_the_limits(result)
    # Holdout drawn per outcome class: round(0.3 * bads) of the bads (assign_samples' rule).
    assert result.samples.bads["holdout"] == round(0.3 * bads)
    assert "x" in result.card.names


def test_a_tiny_sample_builds_within_the_limits(tmp_path):
    frame = make_frame(n=300, seed=4, bad_rate=0.3)
    result = build(via_csv(frame, tmp_path), tmp_path)
    assert result.samples.rows["development"] + result.samples.rows["holdout"] == 300
    assert_counts_conserved(result)
    assert_bins_meet_the_limits(result)
    assert result.card.characteristics


def test_yes_no_outcomes_match_the_config_words(tmp_path):
    # YAML reads the unquoted words yes and no as true and false; the column holds the text.
    frame = make_frame()
    frame["y"] = np.where(frame["y"] == "bad", "yes", "no")
    config = parse_config(BASE.replace("bad: [bad], good: [good]", "bad: [yes], good: [no]"),
                          tmp_path / "odd.yaml")
    assert config.data.bad == (True,)
    result = build_scorecard(config, LocalEngine(via_csv(frame, tmp_path)))
    assert result.samples.bads["development"] + result.samples.bads["holdout"] == \
        (frame["y"] == "yes").sum()


def test_whole_number_outcomes_match_a_decimal_in_the_config(tmp_path):
    frame = make_frame()
    frame["y"] = np.where(frame["y"] == "bad", 1, 0)
    config = parse_config(BASE.replace("bad: [bad], good: [good]", "bad: [1.0], good: [0]"),
                          tmp_path / "odd.yaml")
    result = build_scorecard(config, LocalEngine(via_csv(frame, tmp_path)))
    assert result.samples.left_out == 0
    assert result.samples.bads["development"] + result.samples.bads["holdout"] == \
        (frame["y"] == 1).sum()


def test_a_column_of_only_sentinels_and_gaps_is_not_binned(tmp_path):
    frame = make_frame()
    frame["bureau"] = np.where(np.arange(len(frame)) % 3 == 0, np.nan, -999.0)
    result = build(via_csv(frame, tmp_path), tmp_path, "binning: {sentinels: [-999]}\n")
    rep = report(result, "bureau")
    assert rep.status == "not binned"
    assert rep.reason == "no values besides missing values and sentinels"


def test_a_yes_no_column_is_a_two_bin_characteristic(tmp_path):
    frame = make_frame()
    frame["shop"] = frame["channel"] == "shop"
    data = via_csv(frame, tmp_path)
    assert data["shop"].dtype == bool
    result = build(data, tmp_path, "selection: {min_iv: 0}\n")
    char = report(result, "shop").characteristic
    assert [b.kind for b in char.bins].count(RANGE) == 2


def test_a_byte_order_mark_does_not_stick_to_the_first_column(tmp_path):
    path = tmp_path / "odd.csv"
    path.write_bytes(b"\xef\xbb\xbf" + make_frame().to_csv(index=False).encode("utf-8"))
    data = read_frame(path)
    assert list(data.columns) == ["y", "x", "z", "channel"]
    assert build(data, tmp_path).card.names


def test_the_characteristics_sheet_shows_every_fate_and_reason(tmp_path):
    from scorecard.outputs.workbook import write_workbook
    frame = make_frame()
    frame["branch"] = 7
    frame["income"] = np.nan
    frame["reference"] = [f"APP-{i:06d}" for i in range(len(frame))]
    frame["oracle"] = np.where(frame["y"] == "bad", 1, 0)
    result = build(via_csv(frame, tmp_path), tmp_path)
    path = write_workbook(result, tmp_path / "odd.xlsx")
    sheet = openpyxl.load_workbook(path, read_only=True)["Characteristics"]
    rows = list(sheet.iter_rows(values_only=True))
    header = list(rows[0])
    by_name = {row[0]: row for row in rows[1:] if row[0] is not None}
    for rep in result.reports:
        row = by_name[rep.name]
        assert row[header.index("Status")] == rep.status
        assert (row[header.index("Reason")] or "") == rep.reason
    assert {"branch", "income", "reference", "oracle"} <= set(by_name)


@pytest.mark.parametrize("extra, counted_from_rows", [
    ("", False),
    # Manual cuts off the fine grid and out-of-range bins: such bins are not unions of fine
    # classes, so the build counts them from the rows.
    ("characteristics: {x: {cuts: [-0.1234, 0.4567]}}\nscoring: {out_of_range: neutral}\n", True),
])
def test_bin_tables_by_sample_equal_a_count_of_the_rows(tmp_path, extra, counted_from_rows):
    # Definition: every row of a sample is counted, with its weight, in the bin that scoring
    # gives it; the build may instead sum fine classes that fall whole into one bin.
    frame = make_frame(n=4000, seed=5)
    rng = np.random.default_rng(5)
    frame["w"] = rng.uniform(0.5, 2.0, len(frame)).round(3)
    frame.loc[rng.random(len(frame)) < 0.05, "z"] = np.nan
    frame = via_csv(frame, tmp_path)
    text = ("data: {source: odd.csv, target: y, bad: [bad], good: [good], weight: w}\n"
            "samples: {holdout: 0.3, seed: 7}\n" + extra)
    config = parse_config(text, tmp_path / "odd.yaml")
    result = build_scorecard(config, LocalEngine(frame))
    outcome = code_outcome(frame["y"], ["bad"], ["good"], frame["w"], "w")
    rows = RowFacts(outcome.label, outcome.weight,
                    assign_samples(outcome.label, 0.3, 7, None))
    binned = [r for r in result.reports if r.sample_counts is not None]
    assert {r.name for r in binned} == {"x", "z", "channel"}
    for rep in binned:
        expected = bin_counts(frame, rows, [rep.characteristic])[0]
        np.testing.assert_allclose(rep.sample_counts, expected, rtol=1e-12, atol=1e-9)
    has_out_of_range = any(b.kind == OUT_OF_RANGE for b in report(result, "x").characteristic.bins)
    assert has_out_of_range == counted_from_rows
