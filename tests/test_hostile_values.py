"""Values that must not silently change the model: extreme numbers, and numbers in another locale.

A few rows holding a value far beyond the rest (a number past 64-bit integers, +-1e308) must not
flatten a column's fine classes: the characteristic stays in the card and the rows are reported
by number. A file whose numbers use a decimal comma is either read as numbers (``data.decimal``)
or refused naming the column; a numeric column never silently becomes text.
"""

from __future__ import annotations

import re

import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

from cli_harness import (CONFIG, DATA, assert_done, assert_refused, case,
                         characteristics_of, demo_folder, edit_config, model_of, run, set_cells,
                         snapshot)

__all__ = ["case", "demo_folder"]


@pytest.fixture(scope="module")
def demo_card(demo_folder) -> dict:
    """The model file of the unspoilt demo build."""
    return model_of(demo_folder / "out" / "scorecard.json")


def build(d, *extra):
    return run("build", d / CONFIG, "--model", d / "m.json", "--workbook", d / "w.xlsx", *extra)


EXTREMES = [
    pytest.param("credit_utilisation", {5: "1e308", 9: "-1e308"}, id="plus-minus-1e308"),
    pytest.param("bike_price", {5: "99999999999999999999999", 9: "99999999999999999999999"},
                 id="integer-past-int64"),
    # Any other numeric characteristic of the card: which ones the small demo card keeps moves
    # with the invented data, and the case is about the values, not the column.
    pytest.param(None, {5: "1e308", 9: "1e308"}, id="largest-doubles"),
    pytest.param("late_payments_12m", {5: "1e300", 9: "1e300"}, id="beside-a-special-value"),
    pytest.param("deposit_share", {1999: "-1e200", 2000: "-1e200"}, id="last-rows-negative"),
]


@pytest.mark.parametrize(("column", "values"), EXTREMES)
def test_extreme_values_in_a_few_rows_keep_the_characteristic(case, demo_card, column, values):
    if column is None:
        named = {p.values[0] for p in EXTREMES}
        column = next(c["name"] for c in demo_card["characteristics"]
                      if c["kind"] == "numeric" and c["name"] not in named)
    assert column in [c["name"] for c in demo_card["characteristics"]]
    set_cells(case, column, values)
    ran = build(case)
    assert_done(ran)
    assert column in characteristics_of(case / "m.json")
    # The rows are reported by number, on one plain warning line naming the column.
    said = [w for w in ran.warning_lines if column in w]
    assert len(said) == 1, ran.stderr
    for row in values:
        assert re.search(rf"\b{row}\b", said[0]), said[0]


def test_extreme_values_leave_the_bulk_of_the_fine_classes(case, demo_card):
    # The bins of the column keep separating the bulk: as many range bins as without the rows.
    set_cells(case, "credit_utilisation", {5: "1e308", 9: "-1e308"})
    assert_done(build(case))
    ranges = [b for c in model_of(case / "m.json")["characteristics"]
              if c["name"] == "credit_utilisation" for b in c["bins"] if b["kind"] == "range"]
    before = [b for c in demo_card["characteristics"] if c["name"] == "credit_utilisation"
              for b in c["bins"] if b["kind"] == "range"]
    assert len(ranges) == len(before)


HUGE = st.one_of(
    st.floats(min_value=1e15, max_value=1.7e308).map(lambda v: f"{v!r}"),
    st.floats(min_value=1e15, max_value=1.7e308).map(lambda v: f"{-v!r}"),
    st.integers(min_value=2 ** 63, max_value=10 ** 30).map(str),
)


@settings(max_examples=6, deadline=None, derandomize=True, phases=(Phase.generate,),
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(data=st.data())
def test_random_extreme_values_never_remove_a_characteristic(demo_folder, demo_card,
                                                             tmp_path_factory, data):
    import shutil
    before = [c["name"] for c in demo_card["characteristics"]]
    numeric = [c["name"] for c in demo_card["characteristics"] if c["kind"] == "numeric"]
    column = data.draw(st.sampled_from(numeric), label="column")
    rows = data.draw(st.lists(st.integers(1, 2000), min_size=1, max_size=3, unique=True),
                     label="rows")
    values = {row: data.draw(HUGE, label=f"row {row}") for row in rows}
    d = tmp_path_factory.mktemp("extreme") / "case"
    shutil.copytree(demo_folder, d)
    set_cells(d, column, values)
    ran = build(d, "--quiet")
    assert_done(ran)
    after = characteristics_of(d / "m.json")
    assert set(before) <= set(after), (column, values, before, after)


# ---- numbers in another locale ------------------------------------------------------------------

def european(d, quote: bool = False, delimiter: str = ";") -> None:
    """Rewrite the data file with decimal commas (fields quoted when ``quote``)."""
    lines = (d / DATA).read_text(encoding="utf-8").splitlines()
    out = []
    for i, line in enumerate(lines):
        fields = line.split(",")
        if i:
            fields = [re.sub(r"^(-?\d+)\.(\d+)$", r"\1,\2", f) for f in fields]
            if quote:
                fields = [f'"{f}"' if "," in f else f for f in fields]
        out.append(delimiter.join(fields) + "\n")
    (d / DATA).write_text("".join(out), encoding="utf-8")


def test_decimal_commas_without_a_setting_are_refused_naming_the_column(case):
    european(case)
    edit_config(case, "  target: outcome", "  delimiter: ';'\n  target: outcome")
    before = snapshot(case)
    assert_refused(run("build", case / CONFIG), ["{d}/applications.csv", "column monthly_income",
                                                 "decimal comma", "data.decimal"], case, before)


def test_quoted_decimal_commas_in_a_comma_file_are_refused(case):
    european(case, quote=True, delimiter=",")
    before = snapshot(case)
    assert_refused(run("build", case / CONFIG), ["{d}/applications.csv", "column monthly_income",
                                                 "decimal comma"], case, before)


def test_a_declared_decimal_comma_builds_the_same_card(case, demo_card):
    european(case)
    edit_config(case, "  target: outcome", "  delimiter: ';'\n  decimal: ','\n  target: outcome")
    assert_done(build(case, "--quiet"))
    built = model_of(case / "m.json")
    assert built["characteristics"] == demo_card["characteristics"]


def test_the_starter_config_detects_the_delimiter_and_the_decimal_comma(case):
    european(case)
    ran = run("init", case / DATA, "--target", "outcome", "--out", case / "starter.yaml")
    assert_done(ran)
    text = (case / "starter.yaml").read_text(encoding="utf-8")
    assert re.search(r"^\s*delimiter: '?;'?\s*$", text, re.M), text
    assert re.search(r"^\s*decimal: ','", text, re.M), text
    assert re.search(r"monthly_income.*numeric", text), text
    # and the starter config builds with the numbers read as numbers
    assert_done(run("build", "--quiet", case / "starter.yaml", "--model", case / "m.json",
                    "--workbook", case / "w.xlsx"))
    kinds = {c["name"]: c["kind"] for c in model_of(case / "m.json")["characteristics"]}
    assert kinds.get("credit_utilisation") == "numeric", kinds
