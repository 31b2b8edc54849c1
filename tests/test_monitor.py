"""Monitoring a scorecard period by period: invariants against compare, reference values, the command."""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner
from openpyxl import load_workbook
from scipy import stats

from scorecard.card.scorecard import Scorecard, load_scorecard
from scorecard.card.scoring import apply_scorecard
from scorecard.cli import main
from scorecard.data.outcome import BAD, GOOD, code_outcome
from scorecard.demo.applications import (
    DRIFT_FROM_MONTH,
    IMMATURE_MONTHS,
    RECENT_MONTHS,
    make_applications,
)
from scorecard.demo.files import DATA_FILE, RECENT_FILE
from scorecard.errors import InputError
from scorecard.evaluation.comparison import compare
from scorecard.evaluation.monitoring import monitor
from scorecard.measures.ranking import discrimination, gini_interval
from scorecard.outputs.monitoring_workbook import SHEETS

PERIOD = "applied_month"


@pytest.fixture(scope="module")
def monthly(model_path, demo_dir):
    return monitor(model_path, demo_dir / RECENT_FILE, PERIOD, cutoff=560)


def test_periods_are_the_demo_months_with_every_row(monthly, demo_dir):
    frame = pd.read_csv(demo_dir / RECENT_FILE)
    assert [p.period for p in monthly.periods] == list(RECENT_MONTHS)
    assert [p.rows for p in monthly.periods] == \
        frame.groupby(PERIOD).size().sort_index().tolist()


@pytest.mark.filterwarnings("ignore:.*needs both goods and bads")
@pytest.mark.parametrize("month", ["2026-01", DRIFT_FROM_MONTH, RECENT_MONTHS[-1]])
def test_period_indices_equal_compare_on_that_periods_rows(model_path, demo_dir, month,
                                                           tmp_path):
    # Invariant: the same code path on a different slicing of the rows.
    frame = pd.read_csv(demo_dir / RECENT_FILE)
    alone = tmp_path / "period.csv"
    frame[frame[PERIOD] == f"{month}-01"].to_csv(alone, index=False)
    base = demo_dir / DATA_FILE
    by_period = monitor(model_path, demo_dir / RECENT_FILE, PERIOD, baseline=base)
    period = next(p for p in by_period.periods if p.period == month)
    pair = compare(model_path, base, alone)
    assert period.score.index == pytest.approx(pair.stability.score.index, rel=1e-12)
    assert period.score.critical_value == pytest.approx(pair.stability.score.critical_value,
                                                        rel=1e-12)
    assert [(r.name, r.status) for r in period.characteristics] == \
        [(r.name, r.status) for r in pair.stability.characteristics]
    for mine, theirs in zip(period.characteristics, pair.stability.characteristics):
        assert mine.index == pytest.approx(theirs.index, rel=1e-12)
    if "current" in pair.performance and period.outcomes is not None:
        assert period.outcomes.gini == pytest.approx(
            pair.performance["current"].discrimination.gini, rel=1e-12)


def _psi(base, cur):
    # Definition (common practice): sum (c - b) ln(c / b) over shares.
    b, c = base / base.sum(), cur / cur.sum()
    return float(np.sum((c - b) * np.log(c / b)))


def test_psi_and_csi_equal_an_independent_numpy_computation(monthly, demo_build, demo_dir):
    card = demo_build.card
    frame = pd.read_csv(demo_dir / RECENT_FILE)
    scores = apply_scorecard(card, frame)
    dev = card.development
    dev_scores = np.arange(card.min_score, card.max_score + 1)
    dev_rows = np.array(dev.score_goods) + np.array(dev.score_bads)
    for p in monthly.periods:
        rows = (frame[PERIOD] == f"{p.period}-01").to_numpy()
        bounds = [tuple(int(x) for x in band.split(" to ")) for band in p.score.table["Band"]]
        base = np.array([dev_rows[(dev_scores >= lo) & (dev_scores <= hi)].sum()
                         for lo, hi in bounds])
        cur = np.array([((scores.score[rows] >= lo) & (scores.score[rows] <= hi)).sum()
                        for lo, hi in bounds], dtype=float)
        assert p.score.index == pytest.approx(_psi(base, cur), rel=1e-9)
        assert p.mean_score == pytest.approx(scores.score[rows].mean(), rel=1e-12)
        assert p.approval_rate == pytest.approx((scores.score[rows] >= 560).mean(), rel=1e-12)
        for j, (char, r) in enumerate(zip(card.characteristics, p.characteristics)):
            # The development sample's own rows per bin (the bins' counts hold inferred
            # rejects too when the card was built with reject inference, as the demo's is).
            b = np.array(dev.bin_goods[char.name]) + np.array(dev.bin_bads[char.name])
            c = np.bincount(scores.codes[rows, j], minlength=len(char.bins)).astype(float)
            used = (b > 0) | (c > 0)
            if np.all((b[used] > 0) & (c[used] > 0)):
                assert r.index == pytest.approx(_psi(b[used], c[used]), rel=1e-9)


def test_stored_development_histogram_is_the_builds(demo_build):
    hist = demo_build.histograms["development"]
    dev = demo_build.card.development
    assert np.array_equal(np.array(dev.score_goods), hist.goods)
    assert np.array_equal(np.array(dev.score_bads), hist.bads)
    assert dev.rows == demo_build.samples.rows["development"]
    assert dev.performance["holdout"]["gini"] == demo_build.performance["holdout"].gini


def test_the_demo_drift_starts_in_its_known_month(monthly, demo_build):
    # Simulation: the demo draws months from DRIFT_FROM_MONTH from the drifted population.
    flagged = [p.period for p in monthly.periods if p.status != "stable"]
    assert flagged == [m for m in RECENT_MONTHS if m >= DRIFT_FROM_MONTH]


def test_immature_months_show_no_outcomes(monthly):
    assert [p.outcomes is None for p in monthly.periods] == \
        [False] * (len(RECENT_MONTHS) - IMMATURE_MONTHS) + [True] * IMMATURE_MONTHS


def test_outcome_figures_match_reference_libraries(monthly, demo_build, demo_dir):
    card = demo_build.card
    frame = pd.read_csv(demo_dir / RECENT_FILE)
    scores = apply_scorecard(card, frame).score
    label = code_outcome(frame["outcome"], ["defaulted"], ["repaid"]).label
    first = monthly.periods[0]
    rows = (frame[PERIOD] == "2026-01-01").to_numpy()
    good, bad = scores[rows & (label == GOOD)], scores[rows & (label == BAD)]
    # Reference library: AUC = Mann-Whitney U / (goods x bads); KS = ks_2samp.
    u = stats.mannwhitneyu(good, bad).statistic
    assert first.outcomes.gini == pytest.approx(2 * u / (len(good) * len(bad)) - 1, rel=1e-12)
    assert first.outcomes.ks == pytest.approx(stats.ks_2samp(good, bad).statistic, rel=1e-12)
    assert first.outcomes.bad_rate == pytest.approx(len(bad) / (len(good) + len(bad)))


def _drifted_months_file(path, months, drifted):
    parts = []
    for i, month in enumerate(months):
        part = make_applications(rows=2500, seed=500 + i)
        if month in drifted:
            # Inject drift into one characteristic: most applications come online.
            rng = np.random.default_rng(i)
            online = rng.random(len(part)) < 0.7
            part["sales_channel"] = np.where(online, "online", part["sales_channel"])
        part[PERIOD] = f"{month}-15"
        parts.append(part)
    pd.concat(parts, ignore_index=True).to_csv(path, index=False)


def test_drift_injected_into_two_months_flags_exactly_those(model_path, tmp_path):
    # Simulation: undrifted months from the development population, two with sales_channel moved.
    months = ["2027-01", "2027-02", "2027-03", "2027-04", "2027-05", "2027-06"]
    drifted = {"2027-02", "2027-05"}
    path = tmp_path / "months.csv"
    _drifted_months_file(path, months, drifted)
    result = monitor(model_path, path, PERIOD)
    flagged = {p.period for p in result.periods if p.status != "stable"}
    assert flagged == drifted
    for p in result.periods:
        moved = {r.name for r in p.characteristics if r.status != "stable"}
        assert moved == ({"sales_channel"} if p.period in drifted else set())


def test_quarters_add_up_the_months(model_path, demo_dir, monthly):
    quarterly = monitor(model_path, demo_dir / RECENT_FILE, PERIOD, every="quarter")
    assert [p.period for p in quarterly.periods] == ["2026-Q1", "2026-Q2", "2026-Q3"]
    assert [p.rows for p in quarterly.periods] == [
        sum(p.rows for p in monthly.periods[i:i + 3]) for i in (0, 3, 6)]


def _delong_from_rows(good, bad):
    # DeLong, DeLong & Clarke-Pearson (1988), structural components on rows (from memory).
    psi = (good[:, None] > bad[None, :]) + 0.5 * (good[:, None] == bad[None, :])
    v10, v01 = psi.mean(axis=1), psi.mean(axis=0)
    auc = psi.mean()
    return auc, v10.var(ddof=1) / len(good) + v01.var(ddof=1) / len(bad)


def test_gini_interval_variance_equals_delong_on_rows():
    rng = np.random.default_rng(3)
    good = np.round(rng.normal(20, 8, 300)).astype(int)
    bad = np.round(rng.normal(12, 8, 80)).astype(int)
    low = min(good.min(), bad.min())
    width = max(good.max(), bad.max()) - low + 1
    r = gini_interval(np.bincount(good - low, minlength=width),
                      np.bincount(bad - low, minlength=width))
    auc, variance = _delong_from_rows(good, bad)
    assert r.estimate == pytest.approx(2 * auc - 1, rel=1e-12)
    assert r.standard_error == pytest.approx(2 * math.sqrt(variance), rel=1e-9)


def test_gini_interval_covers_the_true_gini_at_about_the_nominal_rate():
    # Simulation; DeLong, DeLong & Clarke-Pearson (1988), from memory: 95% intervals should
    # cover the true Gini in about 95% of samples. Binormal scores on an integer grid; the true
    # Gini of the discretised populations is exact from their probabilities.
    edges = np.arange(-60, 61) - 0.5
    p_good = np.diff(stats.norm.cdf(edges, loc=12, scale=10))
    p_bad = np.diff(stats.norm.cdf(edges, loc=0, scale=10))
    p_good, p_bad = p_good / p_good.sum(), p_bad / p_bad.sum()
    truth = discrimination(p_good, p_bad).gini
    rng = np.random.default_rng(2024)
    trials = 1000
    goods = rng.multinomial(1000, p_good, size=trials)
    bads = rng.multinomial(150, p_bad, size=trials)
    covered = sum(r.low <= truth <= r.high
                  for r in (gini_interval(g, b) for g, b in zip(goods, bads)))
    # Binomial spread of 1000 trials at 0.95 is about 0.007; allow about three of them.
    assert 0.93 <= covered / trials <= 0.97


def _invoke(*args):
    return CliRunner().invoke(main, ["monitor", *map(str, args)])


def test_command_writes_the_json_contract_and_the_workbook(model_path, demo_dir, tmp_path,
                                                           monthly):
    json_path, book_path = tmp_path / "monitor.json", tmp_path / "monitor.xlsx"
    run = _invoke(model_path, demo_dir / RECENT_FILE, "--period", PERIOD, "--cutoff", 560,
                  "--json", json_path, "--workbook", book_path)
    assert run.exit_code == 0, run.output
    assert "2026-01" in run.output
    data = json.loads(json_path.read_text())
    first = data["periods"][0]
    assert set(first) >= {"period", "rows", "score", "characteristics", "gini"}
    assert set(first["score"]) >= {"psi", "status", "critical_value"}
    name = monthly.periods[0].characteristics[0].name
    assert set(first["characteristics"][name]) >= {"csi", "status"}
    assert first["score"]["psi"] == pytest.approx(monthly.periods[0].score.index, rel=1e-12)
    assert data["periods"][-1]["gini"] is None
    book = load_workbook(book_path)
    assert book.sheetnames == list(SHEETS)
    periods = book[SHEETS[0]]
    assert periods.cell(1, 1).value == "Period"
    column = [periods.cell(1, j).value for j in range(1, periods.max_column + 1)]
    status = column.index("Score status") + 1
    drifted_row = 2 + RECENT_MONTHS.index(DRIFT_FROM_MONTH) + 1
    assert periods.cell(drifted_row, status).value == "watch"
    assert periods.cell(drifted_row, status).fill.fgColor.rgb.endswith("F6E3CC")
    assert len(periods._charts) == 2
    assert any("statistical aid" in str(c.value) for row in periods.iter_rows() for c in row)
    chars = book[SHEETS[1]]
    assert [chars.cell(1, j).value for j in range(2, 2 + len(RECENT_MONTHS))] == \
        list(RECENT_MONTHS)


def test_fail_on_trips_on_the_latest_period(model_path, demo_dir):
    latest = _invoke(model_path, demo_dir / RECENT_FILE, "--period", PERIOD, "--fail-on", "watch")
    assert latest.exit_code == 1
    calm = _invoke(model_path, demo_dir / RECENT_FILE, "--period", PERIOD, "--fail-on", "shift")
    assert calm.exit_code == 0


def _old_model(card: Scorecard, path):
    raw = json.loads(card.to_json())
    raw.pop("development")
    raw.pop("fates")
    path.write_text(json.dumps(raw), encoding="utf-8")


def test_old_model_files_still_load_and_monitor_asks_for_a_baseline(demo_build, demo_dir,
                                                                    tmp_path):
    old = tmp_path / "old.json"
    _old_model(demo_build.card, old)
    card = load_scorecard(old)
    assert card.development is None and card.fates == ()
    assert card.characteristics == demo_build.card.characteristics
    with pytest.raises(InputError, match="--baseline"):
        monitor(old, demo_dir / RECENT_FILE, PERIOD)
    run = _invoke(old, demo_dir / RECENT_FILE, "--period", PERIOD)
    assert run.exit_code == 2
    lines = run.stderr.strip().splitlines() if hasattr(run, "stderr") else run.output.splitlines()
    assert len(lines) == 1 and lines[0].startswith("error:") and "--baseline" in lines[0]
    with_base = _invoke(old, demo_dir / RECENT_FILE, "--period", PERIOD,
                        "--baseline", demo_dir / DATA_FILE)
    assert with_base.exit_code == 0, with_base.output


@pytest.mark.parametrize("args, names", [
    (["--period", "no_such_column"], "no_such_column"),
    (["--period", "sales_channel"], "sales_channel"),
    (["--period", PERIOD, "--json", "{data}"], "--json"),
    (["--period", PERIOD, "--workbook", "{model}"], "--workbook"),
])
def test_bad_input_is_one_error_line_and_writes_nothing(model_path, demo_dir, tmp_path, args,
                                                        names):
    data = tmp_path / "recent.csv"
    data.write_bytes((demo_dir / RECENT_FILE).read_bytes())
    model = tmp_path / "model.json"
    model.write_bytes(model_path.read_bytes())
    before = {p: p.read_bytes() for p in (data, model)}
    args = [a.format(data=data, model=model) for a in args]
    run = CliRunner().invoke(main, ["monitor", str(model), str(data), *args])
    assert run.exit_code == 2
    lines = run.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error:") and names in lines[0]
    assert {p: p.read_bytes() for p in (data, model)} == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["model.json", "recent.csv"]


def test_the_dask_engine_gives_the_local_result(model_path, demo_dir, tmp_path):
    # Invariant: the same pass on Parquet partitions merges to the same counts.
    pytest.importorskip("distributed")
    from scorecard import api
    folder = tmp_path / "recent"
    folder.mkdir()
    frame = pd.read_csv(demo_dir / RECENT_FILE)
    for i, start in enumerate(range(0, len(frame), 6000)):
        frame.iloc[start:start + 6000].to_parquet(folder / f"part-{i}.parquet")
    local = api.monitor(model_path, folder, PERIOD, cutoff=560)
    spread = api.monitor(model_path, folder, PERIOD, cutoff=560, dask="local")
    assert spread.to_json() == local.to_json()
