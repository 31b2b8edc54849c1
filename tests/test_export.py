"""PMML and SQL exports score every demo row as ``scorecard score`` does.

Outside checks: the PMML document is evaluated by pypmml (an independent PMML evaluator on the
Java runtime; reference library) and the SQL query by SQLite through Python's sqlite3
(reference engine).
"""

from __future__ import annotations

import importlib.util
import shutil
import sqlite3
import xml.etree.ElementTree as ET
from dataclasses import replace

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from scorecard.card.points import scaling
from scorecard.card.scorecard import (
    LEVELS,
    MISSING,
    OUT_OF_RANGE,
    RANGE,
    SENTINEL,
    UNSEEN,
    Bin,
    Characteristic,
    Scorecard,
)
from scorecard.cli import main
from scorecard.errors import InputError
from scorecard.outputs.pmml import NAMESPACE, pmml_document, tie_breaking_baselines, write_pmml
from scorecard.outputs.scored_file import score_file
from scorecard.outputs.sql import quote_name, scoring_query, write_sql

REASONS = [f"reason_{i}" for i in range(1, 5)]
needs_pmml_evaluator = pytest.mark.skipif(
    shutil.which("java") is None or importlib.util.find_spec("pypmml") is None,
    reason="pypmml and a Java runtime are needed to evaluate PMML independently")


def _values(series: pd.Series) -> list:
    """Column values with every kind of missing as None, for exact comparison."""
    return series.astype(object).where(series.notna(), None).tolist()


@pytest.fixture(scope="module")
def scored_demo(demo_config_path, demo_build, tmp_path_factory):
    """The demo rows and the same rows scored by ``scorecard score`` (holdout included)."""
    folder = tmp_path_factory.mktemp("export")
    source = demo_config_path.parent / "applications.csv"
    out = folder / "scored.parquet"
    score_file(demo_build.card, source, out, keep=["application_id"])
    return demo_build.card, pd.read_csv(source), pd.read_parquet(out), folder


def _card_with_every_rule() -> Scorecard:
    """A hand-built card: sentinels, out-of-range and refused bins, shared and tied reason codes,
    hostile names and levels."""
    s = scaling(600, 50, 20)
    odd = 'x"; DROP TABLE applications; --'
    number = Characteristic(odd, "numeric", (
        Bin("< 0.30000000000000004", RANGE, 30, 10, -0.2, 10, upper=0.1 + 0.2),
        Bin(">= 0.30000000000000004", RANGE, 40, 5, 0.3, 40, lower=0.1 + 0.2),
        Bin("missing", MISSING, 10, 5, 0.0, 25),
        Bin("sentinel -999", SENTINEL, 10, 5, 0.0, 5, value=-999.0),
        Bin("outside", OUT_OF_RANGE, 0, 0, 0.0, 0, rejected=True)),
        1.0, "R_SHARED", "first", cuts=(0.1 + 0.2,), sentinels=(-999.0,),
        development_range=(0.0, 10.0))
    levels = Characteristic("home <&> 'type'", "categorical", (
        Bin("a", LEVELS, 30, 5, 0.4, 30, levels=("owner's", 'say "hi"', "back\\slash")),
        Bin("b", LEVELS, 30, 15, -0.3, 10, levels=("renter", "two words", "<tag>&amp;")),
        Bin("missing", MISSING, 0, 0, 0.0, 20),
        Bin("unseen", UNSEEN, 0, 0, 0.0, 20, rejected=True)),
        1.0, "R_HOME", "second")
    plain = Characteristic("count", "numeric", (
        Bin("< 2", RANGE, 30, 10, -0.2, 0, upper=2.0),
        Bin(">= 2", RANGE, 40, 5, 0.3, 30, lower=2.0),
        Bin("missing", MISSING, 0, 0, 0.0, 15, rejected=True)),
        1.0, "R_SHARED", "third", cuts=(2.0,), development_range=(0.0, 9.0))
    tied = Characteristic("tied", "numeric", (
        Bin("< 1", RANGE, 30, 10, -0.2, 0, upper=1.0),
        Bin(">= 1", RANGE, 40, 5, 0.3, 30, lower=1.0),
        Bin("missing", MISSING, 0, 0, 0.0, 15)),
        1.0, "R_TIED", "fourth", cuts=(1.0,), development_range=(0.0, 9.0))
    return Scorecard("every rule", s, 0.0, (number, levels, plain, tied))


ODD, HOME = 'x"; DROP TABLE applications; --', "home <&> 'type'"
RULE_ROWS = pd.DataFrame({
    ODD: [0.30000000000000004, 0.3, None, -999.0, 11.0, 5.0, 5.0, 0.0, 5.0, 5.0],
    HOME: ["owner's", 'say "hi"', "back\\slash", "renter", "two words", "<tag>&amp;", None,
           "houseboat", "owner's", "renter"],
    "count": [5.0, 1.0, 5.0, 5.0, 5.0, 5.0, 5.0, 1.0, None, 1.0],
    "tied": [5.0, 5.0, 0.0, 5.0, 5.0, 0.0, 5.0, 0.0, 5.0, 0.0],
})


def _product(card, frame, tmp_path) -> pd.DataFrame:
    data = tmp_path / "rows.parquet"
    frame.to_parquet(data, index=False)
    out = tmp_path / "product.parquet"
    score_file(card, data, out)
    return pd.read_parquet(out)


def test_hand_built_card_scores_by_hand(tmp_path):
    got = _product(_card_with_every_rule(), RULE_ROWS, tmp_path)
    # Worked by hand from the bins above: 0.30000000000000004 is the cut itself, 0.3 is below it;
    # row 5 is refused as out of range, row 8 as an unseen level, row 9 as missing count.
    assert _values(got["score"]) == [130, 70, 85, 75, None, 80, 120, None, None, 50]
    assert _values(got["reason_1"]) == [
        None, "R_SHARED", "R_TIED", "R_SHARED", f"REJECTED:{ODD}", "R_TIED", "R_HOME",
        f"REJECTED:{HOME}", "REJECTED:count", "R_SHARED"]
    # Row 10: R_SHARED loses 30 (count), R_HOME 20 and R_TIED 30: the tie goes to R_SHARED.
    assert _values(got["reason_2"])[9] == "R_TIED" and _values(got["reason_3"])[9] == "R_HOME"


def test_sql_on_sqlite_equals_the_product_on_every_demo_row(scored_demo):
    card, data, product, _ = scored_demo
    db = sqlite3.connect(":memory:")
    data.to_sql("applications", db, index=False)
    query = scoring_query(card, keep=["application_id"])
    got = pd.read_sql_query(query, db)
    assert got.columns.tolist() == [c for c in product.columns if c != "bad_probability"]
    for column in got.columns:
        assert _values(got[column]) == _values(product[column]), column


def test_sql_with_hostile_names_refusals_and_ties_equals_the_product(tmp_path):
    card = _card_with_every_rule()
    product = _product(card, RULE_ROWS, tmp_path)
    db = sqlite3.connect(":memory:")
    table = 'apps"; DROP TABLE keep_me; --'
    db.execute("CREATE TABLE keep_me (x)")
    RULE_ROWS.assign(row=range(len(RULE_ROWS))).to_sql(table, db, index=False)
    query = scoring_query(card, table=table, keep=["row"])
    got = pd.read_sql_query(query, db)
    for column in product.columns.drop("bad_probability"):
        assert _values(got[column]) == _values(product[column]), column
    tables = {name for (name,) in db.execute("SELECT name FROM sqlite_master WHERE type='table'")}
    assert tables == {"keep_me", table}


def test_sql_quotes_identifiers_and_text_and_writes_numbers_that_round_trip():
    card = _card_with_every_rule()
    query = scoring_query(card)
    assert quote_name(ODD) == '"x""; DROP TABLE applications; --"'
    assert f"WHEN {quote_name(ODD)} < 0.30000000000000004 THEN 10" in query
    assert "'owner''s'" in query and "'say \"hi\"'" in query


def test_sql_refuses_a_keep_column_that_clashes_and_an_empty_table_name():
    card = _card_with_every_rule()
    with pytest.raises(InputError, match="--keep score"):
        scoring_query(card, keep=["score"])
    with pytest.raises(InputError, match="--table"):
        scoring_query(card, table="")
    with pytest.raises(InputError, match="NUL"):
        scoring_query(card, keep=["a\x00b"])


@needs_pmml_evaluator
def test_pmml_in_an_independent_evaluator_equals_the_product(scored_demo, tmp_path):
    from pypmml import Model

    card, data, product, folder = scored_demo
    path = folder / "scorecard.pmml"
    write_pmml(card, path)
    got = Model.load(str(path)).predict(data[list(card.names)])
    assert np.array_equal(got["score"].to_numpy(), product["score"].to_numpy(dtype=float))
    # Two evaluators of the same formula differ in the last bits of exp() on the smallest
    # probabilities (about 1e-15 absolute), hence the absolute floor beside the relative bound.
    np.testing.assert_allclose(got["bad_probability"], product["bad_probability"], rtol=1e-12,
                               atol=1e-15)
    for column in REASONS:
        assert _values(got[column]) == _values(product[column]), column
    # The tie-breaking baselines matter here: on this many rows, tied shortfalls are common.
    assert (product["reason_1"].notna() & product["reason_2"].notna()).sum() > 10_000

    card = _card_with_every_rule()
    path = tmp_path / "rules.pmml"
    write_pmml(card, path)
    expected = _product(card, RULE_ROWS, tmp_path)
    rows = RULE_ROWS.astype(object).where(RULE_ROWS.notna(), None).to_dict("records")
    evaluator = Model.load(str(path))
    # Row by row: pypmml sends a whole frame as JSON with ten significant digits, which would
    # turn 0.30000000000000004 into 0.3 on the way; a single row keeps every digit.
    got = pd.DataFrame([dict(evaluator.predict(row)) for row in rows])
    refused = expected["score"].isna()
    # PMML marks a refused row invalid: no score and no reasons, where the product says why.
    assert got.loc[refused, "score"].isna().all() and got.loc[refused, "reason_1"].isna().all()
    kept = ~refused
    assert got.loc[kept, "score"].tolist() == expected.loc[kept, "score"].astype(float).tolist()
    for column in REASONS:
        assert _values(got.loc[kept, column]) == _values(expected.loc[kept, column]), column


def test_pmml_document_structure_escaping_and_baselines():
    card = _card_with_every_rule()
    root = ET.fromstring(ET.tostring(pmml_document(card, reasons=2).getroot()))
    ns = {"p": NAMESPACE}
    assert root.tag == f"{{{NAMESPACE}}}PMML" and root.get("version") == "4.4"
    fields = [f.get("name") for f in root.findall("p:DataDictionary/p:DataField", ns)]
    assert fields == [ODD, HOME, "count", "tied"]
    model = root.find("p:Scorecard", ns)
    assert model.get("reasonCodeAlgorithm") == "pointsBelow" and model.get("initialScore") == "0"
    outputs = [o.get("name") for o in model.findall("p:Output/p:OutputField", ns)]
    assert outputs == ["score", "bad_probability", "ranked_reason_1", "ranked_reason_2",
                       "reason_1", "reason_2"]
    mining = {m.get("name"): m.attrib for m in model.findall("p:MiningSchema/p:MiningField", ns)}
    assert mining["count"]["missingValueTreatment"] == "returnInvalid"
    assert mining[HOME]["invalidValueTreatment"] == "returnInvalid"
    assert mining["tied"]["invalidValueTreatment"] == "asIs"
    valid = [v.get("value") for v in root.iter(f"{{{NAMESPACE}}}Value")]
    assert valid == ["owner's", 'say "hi"', "back\\slash", "renter", "two words", "<tag>&amp;"]
    chars = model.findall("p:Characteristics/p:Characteristic", ns)
    # Codes in order R_SHARED, R_HOME, R_TIED; 2**2 >= 3 codes, so fractions 0, 1/4, 2/4,
    # and the second R_SHARED characteristic keeps its maximum.
    assert [float(c.get("baselineScore")) for c in chars] == [40.0, 29.75, 30.0, 29.5]
    assert tie_breaking_baselines(card) == [40.0, 29.75, 30.0, 29.5]
    # The refused out-of-range bin has no attribute; the data field's intervals refuse it.
    predicates = [a[0].get("operator") or a[0].tag.split("}")[1] for a in chars[0]]
    assert predicates == ["isMissing", "equal", "lessThan", "greaterOrEqual"]
    intervals = [(i.get("leftMargin"), i.get("rightMargin"))
                 for i in root.find("p:DataDictionary", ns)[0]]
    assert intervals == [("0.0", "10.0"), ("-999.0", "-999.0")]


def test_pmml_refuses_what_xml_or_the_standard_cannot_carry(tmp_path):
    card = _card_with_every_rule()
    bad_name = Scorecard(card.name, card.scaling, 0.0, (
        Characteristic("bell\x07", "numeric", card.characteristics[3].bins, 1.0, "R", "r",
                       cuts=(1.0,)),))
    with pytest.raises(InputError, match="control character"):
        pmml_document(bad_name)
    clash = Scorecard(card.name, card.scaling, 0.0, (
        Characteristic("score", "numeric", card.characteristics[3].bins, 1.0, "R", "r",
                       cuts=(1.0,)),))
    with pytest.raises(InputError, match="also an output field"):
        pmml_document(clash)
    tied = card.characteristics[3]
    refused_range = replace(tied, bins=(replace(tied.bins[0], rejected=True),) + tied.bins[1:])
    with pytest.raises(InputError, match="PMML can refuse only"):
        pmml_document(Scorecard(card.name, card.scaling, 0.0, (refused_range,)))
    assert not (tmp_path / "x.pmml").exists()


def test_export_command_writes_pmml_and_sql_and_bad_input_is_one_error_line(tmp_path):
    card = _card_with_every_rule()
    model = tmp_path / "m.json"
    model.write_text(card.to_json())
    runner = CliRunner()
    pmml = runner.invoke(main, ["export", str(model), "--format", "pmml", "--out",
                                str(tmp_path / "m.pmml")])
    assert pmml.exit_code == 0 and pmml.output == f"wrote {tmp_path / 'm.pmml'}\n"
    ET.parse(tmp_path / "m.pmml")
    sql = runner.invoke(main, ["export", str(model), "--format", "sql", "--out",
                               str(tmp_path / "m.sql"), "--table", "t", "--keep", "id",
                               "--reasons", "1"])
    assert sql.exit_code == 0
    assert (tmp_path / "m.sql").read_text() == scoring_query(card, "t", ["id"], 1)
    write_sql(card, tmp_path / "again.sql", "t", ["id"], 1)
    assert (tmp_path / "again.sql").read_text() == (tmp_path / "m.sql").read_text()
    bad = runner.invoke(main, ["export", str(tmp_path / "none.json"), "--format", "sql",
                               "--out", str(tmp_path / "x.sql")])
    assert bad.exit_code == 2 and len(bad.stderr.splitlines()) == 1
    assert bad.stderr.startswith(f"error: {tmp_path / 'none.json'}: cannot read the model file")
    usage = runner.invoke(main, ["export", str(model), "--format", "pmml", "--out",
                                 str(tmp_path / "y.pmml"), "--keep", "id"])
    assert usage.exit_code == 2 and not (tmp_path / "y.pmml").exists()
    assert usage.stderr == "error: --keep: applies to --format sql only\n"
