"""Data sources beyond plain CSV and Parquet give the same card, the same scores, or one error line.

The reference is the product's own CSV build of the same rows: a compressed CSV, a zip archive,
an .xlsx sheet (written by pandas through openpyxl, a reference library) and a SAS transport
file (written by pyreadstat, a reference library) hold the same values, so the model file must
come out identical and every scored row equal.
"""

from __future__ import annotations

import json
import zipfile
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pytest
from click.testing import CliRunner

from scorecard import api
from scorecard.cli import main
from scorecard.data.read import read_frame
from scorecard.demo.files import write_demo

CONFIG = """\
name: sources
data:
  source: {source}
  target: outcome
  bad: [defaulted]
  good: [repaid]
  ignore: [app_id]
samples:
  holdout: 0.3
  seed: 7
output:
  workbook: out/{stem}.xlsx
  model: out/{stem}.json
"""


@pytest.fixture(scope="module")
def sample(tmp_path_factory) -> tuple[Path, pd.DataFrame]:
    """2,000 invented applications with short column names (SAS transport allows 8)."""
    folder = tmp_path_factory.mktemp("sources")
    frame = pd.read_csv(write_demo(folder / "demo", rows=2000, seed=5).parent / "applications.csv")
    frame = frame[[c for c in frame.columns if c != "decided_on"]]
    frame.columns = [c if c == "outcome" else f"c{i:02d}" for i, c in enumerate(frame.columns)]
    frame = frame.rename(columns={"c00": "app_id"})
    # SAS transport stores IBM floats; multiples of 1/64 survive that conversion exactly.
    numbers = frame.select_dtypes("number").columns
    frame[numbers] = (frame[numbers] * 64).round() / 64
    frame.to_csv(folder / "rows.csv", index=False)
    return folder, frame


def _build(folder: Path, source: str):
    stem = source.replace(".", "_")
    config = folder / f"{stem}.yaml"
    config.write_text(CONFIG.format(source=source, stem=stem))
    result = api.build(config)
    return json.loads(result.outputs["model"].read_text())


def _write(folder: Path, frame: pd.DataFrame, source: str) -> None:
    path = folder / source
    if source.endswith((".gz", ".bz2", ".zst")):
        # pyarrow compresses by the suffix (gzip, bzip2, zstandard).
        with pa.output_stream(str(path), compression="detect") as out:
            out.write((folder / "rows.csv").read_bytes())
    elif source.endswith(".zip"):
        with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as archive:
            archive.write(folder / "rows.csv", "inner/rows.csv")
    elif source.endswith(".xlsx"):
        frame.to_excel(path, index=False, sheet_name="applications")
    elif source.endswith(".xpt"):
        pyreadstat = pytest.importorskip("pyreadstat")
        pyreadstat.write_xport(frame, str(path), file_format_version=5)


@pytest.mark.parametrize("source", ["rows.csv.gz", "rows.csv.bz2", "rows.csv.zst", "rows.zip",
                                    "rows.xlsx", "rows.xpt"])
def test_a_build_from_each_source_equals_the_csv_build(sample, source):
    folder, frame = sample
    _write(folder, frame, source)
    reference = _build(folder, "rows.csv")
    model = _build(folder, source)
    assert model["characteristics"] == reference["characteristics"]
    assert model["intercept"] == reference["intercept"]


@pytest.mark.parametrize("source", ["rows.csv.gz", "rows.zip", "rows.xlsx", "rows.xpt"])
def test_scoring_each_source_gives_the_csv_scores(sample, source, tmp_path):
    folder, frame = sample
    _write(folder, frame, source)
    model = folder / "out" / "rows_csv.json"
    if not model.exists():
        _build(folder, "rows.csv")
    api.score(model, folder / "rows.csv", tmp_path / "a.csv", keep=["app_id"])
    api.score(model, folder / source, tmp_path / "b.csv", keep=["app_id"])
    a, b = pd.read_csv(tmp_path / "a.csv"), pd.read_csv(tmp_path / "b.csv")
    pd.testing.assert_frame_equal(a, b)


def test_missing_text_in_a_sas_file_is_missing_not_a_blank_level(tmp_path):
    pyreadstat = pytest.importorskip("pyreadstat")
    frame = pd.DataFrame({"kind": ["cargo", None, "trike"], "x": [1.0, 2.0, None]})
    pyreadstat.write_xport(frame, str(tmp_path / "t.xpt"), file_format_version=5)
    read = read_frame(tmp_path / "t.xpt")
    assert read["kind"].isna().tolist() == [False, True, False]
    assert read["x"].isna().tolist() == [False, False, True]


def test_a_named_sheet_is_read_and_an_absent_one_is_one_error(tmp_path):
    path = tmp_path / "book.xlsx"
    with pd.ExcelWriter(path) as writer:
        pd.DataFrame({"a": [1]}).to_excel(writer, sheet_name="notes", index=False)
        pd.DataFrame({"x": [1.5, 2.5], "y": ["p", "q"]}).to_excel(writer, sheet_name="rows",
                                                                 index=False)
    assert read_frame(path, sheet="rows")["x"].tolist() == [1.5, 2.5]
    assert list(read_frame(path).columns) == ["a"]
    with pytest.raises(Exception, match="sheet 'missing'") as info:
        read_frame(path, sheet="missing")
    assert type(info.value).__name__ == "InputError"


@pytest.mark.parametrize("members, words", [
    (["a.csv", "b.csv"], "exactly one CSV file, found 2"),
    (["notes.txt.bak"], "exactly one CSV file, found 0"),
])
def test_a_zip_without_exactly_one_csv_is_one_error_line(sample, tmp_path, members, words):
    folder, _ = sample
    archive = tmp_path / "rows.zip"
    with zipfile.ZipFile(archive, "w") as z:
        for name in members:
            z.writestr(name, "x,outcome\n1,repaid\n")
    model = folder / "out" / "rows_csv.json"
    if not model.exists():
        _build(folder, "rows.csv")
    run = CliRunner().invoke(main, ["score", str(model), str(archive), "--out",
                                    str(tmp_path / "s.csv")])
    assert run.exit_code == 2
    lines = run.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error:") and words in lines[0]
    assert not (tmp_path / "s.csv").exists()


def test_an_unknown_suffix_names_the_kinds_that_are_read(tmp_path):
    path = tmp_path / "rows.dat"
    path.write_text("x\n1\n")
    with pytest.raises(Exception, match=r"unknown data format '\.dat'.*\.sas7bdat"):
        read_frame(path)


def test_data_sheet_names_the_sheet_a_build_reads(sample):
    folder, frame = sample
    path = folder / "book.xlsx"
    with pd.ExcelWriter(path) as writer:
        notes = pd.DataFrame({"note": ["the first sheet is not the data"]})
        notes.to_excel(writer, sheet_name="notes", index=False)
        frame.to_excel(writer, sheet_name="applications", index=False)
    config = folder / "sheet.yaml"
    config.write_text(CONFIG.format(source="book.xlsx", stem="sheet").replace(
        "  target: outcome\n", "  target: outcome\n  sheet: applications\n"))
    model = json.loads(api.build(config).outputs["model"].read_text())
    assert model["characteristics"] == _build(folder, "rows.csv")["characteristics"]
