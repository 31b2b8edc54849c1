"""Outputs never destroy anything: no output is an input, a folder or another output of the run,
and a place that cannot be written is one ``error:`` line naming it, with nothing left behind.

DESIGN.md: "inputs are never modified" and "outputs appear whole or not at all". Every command
that writes (build, score, compare, export, init, demo) is held to one rule, and paths count
as the same after resolving: ``./x`` and ``x`` and a symbolic link to ``x`` are one file.
"""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest

from cli_harness import (CONFIG, DATA, MODEL, RECENT, WORKBOOK, assert_done, assert_refused,
                         case, demo_folder, edit_config, mounted_tmpfs,
                         read_only_folder, run, run_process, snapshot)

__all__ = ["case", "demo_folder"]   # fixtures used by the tests below


def link(d: Path, name: str, target: str) -> Path:
    (d / name).symlink_to(d / target)
    return d / name


def model_named_csv(d: Path) -> Path:
    """A copy of the model file under a name a scored file may have."""
    shutil.copy2(d / MODEL, d / "model.csv")
    return d / "model.csv"


def folder(d: Path, name: str) -> Path:
    (d / name).mkdir()
    return d / name


# Each case: id, a function of the case folder giving the command (it may prepare the folder),
# and the texts the error line must hold ("{d}" stands for the case folder).
OVERLAPS = [
    # -- build
    pytest.param(lambda d: ["build", d / CONFIG, "--model", d / DATA],
                 ["{d}/applications.csv", "overwrite"], id="build-model-is-data"),
    pytest.param(lambda d: ["build", d / CONFIG, "--workbook", d / CONFIG],
                 ["{d}/scorecard.yaml", "overwrite"], id="build-workbook-is-config"),
    pytest.param(lambda d: ["build", d / CONFIG, "--workbook", link(d, "w.xlsx", DATA)],
                 ["{d}/w.xlsx", "overwrite"], id="build-workbook-links-to-data"),
    pytest.param(lambda d: ["build", d / CONFIG, "--model", d / "out" / ".." / CONFIG],
                 ["scorecard.yaml", "overwrite"], id="build-model-is-config-by-another-way"),
    pytest.param(lambda d: ["build", d / CONFIG, "--model", d / "x.json", "--workbook",
                            d / "." / "x.json"], ["x.json", "same file"],
                 id="build-outputs-collide"),
    pytest.param(lambda d: (edit_config(d, "model: out/scorecard.json", "model: applications.csv"),
                            ["build", d / CONFIG])[1],
                 ["applications.csv", "overwrite"], id="build-config-model-is-data"),
    pytest.param(lambda d: ["build", d / CONFIG, "--model", folder(d, "m.json")],
                 ["{d}/m.json", "folder"], id="build-model-is-a-folder"),
    pytest.param(lambda d: ["build", d / CONFIG, "--workbook", d / "out"],
                 ["{d}/out", "folder"], id="build-workbook-is-a-folder"),
    # -- score
    pytest.param(lambda d: ["score", d / MODEL, d / DATA, "--out", link(d, "s.csv", DATA)],
                 ["{d}/s.csv", "overwrite"], id="score-out-links-to-data"),
    pytest.param(lambda d: ["score", model_named_csv(d), d / DATA, "--out", d / "model.csv"],
                 ["{d}/model.csv", "overwrite"], id="score-out-is-model"),
    pytest.param(lambda d: ["score", d / MODEL, d / DATA, "--out", folder(d, "s.csv")],
                 ["{d}/s.csv", "folder"], id="score-out-is-a-folder"),
    # -- export
    pytest.param(lambda d: ["export", d / MODEL, "--format", "sql", "--out", d / MODEL],
                 ["{d}/out/scorecard.json", "overwrite"], id="export-sql-over-model"),
    pytest.param(lambda d: ["export", d / MODEL, "--format", "pmml", "--out", d / MODEL],
                 ["{d}/out/scorecard.json", "overwrite"], id="export-pmml-over-model"),
    pytest.param(lambda d: ["export", d / MODEL, "--format", "sql", "--out",
                            link(d, "m.sql", MODEL)], ["{d}/m.sql", "overwrite"],
                 id="export-out-links-to-model"),
    pytest.param(lambda d: ["export", "out/scorecard.json", "--format", "sql", "--out",
                            "./out/scorecard.json"], ["scorecard.json", "overwrite"],
                 id="export-out-is-model-relative"),
    pytest.param(lambda d: ["export", d / MODEL, "--format", "sql", "--out", folder(d, "q.sql")],
                 ["{d}/q.sql", "folder"], id="export-out-is-a-folder"),
    # -- compare
    pytest.param(lambda d: ["compare", d / MODEL, d / DATA, d / RECENT, "--json", d / DATA],
                 ["{d}/applications.csv", "overwrite"], id="compare-json-is-baseline"),
    pytest.param(lambda d: ["compare", d / MODEL, d / DATA, d / RECENT, "--json", d / RECENT],
                 ["{d}/applications_recent_drifted.csv", "overwrite"],
                 id="compare-json-is-current"),
    pytest.param(lambda d: ["compare", d / MODEL, d / DATA, d / RECENT, "--json", d / MODEL],
                 ["{d}/out/scorecard.json", "overwrite"], id="compare-json-is-model"),
    pytest.param(lambda d: ["compare", d / MODEL, d / DATA, d / RECENT, "--workbook", d / DATA],
                 ["{d}/applications.csv", "overwrite"], id="compare-workbook-is-baseline"),
    pytest.param(lambda d: ["compare", d / MODEL, d / DATA, d / RECENT, "--json", d / "r.json",
                            "--workbook", d / "r.json"], ["r.json", "same file"],
                 id="compare-json-is-workbook"),
    pytest.param(lambda d: ["compare", "out/scorecard.json", DATA, RECENT, "--json", "r.json",
                            "--workbook", "./r.json"], ["r.json", "same file"],
                 id="compare-json-is-workbook-relative"),
    pytest.param(lambda d: ["compare", d / MODEL, d / DATA, d / RECENT, "--json",
                            folder(d, "c.json")], ["{d}/c.json", "folder"],
                 id="compare-json-is-a-folder"),
    # -- init
    pytest.param(lambda d: ["init", d / DATA, "--target", "outcome", "--out",
                            link(d, "c.yaml", DATA)], ["{d}/c.yaml", "overwrite"],
                 id="init-out-links-to-data"),
    pytest.param(lambda d: ["init", d / DATA, "--target", "outcome", "--out", folder(d, "c.yaml")],
                 ["{d}/c.yaml", "folder"], id="init-out-is-a-folder"),
    # -- demo
    pytest.param(lambda d: (folder(d, "demo2"), folder(d, "demo2/scorecard.yaml"),
                            ["demo", "--dir", d / "demo2", "--rows", "500", "--quiet"])[2],
                 ["{d}/demo2/scorecard.yaml", "folder"], id="demo-output-is-a-folder"),
]


@pytest.mark.parametrize(("command", "needles"), OVERLAPS)
def test_no_output_is_an_input_a_folder_or_another_output(case, command, needles):
    args = command(case)
    before = snapshot(case)
    assert_refused(run(*args, cwd=case), needles, case, before)


# ---- places that cannot be written -------------------------------------------------------------

# Each writer: id, and a function of (case folder, destination folder) giving the command and
# the path it writes that the error must name.
WRITERS = [
    pytest.param(lambda d, p: (["build", "--quiet", d / CONFIG, "--workbook", p / "w.xlsx"],
                               p / "w.xlsx"), id="build-workbook"),
    pytest.param(lambda d, p: (["build", "--quiet", d / CONFIG, "--model", p / "m.json"],
                               p / "m.json"), id="build-model"),
    pytest.param(lambda d, p: (["score", d / MODEL, d / DATA, "--out", p / "s.csv"], p / "s.csv"),
                 id="score-csv"),
    pytest.param(lambda d, p: (["score", d / MODEL, d / DATA, "--out", p / "s.parquet"],
                               p / "s.parquet"), id="score-parquet"),
    pytest.param(lambda d, p: (["export", d / MODEL, "--format", "pmml", "--out", p / "m.pmml"],
                               p / "m.pmml"), id="export-pmml"),
    pytest.param(lambda d, p: (["export", d / MODEL, "--format", "sql", "--out", p / "m.sql"],
                               p / "m.sql"), id="export-sql"),
    pytest.param(lambda d, p: (["compare", d / MODEL, d / DATA, d / RECENT, "--json",
                                p / "c.json"], p / "c.json"), id="compare-json"),
    pytest.param(lambda d, p: (["compare", d / MODEL, d / DATA, d / RECENT, "--workbook",
                                p / "c.xlsx"], p / "c.xlsx"), id="compare-workbook"),
    pytest.param(lambda d, p: (["init", d / DATA, "--target", "outcome", "--out", p / "c.yaml"],
                               p / "c.yaml"), id="init"),
    pytest.param(lambda d, p: (["demo", "--dir", p / "demo", "--rows", "500", "--quiet"],
                               p / "demo"), id="demo"),
]


@pytest.mark.parametrize("writer", WRITERS)
def test_a_read_only_destination_is_one_error_line(case, writer):
    with read_only_folder(case / "locked") as place:
        args, path = writer(case, place)
        before = snapshot(case)
        assert_refused(run(*args), [path], case, before)


@pytest.mark.parametrize("writer", WRITERS)
def test_a_destination_under_a_file_is_one_error_line(case, writer):
    # Like a drive that is not there: the folder of the output cannot exist.
    (case / "blocker").write_text("a file where a folder should be\n")
    args, path = writer(case, case / "blocker" / "sub")
    before = snapshot(case)
    assert_refused(run(*args), [path], case, before)


@pytest.mark.parametrize("writer", WRITERS)
def test_a_disk_full_while_writing_is_one_error_line(case, writer):
    # Every file the process writes is capped at 512 bytes: each output fails part-way, as on a
    # full disk, at the write itself.
    (case / "full").mkdir()
    args, path = writer(case, case / "full")
    before = snapshot(case)
    ran = run_process(*args, file_size_limit=512)
    assert_refused(ran, ["cannot write"], case, before)
    # A build writes its workbook first, so with --model alone the default workbook fails.
    assert str(path) in ran.error_lines[0] or str(case / WORKBOOK) in ran.error_lines[0]


@pytest.mark.skipif(not hasattr(os, "geteuid") or os.geteuid() != 0, reason="mounting needs root")
@pytest.mark.parametrize("writer", [w for w in WRITERS if w.id in ("build-workbook", "score-csv",
                                                                    "compare-workbook")])
def test_a_small_file_system_filling_up_is_one_error_line(case, writer):
    with mounted_tmpfs(case / "small", "size=16k") as place:
        args, path = writer(case, place)
        before = snapshot(case)
        assert_refused(run_process(*args), [path], case, before)


def test_a_compare_whose_workbook_fails_leaves_no_json(case):
    with read_only_folder(case / "locked") as place:
        before = snapshot(case)
        ran = run("compare", case / MODEL, case / DATA, case / RECENT, "--json",
                  case / "c.json", "--workbook", place / "c.xlsx")
        assert_refused(ran, [place / "c.xlsx"], case, before)


def test_a_build_whose_model_fails_keeps_the_previous_workbook(case):
    with read_only_folder(case / "locked") as place:
        before = snapshot(case)
        ran = run("build", "--quiet", case / CONFIG, "--model", place / "m.json")
        assert_refused(ran, [place / "m.json"], case, before)
        assert (case / WORKBOOK).read_bytes() == before[WORKBOOK][0]


def test_outputs_into_new_folders_are_written(case):
    # The counterpart of the refusals: a fresh folder for each output is made and filled.
    ran = run("build", "--quiet", case / CONFIG, "--model", case / "new" / "a" / "m.json",
              "--workbook", case / "new" / "b" / "w.xlsx")
    assert_done(ran)
    assert (case / "new" / "a" / "m.json").is_file() and (case / "new" / "b" / "w.xlsx").is_file()
    ran = run("compare", case / MODEL, case / DATA, case / RECENT, "--json", case / "c" / "c.json",
              "--workbook", case / "c" / "c.xlsx")
    assert_done(ran)
    assert {p.name for p in (case / "c").iterdir()} == {"c.json", "c.xlsx"}

