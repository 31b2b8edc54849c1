"""Samples without both outcomes: reported, shown as not available, and the build finishes.

A holdout or out-of-time sample with no bads (or no goods, or no rows) has no AUC, Gini or KS.
The build says so on stderr, as a warning naming the sample, and on the workbook's Overview,
and writes its outputs; only a development sample without both outcomes is refused, since no
model can be fitted on it.
"""

from __future__ import annotations

import re

import openpyxl
import pytest

from cli_harness import (CONFIG, DATA, MODEL, RECENT, assert_done, assert_refused,
                         case, characteristics_of, demo_folder, edit_config, edit_rows, run,
                         snapshot)

__all__ = ["case", "demo_folder"]

LATE = "2025-07-01"      # the demo config's out-of-time start


def oot_outcomes_to(value: str):
    """Every out-of-time row with an outcome of good or bad gets ``value``."""
    def edit(d):
        def fn(f):
            if f["decided_on"] >= LATE and f["outcome"] in ("defaulted", "repaid"):
                f["outcome"] = value
            return f
        edit_rows(d, fn)
    return edit


def overview_text(path) -> str:
    book = openpyxl.load_workbook(path, read_only=True)
    sheet = book[book.sheetnames[0]]
    return "\n".join(" ".join(str(v) for v in row if v is not None)
                     for row in sheet.iter_rows(values_only=True))


SAMPLES = [
    pytest.param(oot_outcomes_to("repaid"), "out of time", id="out-of-time-without-bads"),
    pytest.param(oot_outcomes_to("defaulted"), "out of time", id="out-of-time-without-goods"),
    pytest.param(lambda d: edit_config(d, "holdout: 0.3", "holdout: 0.001"), "holdout",
                 id="holdout-too-small-for-bads"),
    pytest.param(lambda d: edit_config(d, f"from: {LATE}", "from: 2030-01-01"), "out of time",
                 id="out-of-time-without-rows"),
]


@pytest.mark.parametrize(("spoil", "sample"), SAMPLES)
@pytest.mark.parametrize("quiet", [False, True], ids=["", "quiet"])
def test_a_sample_without_both_outcomes_is_a_warning_and_the_build_finishes(case, spoil, sample,
                                                                           quiet):
    spoil(case)
    model, workbook = case / "m.json", case / "w.xlsx"
    ran = run("build", case / CONFIG, "--model", model, "--workbook", workbook,
              *(["--quiet"] if quiet else []))
    assert_done(ran)
    # The measures of the sample are missing from the result, so even --quiet says so.
    said = [w for w in ran.warning_lines if sample in w]
    assert len(said) == 1, ran.stderr
    assert "Traceback" not in ran.stderr and "Warning:" not in ran.stderr
    assert characteristics_of(model)
    text = overview_text(workbook)
    assert "not available" in text
    assert any(sample in line and ("not available" in line or "cannot" in line)
               for line in text.splitlines()), text


def test_the_summary_line_of_an_unmeasured_sample_says_not_available(case):
    oot_outcomes_to("repaid")(case)
    ran = run("build", case / CONFIG, "--model", case / "m.json", "--workbook", case / "w.xlsx")
    assert_done(ran)
    line = next(line for line in ran.stdout.splitlines() if line.strip().startswith("out of time"))
    assert "not available" in line and not re.search(r"AUC \d", line), line


def test_a_development_sample_without_bads_is_still_refused(case):
    edit_rows(case, lambda f: {**f, "outcome": "repaid" if f["outcome"] == "defaulted"
                               else f["outcome"]})
    before = snapshot(case)
    assert_refused(run("build", case / CONFIG), ["column outcome", "development sample", "0 bads"],
                   case, before)


def test_compare_with_a_file_without_bads_is_a_plain_warning(case):
    edit_rows(case, lambda f: {**f, "outcome": "repaid"}, name=RECENT)
    ran = run("compare", case / MODEL, case / DATA, case / RECENT, "--json", case / "c.json")
    assert_done(ran)
    assert [w for w in ran.warning_lines if "current" in w and RECENT in w], ran.stderr
    # A warning is one plain line: no category name, no line of Python source under it.
    assert all(line.startswith(("warning:", "[")) for line in ran.stderr.splitlines()), ran.stderr
    assert (case / "c.json").is_file()
