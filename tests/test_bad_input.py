"""A catalogue of bad input, each case through the command line.

Every case copies one small demo folder (2,000 invented applications, its config, a model file
and a previous workbook), spoils one thing, runs a command and checks the command
contract stated in the README (Exit status): exit status 2, exactly one stderr line beginning ``error:`` that names the file, key,
column or row at fault, no traceback, and no output created or changed (the folder's files keep
their bytes and modification times, and no temporary file is left).
"""

from __future__ import annotations

import json
import os
import shutil
import time
from pathlib import Path

import pyarrow.parquet as pq
import pytest
from click.testing import CliRunner

from scorecard.api import open_engine
from scorecard.build.pipeline import build_scorecard
from scorecard.cli import main
from scorecard.config.loading import load_config
from scorecard.demo.files import write_demo

PREVIOUS_WORKBOOK = b"PK\x03\x04 the workbook of an earlier build"


@pytest.fixture(scope="module")
def demo_folder(tmp_path_factory) -> Path:
    """A demo folder with the model file and workbook of an earlier build already in out/."""
    folder = tmp_path_factory.mktemp("bad_input") / "demo"
    config_path = write_demo(folder, rows=2000, seed=2024)
    config = load_config(config_path)
    card = build_scorecard(config, open_engine(config)).card
    (folder / "out").mkdir()
    (folder / "out" / "scorecard.json").write_text(card.to_json(), encoding="utf-8")
    (folder / "out" / "scorecard.xlsx").write_bytes(PREVIOUS_WORKBOOK)
    return folder


@pytest.fixture
def case(demo_folder, tmp_path) -> Path:
    folder = tmp_path / "case"
    shutil.copytree(demo_folder, folder, copy_function=shutil.copy2)
    return folder


def snapshot(folder: Path) -> dict:
    """Every file under ``folder`` with its bytes and modification time."""
    return {str(p.relative_to(folder)): (p.read_bytes(), p.stat().st_mtime_ns)
            for p in sorted(folder.rglob("*")) if p.is_file()}


# ---- ways to spoil the demo folder ---------------------------------------------------------------

def edit_config(old: str, new: str):
    def edit(d: Path) -> None:
        path = d / "scorecard.yaml"
        text = path.read_text(encoding="utf-8")
        assert old in text, old
        path.write_text(text.replace(old, new, 1), encoding="utf-8")
    return edit


def append_config(extra: str):
    def edit(d: Path) -> None:
        path = d / "scorecard.yaml"
        path.write_text(path.read_text(encoding="utf-8") + extra, encoding="utf-8")
    return edit


def write_config(text: str):
    def edit(d: Path) -> None:
        (d / "scorecard.yaml").write_text(text, encoding="utf-8")
    return edit


def edit_lines(fn, name: str = "applications.csv"):
    """Rewrite the data file from a function of its lines (line 0 is the header)."""
    def edit(d: Path) -> None:
        path = d / name
        lines = path.read_text(encoding="utf-8").splitlines(keepends=True)
        path.write_text("".join(fn(lines)), encoding="utf-8")
    return edit


def set_cell(column: str, row: int, value: str):
    """Set one field of data row ``row`` (counted from 1) of the CSV."""
    def fn(lines):
        at = lines[0].rstrip("\n").split(",").index(column)
        fields = lines[row].rstrip("\n").split(",")
        fields[at] = value
        return lines[:row] + [",".join(fields) + "\n"] + lines[row + 1:]
    return edit_lines(fn)


def both(*edits):
    def edit(d: Path) -> None:
        for e in edits:
            e(d)
    return edit


def latin1_data(d: Path) -> None:
    path = d / "applications.csv"
    lines = path.read_text(encoding="utf-8").splitlines(keepends=True)
    lines[3] = lines[3].replace(",online,", ",onlïne,").replace(",shop,", ",shöp,") \
        .replace(",partner,", ",pärtner,")
    path.write_bytes("".join(lines).encode("latin-1"))


def latin1_header(d: Path) -> None:
    path = d / "applications.csv"
    text = path.read_text(encoding="utf-8").replace("bike_price", "bike_prïce", 1)
    path.write_bytes(text.encode("latin-1"))


def utf16_data(d: Path) -> None:
    path = d / "applications.csv"
    path.write_bytes(path.read_text(encoding="utf-8").encode("utf-16"))


def semicolon_data(d: Path) -> None:
    path = d / "applications.csv"
    path.write_text(path.read_text(encoding="utf-8").replace(",", ";"), encoding="utf-8")


def remove(name: str):
    def edit(d: Path) -> None:
        (d / name).unlink()
    return edit


def write_bytes(name: str, data: bytes):
    def edit(d: Path) -> None:
        (d / name).write_bytes(data)
    return edit


def empty_parquet_folder(d: Path) -> None:
    (d / "applications.csv").unlink()
    (d / "applications.csv").mkdir()


def unreadable(name: str):
    def edit(d: Path) -> None:
        os.chmod(d / name, 0)
    return edit


def edit_model(fn):
    def edit(d: Path) -> None:
        path = d / "out" / "scorecard.json"
        raw = json.loads(path.read_text(encoding="utf-8"))
        fn(raw)
        path.write_text(json.dumps(raw), encoding="utf-8")
    return edit


def first(raw: dict, kind: str) -> dict:
    return next(c for c in raw["characteristics"] if c["kind"] == kind)


def unchanged(d: Path) -> None:
    pass


def yaml_line(d: Path, text: str) -> int:
    lines = (d / "scorecard.yaml").read_text(encoding="utf-8").splitlines()
    return next(i for i, line in enumerate(lines, start=1) if text in line)


def alias_bomb(levels: int = 9) -> str:
    lines = ["bomb0: &a0 [x, x, x, x, x, x, x, x, x, x]"]
    for i in range(1, levels + 1):
        lines.append(f"bomb{i}: &a{i} [" + ", ".join([f"*a{i - 1}"] * 10) + "]")
    return "\n" + "\n".join(lines) + "\n"


ROOT = hasattr(os, "geteuid") and os.geteuid() == 0
CONFIG, DATA, MODEL, SCORED = "scorecard.yaml", "applications.csv", "out/scorecard.json", "scored.csv"


def build(d: Path) -> list:
    return ["build", str(d / CONFIG)]


def score(d: Path, *extra) -> list:
    return ["score", str(d / MODEL), str(d / DATA), "--out", str(d / SCORED), *extra]


RECENT = "applications_recent_drifted.csv"


def strategy(d: Path, *extra) -> list:
    return ["strategy", str(d / MODEL), str(d / RECENT), *extra]


def init(d: Path, data: str = DATA, target: str = "outcome") -> list:
    return ["init", str(d / data), "--target", target, "--out", str(d / "starter.yaml")]


# Each case: id, how to spoil the folder, the command, and the texts the error line must hold
# ("{d}" stands for the case folder). A case another module gets wrong is marked
# xfail(strict=True), naming the module.
CASES = [
    # -- the config file
    pytest.param(remove(CONFIG), build, ["{d}/scorecard.yaml", "no such file"], id="config-missing"),
    pytest.param(unchanged, lambda d: ["build", str(d)], [str("{d}"), "folder"], id="config-is-a-folder"),
    pytest.param(unreadable(CONFIG), build, ["{d}/scorecard.yaml", "permission denied"],
                 id="config-unreadable",
                 marks=pytest.mark.skipif(ROOT, reason="root reads files of mode 000")),
    pytest.param(write_bytes(CONFIG, b""), build, ["{d}/scorecard.yaml", "is empty"],
                 id="config-empty"),
    pytest.param(write_bytes(CONFIG, "name: Caf\xe9\n".encode("latin-1")), build,
                 ["{d}/scorecard.yaml", "not UTF-8", "(line 1)"], id="config-not-utf8"),
    pytest.param(edit_config("holdout: 0.3", "holdout: 0.3: 4"), build,
                 ["{d}/scorecard.yaml", "YAML syntax error", "(line 27)"], id="yaml-syntax-error"),
    pytest.param(edit_config("holdout: 0.3", "holdout: [0.3"), build,
                 ["{d}/scorecard.yaml", "YAML syntax error", "line 27"], id="yaml-unclosed-list"),
    pytest.param(edit_config("  seed: 2024", "  seed: 2024\n\tseed: 1"), build,
                 ["{d}/scorecard.yaml", "(line 29)"], id="yaml-tab-indent"),
    pytest.param(edit_config("holdout: 0.3", "holdout: !!python/object/apply:os.system [touch pwned]"),
                 build, ["samples.holdout", "tag", "not allowed", "(line 27)"], id="yaml-python-tag"),
    pytest.param(edit_config("source: applications.csv", "source: !include applications.csv"),
                 build, ["data.source", "'!include' is not allowed"], id="yaml-local-tag"),
    pytest.param(append_config(alias_bomb()), build,
                 ["{d}/scorecard.yaml", "once its aliases are written out"], id="yaml-alias-bomb"),
    pytest.param(append_config("many: &m [x]\nrefs: [" + ", ".join(["*m"] * 1001) + "]\n"), build,
                 ["more than 1000 aliases"], id="yaml-too-many-aliases"),
    pytest.param(write_config("- just\n- a list\n"), build, ["{d}/scorecard.yaml", "must be a mapping"],
                 id="config-not-a-mapping"),
    pytest.param(edit_config("scaling:", "scalling:"), build,
                 ["scalling", "unknown key", "did you mean 'scaling'"], id="misspelt-section"),
    pytest.param(edit_config("holdout: 0.3", "holdot: 0.3"), build,
                 ["samples.holdot", "did you mean 'holdout'", "(line 27)"], id="misspelt-key"),
    pytest.param(append_config("colour: blue\n"), build, ["colour", "unknown key", "known keys are"],
                 id="unknown-key"),
    pytest.param(edit_config("  seed: 2024", "  seed: 2024\n  seed: 7"), build,
                 ["samples.seed", "is given twice"], id="duplicate-key"),
    pytest.param(edit_config("pdo: 20", "pdo: twenty"), build,
                 ["scaling.pdo", "must be a number", "twenty"], id="wrong-type-number"),
    pytest.param(append_config("binning: {max_bins: 2.5}\n"), build, ["binning", "is given twice"],
                 id="section-given-twice"),
    pytest.param(edit_config("sentinels: [-999]", "sentinels: [-999]\n  max_bins: 2.5"),
                 build, ["binning.max_bins", "whole number"], id="wrong-type-whole"),
    pytest.param(edit_config("holdout: 0.3", "holdout: 1.5"), build,
                 ["samples.holdout", "below 1"], id="out-of-range-share"),
    pytest.param(edit_config("bad: [defaulted]", "bad: defaulted"), build,
                 ["data.bad", "must be a list"], id="wrong-type-list"),
    pytest.param(edit_config("sentinels: [-999]", "special_values: [-999]"), build,
                 ["binning.special_values", "renamed; write sentinels", "(line "],
                 id="renamed-key-special-values"),
    pytest.param(edit_config("{trend: falls}", "{trend: descending}"), build,
                 ["characteristics.months_at_address.trend", "'descending' is now written 'falls'",
                  "(line "], id="renamed-trend-word"),
    pytest.param(edit_config("{trend: falls}", "{trend: downwards}"), build,
                 ["characteristics.months_at_address.trend", "must be one of"], id="bad-choice"),
    pytest.param(edit_config("  source: applications.csv\n", ""), build,
                 ["data.source", "is required but missing"], id="required-key-missing"),
    pytest.param(edit_config("ignore: [application_id, decided_on, staff_application]",
                             "ignore: [application_id, decided_on, staff_application, outcome]"), build,
                 ["data.ignore[3]", "data.target"], id="target-also-ignored"),
    pytest.param(edit_config("model: out/scorecard.json", "model: out/scorecard.xlsx"), build,
                 ["output.model", "same file as output.workbook"], id="outputs-collide"),
    pytest.param(edit_config("engine: local", "engine: spark"), build, ["engine", "spark"],
                 id="unknown-engine"),
    pytest.param(edit_config("weight: null", "weight: null\n  encoding: klingon"), build,
                 ["data.encoding", "not a known text encoding"], id="unknown-encoding"),
    # -- the data file
    pytest.param(remove(DATA), build, ["{d}/applications.csv", "not found"], id="data-missing"),
    pytest.param(unreadable(DATA), build, ["{d}/applications.csv", "ermission"], id="data-unreadable",
                 marks=pytest.mark.skipif(ROOT, reason="root reads files of mode 000")),
    pytest.param(both(edit_config("source: applications.csv", "source: applications.parquet"),
                      write_bytes("applications.parquet", b"PAR1 this is not a Parquet file PAR1")),
                 build, ["{d}/applications.parquet", "cannot read the data"], id="data-corrupt-parquet"),
    pytest.param(both(edit_config("source: applications.csv", "source: applications.ods"),
                      write_bytes("applications.ods", b"PK\x03\x04")),
                 build, ["{d}/applications.ods", "unknown data format"], id="data-unknown-format"),
    pytest.param(both(edit_config("source: applications.csv", "source: applications.xlsx"),
                      write_bytes("applications.xlsx", b"PK\x03\x04")),
                 build, ["{d}/applications.xlsx", "cannot read the workbook"], id="data-corrupt-xlsx"),
    pytest.param(both(edit_config("source: applications.csv", "source: applications.csv.gz"),
                      write_bytes("applications.csv.gz", b"\x1f\x8b not gzip at all")),
                 build, ["{d}/applications.csv.gz", "cannot read the data"], id="data-corrupt-gzip"),
    pytest.param(both(edit_config("source: applications.csv", "source: applications.xpt"),
                      write_bytes("applications.xpt", b"HEADER RECORD but nothing else")),
                 build, ["{d}/applications.xpt", "cannot read the xport dataset"],
                 id="data-corrupt-xpt"),
    pytest.param(empty_parquet_folder, build, ["{d}/applications.csv", "no Parquet files"],
                 id="data-empty-folder"),
    pytest.param(write_bytes(DATA, b""), build, ["{d}/applications.csv", "empty"], id="data-empty"),
    pytest.param(edit_lines(lambda lines: lines[:1]), build,
                 ["{d}/applications.csv", "column names but no rows"], id="data-header-only"),
    pytest.param(latin1_data, build,
                 ["{d}/applications.csv", "column sales_channel", "row 3", "data.encoding"],
                 id="data-not-utf8"),
    pytest.param(latin1_header, build, ["{d}/applications.csv", "header", "data.encoding"],
                 id="data-header-not-utf8"),
    pytest.param(utf16_data, build, ["{d}/applications.csv", "NUL", "data.encoding"],
                 id="data-utf16-undeclared"),
    pytest.param(semicolon_data, build, ["{d}/applications.csv", "';'", "data.delimiter"],
                 id="data-wrong-delimiter"),
    pytest.param(edit_lines(lambda lines: lines[:9] + ["1,2,3\n"] + lines[10:]), build,
                 ["{d}/applications.csv", "row 9", "expected 20 fields", "found 3"], id="data-short-row"),
    pytest.param(edit_lines(lambda lines: lines[:40] + ['"unclosed quote,' + lines[40]] + lines[41:]),
                 build, ["{d}/applications.csv", "row 40"], id="data-unclosed-quote"),
    pytest.param(edit_lines(lambda lines: [lines[0].replace("bike_type", "housing")] + lines[1:]),
                 build, ["{d}/applications.csv", "column housing", "more than once"],
                 id="data-duplicate-column"),
    # -- columns and the outcome
    pytest.param(edit_config("target: outcome", "target: outcomes"), build,
                 ["data.target", "'outcomes' is not in the data", "did you mean 'outcome'", "(line 7)"],
                 id="target-absent"),
    pytest.param(edit_lines(lambda lines: [ln.replace(",defaulted,", ",repaid,") for ln in lines]),
                 build, ["column outcome", "both goods and bads", "0 bads"], id="target-one-class"),
    pytest.param(edit_config("bad: [defaulted]\n  good: [repaid]", "bad: [gone]\n  good: [fine]"),
                 build, ["column outcome", "0 goods, 0 bads"], id="target-values-match-nothing"),
    pytest.param(edit_config("from: 2025-07-01", "from: 2020-01-01"), build,
                 ["column outcome", "development sample", "0 goods, 0 bads"], id="no-development-rows"),
    pytest.param(both(edit_config("weight: null", "weight: bike_price"), set_cell("bike_price", 7, "-3")),
                 build, ["column bike_price", "row 7", "-3"], id="weight-negative"),
    pytest.param(both(edit_config("weight: null", "weight: bike_price"), set_cell("bike_price", 7, "")),
                 build, ["column bike_price", "row 7", "missing"], id="weight-missing"),
    pytest.param(both(edit_config("weight: null", "weight: bike_price"), set_cell("bike_price", 7, "inf")),
                 build, ["column bike_price", "row 7", "inf"], id="weight-infinite"),
    pytest.param(edit_config("weight: null", "weight: housing"), build,
                 ["column housing", "weights must be numbers"], id="weight-text"),
    pytest.param(edit_config("months_at_address: {trend: falls}",
                             "months_at_adress: {trend: falls}"), build,
                 ["characteristics.months_at_adress", "did you mean 'months_at_address'"],
                 id="override-absent-column"),
    pytest.param(edit_config("{trend: falls}", "{cuts: [24, 12]}"), build,
                 ["characteristics.months_at_address.cuts[1]", "larger than the value before"],
                 id="cuts-unsorted"),
    pytest.param(edit_config("{trend: falls}", "{cuts: [12, 100000]}"), build,
                 ["characteristics.months_at_address.cuts", "development range"], id="cuts-outside-data"),
    pytest.param(edit_config("weekly_delivery_hours: {trend: any}",
                             "housing: {groups: [[owner, renter], [renter, family, other, mortgage]]}"),
                 build, ["characteristics.housing.groups[1][0]", "'renter' is already listed"],
                 id="groups-overlap"),
    pytest.param(edit_config("weekly_delivery_hours: {trend: any}",
                             "housing: {groups: [[owner, mortgage], [renter]]}"),
                 build, ["characteristics.housing.groups", "in no group"], id="groups-miss-levels"),
    pytest.param(edit_config("weekly_delivery_hours: {trend: any}", "housing: {kind: numeric}"),
                 build, ["column housing", "expected numbers"], id="text-column-declared-numeric"),
    pytest.param(set_cell("decided_on", 5, "yesterday"), build,
                 ["column decided_on", "row 5", "'yesterday' is not a date"], id="date-does-not-parse"),
    pytest.param(edit_config("column: decided_on", "column: decided"), build,
                 ["samples.out_of_time.column", "did you mean 'decided_on'"], id="date-column-absent"),
    pytest.param(edit_config("keep: []", "keep: [credit_score]"), build,
                 ["selection.keep[0]", "credit_score"], id="forced-column-absent"),
    # -- scoring with a model file
    pytest.param(edit_model(lambda m: m.update(format_version=2)), score,
                 ["{d}/out/scorecard.json", "format_version 2"], id="model-other-version"),
    pytest.param(edit_model(lambda m: m.pop("format_version")), score,
                 ["{d}/out/scorecard.json", "format_version None"], id="model-no-version"),
    pytest.param(write_bytes(MODEL, b'{"format_version": 1, "name": '), score,
                 ["{d}/out/scorecard.json", "invalid JSON", "line 1"], id="model-truncated"),
    pytest.param(write_bytes(MODEL, b"[1, 2]"), score, ["{d}/out/scorecard.json", "JSON object"],
                 id="model-not-an-object"),
    pytest.param(remove(MODEL), score, ["{d}/out/scorecard.json", "cannot read"], id="model-missing"),
    pytest.param(edit_model(lambda m: m.pop("scaling")), score,
                 ["{d}/out/scorecard.json", "incomplete", "scaling"], id="model-without-scaling"),
    pytest.param(edit_model(lambda m: m["scaling"].update(pdo=40)), score,
                 ["{d}/out/scorecard.json", "scaling", "do not match"], id="model-scaling-edited"),
    pytest.param(edit_model(lambda m: first(m, "numeric").update(cuts=first(m, "numeric")["cuts"][::-1])),
                 score, ["{d}/out/scorecard.json", "cuts must be strictly increasing"],
                 id="model-cuts-reversed"),
    pytest.param(edit_model(lambda m: first(m, "numeric")["bins"][0].update(points=12.5)), score,
                 ["{d}/out/scorecard.json", "points must be integers"], id="model-points-fractional"),
    pytest.param(edit_model(lambda m: first(m, "numeric")["bins"][0].update(kind="bucket")), score,
                 ["{d}/out/scorecard.json", "unknown kind"], id="model-unknown-bin-kind"),
    pytest.param(edit_model(lambda m: first(m, "categorical")["bins"][1].update(
        levels=first(m, "categorical")["bins"][0]["levels"])), score,
                 ["{d}/out/scorecard.json", "a level belongs to two bins"], id="model-level-twice"),
    pytest.param(edit_model(lambda m: m["characteristics"].append(m["characteristics"][0])), score,
                 ["{d}/out/scorecard.json", "listed twice"], id="model-characteristic-twice"),
    pytest.param(edit_model(lambda m: m["scaling"].update(pdo="20")), score,
                 ["{d}/out/scorecard.json", "scaling"], id="model-scaling-as-text"),
    pytest.param(edit_model(lambda m: first(m, "numeric").update(development_range=[1e9, -1e9])), score,
                 ["{d}/out/scorecard.json", "development_range"], id="model-range-reversed"),
    pytest.param(edit_model(lambda m: first(m, "categorical")["bins"][0].update(levels="owner")), score,
                 ["{d}/out/scorecard.json", "levels"], id="model-levels-as-text"),
    pytest.param(edit_lines(lambda lines: [lines[0].replace("credit_utilisation", "utilisation")] + lines[1:]),
                 score, ["column credit_utilisation", "needs it"], id="score-column-missing"),
    pytest.param(unchanged, lambda d: score(d, "--keep", "applicant"), ["--keep applicant"],
                 id="score-keep-absent"),
    pytest.param(unchanged, lambda d: ["score", str(d / MODEL), str(d / DATA), "--out",
                                       str(d / "scored.xlsx")], ["scored.xlsx", "--out"],
                 id="score-out-format"),
    pytest.param(set_cell("credit_utilisation", 4, "high"), score,
                 ["{d}/applications.csv", "'high'"], id="score-text-in-numbers"),
    pytest.param(latin1_data, score, ["{d}/applications.csv", "UTF8"], id="score-data-not-utf8"),
    pytest.param(remove(DATA), score, ["{d}/applications.csv", "not found"], id="score-data-missing"),
    # -- the starter config
    pytest.param(unchanged, lambda d: init(d, data="absent.csv"), ["{d}/absent.csv", "not found"],
                 id="init-data-missing"),
    pytest.param(unchanged, lambda d: init(d, target="outcomes"),
                 ["column outcomes", "did you mean 'outcome'"], id="init-target-absent"),
    pytest.param(edit_lines(lambda lines: [ln.replace(",defaulted,", ",repaid,")
                                           .replace(",in_arrears,", ",repaid,") for ln in lines]),
                 init, ["column outcome", "at least two distinct values"], id="init-target-one-value"),
    pytest.param(write_bytes(DATA, b""), init, ["{d}/applications.csv", "empty"], id="init-data-empty"),
    pytest.param(unchanged, lambda d: ["init", str(d / DATA), "--target", "outcome", "--out", str(d / DATA)],
                 ["{d}/applications.csv", "would overwrite the data"], id="init-out-over-data"),
    pytest.param(append_config("grades: {count: 1}\n"), build, ["grades.count", "at least 2"],
                 id="grades-count-below-2"),
    pytest.param(append_config("grades: {count: 5, long_run_bad_rate: 0}\n"), build,
                 ["grades.long_run_bad_rate", "above 0"], id="grades-long-run-rate-0"),
    # -- scorecard strategy
    pytest.param(unchanged, lambda d: strategy(d, "--incumbent", "old_score"),
                 ["{d}/applications_recent_drifted.csv", "column old_score", "--incumbent"],
                 id="strategy-incumbent-absent"),
    pytest.param(unchanged, lambda d: strategy(d, "--incumbent", "sales_channel"),
                 ["column sales_channel", "--incumbent-approved"], id="strategy-incumbent-text"),
    pytest.param(unchanged, lambda d: strategy(d, "--target-approval", "1.5"),
                 ["--target-approval", "between 0 and 1"], id="strategy-target-approval-above-1"),
    pytest.param(unchanged, lambda d: strategy(d, "--target-approval", "0"),
                 ["--target-approval", "between 0 and 1"], id="strategy-target-approval-0"),
    pytest.param(unchanged, lambda d: strategy(d, "--target-bad-rate", "1"),
                 ["--target-bad-rate", "between 0 and 1"], id="strategy-target-bad-rate-1"),
    pytest.param(unchanged, lambda d: strategy(d, "--refer-width", "0"),
                 ["--refer-width", "at least 1"], id="strategy-refer-width-0"),
    pytest.param(unchanged, lambda d: strategy(d, "--loss-per-bad", "-1"),
                 ["--loss-per-bad", "at least 0"], id="strategy-negative-loss"),
    pytest.param(unchanged, lambda d: strategy(d, "--incumbent-direction", "higher-is-better"),
                 ["--incumbent-direction", "needs --incumbent"], id="strategy-direction-alone"),
    pytest.param(unchanged, lambda d: strategy(d, "--json", str(d / RECENT)),
                 ["--json", "would overwrite the data"], id="strategy-json-over-data"),
    pytest.param(unchanged, lambda d: strategy(d, "--workbook", str(d / MODEL)),
                 ["--workbook", "would overwrite the model file"], id="strategy-workbook-over-model"),
]


@pytest.mark.parametrize(("spoil", "command", "needles"), CASES)
def test_bad_input_is_refused_with_one_error_line_and_nothing_written(case, spoil, command, needles):
    spoil(case)
    before = snapshot(case)
    started = time.perf_counter()
    result = CliRunner().invoke(main, command(case))
    elapsed = time.perf_counter() - started
    lines = result.stderr.splitlines()
    errors = [line for line in lines if line.startswith("error:")]
    assert result.exit_code == 2, (result.exit_code, result.stderr, result.exception)
    assert isinstance(result.exception, SystemExit)
    assert len(errors) == 1 and lines[-1] == errors[0], result.stderr
    assert "Traceback" not in result.stderr + result.stdout
    for needle in needles:
        assert needle.replace("{d}", str(case)) in errors[0]
    assert snapshot(case) == before
    # Bad input is found before or during the first passes: no case costs the time of a build.
    assert elapsed < 10


def test_the_catalogue_has_at_least_forty_cases():
    assert len(CASES) >= 40


def test_a_python_tag_runs_nothing(case):
    edit_config("holdout: 0.3", "holdout: !!python/object/apply:os.system [touch pwned]")(case)
    result = CliRunner().invoke(main, build(case), catch_exceptions=False)
    assert result.exit_code == 2
    assert not (case / "pwned").exists() and not Path("pwned").exists()


def test_an_alias_bomb_is_refused_quickly(case):
    # Nine levels of ten-fold aliases would expand to 10**10 values.
    append_config(alias_bomb())(case)
    started = time.perf_counter()
    result = CliRunner().invoke(main, build(case))
    assert result.exit_code == 2
    assert time.perf_counter() - started < 2


def test_the_yaml_error_line_is_the_line_of_the_fault(case):
    edit_config("holdout: 0.3", "holdout: 0.3: 4")(case)
    line = yaml_line(case, "holdout: 0.3: 4")
    result = CliRunner().invoke(main, build(case))
    assert result.stderr.strip().endswith(f"(line {line})")


def test_a_declared_encoding_reads_the_non_utf8_file(case, tmp_path):
    latin1_data(case)
    edit_config("weight: null", "weight: null\n  encoding: latin-1")(case)
    model = tmp_path / "model.json"
    result = CliRunner().invoke(main, ["build", str(case / CONFIG), "--quiet",
                                       "--model", str(model), "--workbook", str(tmp_path / "w.xlsx")])
    assert result.exit_code == 0, result.stderr
    assert json.loads(model.read_text())["format_version"] == 1


def test_a_declared_delimiter_reads_the_semicolon_file(case, tmp_path):
    semicolon_data(case)
    edit_config("weight: null", "weight: null\n  delimiter: ';'")(case)
    model = tmp_path / "model.json"
    result = CliRunner().invoke(main, ["build", str(case / CONFIG), "--quiet",
                                       "--model", str(model), "--workbook", str(tmp_path / "w.xlsx")])
    assert result.exit_code == 0, result.stderr
    assert model.exists()


def test_a_parquet_folder_with_rows_builds(case, tmp_path):
    # The counterpart of the empty-folder case: the same rows in two Parquet parts are accepted.
    from scorecard.data.read import read_table
    table = read_table(case / DATA)
    (case / "parts").mkdir()
    pq.write_table(table.slice(0, 1000), case / "parts" / "a.parquet")
    pq.write_table(table.slice(1000), case / "parts" / "b.parquet")
    edit_config("source: applications.csv", "source: parts")(case)
    model = tmp_path / "model.json"
    result = CliRunner().invoke(main, ["build", str(case / CONFIG), "--quiet",
                                       "--model", str(model), "--workbook", str(tmp_path / "w.xlsx")])
    assert result.exit_code == 0, result.stderr
    assert model.exists()


def test_an_old_setting_name_names_the_new_one_and_its_line(case):
    edit_config("sentinels: [-999]", "special_values: [-999]")(case)
    line = yaml_line(case, "special_values: [-999]")
    result = CliRunner().invoke(main, build(case))
    assert result.exit_code == 2
    assert result.stderr.splitlines() == [
        f"error: {case / CONFIG}: binning.special_values: renamed; write sentinels (line {line})"]
