"""Comparing two files under one scorecard: the demo's drift, reference values, the command."""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from openpyxl import load_workbook
from scipy import stats
from sklearn.metrics import roc_auc_score

from scorecard.card.points import scaling
from scorecard.card.scorecard import MISSING, RANGE, Bin, Characteristic, Scorecard
from scorecard.card.scoring import apply_scorecard
from scorecard.cli import main
from scorecard.data.outcome import BAD, GOOD, code_outcome
from scorecard.demo.applications import DRIFTED_CHARACTERISTICS, make_applications
from scorecard.demo.files import DATA_FILE, DRIFTED_FILE
from scorecard.errors import InputError
from scorecard.evaluation.comparison import compare
from scorecard.outputs.comparison_workbook import CAUTION, SHEETS, write_compare_workbook

STATUSES = {"stable", "watch", "shift"}


@pytest.fixture(scope="module")
def drifted(model_path, demo_dir):
    return compare(model_path, demo_dir / DATA_FILE, demo_dir / DRIFTED_FILE)


@pytest.fixture(scope="module")
def fresh_path(tmp_path_factory):
    path = tmp_path_factory.mktemp("fresh") / "fresh.csv"
    make_applications(rows=20_000, seed=99, drift=False).to_csv(path, index=False)
    return path


def _rows(card, path):
    """Scores and outcome labels of a file, row by row, without the comparison's counting."""
    frame = pd.read_csv(path)
    score = apply_scorecard(card, frame).score
    target = card.target
    return score, code_outcome(frame[target["column"]], target["bad"], target["good"]).label


def _band_bounds(table):
    return [tuple(int(x) for x in band.split(" to ")) for band in table["Band"]]


def _bad_probability(card, score):
    # Siddiqi 2006 scaling (published): odds of good = exp((score - offset) / factor).
    s = card.scaling
    return 1 / (1 + np.exp((np.asarray(score, dtype=float) - s.offset) / s.factor))


def test_drifted_characteristics_in_the_model_and_only_those_move(drifted, demo_build):
    # The demo draws the drifted sample with only DRIFTED_CHARACTERISTICS shifted.
    expected = set(DRIFTED_CHARACTERISTICS) & set(demo_build.card.names)
    assert expected
    moved = {r.name for r in drifted.stability.characteristics if r.status != "stable"}
    assert moved == expected
    assert all(r.beyond_chance for r in drifted.stability.characteristics if r.name in expected)
    assert drifted.stability.score.status in ("watch", "shift")
    assert drifted.stability.score.beyond_chance


def test_development_file_against_itself_is_zero_everywhere(model_path, demo_dir):
    same = compare(model_path, demo_dir / DATA_FILE, demo_dir / DATA_FILE)
    assert all(r.index == 0.0 and r.status == "stable" and not r.beyond_chance
               for r in same.indices)
    assert all(r.points_shift == 0.0 for r in same.stability.characteristics)
    assert not same.shifted and not same.reached("watch")
    assert same.performance["baseline"].discrimination == same.performance["current"].discrimination
    assert same.ranking_held is True
    assert not same.performance["current"].attributes["Turned"].any()


def test_a_fresh_undrifted_sample_is_stable(model_path, demo_dir, fresh_path, tmp_path):
    fresh = compare(model_path, demo_dir / DATA_FILE, fresh_path)
    assert {r.status for r in fresh.indices} == {"stable"}
    # Ranking is judged between two undrifted samples the card never saw: the development file
    # holds the rows the card was fitted on, whose AUC carries the fit's optimism (about 0.01
    # since the demo's customer segments reverse one effect that one card cannot follow).
    other = tmp_path / "other.csv"
    make_applications(rows=20_000, seed=98, drift=False).to_csv(other, index=False)
    assert compare(model_path, other, fresh_path).ranking_held is True


def test_score_bands_count_every_row_and_cut_the_baseline_into_tenths(drifted, demo_build,
                                                                       demo_dir):
    card = demo_build.card
    table = drifted.stability.score.table
    assert len(table) == 10
    assert table["Baseline rows"].sum() == 20_000 and table["Current rows"].sum() == 20_000
    assert table["Baseline share"].between(0.07, 0.13).all()
    score, _ = _rows(card, demo_dir / DRIFTED_FILE)
    bounds = _band_bounds(table)
    assert bounds[0][0] == card.min_score and bounds[-1][1] == card.max_score
    direct = [int(((score >= lo) & (score <= hi)).sum()) for lo, hi in bounds]
    assert table["Current rows"].tolist() == direct


def test_binomial_and_hosmer_lemeshow_p_values_match_scipy(drifted, demo_build, demo_dir):
    # Reference library: scipy.stats.binomtest per band, and Hosmer-Lemeshow (Hosmer and
    # Lemeshow, from memory) as the chi-square tail of sum (O - E)^2 / (E (1 - E / n)).
    card = demo_build.card
    score, label = _rows(card, demo_dir / DRIFTED_FILE)
    performance = drifted.performance["current"]
    table = performance.calibration
    observed, expected, sizes = [], [], []
    for (lo, hi), p_value in zip(_band_bounds(table), table["Binomial p-value"]):
        rows = (score >= lo) & (score <= hi) & (label >= 0)
        bads = int((label[rows] == BAD).sum())
        probability = _bad_probability(card, score[rows])
        assert p_value == pytest.approx(
            stats.binomtest(bads, int(rows.sum()), probability.mean()).pvalue, rel=1e-9)
        observed.append(bads)
        expected.append(probability.sum())
        sizes.append(rows.sum())
    o, e, n = map(np.array, (observed, expected, sizes))
    statistic = float(np.sum((o - e) ** 2 / (e * (1 - e / n))))
    fit = performance.hosmer_lemeshow
    assert fit.statistic == pytest.approx(statistic, rel=1e-9)
    assert fit.dof == len(table) - 2
    assert fit.p_value == pytest.approx(stats.chi2.sf(statistic, len(table) - 2), rel=1e-9)
    assert drifted.calibration_held is (fit.p_value >= 0.05)


def test_auc_gini_and_ks_match_reference_libraries(drifted, demo_build, demo_dir):
    # Reference library: sklearn's roc_auc_score and scipy's two-sample KS statistic.
    score, label = _rows(demo_build.card, demo_dir / DRIFTED_FILE)
    known = label >= 0
    result = drifted.performance["current"].discrimination
    auc = roc_auc_score(label[known] == GOOD, score[known])
    assert result.auc == pytest.approx(auc, rel=1e-12)
    assert result.gini == pytest.approx(2 * auc - 1, rel=1e-12)
    ks = stats.ks_2samp(score[label == GOOD], score[label == BAD]).statistic
    assert result.ks == pytest.approx(ks, rel=1e-12)


def test_attribute_counts_and_weight_of_evidence_in_the_current_file(drifted, demo_build,
                                                                     demo_dir):
    card = demo_build.card
    frame = pd.read_csv(demo_dir / DRIFTED_FILE)
    codes = apply_scorecard(card, frame).codes
    _, label = _rows(card, demo_dir / DRIFTED_FILE)
    attributes = drifted.performance["current"].attributes
    for j, char in enumerate(card.characteristics):
        part = attributes[attributes["Characteristic"] == char.name]
        goods = np.bincount(codes[label == GOOD, j], minlength=len(char.bins))
        bads = np.bincount(codes[label == BAD, j], minlength=len(char.bins))
        assert part["Goods"].tolist() == goods.tolist() and part["Bads"].tolist() == bads.tolist()
        assert part["Development weight of evidence"].tolist() == [b.woe for b in char.bins]
        filled = (goods > 0) & (bads > 0)
        # Definition: WoE = ln(share of goods / share of bads).
        woe = np.log(goods[filled] / goods.sum()) - np.log(bads[filled] / bads.sum())
        assert part["Weight of evidence"].to_numpy()[filled] == pytest.approx(woe, rel=1e-12)


def _three_range_card():
    """x in three ranges with development WoE ln(1/2), 0 and ln(5/2) (1200 goods, 600 bads)."""
    counts = ((300, 300), (400, 200), (500, 100))
    woe = [math.log((g / 1200) / (b / 600)) for g, b in counts]
    bounds = ((None, 1.0), (1.0, 2.0), (2.0, None))
    bins = tuple(Bin(f"range {i}", RANGE, g, b, w, 10 * (i + 1), lower=lo, upper=hi)
                 for i, ((g, b), w, (lo, hi)) in enumerate(zip(counts, woe, bounds))) \
        + (Bin("missing", MISSING, 0, 0, 0.0, 20),)
    char = Characteristic("x", "numeric", bins, 1.0, "R01", "x", cuts=(1.0, 2.0),
                          development_range=(0.0, 3.0))
    return Scorecard("three ranges", scaling(600, 50, 20), 0.5, (char,),
                     {"column": "outcome", "bad": ["bad"], "good": ["good"]})


def _rows_file(path, per_range, extra=None):
    """A file with ``goods`` and ``bads`` rows at x = 0.5, 1.5 and 2.5, plus ``extra`` rows."""
    x, outcome = [], []
    for value, (goods, bads) in zip((0.5, 1.5, 2.5), per_range):
        x += [value] * (goods + bads)
        outcome += ["good"] * goods + ["bad"] * bads
    frame = pd.DataFrame({"x": x, "outcome": outcome})
    if extra is not None:
        frame = pd.concat([frame, extra], ignore_index=True)
    frame.to_csv(path, index=False)
    return path


def test_an_attribute_turns_when_its_risk_reverses_beyond_chance(tmp_path):
    model = tmp_path / "card.json"
    model.write_text(_three_range_card().to_json())
    development = _rows_file(tmp_path / "dev.csv", ((300, 300), (400, 200), (500, 100)))
    reversed_risk = _rows_file(tmp_path / "now.csv", ((500, 100), (400, 200), (300, 300)))
    result = compare(model, development, reversed_risk, bands=3)
    attributes = result.performance["current"].attributes
    assert attributes["Turned"].tolist() == [True, True, True, False]
    assert attributes["Why"].tolist() == [
        "weight of evidence changed sign",
        "order against the previous range reversed",
        "weight of evidence changed sign; order against the previous range reversed", ""]
    unchanged = compare(model, development, development, bands=3)
    assert not unchanged.performance["current"].attributes["Turned"].any()


def test_a_small_reversal_within_chance_does_not_turn(tmp_path):
    model = tmp_path / "card.json"
    model.write_text(_three_range_card().to_json())
    development = _rows_file(tmp_path / "dev.csv", ((300, 300), (400, 200), (500, 100)))
    # Range 1 now has WoE ln((8/22) / (4/10)) < 0 on 12 rows: opposite sign, but within chance.
    few = _rows_file(tmp_path / "few.csv", ((5, 5), (8, 4), (9, 1)))
    attributes = compare(model, development, few, bands=3).performance["current"].attributes
    assert attributes.loc[1, "Weight of evidence"] < 0
    assert not attributes["Turned"].any()


def test_unseen_levels_and_values_beyond_the_development_range_are_counted(tmp_path):
    model = tmp_path / "card.json"
    model.write_text(_three_range_card().to_json())
    development = _rows_file(tmp_path / "dev.csv", ((300, 300), (400, 200), (500, 100)))
    beyond = pd.DataFrame({"x": [-1.0] * 4 + [9.0] * 3 + [np.nan] * 2,
                           "outcome": ["good"] * 9})
    current = _rows_file(tmp_path / "now.csv", ((300, 300), (400, 200), (500, 100)), beyond)
    unusual = compare(model, development, current, bands=3).unusual.set_index("Sample")
    assert unusual.loc["current", "Beyond the development range"] == 7
    assert unusual.loc["current", "Missing where development had none"] == 2
    assert unusual.loc["baseline", "Beyond the development range"] == 0


def test_files_without_the_outcome_give_stability_only(tmp_path):
    model = tmp_path / "card.json"
    model.write_text(_three_range_card().to_json())
    plain = tmp_path / "plain.csv"
    pd.DataFrame({"x": [0.5, 1.5, 2.5, 2.5]}).to_csv(plain, index=False)
    result = compare(model, plain, plain, bands=3)
    assert result.performance == {} and result.ranking_held is None
    assert result.calibration_held is None
    assert json.loads(result.to_json())["performance"] == {}
    write_compare_workbook(result, tmp_path / "plain.xlsx")
    assert load_workbook(tmp_path / "plain.xlsx").sheetnames == list(SHEETS)


@pytest.mark.parametrize("options, message", [
    ({"bands": 1}, "--bands"), ({"watch": 0.3, "shift": 0.2}, "watch, shift")])
def test_invalid_options_are_input_errors(tmp_path, options, message):
    model = tmp_path / "card.json"
    model.write_text(_three_range_card().to_json())
    plain = _rows_file(tmp_path / "dev.csv", ((3, 3), (4, 2), (5, 1)))
    with pytest.raises(InputError, match=message):
        compare(model, plain, plain, **options)


def _invoke(*args):
    return CliRunner().invoke(main, ["compare", *map(str, args)])


def test_command_writes_the_json_contract_and_the_workbook(model_path, demo_dir, drifted,
                                                           tmp_path):
    out, book = tmp_path / "out" / "stability.json", tmp_path / "out" / "compare.xlsx"
    run = _invoke(model_path, demo_dir / DATA_FILE, demo_dir / DRIFTED_FILE, "--json", out,
                  "--workbook", book)
    assert run.exit_code == 0, run.output
    assert "credit_utilisation" in run.stdout and "watch" in run.stdout
    data = json.loads(out.read_text())
    assert {"psi", "status", "critical_value"} <= set(data["score"])
    assert data["score"]["psi"] == pytest.approx(drifted.stability.score.index, rel=1e-12)
    assert data["score"]["status"] in STATUSES
    assert list(data["characteristics"]) == [r.name for r in drifted.stability.characteristics]
    for name, entry in data["characteristics"].items():
        assert {"csi", "status"} <= set(entry) and entry["status"] in STATUSES
        assert isinstance(entry["csi"], float)
    workbook = load_workbook(book)
    assert workbook.sheetnames == list(SHEETS)
    assert workbook["Summary"]["A2"].value == CAUTION
    assert CAUTION.startswith("A scorecard is a statistical aid")
    assert "review by qualified people" in CAUTION


def test_fail_on_trips_only_when_an_index_reaches_the_status(model_path, demo_dir, drifted,
                                                             fresh_path, tmp_path):
    base, drift = demo_dir / DATA_FILE, demo_dir / DRIFTED_FILE
    # The demo's drift reaches watch, not shift (every index below 0.25).
    assert max(r.index for r in drifted.indices) < 0.25
    assert _invoke(model_path, base, drift, "--fail-on", "watch").exit_code == 1
    assert _invoke(model_path, base, drift, "--fail-on", "shift").exit_code == 0
    # Only the online sales of the drifted sample: sales_channel moves far beyond 0.25.
    online = tmp_path / "online.csv"
    frame = pd.read_csv(drift)
    frame[frame["sales_channel"] == "online"].to_csv(online, index=False)
    assert _invoke(model_path, base, online, "--fail-on", "shift").exit_code == 1
    assert _invoke(model_path, base, fresh_path, "--fail-on", "shift").exit_code == 0
    assert _invoke(model_path, base, fresh_path, "--fail-on", "watch").exit_code == 0


def _broken(tmp_path, demo_dir, kind):
    path = tmp_path / f"{kind}.csv"
    frame = pd.read_csv(demo_dir / DRIFTED_FILE, nrows=200)
    if kind == "missing_column":
        frame.drop(columns="monthly_income").to_csv(path, index=False)
    elif kind == "type_change":
        frame.assign(monthly_income="high").to_csv(path, index=False)
    elif kind == "header_only":
        frame.head(0).to_csv(path, index=False)
    else:
        path.write_text("")
    return path


@pytest.mark.parametrize("kind, words", [
    ("missing_column", ["column monthly_income", "lacks it"]),
    ("type_change", ["column monthly_income", "expected numbers"]),
    ("header_only", ["no rows"]),
    ("empty", ["empty"]),
])
@pytest.mark.parametrize("side", ["baseline", "current"])
def test_mismatched_files_end_with_one_error_line_and_status_2(model_path, demo_dir, tmp_path,
                                                               kind, words, side):
    broken = _broken(tmp_path, demo_dir, kind)
    good = demo_dir / DATA_FILE
    files = (broken, good) if side == "baseline" else (good, broken)
    out = tmp_path / "never.json"
    run = _invoke(model_path, *files, "--json", out)
    assert run.exit_code == 2
    assert run.stderr.startswith("error: ") and len(run.stderr.splitlines()) == 1
    assert str(broken) in run.stderr
    assert all(word in run.stderr for word in words)
    assert not out.exists()


def test_band_count_is_an_option(model_path, demo_dir):
    run = _invoke(model_path, demo_dir / DATA_FILE, demo_dir / DRIFTED_FILE, "--bands", "4")
    assert run.exit_code == 0
    result = compare(model_path, demo_dir / DATA_FILE, demo_dir / DRIFTED_FILE, bands=4)
    assert len(result.stability.score.table) == 4
    assert _invoke(model_path, demo_dir / DATA_FILE, demo_dir / DRIFTED_FILE,
                   "--bands", "1").exit_code == 2


def test_auc_standard_error_at_no_discrimination_is_the_mann_whitney_null_spread(tmp_path):
    # Hanley and McNeil 1982 (from memory) at AUC 0.5 reduces to the null variance of the
    # Mann-Whitney U over n1 n2, (n1 + n2 + 1) / (12 n1 n2) (published, any statistics text).
    model = tmp_path / "card.json"
    model.write_text(_three_range_card().to_json())
    even = _rows_file(tmp_path / "even.csv", ((100, 100), (100, 100), (100, 100)))
    performance = compare(model, even, even, bands=3).performance["current"]
    assert performance.discrimination.auc == 0.5
    assert performance.auc_standard_error == pytest.approx(
        math.sqrt(601 / (12 * 300 * 300)), rel=1e-12)


def test_ranking_weakens_when_the_outcome_no_longer_follows_the_score(model_path, demo_dir,
                                                                      tmp_path):
    frame = pd.read_csv(demo_dir / DATA_FILE)
    frame["outcome"] = np.random.default_rng(5).permutation(frame["outcome"].to_numpy())
    shuffled = tmp_path / "shuffled.csv"
    frame.to_csv(shuffled, index=False)
    result = compare(model_path, demo_dir / DATA_FILE, shuffled)
    assert abs(result.performance["current"].discrimination.gini) < 0.05
    assert result.ranking_held is False
    assert not result.reached("watch")


def test_a_file_with_only_goods_has_no_ranking_and_says_why(tmp_path):
    model = tmp_path / "card.json"
    model.write_text(_three_range_card().to_json())
    development = _rows_file(tmp_path / "dev.csv", ((300, 300), (400, 200), (500, 100)))
    goods_only = _rows_file(tmp_path / "goods.csv", ((30, 0), (40, 0), (50, 0)))
    with pytest.warns(UserWarning, match="needs both goods and bads"):
        result = compare(model, development, goods_only, bands=3)
    assert result.performance["current"].discrimination is None
    assert result.ranking_held is None
    assert json.loads(result.to_json())["performance"]["current"]["auc"] is None


def test_workbook_summary_says_what_moved_and_whether_the_scorecard_held(drifted, tmp_path):
    path = tmp_path / "compare.xlsx"
    write_compare_workbook(drifted, path)
    summary = load_workbook(path)["Summary"]
    text = [row[0] for row in summary.iter_rows(values_only=True) if row[0] is not None]
    moved = [r for r in drifted.stability.characteristics if r.status != "stable"]
    assert moved, "the drifted demo sample must move at least one characteristic"
    for r in moved:
        line = next(t for t in text if t.startswith(f"{r.name}: characteristic stability index"))
        assert f"{r.index:.4f} ({r.status}; beyond chance" in line
    assert any(t.startswith("Score: population stability index") for t in text)
    assert drifted.ranking_held is not None
    ranking = "Ranking held:" if drifted.ranking_held else "Ranking weakened beyond chance:"
    assert any(t.startswith(ranking) for t in text)
    verdict = "Calibration held" if drifted.calibration_held else "Calibration did not hold"
    assert any(t.startswith(verdict) for t in text)
    header = next(i for i, t in enumerate(text) if t == "Index of")
    assert text[header + 1] == "the score"
    assert text[header + 2: header + 2 + len(drifted.stability.characteristics)] == [
        r.name for r in drifted.stability.characteristics]
