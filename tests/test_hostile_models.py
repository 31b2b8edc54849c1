"""Model files that would overflow, model paths of the wrong kind, and model files with a BOM.

A model file is checked on load: points and the scaling must lie in a sane range (|points| below
a million), so that no score wraps around in 64-bit integers and no command ends in a traceback;
the error line names the file and the field. An output path must carry its kind's extension, so
``build --model m.pmml`` never writes JSON into a file that claims to be PMML.
"""

from __future__ import annotations

import json
import math

import pytest

from cli_harness import (CONFIG, DATA, MODEL, RECENT, assert_done, assert_refused,
                         case, demo_folder, edit_config, run, snapshot)

__all__ = ["case", "demo_folder"]


def edit_model(fn):
    def edit(d):
        path = d / MODEL
        raw = json.loads(path.read_text(encoding="utf-8"))
        fn(raw)
        path.write_text(json.dumps(raw), encoding="utf-8")
    return edit


def points_of(count: int, value: int):
    """Every bin of the first ``count`` characteristics gets ``value`` points."""
    def fn(raw):
        for char in raw["characteristics"][:count]:
            for b in char["bins"]:
                b["points"] = value
    return edit_model(fn)


def scaled(base_score, base_odds, pdo):
    """A scaling block that is consistent (factor and offset match) but out of range."""
    def fn(raw):
        factor = pdo / math.log(2)
        raw["scaling"].update(base_score=base_score, base_odds=base_odds, pdo=pdo, factor=factor,
                              offset=base_score - factor * math.log(base_odds))
    return edit_model(fn)


SPOILS = [
    pytest.param(points_of(1, 2 ** 64), ["points"], id="points-2-to-the-64"),
    pytest.param(points_of(3, 2 ** 62), ["points"], id="points-2-to-the-62-on-three"),
    pytest.param(points_of(1, -(2 ** 62)), ["points"], id="points-minus-2-to-the-62"),
    pytest.param(points_of(1, 10 ** 6), ["points"], id="points-a-million"),
    pytest.param(points_of(1, True), ["points"], id="points-yes"),
    pytest.param(scaled(1e300, 50, 20), ["scaling", "base_score"], id="base-score-1e300"),
    pytest.param(scaled(600, 50, 1e-300), ["scaling", "pdo"], id="pdo-tiny"),
    pytest.param(scaled(600, 1e300, 20), ["scaling", "base_odds"], id="base-odds-1e300"),
]
COMMANDS = [
    pytest.param(lambda d: ["score", d / MODEL, d / DATA, "--out", d / "s.csv"], id="score"),
    pytest.param(lambda d: ["export", d / MODEL, "--format", "sql", "--out", d / "m.sql"],
                 id="export-sql"),
    pytest.param(lambda d: ["export", d / MODEL, "--format", "pmml", "--out", d / "m.pmml"],
                 id="export-pmml"),
    pytest.param(lambda d: ["compare", d / MODEL, d / DATA, d / RECENT, "--json", d / "c.json"],
                 id="compare"),
]


@pytest.mark.parametrize("command", COMMANDS)
@pytest.mark.parametrize(("spoil", "needles"), SPOILS)
def test_a_model_file_out_of_range_is_refused_on_load(case, spoil, needles, command):
    spoil(case)
    before = snapshot(case)
    assert_refused(run(*command(case)), ["{d}/out/scorecard.json", *needles], case, before)


def test_a_model_file_with_a_byte_order_mark_is_read(case):
    raw = (case / MODEL).read_bytes()
    (case / "bom.json").write_bytes(b"\xef\xbb\xbf" + raw)
    ran = run("score", case / "bom.json", case / DATA, "--out", case / "s.csv")
    assert_done(ran)
    plain = run("score", case / MODEL, case / DATA, "--out", case / "t.csv")
    assert_done(plain)
    assert (case / "s.csv").read_bytes() == (case / "t.csv").read_bytes()


EXTENSIONS = [
    pytest.param(lambda d: ["build", d / CONFIG, "--model", d / "m.pmml"],
                 ["--model", "{d}/m.pmml", ".json"], id="build-model-pmml"),
    pytest.param(lambda d: ["build", d / CONFIG, "--workbook", d / "w.csv"],
                 ["--workbook", "{d}/w.csv", ".xlsx"], id="build-workbook-csv"),
    pytest.param(lambda d: (edit_config(d, "model: out/scorecard.json",
                                        "model: out/scorecard.pmml"), ["build", d / CONFIG])[1],
                 ["output.model", "scorecard.pmml", ".json"], id="config-model-pmml"),
    pytest.param(lambda d: ["compare", d / MODEL, d / DATA, d / RECENT, "--json", d / "c.xlsx"],
                 ["--json", "{d}/c.xlsx", ".json"], id="compare-json-xlsx"),
    pytest.param(lambda d: ["compare", d / MODEL, d / DATA, d / RECENT, "--workbook", d / "c.json"],
                 ["--workbook", "{d}/c.json", ".xlsx"], id="compare-workbook-json"),
    pytest.param(lambda d: ["export", d / MODEL, "--format", "pmml", "--out", d / "m.json"],
                 ["--out", "{d}/m.json", ".pmml"], id="export-pmml-as-json"),
    pytest.param(lambda d: ["export", d / MODEL, "--format", "sql", "--out", d / "m.pmml"],
                 ["--out", "{d}/m.pmml", ".sql"], id="export-sql-as-pmml"),
    pytest.param(lambda d: ["init", d / DATA, "--target", "outcome", "--out", d / "c.json"],
                 ["--out", "{d}/c.json", ".yaml"], id="init-as-json"),
]


@pytest.mark.parametrize(("command", "needles"), EXTENSIONS)
def test_an_output_path_must_carry_its_kind_extension(case, command, needles):
    args = command(case)
    before = snapshot(case)
    assert_refused(run(*args), needles, case, before)


@pytest.mark.parametrize(("old", "new", "needles"), [
    ("base_score: 600", "base_score: 1e300", ["scaling.base_score", "below 1000000"]),
    ("base_odds: 50", "base_odds: 1e-300", ["scaling.base_odds", "at least 1e-06"]),
    # Sane settings whose points would still pass a million: refused before anything is written.
    ("pdo: 20", "pdo: 900000", ["scaling", "points", "pdo"]),
], ids=["base-score", "base-odds", "points-of-a-huge-pdo"])
def test_a_scale_out_of_range_in_the_config_is_refused(case, old, new, needles):
    edit_config(case, old, new)
    before = snapshot(case)
    assert_refused(run("build", case / CONFIG), needles, case, before)
