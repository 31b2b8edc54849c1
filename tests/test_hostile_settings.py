"""Settings that match nothing, warnings, data errors and outcome labels.

A special value that a characteristic never holds, or a group level never seen, is a plain
warning naming the characteristic and the value. Warnings are one plain line on stderr
(``warning: ...``) and ``--quiet`` silences those that do not change the result. A data error
found while checking values names the file and the first row at fault. Outcome labels are
matched exactly as written.
"""

from __future__ import annotations

import re


from cli_harness import (CONFIG, DATA, add_override, assert_done, assert_refused, case,
                         column_values, demo_folder, edit_config, edit_rows, run, sentinel_key,
                         snapshot)

__all__ = ["case", "demo_folder"]


def build(d, *extra):
    return run("build", d / CONFIG, "--model", d / "m.json", "--workbook", d / "w.xlsx", *extra)


def plain(stderr: str) -> bool:
    """Every line is a progress line or a plain warning: no category, no source line."""
    return all(line.startswith(("warning:", "[")) for line in stderr.splitlines())


def test_a_special_value_a_characteristic_never_holds_is_a_warning(case):
    add_override(case, f"bike_price: {{{sentinel_key(case)}: [-1]}}")
    ran = build(case)
    assert_done(ran)
    said = [w for w in ran.warning_lines if "bike_price" in w and "-1" in w]
    assert len(said) == 1, ran.stderr
    assert plain(ran.stderr), ran.stderr


def test_a_global_special_value_no_characteristic_holds_is_a_warning(case):
    key = sentinel_key(case)
    edit_config(case, f"{key}: [-999]", f"{key}: [-999, -777]")
    ran = build(case)
    assert_done(ran)
    assert [w for w in ran.warning_lines if "-777" in w], ran.stderr
    # -999 is held (by late_payments_12m): no warning names it.
    assert not [w for w in ran.warning_lines if "-999" in w], ran.stderr


def test_a_group_level_never_seen_is_a_warning(case):
    add_override(case, "housing: {groups: [[owner, mortgage], [renter], [family, other, castle]]}")
    ran = build(case)
    assert_done(ran)
    said = [w for w in ran.warning_lines if "housing" in w and "castle" in w]
    assert len(said) == 1, ran.stderr


def test_warnings_that_do_not_change_the_result_are_silenced_by_quiet(case):
    add_override(case, "housing: {groups: [[owner, mortgage], [renter], [family, other, castle]]}")
    ran = build(case, "--quiet")
    assert_done(ran)
    assert ran.stderr == "", ran.stderr


def test_a_config_warning_is_one_plain_line(case):
    edit_config(case, "holdout: 0.3", "holdout: null")
    edit_config(case, "out_of_time: {column: decided_on, from: 2025-07-01}", "out_of_time: null")
    ran = build(case)
    assert_done(ran)
    said = [w for w in ran.warning_lines if "holdout" in w]
    assert len(said) == 1 and "scorecard.yaml" in said[0], ran.stderr
    assert plain(ran.stderr) and "UserWarning" not in ran.stderr, ran.stderr
    quiet = build(case, "--quiet")
    assert_done(quiet)
    assert quiet.stderr == "", quiet.stderr


def first_row(d, column: str, value: str) -> int:
    return column_values(d, column).index(value) + 1


def test_a_level_in_no_group_names_the_file_and_its_first_row(case):
    add_override(case, "housing: {groups: [[owner, mortgage], [renter], [family]]}")
    row = first_row(case, "housing", "other")
    before = snapshot(case)
    assert_refused(build(case), ["{d}/applications.csv", f"row {row}", "housing", "'other'"],
                   case, before)


def test_text_in_a_column_declared_numeric_names_the_file_and_its_first_row(case):
    add_override(case, "housing: {kind: numeric}")
    before = snapshot(case)
    assert_refused(build(case), ["{d}/applications.csv", "row 1", "column housing"], case, before)


def test_a_weight_error_names_the_file(case):
    edit_config(case, "weight: null", "weight: bike_price")
    lines = (case / DATA).read_text().splitlines(keepends=True)
    header = lines[0].rstrip("\n").split(",")
    fields = lines[7].rstrip("\n").split(",")
    fields[header.index("bike_price")] = "-3"
    lines[7] = ",".join(fields) + "\n"
    (case / DATA).write_text("".join(lines))
    before = snapshot(case)
    assert_refused(build(case), ["{d}/applications.csv", "row 7", "column bike_price"], case,
                   before)


def left_out(ran) -> int:
    return int(re.search(r"(\d+) left out", ran.stderr).group(1))


def test_outcome_labels_match_exactly_as_written(case):
    # 'Yes' is bad and 'No' good; the rows holding yes, true or on are neither, so left out.
    swaps = {"defaulted": "Yes", "repaid": "No"}
    odd = iter(["yes", "true", "on", "TRUE", "YES"] * 3)
    changed = {"n": 0}

    def fn(f):
        if f["outcome"] in swaps:
            f["outcome"] = swaps[f["outcome"]]
            if f["outcome"] == "Yes" and changed["n"] < 15:
                f["outcome"] = next(odd)
                changed["n"] += 1
        return f
    edit_rows(case, fn)
    edit_config(case, "bad: [defaulted]", "bad: ['Yes']")
    edit_config(case, "good: [repaid]", "good: ['No']")
    baseline = sum(v == "in_arrears" for v in column_values(case, "outcome"))
    ran = build(case)
    assert_done(ran)
    assert left_out(ran) == baseline + 15, ran.stderr
