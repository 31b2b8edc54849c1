"""Reject inference: the methods, the build on accepts plus inferred rejects, its outputs.

Sources are named beside each check of the main job.
"""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from openpyxl import load_workbook
from scipy import stats

from scorecard.api import open_engine
from scorecard.build.pipeline import build_scorecard
from scorecard.build.rejects import (
    fuzzy_augmentation,
    hard_cutoff,
    parcelling,
    reweighting,
    score_bands,
)
from scorecard.card.points import bad_probability_of_score
from scorecard.card.scoring import apply_scorecard
from scorecard.config.loading import load_config
from scorecard.data.samples import DEVELOPMENT
from scorecard.demo.applications import _acceptance, demo_config_text, make_applications
from scorecard.errors import InputError


# ---- the methods ------------------------------------------------------------------------------

@settings(deadline=None, max_examples=50)
@given(st.lists(st.tuples(st.floats(0, 1), st.floats(0, 100)), min_size=1, max_size=50))
def test_fuzzy_augmentation_keeps_each_rejects_weight_and_splits_it_by_probability(pairs):
    # Definition of fuzzy augmentation (Siddiqi 2006, reject inference chapter; published,
    # from memory): a good with weight P(good) and a bad with weight P(bad), times the weight.
    p, w = (np.array(x) for x in zip(*pairs))
    f = fuzzy_augmentation(p, w)
    np.testing.assert_allclose(f.good_weight + f.bad_weight, w, rtol=1e-12, atol=1e-12)
    assert f.bad_weight.sum() == pytest.approx(float(np.sum(p * w)), rel=1e-12, abs=1e-9)


def test_parcelling_is_reproducible_and_draws_at_the_uplifted_band_rates():
    # Parcelling (Siddiqi 2006; published, from memory): outcomes allotted in each band at the
    # accepts' bad rate times the uplift. Checked against binomial bounds (reference library:
    # scipy.stats.binom), at a level that fails about once in 10^5 runs per band.
    band = np.repeat(np.arange(5), 4000)
    rates = np.array([0.30, 0.20, 0.10, 0.05, 0.02])
    first = parcelling(band, rates, 1.5, seed=2024)
    again = parcelling(band, rates, 1.5, seed=2024)
    other = parcelling(band, rates, 1.5, seed=7)
    np.testing.assert_array_equal(first.label, again.label)
    assert not np.array_equal(first.label, other.label)
    np.testing.assert_allclose(first.band_bad_rate, np.minimum(rates * 1.5, 1))
    for b, p in enumerate(first.band_bad_rate):
        bads = int(first.label[band == b].sum())
        low, high = stats.binom.interval(1 - 1e-5, 4000, p)
        assert low <= bads <= high, (b, bads, low, high)


def test_hard_cutoff_by_score_and_by_bad_rate():
    # Definition (Siddiqi 2006; published, from memory): below the cut-off bad, else good.
    scores = np.array([480, 500, 500, 520, 540, 560])
    assert hard_cutoff(scores, np.ones(6), cutoff=510).label.tolist() == [1, 1, 1, 0, 0, 0]
    # The stated bad rate is reached without splitting the tie at 500: 3 of 6 below 501.
    h = hard_cutoff(scores, np.ones(6), bad_rate=0.4)
    assert (h.cutoff, h.label.tolist()) == (501, [1, 1, 1, 0, 0, 0])


def test_reweighting_restores_each_bands_through_the_door_count():
    # Definition (inverse probability of acceptance; Anderson 2007, published, from memory):
    # accepts times the inverse acceptance rate add up to accepts plus rejects in every band.
    accepts, rejects = np.array([50.0, 200.0, 700.0]), np.array([150.0, 100.0, 30.0])
    r = reweighting(accepts, rejects)
    np.testing.assert_allclose(accepts * r.factor, accepts + rejects)


def test_bands_without_development_accepts_join_their_neighbour():
    accepts = np.array([0.0, 0.0, 5.0, 5.0, 5.0, 5.0])
    rejects = np.array([20.0, 20.0, 0.0, 0.0, 0.0, 0.0])
    starts = score_bands(accepts, accepts, accepts * 0.1, rejects, 300, 6)
    per_band = np.add.reduceat(accepts, starts - 300)
    assert starts[0] == 300 and (per_band > 0).all()


# ---- the build ----------------------------------------------------------------------------------

@pytest.fixture(scope="module")
def demo_with_rejects(demo_build):
    assert demo_build.rejects is not None, "the demo config declares declined applications"
    return demo_build


def test_fuzzy_build_adds_exactly_the_rejects_weight_and_their_expected_bads(
        demo_with_rejects, demo_config_path):
    # Invariant of fuzzy augmentation (Siddiqi 2006; published, from memory) carried through
    # the whole build: development counts = accepts + rejects' weight; bads gain sum P(bad).
    result = demo_with_rejects
    inference = result.rejects
    accepts_only = inference.accepts_only
    declined = pd.read_csv(demo_config_path.parent / "declined.csv")
    scores = apply_scorecard(accepts_only.card, declined)
    # Declined staff applications leave by the demo's exclusion rule, as the accepts' do.
    scored = ~scores.rejected & (declined["staff_application"] != "yes").to_numpy()
    p_bad = bad_probability_of_score(scores.score[scored].astype(float), accepts_only.card.scaling)
    accepts = accepts_only.reports[0].sample_counts[:, DEVELOPMENT, :].sum(axis=0)
    for report in result.reports:
        if report.sample_counts is None:
            continue
        goods = sum(b.goods for b in report.characteristic.bins)
        bads = sum(b.bads for b in report.characteristic.bins)
        assert goods + bads == pytest.approx(accepts.sum() + scored.sum(), rel=1e-9)
        assert bads == pytest.approx(accepts[1] + p_bad.sum(), rel=1e-9)
        # The counts by sample stay the accepts' (holdout and out of time are accepts only).
        np.testing.assert_array_equal(report.sample_counts.sum(axis=0),
                                      accepts_only.reports[0].sample_counts.sum(axis=0))
    assert inference.inferred_bads == pytest.approx(p_bad.sum(), rel=1e-9)


def test_workbook_and_model_file_carry_the_inference(tmp_path, demo_config_path):
    completed = subprocess.run(
        [sys.executable, "-m", "scorecard", "build", str(demo_config_path), "--quiet",
         "--workbook", str(tmp_path / "w.xlsx"), "--model", str(tmp_path / "m.json")],
        capture_output=True, text=True)
    assert completed.returncode == 0, completed.stderr
    book = load_workbook(tmp_path / "w.xlsx")
    assert book.sheetnames[-1] == "Reject inference"
    sheet = [[c for c in row if c is not None] for row in book["Reject inference"].values]
    text = " ".join(str(c) for row in sheet for c in row)
    assert "Hand & Henley" in text and "statistical aid" in text
    assert "known only because the data are invented" in text
    overview = " ".join(str(c) for row in book["Overview"].values for c in row if c is not None)
    assert "Reject inference method fuzzy" in overview
    record = json.loads((tmp_path / "m.json").read_text())["reject_inference"]
    assert record["method"] == "fuzzy" and record["settings"] == {"bands": 10}


def _through_the_door(folder, rows=30_000, seed=11):
    """Invented applicants declined by a policy on observed characteristics only."""
    frame = make_applications(rows=rows, seed=seed)
    draws = {c: frame[c].to_numpy(dtype=float) for c in
             ("credit_utilisation", "late_payments_12m", "monthly_income", "deposit_share")}
    accept = np.random.default_rng(seed).random(rows) < _acceptance(draws, np.zeros(rows))
    frame.loc[accept].to_csv(folder / "applications.csv", index=False)
    frame.loc[~accept].rename(columns={"outcome": "true_outcome"}) \
        .to_csv(folder / "declined.csv", index=False)
    return frame


def _config(folder, method, extra=""):
    text = demo_config_text("applications.csv").replace(
        "  method: fuzzy\n", f"  method: {method}\n{extra}")
    path = folder / f"{method}.yaml"
    path.write_text(text)
    return load_config(path)


def _auc(card, frame):
    known = frame["outcome"].isin(["repaid", "defaulted"]).to_numpy()
    scores = apply_scorecard(card, frame.loc[known]).score
    bad = (frame.loc[known, "outcome"] == "defaulted").to_numpy()
    # AUC as the Mann-Whitney statistic (reference library: scipy.stats).
    u = stats.mannwhitneyu(scores[~bad], scores[bad]).statistic
    return u / ((~bad).sum() * bad.sum())


@pytest.fixture(scope="module")
def simulated(tmp_path_factory):
    folder = tmp_path_factory.mktemp("through_the_door")
    return folder, _through_the_door(folder)


@pytest.mark.parametrize("method,extra", [("fuzzy", ""), ("parcelling", "  uplift: 1\n")])
def test_on_data_declined_on_observed_characteristics_inference_finds_the_true_bad_rate(
        simulated, method, extra):
    # Known truth (simulation): the old policy declined on observed characteristics only, so
    # the accepts-only card extrapolates to the rejects without bias; the inferred bad rate is
    # within 15% of the true one. The fuzzy card ranks the whole population at least as well as
    # the accepts-only card (to 0.002 of AUC, the noise of refitting on other weights).
    # Parcelling is not held to that: its outcomes are drawn at random within a score band, so
    # they carry no information about the characteristics and flatten the refit a little
    # (about 0.004 of AUC on these data).
    folder, everyone = simulated
    config = _config(folder, method, extra)
    with open_engine(config) as engine:
        result = build_scorecard(config, engine)
    inference = result.rejects
    assert inference.known_bad_rate is not None
    assert abs(inference.inferred_bad_rate / inference.known_bad_rate - 1) <= 0.15
    assert inference.ratio > 1.5      # the declined are the riskier: the policy did its job
    if method == "fuzzy":
        assert _auc(result.card, everyone) >= _auc(inference.accepts_only.card, everyone) - 0.002


def test_method_none_keeps_the_accepts_only_card_and_reports_the_rejects(simulated):
    folder, _ = simulated
    config = _config(folder, "none")
    with open_engine(config) as engine:
        result = build_scorecard(config, engine)
    assert result.card.characteristics == result.rejects.accepts_only.card.characteristics
    assert result.rejects.rows == len(pd.read_csv(folder / "declined.csv"))
    assert result.rejects.inferred_bad_rate == pytest.approx(result.rejects.expected_bad_rate)


def test_reweighting_and_hard_cutoff_build(simulated):
    folder, _ = simulated
    for method, extra in (("reweighting", ""), ("hard_cutoff", "  cutoff: 560\n")):
        config = _config(folder, method, extra)
        with open_engine(config) as engine:
            result = build_scorecard(config, engine)
        assert result.card.inference["method"] == method
        if method == "hard_cutoff":
            assert result.rejects.cutoff == 560


# ---- bad input ---------------------------------------------------------------------------------

def test_a_declined_file_without_a_characteristic_is_one_error_line(simulated, tmp_path):
    folder, _ = simulated
    pd.read_csv(folder / "declined.csv").drop(columns=["bike_price"]) \
        .to_csv(tmp_path / "declined.csv", index=False)
    (tmp_path / "applications.csv").write_bytes((folder / "applications.csv").read_bytes())
    config = _config(tmp_path, "fuzzy")
    with open_engine(config) as engine, pytest.raises(InputError, match="column bike_price"):
        build_scorecard(config, engine)


def test_a_rule_on_a_column_the_declined_file_lacks_is_one_error_line(simulated, tmp_path):
    from click.testing import CliRunner

    from scorecard.cli import main

    folder, _ = simulated
    pd.read_csv(folder / "declined.csv").drop(columns=["staff_application"]) \
        .to_csv(tmp_path / "declined.csv", index=False)
    (tmp_path / "applications.csv").write_bytes((folder / "applications.csv").read_bytes())
    (tmp_path / "c.yaml").write_text(demo_config_text("applications.csv"))
    ran = CliRunner().invoke(main, ["build", str(tmp_path / "c.yaml"), "--quiet"])
    assert ran.exit_code == 2
    assert ran.stderr.count("\n") == 1
    assert ran.stderr.startswith(f"error: {tmp_path / 'declined.csv'}: column staff_application:")
    assert "data.exclude rule" in ran.stderr and "Traceback" not in ran.stderr
    assert not (tmp_path / "out").exists()


# ---- exclusions ---------------------------------------------------------------------------------

def test_declined_rows_leave_by_the_exclude_rules_with_their_own_waterfall_lines(simulated,
                                                                                  tmp_path):
    # Invariant, exact counts: each rule removes the declined rows it is the first to catch
    # (counted here with pandas on the declined file), and the build equals the build on a
    # declined file from which those rows were taken out beforehand.
    folder, _ = simulated
    rule = "    - {column: staff_application, in: [yes], reason: Staff application (other lease terms)}\n"
    extra = rule + "    - {column: deposit_share, below: 0.05, reason: No deposit taken}\n"
    text = demo_config_text("applications.csv")
    assert rule in text
    declined = pd.read_csv(folder / "declined.csv")
    staff = (declined["staff_application"] == "yes").to_numpy()
    no_deposit = ~staff & (declined["deposit_share"] < 0.05).to_numpy()
    assert staff.sum() > 0 and no_deposit.sum() > 0
    kept = tmp_path / "kept"
    kept.mkdir()
    declined.loc[~staff & ~no_deposit].to_csv(kept / "declined.csv", index=False)
    results = []
    for where in (folder, kept):
        (where / "rules.yaml").write_text(text.replace(rule, extra).replace(
            "source: declined.csv", f"source: {where / 'declined.csv'}").replace(
            "source: applications.csv", f"source: {folder / 'applications.csv'}"))
        config = load_config(where / "rules.yaml")
        with open_engine(config) as engine:
            results.append(build_scorecard(config, engine))
    full, prefiltered = results
    d = full.waterfall.declined
    assert d.rows_read == len(declined)
    assert [(step.removed, step.left) for step in d.steps] == [
        (int(staff.sum()), len(declined) - int(staff.sum())),
        (int(no_deposit.sum()), len(declined) - int(staff.sum()) - int(no_deposit.sum()))]
    assert full.rejects.excluded == staff.sum() + no_deposit.sum()
    assert full.rejects.weight == prefiltered.rejects.weight
    assert full.card.inference["rejects_excluded"] == full.rejects.excluded
    lines = full.waterfall.frame()
    declined_lines = lines[lines["Step"].str.startswith("Declined")]
    assert declined_lines["Step"].tolist() == [
        "Declined applications read", "Declined, rule 1: staff_application in [yes]",
        "Declined, rule 2: deposit_share below 0.05",
        "Declined applications left for reject inference"]
    assert declined_lines["Rows left"].iloc[-1] == d.left == len(declined) - full.rejects.excluded
    # The accepts' lines stay as they were, and the cards are the same.
    assert full.waterfall.steps == prefiltered.waterfall.steps
    one, other = (json.loads(r.card.to_json()) for r in (full, prefiltered))
    for record in (one, other):
        record["reject_inference"].pop("rejects")
        record["reject_inference"].pop("rejects_excluded", None)
    assert one == other


# ---- engines ------------------------------------------------------------------------------------

def test_dask_build_with_rejects_gives_the_local_build(demo_config_path, tmp_path):
    # Counts first: the same rows give the same counts on any engine (the product's own
    # contract, as in test_engines); floats may differ only by the order of additions.
    distributed = pytest.importorskip("distributed")
    import pyarrow as pa
    import pyarrow.parquet as pq

    from scorecard.engines.dask_engine import DaskEngine
    from scorecard.engines.local import LocalEngine
    from test_engines import _same_json

    folder = demo_config_path.parent
    for name, parts in (("applications", 3), ("declined", 2)):
        frame = pd.read_csv(folder / f"{name}.csv")
        out = tmp_path / name
        out.mkdir()
        for i, chunk in enumerate(np.array_split(np.arange(len(frame)), parts)):
            pq.write_table(pa.Table.from_pandas(frame.iloc[chunk], preserve_index=False),
                           out / f"part_{i}.parquet")
    text = demo_config_text(str(tmp_path / "applications")).replace(
        "source: declined.csv", f"source: {tmp_path / 'declined'}")
    (tmp_path / "c.yaml").write_text(text)
    config = load_config(tmp_path / "c.yaml")
    from scorecard.data.read import read_frame
    local = build_scorecard(config, LocalEngine(read_frame(tmp_path / "applications")),
                            rejects_engine=LocalEngine(read_frame(tmp_path / "declined")))
    with distributed.LocalCluster(n_workers=2, processes=True, threads_per_worker=1,
                                  dashboard_address=":0") as cluster, \
            DaskEngine(tmp_path / "applications", cluster.scheduler_address) as engine, \
            DaskEngine(tmp_path / "declined", cluster.scheduler_address) as rejects_engine:
        on_dask = build_scorecard(config, engine, rejects_engine=rejects_engine)
    _same_json(json.loads(local.card.to_json()), json.loads(on_dask.card.to_json()))
    for mine, theirs in zip(on_dask.reports, local.reports):
        if theirs.sample_counts is not None:
            # Fuzzy weights are fractions, so partition sums differ in the last digit.
            np.testing.assert_allclose(mine.sample_counts, theirs.sample_counts, rtol=1e-12)
    pd.testing.assert_frame_equal(on_dask.rejects.bands, local.rejects.bands, rtol=1e-12)
