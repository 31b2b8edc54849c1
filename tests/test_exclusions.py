"""Exclusion rules (data.exclude): the config's checks, the waterfall, scoring with the rules.

Check values come from pandas (reference library): the same rules written as plain boolean
Series operations on the data file, with the first rule met taking the row.
"""

from __future__ import annotations

import json

import numpy as np
import openpyxl
import pandas as pd
import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st

from scorecard import api
from scorecard.card.scorecard import Scorecard
from scorecard.cli import main
from scorecard.config import parse_config
from scorecard.config.exclusions import ExclusionRule
from scorecard.data.exclusions import first_rule
from scorecard.errors import InputError

RULES = """\
  exclude:
    - {column: channel, in: [staff, test], reason: Not a customer application}
    - {column: deposit, below: 0.05, reason: No deposit product}
    - {column: income, missing: true, reason: Income not verified}
    - {column: deposit, at_least: 0.45, reason: Balloon product}
"""


def _config_text(source: str, rules: str = RULES) -> str:
    return (f"data:\n  source: {source}\n  target: outcome\n  bad: [bad]\n  good: [good]\n"
            f"  ignore: [channel]\n{rules}samples: {{holdout: 0.3, seed: 5}}\n"
            "output: {workbook: out/card.xlsx, model: out/card.json}\n")


def _frame(rows: int = 6000, seed: int = 3) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    x = rng.normal(size=rows)
    income = np.where(rng.random(rows) < 0.04, np.nan, np.round(2000 + 400 * x, 0))
    bad = rng.random(rows) < 1 / (1 + np.exp(2.2 + 1.2 * x))
    outcome = np.where(bad, "bad", "good").astype(object)
    outcome[rng.random(rows) < 0.03] = "open"
    return pd.DataFrame({
        "outcome": outcome, "income": income,
        "deposit": np.round(rng.uniform(0, 0.5, rows), 2),
        "channel": rng.choice(["shop", "online", "staff", "test"], rows, p=[.5, .44, .04, .02]),
        "region": rng.choice(["north", "south", "east"], rows),
    })


def _pandas_first_rule(frame: pd.DataFrame) -> np.ndarray:
    """The four rules of RULES with pandas, each row counted against the first it meets."""
    masks = [frame["channel"].isin(["staff", "test"]), frame["deposit"] < 0.05,
             frame["income"].isna(), frame["deposit"] >= 0.45]
    return np.select([m.to_numpy() for m in masks], [1, 2, 3, 4], default=0)


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    root = tmp_path_factory.mktemp("exclusions")
    _frame().to_csv(root / "rows.csv", index=False)
    (root / "card.yaml").write_text(_config_text("rows.csv"))
    return root


@pytest.fixture(scope="module")
def built(folder):
    return api.build(folder / "card.yaml")


# ---- the waterfall -------------------------------------------------------------------------

def test_waterfall_counts_equal_pandas_and_add_up_to_the_rows_read(folder, built):
    frame = pd.read_csv(folder / "rows.csv")
    rule = _pandas_first_rule(frame)
    w = built.waterfall
    assert w.rows_read == len(frame)
    assert [s.removed for s in w.steps] == [int((rule == k).sum()) for k in (1, 2, 3, 4)]
    assert all(s.removed > 0 for s in w.steps)    # every rule catches rows first in this data
    kept = frame[rule == 0]
    assert w.other_outcome == int((~kept["outcome"].isin(["good", "bad"])).sum())
    assert w.rows_used == int(kept["outcome"].isin(["good", "bad"]).sum())
    assert w.rows_read == w.excluded + w.other_outcome + w.rows_used
    assert [s.left for s in w.steps] == (len(frame) - np.cumsum(
        [s.removed for s in w.steps])).tolist()
    assert [s.reason for s in w.steps][0] == "Not a customer application"
    assert built.samples.left_out == w.other_outcome
    assert dict(w.used) == {k: v for k, v in built.samples.rows.items() if v}


def test_no_count_of_the_build_holds_an_excluded_row(folder, built):
    frame = pd.read_csv(folder / "rows.csv")
    used = frame[(_pandas_first_rule(frame) == 0) & frame["outcome"].isin(["good", "bad"])]
    for report in built.reports:
        if report.sample_counts is not None:    # (bins, samples, good/bad) of the data's rows
            assert report.sample_counts.sum() == len(used), report.name
            assert report.sample_counts[..., 1].sum() == (used["outcome"] == "bad").sum()


def test_the_waterfall_is_a_table_of_the_result_and_on_the_overview(built):
    table = built.tables()["Exclusions"]
    assert table.columns.tolist() == ["Step", "Reason", "Rows removed", "Rows left"]
    assert table["Step"].iloc[1] == "Rule 1: channel in [staff, test]"
    assert table["Rows left"].iloc[-1] == built.waterfall.rows_used
    sheet = openpyxl.load_workbook(built.outputs["workbook"])["Overview"]
    cells = [c for row in sheet.iter_rows(values_only=True) for c in row if c is not None]
    assert "Rule 4: deposit at least 0.45" in cells and "Balloon product" in cells
    assert "deposit below 0.05: No deposit product" in cells       # the run manifest


def test_the_model_file_records_the_rules(built):
    saved = json.loads(built.outputs["model"].read_text())
    assert saved["exclusions"][1] == {"column": "deposit", "below": 0.05,
                                      "reason": "No deposit product"}
    assert Scorecard.from_json(built.card.to_json()).exclusions == built.config.data.exclude


def test_a_model_file_with_a_malformed_rule_is_refused(built):
    saved = json.loads(built.card.to_json())
    saved["exclusions"][0] = {"column": "channel", "in": ["staff"], "below": 1, "reason": "x"}
    with pytest.raises(InputError, match="malformed"):
        Scorecard.from_json(json.dumps(saved), "m.json")


# ---- the mask ------------------------------------------------------------------------------

@settings(max_examples=40, deadline=None)
@given(values=st.lists(st.one_of(st.none(), st.integers(-3, 3)), min_size=1, max_size=60),
       bound=st.integers(-3, 3), listed=st.lists(st.integers(-3, 3), max_size=3, unique=True))
def test_first_rule_equals_the_rules_applied_one_after_another(values, bound, listed):
    # Reference: pandas comparisons, with the rows each rule takes removed before the next.
    series = pd.Series(values, dtype="float64")
    rules = (ExclusionRule("v", "in", tuple(listed) or (99,), "a"),
             ExclusionRule("v", "at_least", float(bound), "b"),
             ExclusionRule("v", "missing", True, "c"))
    expected = np.zeros(len(series), dtype=int)
    open_rows = np.ones(len(series), dtype=bool)
    for number, mask in enumerate((series.isin(listed), series >= bound, series.isna()), 1):
        caught = open_rows & mask.to_numpy()
        expected[caught] = number
        open_rows &= ~caught
    assert first_rule(pd.DataFrame({"v": series}), rules).tolist() == expected.tolist()


def test_listed_values_match_as_outcome_values_do():
    rule = ExclusionRule("flag", "in", (True, 2), "flagged")
    frame = pd.DataFrame({"flag": ["yes", "YES", "no", "2.0", None, "'yes'"]})
    assert first_rule(frame, (rule,)).tolist() == [1, 1, 0, 1, 0, 0]


def test_a_bound_on_a_text_column_names_the_column_and_row():
    with pytest.raises(InputError, match=r"^column deposit: row 2: 'none' is not a number.*"
                                         r"data.exclude: 'deposit below 0.05'"):
        first_rule(pd.DataFrame({"deposit": ["0.1", "none"]}),
                   (ExclusionRule("deposit", "below", 0.05, "x"),))


# ---- the config ----------------------------------------------------------------------------

@pytest.mark.parametrize("rule, key, words", [
    ("{column: deposit, under: 0.05, reason: r}", "data.exclude[0].under", "unknown key"),
    ("{column: deposit, below: 0.05, at_least: 0.4, reason: r}", "data.exclude[0].at_least",
     "one condition"),
    ("{column: deposit, below: low, reason: r}", "data.exclude[0].below", "must be a number"),
    ("{column: deposit, below: 0.05, reason: '  '}", "data.exclude[0].reason", "why"),
    ("{column: deposit, below: 0.05, reason: ''}", "data.exclude[0].reason", "empty"),
    ("{column: deposit, below: 0.05}", "data.exclude[0].reason", "required"),
    ("{column: deposit, reason: r}", "data.exclude[0]", "needs one condition"),
    ("{column: income, missing: false, reason: r}", "data.exclude[0].missing", "must be true"),
    ("{column: channel, in: [], reason: r}", "data.exclude[0].in", "at least one"),
    ("{in: [staff], reason: r}", "data.exclude[0].column", "required"),
])
def test_a_malformed_rule_is_one_error_naming_its_key(rule, key, words):
    text = _config_text("rows.csv", f"  exclude:\n    - {rule}\n")
    with pytest.raises(InputError) as caught:
        parse_config(text, "card.yaml")
    message = str(caught.value)
    assert message.startswith(f"card.yaml: {key}: ") and words in message
    assert "\n" not in message


def test_the_second_rule_is_named_by_its_position():
    rules = "  exclude:\n    - {column: deposit, below: 0.05, reason: r}\n" \
            "    - {column: deposit, below: '0.1', reason: r}\n"
    with pytest.raises(InputError, match=r"data\.exclude\[1\]\.below: must be a number"):
        parse_config(_config_text("rows.csv", rules), "card.yaml")


def test_a_rule_on_a_column_absent_from_the_data_is_one_error_line(folder):
    text = _config_text("rows.csv", "  exclude:\n    - {column: fraud_flag, in: [1], "
                                    "reason: Fraud case}\n")
    (folder / "absent.yaml").write_text(text)
    before = sorted(p.name for p in folder.rglob("*"))
    ran = CliRunner().invoke(main, ["build", str(folder / "absent.yaml"), "--quiet",
                                    "--model", str(folder / "absent.json"),
                                    "--workbook", str(folder / "absent.xlsx")])
    assert ran.exit_code == 2
    lines = ran.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ")
    assert "absent.yaml" in lines[0] and "'fraud_flag'" in lines[0] \
        and "data.exclude[0].column" in lines[0]
    assert sorted(p.name for p in folder.rglob("*")) == before


# ---- scoring -------------------------------------------------------------------------------

def test_scoring_applies_no_rule_unless_asked(folder, built):
    plain = api.score(built.outputs["model"], folder / "rows.csv", folder / "plain.csv")
    assert plain.excluded == {}
    scored = pd.read_csv(folder / "plain.csv")
    assert "exclusion_reason" not in scored.columns and scored["score"].notna().all()


def test_scoring_with_the_rules_writes_reasons_for_caught_rows_only(folder, built):
    frame = pd.read_csv(folder / "rows.csv")
    rule = _pandas_first_rule(frame)
    api.score(built.outputs["model"], folder / "rows.csv", folder / "plain.csv")
    summary = api.score(built.outputs["model"], folder / "rows.csv", folder / "applied.csv",
                        apply_exclusions=True)
    plain, applied = pd.read_csv(folder / "plain.csv"), pd.read_csv(folder / "applied.csv")
    reasons = np.array([""] + [r.reason for r in built.card.exclusions], dtype=object)
    caught = rule > 0
    assert applied["exclusion_reason"].fillna("").tolist() == reasons[rule].tolist()
    assert applied.loc[caught, "score"].isna().all()
    assert applied.loc[caught, "bad_probability"].isna().all()
    assert applied.loc[caught].filter(like="reason_").isna().all().all()
    # Columns with empty cells read back as floats: compare the values, not the types.
    pd.testing.assert_frame_equal(applied.loc[~caught].drop(columns="exclusion_reason"),
                                  plain.loc[~caught], check_dtype=False)
    assert summary.excluded == {r.reason: int((rule == k).sum())
                                for k, r in enumerate(built.card.exclusions, 1)}
    assert applied.columns.tolist()[:3] == ["score", "exclusion_reason", "bad_probability"]


def test_score_option_on_the_command_line(folder, built):
    ran = CliRunner().invoke(main, ["score", str(built.outputs["model"]),
                                    str(folder / "rows.csv"), "--out", str(folder / "cli.csv"),
                                    "--apply-exclusions"])
    assert ran.exit_code == 0, ran.output
    assert "excluded (Balloon product):" in ran.output
    assert pd.read_csv(folder / "cli.csv")["exclusion_reason"].notna().any()


def test_scoring_with_the_rules_needs_their_columns(folder, built):
    frame = pd.read_csv(folder / "rows.csv").drop(columns="channel")
    frame.to_csv(folder / "no_channel.csv", index=False)
    with pytest.raises(InputError, match=r"no_channel\.csv: column channel: the exclusion rule"):
        api.score(built.outputs["model"], folder / "no_channel.csv", folder / "x.csv",
                  apply_exclusions=True)
    assert not (folder / "x.csv").exists()


def test_asking_for_rules_a_model_does_not_record_is_refused(folder, built):
    card = json.loads(built.card.to_json())
    del card["exclusions"]
    (folder / "bare.json").write_text(json.dumps(card))
    with pytest.raises(InputError, match="--apply-exclusions: .*records no exclusion rules"):
        api.score(folder / "bare.json", folder / "rows.csv", folder / "y.csv",
                  apply_exclusions=True)


def test_four_rules_on_dask_equal_the_local_engine(folder, built, tmp_path):
    distributed = pytest.importorskip("distributed")
    import pyarrow as pa
    import pyarrow.parquet as pq

    from scorecard.build.pipeline import build_scorecard
    from scorecard.config import load_config
    from scorecard.data.read import read_frame
    from scorecard.engines.dask_engine import DaskEngine
    from scorecard.engines.local import LocalEngine

    frame = pd.read_csv(folder / "rows.csv")
    parts = tmp_path / "parts"
    parts.mkdir()
    for i, (a, b) in enumerate(((0, 2500), (2500, 2600), (2600, len(frame)))):
        pq.write_table(pa.Table.from_pandas(frame.iloc[a:b], preserve_index=False),
                       parts / f"part_{i}.parquet")
    (tmp_path / "card.yaml").write_text(_config_text(str(parts)))
    config = load_config(tmp_path / "card.yaml")
    local = build_scorecard(config, LocalEngine(read_frame(parts)))
    with distributed.LocalCluster(n_workers=2, processes=True, threads_per_worker=1,
                                  dashboard_address=":0") as cluster, \
            DaskEngine(parts, cluster.scheduler_address) as engine:
        on_dask = build_scorecard(config, engine)
    assert on_dask.waterfall == local.waterfall == built.waterfall
    assert on_dask.samples == local.samples
    np.testing.assert_array_equal(on_dask.patterns.codes, local.patterns.codes)
    np.testing.assert_array_equal(on_dask.patterns.weights, local.patterns.weights)
