"""Segmented cards: one card per segment on one scale, built, scored, exported, challenged and
compared.

Checks of the main job and their sources:
- Known truth, simulation: where one characteristic's effect reverses between two segments, the
  segmented model ranks held-out rows better than one card, and ``challenge`` says so; where the
  segments do not differ, ``challenge`` claims no difference at the 5% level in most seeds.
- Reference libraries: every segmented output (the scored file, the PMML document in pypmml,
  the SQL query in SQLite through sqlite3) gives the same scores and reasons row for row.
- Reference libraries: ``compare`` on a segmented model gives the score PSI that pandas
  computes from the scored files' score column over the same bands (PSI formula published:
  sum (a - e) ln(a / e)) and the AUC of sklearn's roc_auc_score on the pooled scores.
- Invariants: ``monitor`` on a segmented model gives each period the indices ``compare`` gives
  that period's rows alone; its stored baseline pools every card's development counts.
- Invariants: the local engine in one chunk, in small chunks and a Dask cluster give the same
  model file; every card has the config's scaling; a segment too small to build is one
  ``error:`` line naming it and its counts.
- Known truth, simulation: with declined applications (declined on observed characteristics
  only, so that each segment's accepts-only card extrapolates to its declined without bias),
  each segment card's inferred bad rate of its own declined is near their true bad rate.
- Invariants: a segmented build with declined applications gives each segment the card built
  alone from its own rows and its own declined applications (the other segments' outside the
  inference), key for key in the model file, whatever the method.
- Invariants: the passes shared by every segment (the segment one more code beside the sample)
  give each segment the card it gets from passes of its own, with the other segments' rows
  outside every sample, key for key in the model file; each shared pass's counts equal the
  single-card pass's on that segment's facts, exactly.
"""

from __future__ import annotations

import importlib.util
import json
import shutil
import sqlite3
import xml.etree.ElementTree as ET

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

import scorecard.api as api
from scorecard.build.pipeline import _build
from scorecard.build.segments import build_segmented, segment_rule
from scorecard.card.scorecard import Scorecard
from scorecard.card.segmented import SegmentedScorecard, load_model, model_from_json
from scorecard.cli import main
from scorecard.config import load_config, parse_config
from scorecard.data.read import read_frame
from scorecard.engines.local import LocalEngine
from scorecard.engines.passes import (
    SegmentFacts,
    bin_counts,
    bin_counts_by_segment,
    coded_patterns,
    fine_counts,
    fine_counts_by_segment,
    patterns_by_segment,
)
from scorecard.errors import InputError
from scorecard.outputs.pmml import write_pmml
from scorecard.outputs.sql import segmented_query

needs_pmml_evaluator = pytest.mark.skipif(
    shutil.which("java") is None or importlib.util.find_spec("pypmml") is None,
    reason="pypmml and a Java runtime are needed to evaluate PMML independently")

SINGLE = """\
name: one card
data: {{source: {data}, target: outcome, bad: [bad], good: [good], ignore: [id]}}
samples: {{holdout: 0.3, seed: 7}}
output: {{workbook: out/one.xlsx, model: out/one.json}}
"""
SEGMENTED = """\
name: a card per segment
data: {{source: {data}, target: outcome, bad: [bad], good: [good], ignore: [id]}}
samples: {{holdout: 0.3, seed: 7}}
segments: {segments}
output: {{workbook: out/{stem}.xlsx, model: out/{stem}.json}}
"""
NS = {"pmml": "http://www.dmg.org/PMML-4_4"}
BY_GROUPS = "{column: customer, groups: {new: [new], existing: [existing, renewed]}}"
BY_CUTS = "{column: tenure, cuts: [1]}"


def simulate(rows: int, seed: int, reverse: bool = True) -> pd.DataFrame:
    """Rows with a known logistic model: x1 raises the log-odds of bad for existing customers
    and (when ``reverse``) lowers it by as much for new ones; x2 acts alike in both; x3 is noise.
    ``tenure`` is 0 for new customers and positive for existing ones."""
    rng = np.random.default_rng(seed)
    new = rng.random(rows) < 0.5
    x1, x2, x3 = (np.round(rng.normal(size=rows), 3) for _ in range(3))
    sign = np.where(new & reverse, -1.0, 1.0)
    bad = rng.random(rows) < 1.0 / (1.0 + np.exp(-(-1.8 + 1.2 * sign * x1 + 0.6 * x2)))
    customer = np.where(new, "new", np.where(rng.random(rows) < 0.5, "existing", "renewed"))
    tenure = np.where(new, 0, rng.integers(1, 60, size=rows))
    return pd.DataFrame({"id": np.arange(rows), "customer": customer, "tenure": tenure,
                         "x1": x1, "x2": x2, "x3": x3,
                         "outcome": np.where(bad, "bad", "good")})


def write_case(folder, frame, segments=BY_GROUPS, stem="segmented"):
    """The data file, a one-card config and a segmented config in ``folder``."""
    frame.to_csv(folder / "data.csv", index=False)
    (folder / "one.yaml").write_text(SINGLE.format(data="data.csv"))
    (folder / f"{stem}.yaml").write_text(SEGMENTED.format(data="data.csv", segments=segments,
                                                          stem=stem))
    return folder / "one.yaml", folder / f"{stem}.yaml"


@pytest.fixture(scope="module")
def reversed_case(tmp_path_factory):
    folder = tmp_path_factory.mktemp("reversed")
    one, segmented = write_case(folder, simulate(6000, 1).drop(columns="tenure"))
    simulate(4000, 2).to_csv(folder / "fresh.csv", index=False)
    return folder, api.build(one), api.build(segmented)


def test_the_segmented_model_beats_one_card_where_an_effect_reverses(reversed_case):
    # Known truth, simulation: x1 acts in opposite directions in the two segments, so one card
    # can follow it in neither; the segmented model follows it in both.
    folder, single, segmented = reversed_case
    assert isinstance(segmented.card, SegmentedScorecard)
    assert segmented.performance["holdout"].auc > single.performance["holdout"].auc + 0.05
    for name in ("new", "existing"):
        assert "x1" in segmented.segments[name].card.names
    result = api.challenge(folder / "out/one.json", folder / "out/segmented.json",
                           folder / "fresh.csv")
    assert result.difference.ci_low > 0 and result.difference.p_value < 0.001
    assert "the challenger ranks better" in result.text().splitlines()[4]
    assert set(result.segments) == {"new", "existing"}
    assert sum(n for *_, n in result.segments.values()) == result.rows == 4000
    assert all(d.difference > 0 for _, _, d, _ in result.segments.values())


def test_challenge_claims_no_difference_in_most_seeds_where_segments_do_not_differ(tmp_path):
    # Known truth, simulation: the same model holds in both segments, so the segmented model
    # ranks no better in truth; at the 5% level a claim should be rare (at most one of four).
    claims = 0
    for seed in range(4):
        folder = tmp_path / str(seed)
        folder.mkdir()
        one, segmented = write_case(folder, simulate(3000, 10 + seed, reverse=False))
        simulate(3000, 100 + seed, reverse=False).to_csv(folder / "fresh.csv", index=False)
        api.build(one)
        api.build(segmented)
        result = api.challenge(folder / "out/one.json", folder / "out/segmented.json",
                               folder / "fresh.csv")
        claims += result.difference.p_value < 0.05
    assert claims <= 1


def test_every_card_has_the_config_scaling_and_the_model_file_round_trips(reversed_case):
    folder, _, segmented = reversed_case
    model = load_model(folder / "out/segmented.json")
    assert model == segmented.card
    assert model_from_json(model.to_json()) == model
    assert {card.scaling for card in model.cards} == {model.scaling}
    assert (model.scaling.base_score, model.scaling.base_odds, model.scaling.pdo) == (600, 50, 20)
    assert json.loads(model.to_json())["format_version"] == 2
    # A single card's file still loads as a single card.
    assert isinstance(load_model(folder / "out/one.json"), Scorecard)
    table = segmented.segment_table()
    assert table["Segment"].tolist() == ["new", "existing", "all segments"]
    new = int((pd.read_csv(folder / "data.csv")["customer"] == "new").sum())
    assert table["Rows"].tolist() == [new, 6000 - new, 6000]
    goods_and_bads = table["Goods"] + table["Bads"]
    assert goods_and_bads[2] == goods_and_bads[0] + goods_and_bads[1] == 6000


@pytest.fixture(scope="module", params=["groups", "cuts"])
def scored_case(request, tmp_path_factory):
    """A segmented model (by groups or by cuts) and rows with missing values, unseen levels
    and rows no segment takes, scored by the product."""
    folder = tmp_path_factory.mktemp(request.param)
    rule = BY_GROUPS if request.param == "groups" else BY_CUTS
    _, config = write_case(folder, simulate(5000, 3), rule, stem=request.param)
    api.build(config)
    rows = simulate(600, 4)
    rows.loc[::7, "x1"] = np.nan
    rows.loc[::11, "x2"] = 99.0
    rows.loc[::13, ["customer", "tenure"]] = [None, np.nan]
    rows.loc[5::17, "customer"] = "someone else"
    rows.to_csv(folder / "rows.csv", index=False)
    model = folder / f"out/{request.param}.json"
    api.score(model, folder / "rows.csv", folder / "scored.csv", keep=["id"], reasons=2)
    return load_model(model), rows, pd.read_csv(folder / "scored.csv"), folder


def test_scored_file_uses_each_rows_own_card(scored_case):
    model, rows, scored, _ = scored_case
    assert list(scored.columns[:4]) == ["id", "segment", "score", "bad_probability"]
    for name, card in model.segments.items():
        mine = scored["segment"] == name
        points = scored.loc[mine, [f"points_{n}" for n in card.names]].sum(axis=1)
        assert (points == scored.loc[mine, "score"]).all()
        others = [f"points_{n}" for n in model.names if n not in card.names]
        assert scored.loc[mine, others].isna().all().all()
    lost = scored["segment"].isna()
    assert lost.sum() > 0 and scored.loc[lost, "score"].isna().all()
    assert (scored.loc[lost, "reason_1"] == f"REJECTED:{model.rule.column}").all()


def test_sql_in_sqlite_gives_the_scored_file_row_for_row(scored_case):
    # Reference library: SQLite (through sqlite3) runs the one query.
    model, rows, scored, _ = scored_case
    db = sqlite3.connect(":memory:")
    rows.to_sql("applications", db, index=False)
    got = pd.read_sql_query(segmented_query(model, keep=["id"], reasons=2), db)
    got = got.sort_values("id").reset_index(drop=True)
    expected = scored.drop(columns="bad_probability")
    assert list(got.columns) == list(expected.columns)
    for column in expected.columns:
        assert got[column].astype(object).where(got[column].notna(), None).tolist() == \
            expected[column].astype(object).where(expected[column].notna(), None).tolist(), column


@needs_pmml_evaluator
def test_pmml_in_an_independent_evaluator_gives_the_scored_file_row_for_row(scored_case):
    # Reference library: pypmml evaluates the MiningModel's segmentation and each Scorecard.
    from pypmml import Model

    model, rows, scored, folder = scored_case
    write_pmml(model, folder / "segmented.pmml", reasons=2)
    root = ET.parse(folder / "segmented.pmml").getroot()
    segmentation = root.find("pmml:MiningModel/pmml:Segmentation", NS)
    assert segmentation.get("multipleModelMethod") == "selectFirst"
    assert [len(s.findall("pmml:Scorecard", NS)) for s in segmentation] == [1] * len(model.cards)
    evaluator = Model.load(str(folder / "segmented.pmml"))
    columns = list(model.names) + [model.rule.column]
    got = evaluator.predict(rows[columns])
    assert got["score"].fillna(-1).tolist() == scored["score"].fillna(-1).tolist()
    np.testing.assert_allclose(got["bad_probability"], scored["bad_probability"], rtol=1e-12,
                               atol=1e-15)
    scored_rows = scored["score"].notna()
    for column in ("reason_1", "reason_2"):
        assert got.loc[scored_rows, column].fillna("").tolist() == \
            scored.loc[scored_rows, column].fillna("").tolist(), column


def test_the_engines_agree_on_the_segmented_model(tmp_path):
    # Invariant: one chunk, chunks of 997 rows and a two-process Dask cluster on Parquet parts
    # give the same cards, counts and pooled measures.
    distributed = pytest.importorskip("distributed")
    from scorecard.engines.dask_engine import DaskEngine

    frame = simulate(5000, 5)
    parts = tmp_path / "parts"
    parts.mkdir()
    for i, start in enumerate(range(0, 5000, 2000)):
        frame.iloc[start:start + 2000].to_parquet(parts / f"part_{i}.parquet", index=False)
    (tmp_path / "c.yaml").write_text(SEGMENTED.format(data="parts", segments=BY_GROUPS,
                                                      stem="s"))
    config = load_config(tmp_path / "c.yaml")
    whole = build_segmented(config, LocalEngine(read_frame(parts)))
    chunked = build_segmented(config, LocalEngine(read_frame(parts), chunk_rows=997))
    with distributed.LocalCluster(n_workers=2, processes=True, threads_per_worker=1,
                                  dashboard_address=":0") as cluster, \
            DaskEngine(parts, cluster.scheduler_address) as engine:
        on_dask = build_segmented(config, engine)
    for other in (chunked, on_dask):
        assert other.card.to_json() == whole.card.to_json()
        for name, result in whole.segments.items():
            assert other.segments[name].samples == result.samples
        assert {k: v.auc for k, v in other.pooled.items()} == \
            pytest.approx({k: v.auc for k, v in whole.pooled.items()}, rel=1e-12)


def test_a_segment_too_small_to_build_is_one_error_line_naming_it(tmp_path):
    frame = simulate(3000, 6)
    frame.loc[:29, "customer"] = "trial"
    rules = "{column: customer, groups: {new: [new], existing: [existing, renewed], trial: [trial]}}"
    _, config = write_case(tmp_path, frame, rules)
    config.write_text(config.read_text() + "binning: {min_bin_goods: 10, min_bin_bads: 10}\n")
    bads = int((frame.loc[:29, "outcome"] == "bad").sum())
    ran = CliRunner().invoke(main, ["build", str(config), "--quiet"])
    assert ran.exit_code == 2
    assert ran.stderr.count("\n") == 1 and ran.stderr.startswith("error: segments: segment 'trial'")
    # The counts: 30 rows, of which the development sample (70%) holds the goods and bads named.
    assert "is too small to build: 30 rows," in ran.stderr
    assert "bads in development" in ran.stderr and "needs at least 20 goods and 20 bads" in ran.stderr
    assert bads < 20
    assert not (tmp_path / "out").exists()


def test_a_row_no_segment_takes_is_one_error_line_naming_its_row(tmp_path):
    frame = simulate(2000, 8)
    frame.loc[41, "customer"] = "walk-in"
    _, config = write_case(tmp_path, frame)
    ran = CliRunner().invoke(main, ["build", str(config), "--quiet"])
    assert ran.exit_code == 2
    assert ran.stderr == (f"error: {tmp_path / 'data.csv'}: row 42: column customer: holds "
                          "'walk-in', which no segment lists (1 such rows); segments.groups must "
                          "give every row a segment\n")


@pytest.mark.parametrize(("segments", "message"), [
    ("{column: customer}", "segments.groups: is required"),
    ("{column: customer, groups: {a: [x]}}", "segments.groups: must name at least two segments"),
    ("{column: customer, groups: {a: [x], b: [x]}}",
     "segments.groups.b[0]: level 'x' is already listed at segments.groups.a[0]"),
    ("{column: tenure, cuts: [1, 5], names: [a, b]}", "segments.names: must list 3 names"),
    ("{column: tenure, cuts: [5, 1]}", "segments.cuts[1]: must be larger"),
    ("{column: customer, groups: {a: [x], b: [y]}, cuts: [1]}",
     "segments.cuts: cannot be given with groups"),
    ("{column: outcome, cuts: [1]}", "segments.column: 'outcome' is named in data.target"),
    ("{column: customer, groupz: {}}", "segments.groupz: unknown key"),
])
def test_a_bad_segments_section_is_refused_naming_its_key(segments, message):
    text = SEGMENTED.format(data="d.csv", segments=segments, stem="s")
    with pytest.raises(InputError) as caught:
        parse_config(text, "c.yaml")
    assert message in str(caught.value) and "\n" not in str(caught.value)


def test_reports_on_a_segmented_model(reversed_case, tmp_path):
    folder, _, _ = reversed_case
    model, fresh = folder / "out/segmented.json", folder / "fresh.csv"
    strategy = api.strategy(model, fresh)
    assert strategy.rows == 4000 and strategy.table["approval_rate"].iloc[0] == 1.0
    for form in ("pmml", "sql"):
        ran = CliRunner().invoke(main, ["export", str(model), "--format", form,
                                        "--out", str(tmp_path / f"m.{form}")])
        assert ran.exit_code == 0 and (tmp_path / f"m.{form}").is_file()


def test_the_workbook_has_an_overview_of_segments_and_each_cards_sheets(reversed_case):
    from openpyxl import load_workbook

    folder, _, segmented = reversed_case
    book = load_workbook(folder / "out/segmented.xlsx")
    assert book.sheetnames[0] == "Overview"
    for name in ("new", "existing"):
        for sheet in ("Characteristics", "Bins", "Model", "Points", "Score bands", "Stability",
                      "Calculator"):
            assert f"{sheet} ({name})" in book.sheetnames
    cells = [[c for c in row] for row in book["Overview"].iter_rows(values_only=True)]
    header = next(i for i, row in enumerate(cells) if row[0] == "Segment")
    assert [cells[header + k][0] for k in (1, 2, 3)] == ["new", "existing", "all segments"]
    auc = cells[header].index("AUC holdout")
    assert cells[header + 3][auc] == pytest.approx(segmented.pooled["holdout"].auc)
    # Every sheet prints fitted to the page width, as the single card's do.
    for ws in book.worksheets:
        assert ws.sheet_properties.pageSetUpPr.fitToPage and ws.page_setup.fitToWidth == 1, ws.title


def test_compare_pools_the_scores_and_keeps_each_cards_characteristics(reversed_case, tmp_path):
    from sklearn.metrics import roc_auc_score

    folder, _, segmented = reversed_case
    model, data, fresh = folder / "out/segmented.json", folder / "data.csv", folder / "fresh.csv"
    result = api.compare(model, data, fresh, json_path=tmp_path / "c.json",
                         workbook=tmp_path / "c.xlsx")
    scored = _scored_files(model, {"baseline": data, "current": fresh}, tmp_path)
    # Reference: pandas over the scored files' score column, with the product's band starts;
    # PSI = sum (a - e) ln(a / e), published.
    table = result.stability.score.table
    psi = _psi_by_pandas(scored["baseline"]["score"], scored["current"]["score"], table["Band"])
    assert result.stability.score.index == pytest.approx(psi, rel=1e-9)
    assert table["Baseline rows"].sum() == len(scored["baseline"]) == 6000
    # Reference library: sklearn's AUC of the pooled scores, goods scoring higher.
    current = scored["current"]
    auc = roc_auc_score(current["outcome"] == "good", current["score"])
    assert result.performance["current"].discrimination.auc == pytest.approx(auc, rel=1e-9)
    # Each card's characteristics on its own segment's rows, under pooled names.
    saved = json.loads((tmp_path / "c.json").read_text())
    assert set(saved["segments"]) == {"new", "existing"}
    fresh_rows = pd.read_csv(fresh)
    new = int((fresh_rows["customer"] == "new").sum())
    assert saved["segments"]["new"]["rows"] == {"baseline": int(
        (pd.read_csv(data)["customer"] == "new").sum()), "current": new}
    assert saved["segments"]["existing"]["rows"]["current"] == 4000 - new
    for name in ("new", "existing"):
        names = [f"{c} ({name})" for c in segmented.segments[name].card.names]
        assert saved["segments"][name]["characteristics"] == names
        assert set(names) <= set(saved["characteristics"])
        counts = result.stability.characteristics[
            [r.name for r in result.stability.characteristics].index(names[0])].table
        assert counts["Current rows"].sum() == saved["segments"][name]["rows"]["current"]
    assert "x1 (new)" in result.text() and (tmp_path / "c.xlsx").is_file()


def test_compare_of_a_file_with_itself_is_stable_under_a_segmented_model(reversed_case):
    folder, _, _ = reversed_case
    fresh = folder / "fresh.csv"
    result = api.compare(folder / "out/segmented.json", fresh, fresh)
    assert result.stability.score.index == 0.0
    assert all(r.index == 0.0 for r in result.stability.characteristics)
    assert len(result.stability.characteristics) > 2 and not result.reached("watch")


def test_monitor_of_a_segmented_model_gives_each_period_what_compare_gives(reversed_case,
                                                                           tmp_path):
    folder, _, segmented = reversed_case
    model, data = folder / "out/segmented.json", folder / "data.csv"
    rows = pd.read_csv(folder / "fresh.csv")
    rows["on"] = np.where(rows["id"] < 1500, "2026-01-15", "2026-02-15")
    rows.to_csv(tmp_path / "dated.csv", index=False)
    by_period = api.monitor(model, tmp_path / "dated.csv", "on", baseline=data,
                            json_path=tmp_path / "m.json", workbook=tmp_path / "m.xlsx")
    assert [p.rows for p in by_period.periods] == [1500, 2500]
    for p, alone in zip(by_period.periods, (rows[rows["id"] < 1500], rows[rows["id"] >= 1500])):
        alone.to_csv(tmp_path / "alone.csv", index=False)
        pair = api.compare(model, data, tmp_path / "alone.csv")
        assert p.score.index == pytest.approx(pair.stability.score.index, rel=1e-12)
        assert [(r.name, r.index) for r in p.characteristics] == \
            [(r.name, r.index) for r in pair.stability.characteristics]
    assert "x1 (new)" in {r.name for r in by_period.periods[0].characteristics}
    # The stored baseline: every card's development counts pooled.
    stored = api.monitor(model, tmp_path / "dated.csv", "on")
    weights = sum(sum(part.card.development.score_goods) + sum(part.card.development.score_bads)
                  for part in segmented.segments.values())
    assert stored.periods[0].score.table["Baseline rows"].sum() == pytest.approx(weights)
    assert stored.development["rows"] == sum(part.card.development.rows
                                             for part in segmented.segments.values())


def _alone(config, frame: pd.DataFrame) -> dict:
    """Each segment's card from passes of its own over every row, the other segments' rows
    outside every sample (how a segmented build ran before its passes were shared)."""
    from dataclasses import replace

    from scorecard.build.pipeline import _outcome_facts

    engine = LocalEngine(frame)
    rows, _ = _outcome_facts(config, engine)
    rule = segment_rule(config)
    segment = rule.codes(frame[rule.column])
    facts = SegmentFacts(rows.label, rows.weight, rows.sample, segment.astype(np.int8))
    return {name: _build(replace(config, name=f"{config.name}: {name}"), engine, None,
                         facts.own(i)).card
            for i, name in enumerate(rule.names)}


def test_shared_passes_give_each_segment_the_card_its_own_passes_give(tmp_path):
    # Invariant: counting every segment in one pass changes no card, key for key in the model
    # file, on one chunk, small chunks and a Dask cluster. 'worst' for values beyond the
    # development range gives every numeric characteristic an out-of-range bin, so the bins are
    # counted in a pass of their own too; a sentinel and missing values take their own bins.
    frame = simulate(5000, 8)
    frame.loc[::37, "x2"] = -999.0
    frame.loc[::53, "x3"] = np.nan
    parts = tmp_path / "parts"
    parts.mkdir()
    for i, start in enumerate(range(0, 5000, 2000)):
        frame.iloc[start:start + 2000].to_parquet(parts / f"part_{i}.parquet", index=False)
    (tmp_path / "c.yaml").write_text(
        SEGMENTED.format(data="parts", segments=BY_GROUPS, stem="s")
        + "scoring: {out_of_range: worst}\nbinning: {sentinels: [-999]}\n")
    config = load_config(tmp_path / "c.yaml")
    alone = _alone(config, read_frame(parts))
    assert all(any(b.kind == "out of range" for b in c.bins) for card in alone.values()
               for c in card.characteristics if c.kind == "numeric")
    built = [build_segmented(config, LocalEngine(read_frame(parts))),
             build_segmented(config, LocalEngine(read_frame(parts), chunk_rows=613))]
    distributed = pytest.importorskip("distributed")
    from scorecard.engines.dask_engine import DaskEngine
    with distributed.LocalCluster(n_workers=2, processes=True, threads_per_worker=1,
                                  dashboard_address=":0") as cluster, \
            DaskEngine(parts, cluster.scheduler_address) as engine:
        built.append(build_segmented(config, engine))
    for result in built:
        cards = json.loads(result.card.to_json())["cards"]
        assert [card["name"] for card in cards] == [f"{config.name}: {n}" for n in alone]
        for card, own in zip(cards, alone.values()):
            expected = json.loads(own.to_json())
            assert card.keys() == expected.keys()
            for key in expected:
                assert card[key] == expected[key], key


@pytest.mark.parametrize("fine_rows", [1 << 14, 256])
def test_each_shared_pass_counts_what_the_single_pass_counts_on_the_segment(fine_rows,
                                                                           monkeypatch):
    # Invariant: per segment, the counts of the shared passes equal the single-card passes on
    # the segment's own facts exactly (the same weights summed in the same order), including
    # the development range; values far beyond the grid are counted over the whole chunk.
    # Both fine-class passes code a numeric column a block of rows at a time: with blocks of
    # 256 rows, the ranges and the extreme rows are merged across a dozen blocks.
    from scorecard.binning.coarse import numeric_draft
    from scorecard.binning.fine import NumericLayout
    from scorecard.engines import passes
    monkeypatch.setattr(passes, "_FINE_ROWS", fine_rows)

    rng = np.random.default_rng(3)
    n = 3000
    frame = pd.DataFrame({"x": np.round(rng.normal(size=n), 2),
                          "k": rng.choice(["a", "b", "c", None], size=n)})
    frame.loc[7, "x"] = 1e9
    frame.loc[2900, "x"] = -1e9
    segment = rng.integers(0, 3, size=n).astype(np.int8)
    facts = SegmentFacts(rng.integers(0, 2, size=n).astype(np.int8), rng.random(n) * 3,
                         rng.choice(np.array([-1, 0, 1, 2], np.int8), size=n), segment)
    layouts = {"x": NumericLayout(np.linspace(-2, 2, 21), (), (-50.0, 50.0)),
               "k": ("a", "b", "c")}
    shared = fine_counts_by_segment(frame, facts, layouts, 3)
    for s in range(3):
        alone = fine_counts(frame, facts.own(s), layouts)
        for name in layouts:
            assert np.array_equal(shared[s][name].table, alone[name].table)
            assert shared[s][name][1:] == alone[name][1:]
    assert shared[0]["x"].extremes == 2 and shared[0]["x"].extreme_rows == (7, 2900)
    drafts = tuple((numeric_draft("x", [-0.5 + s / 10, 0.7], (), (-1.5, 1.5), True),)
                   for s in range(3))
    counted = bin_counts_by_segment(frame, facts, drafts)
    patterns = patterns_by_segment(frame, facts, drafts)
    for s in range(3):
        assert np.array_equal(counted[s][0], bin_counts(frame, facts.own(s), drafts[s])[0])
        alone = coded_patterns(frame, facts.own(s), drafts[s])
        assert np.array_equal(patterns[s].codes, alone.codes)
        assert np.array_equal(patterns[s].weights, alone.weights)


# ---- declined applications -----------------------------------------------------------------------

REJECTS = "rejects: {{source: declined.csv, method: {method}, known_outcome: true_outcome{extra}}}\n"


def through_the_door(rows: int, seed: int) -> tuple[pd.DataFrame, pd.DataFrame]:
    """The applicants of :func:`simulate`, split into accepts and declined by an old policy
    that looked at observed characteristics only (x2, and x1 the way each segment's risk runs);
    the declined keep their outcome as ``true_outcome``."""
    frame = simulate(rows, seed)
    rng = np.random.default_rng(seed + 1000)
    sign = np.where(frame["customer"] == "new", -1.0, 1.0)
    accept = rng.random(rows) < 1.0 / (1.0 + np.exp(-(1.2 - 0.48 * frame["x2"]
                                                      - 0.36 * sign * frame["x1"])))
    declined = frame.loc[~accept].rename(columns={"outcome": "true_outcome"})
    return frame.loc[accept].reset_index(drop=True), declined.reset_index(drop=True)


def _rejects_case(folder, accepts, declined, method="fuzzy", extra=""):
    accepts.to_csv(folder / "data.csv", index=False)
    declined.to_csv(folder / "declined.csv", index=False)
    path = folder / f"{method}.yaml"
    path.write_text(SEGMENTED.format(data="data.csv", segments=BY_GROUPS, stem=method)
                    + REJECTS.format(method=method, extra=extra))
    return path


def test_each_segment_card_infers_its_own_declined_bad_rate(tmp_path):
    # Known truth, simulation: the old policy declined on observed characteristics only, so each
    # segment's accepts-only card extrapolates to its own declined applicants without bias; the
    # inferred bad rate of each segment's declined is within 15% of their true bad rate (the
    # same tolerance as for one card in test_rejects), and the declined are the riskier.
    accepts, declined = through_the_door(16000, 31)
    result = api.build(_rejects_case(tmp_path, accepts, declined))
    for name, levels in (("new", ["new"]), ("existing", ["existing", "renewed"])):
        inference = result.segments[name].rejects
        own = declined[declined["customer"].isin(levels)]
        truth = (own["true_outcome"] == "bad").mean()
        assert inference.rows == len(own)
        assert inference.known_bad_rate == pytest.approx(truth, rel=1e-12)
        assert abs(inference.inferred_bad_rate / truth - 1) <= 0.15, (name, truth)
        assert inference.inferred_bad_rate > inference.accepts_bad_rate
        assert result.card.cards[list(result.segments).index(name)].inference["rejects"] == \
            len(own)
    # The reversed effect survives the inference: x1 is in both cards.
    assert all("x1" in part.card.names for part in result.segments.values())


@pytest.mark.parametrize("method,extra", [("fuzzy", ""), ("parcelling", ", uplift: 1.5"),
                                          ("reweighting", "")])
def test_each_card_with_declined_applications_is_the_card_built_alone_on_its_own(
        tmp_path, method, extra):
    # Invariant: the shared passes change nothing. Each segment's card equals the card its own
    # build gives (single-card passes over every row, the other segments' accepts outside every
    # sample and their declined outside the inference), key for key in the model file.
    from dataclasses import replace

    from scorecard.build.pipeline import (
        _one_pass,
        _outcome_facts,
        answered,
        rejects_steps,
    )

    accepts, declined = through_the_door(6000, 22)
    accepts.loc[::41, "x3"] = np.nan
    config = load_config(_rejects_case(tmp_path, accepts, declined, method, extra))
    result = api.build(config.config_file)
    rule = segment_rule(config)
    engine, rejects_engine = LocalEngine(read_frame(tmp_path / "data.csv")), \
        LocalEngine(read_frame(tmp_path / "declined.csv"))
    rows, _ = _outcome_facts(config, engine)
    facts = SegmentFacts(rows.label, rows.weight, rows.sample,
                         rule.codes(accepts["customer"]).astype(np.int8))
    member = rule.codes(declined["customer"])
    cards = json.loads((tmp_path / f"out/{method}.json").read_text())["cards"]
    for index, name in enumerate(rule.names):
        alone = answered(rejects_steps(replace(config, name=f"{config.name}: {name}"), engine,
                                       rejects_engine, None, facts.own(index), None,
                                       member == index, (rule, index)), _one_pass)
        expected = json.loads(alone.card.to_json())
        assert cards[index].keys() == expected.keys()
        for key in expected:
            assert cards[index][key] == expected[key], (name, key)
        assert result.segments[name].rejects.rows == int((member == index).sum())


def test_the_engines_agree_on_segments_with_declined_applications(tmp_path):
    # Invariant: one chunk, small chunks and a Dask cluster over Parquet parts of the accepts
    # and of the declined give the same segmented model with reject inference (parcelling: its
    # draws follow the declined rows in file order on every engine).
    distributed = pytest.importorskip("distributed")
    from scorecard.engines.dask_engine import DaskEngine

    accepts, declined = through_the_door(5000, 24)
    for name, frame, parts in (("accepts", accepts, 3), ("declined", declined, 2)):
        (tmp_path / name).mkdir()
        size = -(-len(frame) // parts)
        for i in range(parts):
            frame.iloc[i * size:(i + 1) * size].to_parquet(tmp_path / name / f"p{i}.parquet",
                                                           index=False)
    (tmp_path / "c.yaml").write_text(
        SEGMENTED.format(data="accepts", segments=BY_GROUPS, stem="s")
        + "rejects: {source: declined, method: parcelling, known_outcome: true_outcome}\n")
    config = load_config(tmp_path / "c.yaml")
    whole = build_segmented(config, LocalEngine(read_frame(tmp_path / "accepts")), None,
                            LocalEngine(read_frame(tmp_path / "declined")))
    chunked = build_segmented(config, LocalEngine(read_frame(tmp_path / "accepts"), chunk_rows=777),
                              None, LocalEngine(read_frame(tmp_path / "declined"), chunk_rows=555))
    with distributed.LocalCluster(n_workers=2, processes=True, threads_per_worker=1,
                                  dashboard_address=":0") as cluster, \
            DaskEngine(tmp_path / "accepts", cluster.scheduler_address) as engine, \
            DaskEngine(tmp_path / "declined", cluster.scheduler_address) as rejects_engine:
        on_dask = build_segmented(config, engine, None, rejects_engine)
    for other in (chunked, on_dask):
        assert json.loads(other.card.to_json()) == json.loads(whole.card.to_json())


def test_declined_applications_without_a_segment_are_one_error_line(tmp_path):
    accepts, declined = through_the_door(3000, 23)
    broken = declined.copy()
    broken.loc[4, "customer"] = "visitor"
    config = _rejects_case(tmp_path, accepts, broken)
    ran = CliRunner().invoke(main, ["build", str(config), "--quiet"])
    assert ran.exit_code == 2 and ran.stderr.count("\n") == 1
    assert ran.stderr.startswith(f"error: {tmp_path / 'declined.csv'}: row 5: column customer: "
                                 "holds 'visitor', which no segment lists")
    declined.drop(columns="customer").to_csv(tmp_path / "declined.csv", index=False)
    ran = CliRunner().invoke(main, ["build", str(config), "--quiet"])
    assert ran.exit_code == 2 and ran.stderr.count("\n") == 1
    assert ran.stderr.startswith(f"error: {tmp_path / 'declined.csv'}: column customer:")
    assert not (tmp_path / "out").exists()


def test_the_segmented_demo_shows_an_exclusion_two_segments_and_reject_inference(tmp_path):
    # The demo's segmented config: the staff rule takes staff applications out of the accepts
    # and of each segment's declined applications, which each card infers on its own.
    from scorecard.demo.files import SEGMENTED_CONFIG_FILE, write_demo

    write_demo(tmp_path, rows=4000)
    result = api.build(tmp_path / SEGMENTED_CONFIG_FILE)
    assert list(result.segments) == ["new", "existing"]
    declined = pd.read_csv(tmp_path / "declined.csv")
    accepts = pd.read_csv(tmp_path / "applications.csv")
    for name, part in result.segments.items():
        own = declined[declined["customer"] == name]
        assert part.rejects.rows == len(own)
        assert part.rejects.excluded == int((own["staff_application"] == "yes").sum())
        staff = int(((accepts["customer"] == name) & (accepts["staff_application"] == "yes")).sum())
        assert staff > 0 and part.samples.left_out >= staff
    assert sum(p.rejects.excluded for p in result.segments.values()) > 0


def _scored_files(model, files: dict, folder) -> dict:
    """``scorecard score`` of each file (keeping the outcome and the segment column), the rows
    it scored."""
    scored = {}
    for name, path in files.items():
        api.score(model, path, folder / f"{name}.csv", keep=["outcome", "customer"])
        scored[name] = pd.read_csv(folder / f"{name}.csv").dropna(subset=["score"])
    return scored


def _psi_by_pandas(baseline: pd.Series, current: pd.Series, band_labels) -> float:
    """PSI = sum (a - e) ln(a / e) over the bands (published), shares counted by pandas."""
    edges = [int(label.split(" to ")[0]) for label in band_labels] + [np.inf]
    e, a = (pd.cut(x, edges, right=False).value_counts(normalize=True, sort=False).to_numpy()
            for x in (baseline, current))
    assert (e > 0).all() and (a > 0).all()
    return float(((a - e) * np.log(a / e)).sum())


def _ranking_by_libraries(frame: pd.DataFrame) -> tuple[float, float, float]:
    """AUC by sklearn's roc_auc_score (goods scoring higher), Gini = 2 AUC - 1 (published),
    KS by scipy's two-sample Kolmogorov-Smirnov statistic of goods' and bads' scores."""
    from scipy.stats import ks_2samp
    from sklearn.metrics import roc_auc_score

    good = frame["outcome"] == "good"
    auc = roc_auc_score(good, frame["score"])
    ks = ks_2samp(frame.loc[good, "score"], frame.loc[~good, "score"]).statistic
    return auc, 2 * auc - 1, ks


def test_compare_gives_each_segment_its_own_score_index_and_ranking(reversed_case, tmp_path):
    # Reference libraries: per segment, pandas over the scored files' score column gives the
    # PSI (with the product's band starts), sklearn the AUC, scipy the KS, on the same rows.
    from openpyxl import load_workbook

    folder, _, _ = reversed_case
    model, data, fresh = folder / "out/segmented.json", folder / "data.csv", folder / "fresh.csv"
    result = api.compare(model, data, fresh, json_path=tmp_path / "c.json",
                         workbook=tmp_path / "c.xlsx")
    scored = _scored_files(model, {"baseline": data, "current": fresh}, tmp_path)
    saved = json.loads((tmp_path / "c.json").read_text())["segments"]
    levels = {"new": ["new"], "existing": ["existing", "renewed"]}
    for name, part in result.segments.items():
        rows = {k: f[f["customer"].isin(levels[name])] for k, f in scored.items()}
        psi = _psi_by_pandas(rows["baseline"]["score"], rows["current"]["score"],
                             part.score.table["Band"])
        assert part.score.index == pytest.approx(psi, rel=1e-9)
        assert part.score.table["Baseline rows"].sum() == len(rows["baseline"])
        assert len(part.score.table) == 10
        assert saved[name]["score"]["psi"] == pytest.approx(psi, rel=1e-9)
        for sample in ("baseline", "current"):
            auc, gini, ks = _ranking_by_libraries(rows[sample])
            goods, bads, d = part.performance[sample]
            assert (d.auc, d.gini, d.ks) == pytest.approx((auc, gini, ks), rel=1e-9)
            assert goods + bads == len(rows[sample])
            assert saved[name]["performance"][sample]["gini"] == pytest.approx(gini, rel=1e-9)
    # The segments differ in kind, so neither segment's ranking equals the pooled one.
    pooled = result.performance["current"].discrimination.auc
    assert all(abs(p.performance["current"][2].auc - pooled) > 1e-3
               for p in result.segments.values())
    sheet = load_workbook(tmp_path / "c.xlsx")["By segment"]
    cells = list(sheet.iter_rows(values_only=True))
    header = cells[0]
    for row in cells[1:3]:
        part = result.segments[row[0]]
        assert row[header.index("Score stability index")] == pytest.approx(part.score.index)
        assert row[header.index("Current Gini")] == pytest.approx(
            part.performance["current"][2].gini)
    assert "segment new:" in result.text() and "current AUC" in result.text()


def test_monitor_gives_each_segment_its_own_score_index_and_ranking(reversed_case, tmp_path):
    # Reference libraries: per period and segment, pandas gives the PSI against that segment's
    # rows of the baseline file, sklearn the Gini, scipy the KS, on the same rows.
    from openpyxl import load_workbook

    folder, _, segmented = reversed_case
    model, data = folder / "out/segmented.json", folder / "data.csv"
    rows = pd.read_csv(folder / "fresh.csv")
    rows["on"] = np.where(rows["id"] < 1500, "2026-01-15", "2026-02-15")
    rows.to_csv(tmp_path / "dated.csv", index=False)
    result = api.monitor(model, tmp_path / "dated.csv", "on", baseline=data,
                         json_path=tmp_path / "m.json", workbook=tmp_path / "m.xlsx")
    api.score(model, tmp_path / "dated.csv", tmp_path / "s.csv", keep=["outcome", "customer", "on"])
    api.score(model, data, tmp_path / "b.csv", keep=["customer"])
    scored, base = pd.read_csv(tmp_path / "s.csv"), pd.read_csv(tmp_path / "b.csv")
    levels = {"new": ["new"], "existing": ["existing", "renewed"]}
    saved = json.loads((tmp_path / "m.json").read_text())
    for p, on, kept in zip(result.periods, ("2026-01-15", "2026-02-15"), saved["periods"]):
        for name, part in p.segments.items():
            mine = scored[(scored["on"] == on) & scored["customer"].isin(levels[name])]
            psi = _psi_by_pandas(base.loc[base["customer"].isin(levels[name]), "score"],
                                 mine["score"], part.score.table["Band"])
            assert part.rows == len(mine)
            assert part.score.index == pytest.approx(psi, rel=1e-9)
            _, gini, ks = _ranking_by_libraries(mine)
            assert (part.outcomes.gini, part.outcomes.ks) == pytest.approx((gini, ks), rel=1e-9)
            assert kept["segments"][name]["gini"] == pytest.approx(gini, rel=1e-9)
    # The terminal text: under each period's line, one line per segment with the same index.
    text = result.text().splitlines()
    for p in result.periods:
        at = next(i for i, line in enumerate(text) if line.startswith(p.period))
        assert [line.split(":")[0].strip() for line in text[at + 1: at + 3]] == \
            [f"segment {name}" for name in p.segments]
        for line, part in zip(text[at + 1: at + 3], p.segments.values()):
            assert f"{part.rows} rows" in line and f"score PSI {part.score.index:.4f}" in line
    # The stored baseline: each segment against its own card's development counts, and each
    # card's own holdout Gini in the development summary.
    stored = api.monitor(model, tmp_path / "dated.csv", "on")
    for name, part in segmented.segments.items():
        dev = part.card.development
        assert stored.periods[0].segments[name].score.table["Baseline rows"].sum() == \
            pytest.approx(sum(dev.score_goods) + sum(dev.score_bads))
        assert stored.development["segments"][name]["gini"] == dev.performance["holdout"]["gini"]
    # Invariant: counted in small chunks, the per-segment counts merge to the same figures.
    from scorecard.evaluation.monitoring import monitor

    chunked = monitor(model, tmp_path / "dated.csv", "on", baseline=data,
                      engine=LocalEngine(read_frame(tmp_path / "dated.csv"), chunk_rows=700))
    assert [{n: (s.rows, s.score.index, s.outcomes) for n, s in p.segments.items()}
            for p in chunked.periods] == \
        [{n: (s.rows, s.score.index, s.outcomes) for n, s in p.segments.items()}
         for p in result.periods]
    cells = list(load_workbook(tmp_path / "m.xlsx")["By segment"].iter_rows(values_only=True))
    header = cells[0]
    assert [(r[0], r[1]) for r in cells[1:7]] == [
        (n, p) for n in ("new", "existing") for p in ("development", "2026-01", "2026-02")]
    assert cells[2][header.index("Score PSI")] == pytest.approx(
        result.periods[0].segments["new"].score.index)


def test_diff_matches_segmented_cards_by_segment_name(reversed_case, tmp_path):
    # Invariants: a model against itself has no changes; an edit of one segment's card shows
    # only under that segment, as diff_scorecards of the two cards shows it; a segment renamed
    # enters and leaves; a segmented model against a single card is one error line.
    from scorecard.evaluation.model_diff import diff_scorecards

    folder, _, _ = reversed_case
    model = folder / "out/segmented.json"
    same = CliRunner().invoke(main, ["diff", str(model), str(model)])
    assert same.exit_code == 0 and same.output.strip() == "no changes"
    raw = json.loads(model.read_text())
    assert raw["segments"]["names"] == ["new", "existing"]
    raw["segments"]["groups"][1] = ["existing"]
    # A bin whose points can move by one inside its characteristic's range, so that the
    # card's score range (and its stored development histogram) stays as it was.
    first, moved = next((c, b) for c in raw["cards"][1]["characteristics"] for b in c["bins"]
                        if min(x["points"] for x in c["bins"]) < b["points"] - 1
                        and b["points"] < max(x["points"] for x in c["bins"]))
    moved["points"] -= 1
    (tmp_path / "edited.json").write_text(json.dumps(raw))
    old, new = load_model(model), load_model(tmp_path / "edited.json")
    ran = CliRunner().invoke(main, ["diff", str(model), str(tmp_path / "edited.json"),
                                    "--json", str(tmp_path / "d.json")])
    assert ran.exit_code == 0, ran.output
    card_lines = diff_scorecards(old.segments["existing"], new.segments["existing"]).lines()
    assert card_lines == [f"{first['name']}: points {moved['label']} "
                          f"{moved['points'] + 1} -> {moved['points']}"]
    assert ran.output.splitlines() == ["segments levels existing: existing, renewed -> existing",
                                       f"segment existing: {card_lines[0]}"]
    saved = json.loads((tmp_path / "d.json").read_text())["segments"]
    assert saved["rule"] == {"levels existing": {"before": "existing, renewed",
                                                 "after": "existing"}}
    assert saved["cards"]["new"]["changed"] == [] and saved["entered"] == saved["left"] == []
    raw["segments"]["names"][0] = "fresh"
    (tmp_path / "renamed.json").write_text(json.dumps(raw))
    renamed = CliRunner().invoke(main, ["diff", str(model), str(tmp_path / "renamed.json")])
    assert "segment entered: fresh" in renamed.output and "segment left: new" in renamed.output
    for args in ([str(folder / "out/one.json"), str(model)],
                 [str(model), str(folder / "out/one.json")]):
        refused = CliRunner().invoke(main, ["diff", *args])
        assert refused.exit_code == 2 and refused.stderr.count("\n") == 1, refused.stderr
        assert refused.stderr.startswith(f"error: {model}: a segmented model (2 cards by "
                                         "customer) against a single card")


def test_build_prints_the_diff_against_the_segmented_model_it_replaces(reversed_case, tmp_path):
    # Invariant: the same config on the same data rebuilds the same model: no changes.
    folder, _, _ = reversed_case
    for name in ("data.csv", "segmented.yaml", "out/segmented.json"):
        (tmp_path / name).parent.mkdir(exist_ok=True)
        shutil.copy(folder / name, tmp_path / name)
    ran = CliRunner().invoke(main, ["build", str(tmp_path / "segmented.yaml")])
    assert ran.exit_code == 0, ran.output
    assert "against the model file it replaced: no changes" in ran.output


EXCLUDING = """\
name: {name}
data:
  source: data.csv
  target: outcome
  bad: [bad]
  good: [good]
  ignore: [id, staff]
  exclude:
    - {{column: staff, in: [yes], reason: staff application}}
samples: {{holdout: 0.3, seed: 7}}
grades: {{count: 5}}
{segments}output: {{workbook: out/{name}.xlsx, model: out/{name}.json}}
"""


@pytest.fixture(scope="module")
def excluded_case(tmp_path_factory):
    """The reversed simulation with staff rows to exclude, open outcomes and risk grades; a
    single card and a segmented model from the same rows."""
    folder = tmp_path_factory.mktemp("excluded")
    frame = simulate(5000, 6).drop(columns="tenure")
    rng = np.random.default_rng(6)
    frame["staff"] = np.where(rng.random(len(frame)) < 0.05, "yes", "no")
    frame.loc[rng.random(len(frame)) < 0.04, "outcome"] = "open"
    frame.to_csv(folder / "data.csv", index=False)
    (folder / "one.yaml").write_text(EXCLUDING.format(name="one", segments=""))
    (folder / "split.yaml").write_text(EXCLUDING.format(
        name="split", segments=f"segments: {BY_GROUPS}\n"))
    return folder, frame, api.build(folder / "one.yaml"), api.build(folder / "split.yaml")


def _overview_table(ws, first: str) -> pd.DataFrame:
    cells = list(ws.iter_rows(values_only=True))
    start = next(i for i, row in enumerate(cells) if row[0] == first)
    end = next(i for i in range(start + 1, len(cells)) if cells[i][0] is None)
    width = next(j for j, v in enumerate(cells[start]) if v is None) \
        if None in cells[start] else len(cells[start])
    return pd.DataFrame([row[:width] for row in cells[start + 1:end]],
                        columns=list(cells[start][:width]))


def test_the_segmented_overview_shows_the_exclusion_waterfall(excluded_case):
    # Exact counts from pandas on the data file; invariant: the single card built from the
    # same rows, rules and seed shows the same waterfall line for line.
    from openpyxl import load_workbook

    folder, frame, one, split = excluded_case
    staff = frame["staff"] == "yes"
    shown = _overview_table(load_workbook(folder / "out/split.xlsx")["Overview"], "Step")
    removed = dict(zip(shown["Step"], shown["Rows removed"]))
    left = dict(zip(shown["Step"], shown["Rows left"]))
    assert left["Rows read"] == len(frame) == 5000
    rule = next(step for step in shown["Step"] if step.startswith("Rule 1"))
    assert removed[rule] == int(staff.sum()) and left[rule] == int((~staff).sum())
    other = int((~staff & (frame["outcome"] == "open")).sum())
    assert removed["Outcome neither good nor bad"] == other
    used = shown["Step"].iloc[-1]
    assert used.startswith("Rows used") and left[used] == int((~staff).sum()) - other
    expected = one.waterfall.frame()
    assert shown["Step"].tolist() == expected["Step"].tolist()
    assert shown["Reason"].fillna("").tolist() == expected["Reason"].tolist()
    assert shown["Rows left"].tolist() == expected["Rows left"].tolist()


def test_the_segmented_workbook_has_pooled_score_bands_and_grades(excluded_case):
    # Invariants: each pooled band holds the goods and bads of every segment's holdout scores in
    # its range (the single card's sheet writers, fed every segment's counts on one scale);
    # the grades cover every pooled holdout row.
    from openpyxl import load_workbook

    folder, _, _, split = excluded_case
    book = load_workbook(folder / "out/split.xlsx")
    assert book.sheetnames[:4] == ["Overview", "Score bands", "Calculator", "Risk grades"]
    bands = _overview_table(book["Score bands"], "Band")
    hists = [part.histograms["holdout"] for part in split.segments.values()]
    for low, high, goods, bads in zip(bands["Lowest score"], bands["Highest score"],
                                      bands["Goods"], bands["Bads"]):
        inside = [(h.goods[max(low - h.low, 0):max(high - h.low + 1, 0)].sum(),
                   h.bads[max(low - h.low, 0):max(high - h.low + 1, 0)].sum()) for h in hists]
        assert (goods, bads) == (sum(g for g, _ in inside), sum(b for _, b in inside))
    holdout = sum(h.goods.sum() + h.bads.sum() for h in hists)
    assert bands["Rows"].sum() == holdout == sum(part.samples.rows["holdout"]
                                                 for part in split.segments.values())
    assert bands["Lowest score"].iloc[0] == split.card.min_score
    notes = [row[0] for row in book["Score bands"].iter_rows(values_only=True)]
    assert any(str(text).startswith("Every segment's scores pooled") for text in notes)
    grades = _overview_table(book["Risk grades"], "Grade")
    assert len(grades) == 5 and grades["Rows"].sum() == holdout


@pytest.fixture(scope="module")
def demo_segmented(tmp_path_factory):
    """The demo's segmented config (an exclusion, categorical and numeric characteristics,
    sentinels, missing values) built on 4,000 rows: (result, folder)."""
    from scorecard.demo.files import write_demo

    folder = tmp_path_factory.mktemp("demo_segmented")
    write_demo(folder, rows=4000)
    return api.build(folder / "scorecard_segmented.yaml"), folder


def _calculator_rows(model, frame: pd.DataFrame) -> pd.DataFrame:
    """Rows of each segment as they come, and rows with the values that choose a card's
    special attributes: missing, a sentinel, a level no card saw, a value at a cut, and a
    segment value no segment takes (missing, and unlisted)."""
    from scorecard.card.scorecard import SENTINEL, UNSEEN

    rule = model.rule
    picked = [frame[frame[rule.column].isin(g)].head(2) for g in rule.groups]
    rows = pd.concat(picked, ignore_index=True)
    special = []
    for index, card in enumerate(model.cards):
        base = picked[index].iloc[0].copy()
        row = base.copy()
        for char in card.characteristics:
            if char.kind == "numeric":
                sentinel = next((b.value for b in char.bins if b.kind == SENTINEL), None)
                row[char.name] = sentinel if sentinel is not None else char.cuts[0]
            elif any(b.kind == UNSEEN for b in char.bins):
                row[char.name] = "a level never seen"
        special.append(row)
        row = base.copy()
        for char in card.characteristics:
            if char.bin_index("missing") is not None:
                row[char.name] = None
        special.append(row)
    for value in (None, "not a customer kind"):
        row = picked[0].iloc[0].copy()
        row[rule.column] = value
        special.append(row)
    return pd.concat([rows, pd.DataFrame(special)], ignore_index=True)


@pytest.mark.skipif(shutil.which("soffice") is None, reason="LibreOffice (soffice) is not installed")
def test_the_calculator_picks_the_card_by_segment_as_scorecard_score_does(demo_segmented,
                                                                         tmp_path):
    # Reference: the product's own scorer (`scorecard score`) on the same raw values; a real
    # spreadsheet program (LibreOffice) evaluates every formula of the workbook's calculators.
    from openpyxl import load_workbook
    from test_workbook import _recalculate

    from scorecard.outputs.workbook.tables import safe_value

    result, folder = demo_segmented
    model = result.card
    # The Overview's waterfall carries the declined applications' own lines (exact counts by
    # pandas on the declined file).
    waterfall = _overview_table(load_workbook(result.outputs["workbook"])["Overview"], "Step")
    left = dict(zip(waterfall["Step"], waterfall["Rows left"]))
    declined = pd.read_csv(folder / "declined.csv")
    assert left["Declined applications read"] == len(declined)
    assert left["Declined applications left for reject inference"] == int(
        (declined["staff_application"] != "yes").sum())
    rows = _calculator_rows(model, pd.read_csv(folder / "applications_recent_by_month.csv"))
    rows.to_csv(tmp_path / "rows.csv", index=False)
    ran = CliRunner().invoke(main, ["score", str(result.outputs["model"]),
                                    str(tmp_path / "rows.csv"), "--out",
                                    str(tmp_path / "scored.csv")])
    assert ran.exit_code == 0, ran.output
    scored = pd.read_csv(tmp_path / "scored.csv")
    files = []
    for j, record in enumerate(rows.to_dict("records")):
        book = load_workbook(result.outputs["workbook"])
        # Only the calculators and the points they read: the other sheets hold no formula the
        # calculators use, and LibreOffice would spend its time drawing their charts.
        for sheet in list(book.worksheets):
            if not sheet.title.startswith(("Calculator", "Points")):
                book.remove(sheet)
        ws = book["Calculator"]
        ws.cell(2, 2).value = safe_value(record[model.rule.column])
        for i, char in enumerate(model.characteristics, start=3):
            assert ws.cell(i, 1).value == char.name
            ws.cell(i, 2).value = safe_value(record[char.name])
        book.save(tmp_path / f"row{j}.xlsx")
        files.append(tmp_path / f"row{j}.xlsx")
    k = len(model.characteristics)
    for j, path in enumerate(_recalculate(files, tmp_path)):
        ws = load_workbook(path, data_only=True)["Calculator"]
        expected = scored.iloc[j]
        case = (j, rows.iloc[j][model.rule.column])
        if pd.isna(expected["segment"]):
            # No segment takes the value: no card, no score.
            assert ws.cell(2, 3).value == "#N/A" and ws.cell(k + 4, 4).value == "#N/A", case
            assert ws.cell(2, 5).value.startswith(("no segment", "empty: no segment")), case
            continue
        assert ws.cell(2, 3).value == expected["segment"], case
        assert ws.cell(k + 4, 4).value == expected["score"], case
        card = model.segments[expected["segment"]]
        for i, char in enumerate(model.characteristics, start=3):
            points = ws.cell(i, 4).value
            if char.name in card.names:
                assert points == expected[f"points_{char.name}"], (case, char.name)
                assert ws.cell(i, 5).value == "ok", (case, char.name)
            else:
                assert points is None and pd.isna(expected[f"points_{char.name}"])
                assert ws.cell(i, 5).value == "not used by this segment's card"
    assert scored["segment"].isna().sum() == 2 and scored["score"].notna().sum() == len(rows) - 2
    # The entries went through the special attributes this test is about.
    typed = rows.to_numpy().ravel().tolist()
    assert -999 in typed and "a level never seen" in typed
    assert rows[list(model.names)].isna().any(axis=1).sum() >= 2
