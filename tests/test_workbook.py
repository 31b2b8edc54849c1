"""The reviewer's workbook: sheet contract, readability, safety, charts and reproducibility.

Outside checks: a second, independent reader of .xlsx files (python_calamine, reference
library) reads the Points sheet; LibreOffice (a real spreadsheet program) recalculates the
Calculator's formulas, and its totals must equal the product's own scoring of the same row.
"""

from __future__ import annotations

import hashlib
import math
import re
import shutil
import subprocess
import zipfile
from pathlib import Path, PurePosixPath
from xml.etree import ElementTree

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from openpyxl import Workbook, load_workbook
from python_calamine import CalamineWorkbook

import scorecard.api
from scorecard.build import frames
from scorecard.card import frames as card_frames
from scorecard.card.scorecard import (
    LEVELS,
    MISSING,
    OUT_OF_RANGE,
    RANGE,
    UNSEEN,
    load_scorecard,
)
from scorecard.demo.files import write_demo
from scorecard.outputs.cautions import CAUTION
from scorecard.outputs.workbook import SHEETS, write_workbook
from scorecard.outputs.workbook.calculator import defined_name, typical_value
from scorecard.outputs.workbook.manifest import source_sha256
from scorecard.outputs.workbook.overview import DATA_HASH_LABEL, RUN_TIME_LABEL
from scorecard.outputs.workbook.tables import ROWS_ON_A_PAGE, safe_value, write_table

TABLE_SHEETS = ("Characteristics", "Bins", "Model", "Points", "Score bands", "Stability")
FIRST_HEADERS = {
    "Characteristics": ["Characteristic", "Kind", "Status", "Stage", "Reason", "Fine classes",
                        "Trend", "Bins", "Information value", "Strength",
                        "Mutual information (nats)", "Mutual information (bits)"],
    "Bins": card_frames.BIN_COLUMNS,
    "Model": ["Name", "Coefficient", "Standard error", "z", "p-value", "VIF"],
    "Points": card_frames.POINT_COLUMNS,
    "Score bands": ["Band", "Lowest score", "Highest score", "Rows", "Goods", "Bads"],
    "Stability": ["Baseline", "Current", "Measure", "Stability index", "Status"],
    "Calculator": ["Characteristic", "Value or attribute", "Attribute", "Points", "Check"],
}
INJECTIONS = ('=HYPERLINK("http://x","y")', "+1+1", "@SUM(A1)")
MAIN = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
CHART = "{http://schemas.openxmlformats.org/drawingml/2006/chart}"
REL = "{http://schemas.openxmlformats.org/officeDocument/2006/relationships}"


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    """The demo (4,000 rows) built with its files written: (result, workbook path, folder)."""
    folder = tmp_path_factory.mktemp("demo_workbook")
    result = scorecard.api.build(write_demo(folder, rows=4000))
    return result, result.outputs["workbook"], folder


@pytest.fixture(scope="module")
def tiny(tmp_path_factory):
    """A small build whose categorical levels and title look like formulas."""
    return scorecard.api.build(_tiny_config(tmp_path_factory.mktemp("tiny_workbook")))


@pytest.fixture(scope="module")
def book(demo):
    return load_workbook(demo[1])


def _header(ws) -> list:
    """The visible headings of row 1 (a hidden column holds chart data, not a heading)."""
    return [c.value for c in ws[1] if c.value is not None
            and not ws.column_dimensions[c.column_letter].hidden]


def _table(ws, first_row: int = 1) -> pd.DataFrame:
    """The table whose header is ``first_row``, down to its first blank row."""
    rows = ws.iter_rows(min_row=first_row, values_only=True)
    header = [h for h in next(rows) if h is not None]
    body = []
    for row in rows:
        if all(v is None for v in row[:len(header)]):
            break
        body.append(row[:len(header)])
    return pd.DataFrame(body, columns=header)


# --- sheet contract and readability ---------------------------------------------------------

def test_sheets_come_in_the_contract_order_with_headers_in_row_1(demo, book):
    # The demo declares a protected column, so its build examines fairness.
    assert demo[0].fairness is not None
    # ... and it has declined applications, so the reject inference comes last.
    assert demo[0].rejects is not None
    assert book.sheetnames == [*SHEETS, "Fairness", "Reject inference"]
    for name, expected in FIRST_HEADERS.items():
        assert _header(book[name])[:len(expected)] == expected, name


def test_table_sheets_freeze_the_header_filter_and_print_landscape_fitted_to_width(book):
    for name in TABLE_SHEETS + ("Calculator",):
        ws = book[name]
        assert ws.freeze_panes == "A2", name
        # A first table that fits on page one, with other tables after it, is not repeated:
        # its header would head the other tables' pages.
        repeated = name not in ("Model", "Score bands", "Stability") or \
            len(_table(ws)) > ROWS_ON_A_PAGE
        assert ws.print_title_rows == ("$1:$1" if repeated else None), name
        assert ws.page_setup.orientation == "landscape", name
        assert ws.page_setup.fitToWidth == 1 and ws.sheet_properties.pageSetUpPr.fitToPage
    for name in TABLE_SHEETS:
        ws = book[name]
        width = len(_header(ws))
        assert ws.auto_filter.ref == f"A1:{chr(ord('A') + width - 1)}{len(_table(ws)) + 1}", name


def test_number_formats_show_shares_as_percent_and_points_as_integers(book):
    bins = book["Bins"]
    header = _header(bins)
    row = 2
    assert bins.cell(row, header.index("Bad rate") + 1).number_format == "0.0%"
    assert bins.cell(row, header.index("Share of rows") + 1).number_format == "0.0%"
    assert bins.cell(row, header.index("Weight of evidence") + 1).number_format.startswith("+0.0000")
    assert bins.cell(row, header.index("Points") + 1).number_format == "0"
    points = book["Points"]
    assert points.cell(2, 3).number_format == "0"


def test_colour_follows_the_sign_of_the_weight_of_evidence(book):
    ws = book["Bins"]
    col = _header(ws).index("Weight of evidence") + 1
    fills = {}
    for row in range(2, len(_table(ws)) + 2):
        value = ws.cell(row, col).value
        if value:
            fills.setdefault(value > 0, set()).add(ws.cell(row, col).fill.fgColor.rgb)
    assert len(fills[True]) == 1 and len(fills[False]) == 1
    assert fills[True] != fills[False]


# --- content ----------------------------------------------------------------------------------

def test_points_sheet_read_by_a_second_reader_equals_the_model_file(demo):
    # Reference library: python_calamine is an independent .xlsx reader (Rust calamine).
    result, path, _ = demo
    card = load_scorecard(result.outputs["model"])
    rows = CalamineWorkbook.from_path(str(path)).get_sheet_by_name("Points").to_python()
    assert rows[0][:3] == ["Characteristic", "Attribute", "Points"]
    read = [(r[0], r[1], r[2]) for r in rows[1:] if r[0] != "" and r[1] != ""]
    expected = [(c.name, b.label, b.points) for c in card.characteristics for b in c.bins]
    assert read == expected


def test_characteristics_sheet_ranks_every_column_by_information_value(demo, book):
    result = demo[0]
    table = _table(book["Characteristics"])
    assert sorted(table["Characteristic"]) == sorted(r.name for r in result.reports)
    ivs = table["Information value"].dropna().to_numpy()
    assert np.all(np.diff(ivs) <= 0)
    by_name = {r.name: r for r in result.reports}
    for row in table.itertuples(index=False):
        assert row.Status == by_name[row.Characteristic].status


def test_bins_sheet_conserves_rows_and_sums_to_each_information_value(demo, book):
    result = demo[0]
    table = _table(book["Bins"])
    # The bins hold the counts the card was fitted on: development accepts plus the weight of
    # the declined applicants with their inferred outcomes.
    dev_rows = result.samples.rows["development"] + (result.rejects.weight if result.rejects else 0)
    for rep in frames.binned_reports(result.reports):
        mine = table[table["Characteristic"] == rep.name]
        assert len(mine) == len(rep.characteristic.bins)
        assert mine["Rows"].sum() == pytest.approx(dev_rows)
        assert mine["IV contribution"].sum() == pytest.approx(rep.information_value, rel=1e-9)
        if rep.status == "in model":
            assert mine["Points"].tolist() == [b.points for b in rep.characteristic.bins]
        else:
            assert mine["Points"].isna().all()


def test_model_sheet_holds_the_fit_and_every_stepwise_step(demo, book):
    result = demo[0]
    fit = result.selection.fit
    table = _table(book["Model"])
    assert table["Name"].tolist() == list(fit.names)
    assert table["Coefficient"].to_numpy() == pytest.approx(fit.coefficients)
    ws = book["Model"]
    title_row = next(r for r in range(1, ws.max_row + 1)
                     if str(ws.cell(r, 1).value).startswith("Characteristic selection steps"))
    steps = _table(ws, title_row + 1)
    assert steps["Entered"].tolist() == [s["entered"] for s in result.selection.steps]


def test_score_bands_sheet_holds_the_gains_and_names_its_sample(demo, book):
    result = demo[0]
    ws = book["Score bands"]
    table = _table(ws)
    assert table["Rows"].sum() == pytest.approx(result.samples.rows[result.gains_sample])
    texts = [str(c.value) for row in ws.iter_rows() for c in row if isinstance(c.value, str)]
    assert any(t.startswith(f"Sample: {result.gains_sample}") for t in texts)
    assert f"Score distribution of the {result.gains_sample} sample" in texts


def test_score_to_odds_table_follows_the_published_scaling():
    # Published (Siddiqi 2006, from memory): 600 points at 50:1 and 20 points to double the
    # odds put odds of 100:1 at 620 and 25:1 at 580.
    from scorecard.card.points import scaling
    from scorecard.card.scorecard import Bin, Characteristic, Scorecard
    bins = (Bin("< 1", RANGE, 1, 1, 0.0, 280, upper=1.0), Bin(">= 1", RANGE, 1, 1, 0.0, 640, lower=1.0))
    card = Scorecard("s", scaling(600, 50, 20), 0.0,
                     (Characteristic("x", "numeric", bins, 1.0, "R01", "x", cuts=(1.0,)),))
    table = card_frames.odds_frame(card).set_index("Score")
    assert table.loc[620, "Good:bad odds"] == pytest.approx(100)
    assert table.loc[580, "Good:bad odds"] == pytest.approx(25)
    assert table.loc[600, "Bad probability"] == pytest.approx(1 / 51)


def test_stability_sheet_lists_every_index_of_the_api_result(demo, book):
    # The workbook shows the stability an API caller gets on the result, and nothing else.
    result = demo[0]
    comparisons = result.stability
    table = _table(book["Stability"])
    expected = [(c.current, r.name, r.index, r.status) for c in comparisons
                for r in (c.score, *c.characteristics)]
    got = list(zip(table["Current"], table["Measure"], table["Stability index"], table["Status"]))
    assert [(a, b, d) for a, b, _, d in got] == [(a, b, d) for a, b, _, d in expected]
    assert [g[2] for g in got] == pytest.approx([e[2] for e in expected])
    assert {c.current for c in comparisons} == {"holdout", "out of time"}


def test_overview_states_the_facts_the_manifest_and_the_cautions(demo, book):
    result, _, folder = demo
    ws = book["Overview"]
    facts = {ws.cell(r, 1).value: ws.cell(r, 2).value for r in range(1, ws.max_row + 1)}
    assert ws["A1"].value == result.config.name
    texts = [ws.cell(r, 1).value for r in range(1, ws.max_row + 1)]
    assert CAUTION in texts
    assert facts["Rows read"] == 4000
    assert facts["Rows left out (outcome neither bad nor good)"] == result.samples.left_out
    assert facts["Largest score change caused by rounding"] == pytest.approx(result.card.rounding_change)
    data = Path(result.config.data.source)
    # Reference library: hashlib over the whole file at once (the product reads in chunks).
    assert facts[DATA_HASH_LABEL] == \
        hashlib.sha256(data.read_bytes()).hexdigest()
    assert facts["Config file SHA-256"] == \
        hashlib.sha256(Path(result.config.config_file).read_bytes()).hexdigest()
    assert facts["Random seed of the holdout split"] == result.config.samples.seed
    for package in ("scorecard", "numpy", "pandas", "scipy", "openpyxl", "pyarrow"):
        assert facts[f"Version of {package}"]
    assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\+00:00", facts[RUN_TIME_LABEL])
    model_title = next(r for r, t in enumerate(texts, 1) if str(t).startswith("Characteristics in"))
    listed = _table(ws, model_title + 1)["Characteristic"].tolist()
    assert listed == list(result.card.names)


def test_a_folder_is_hashed_by_its_files_hashes_whatever_their_order(tmp_path):
    (tmp_path / "b.parquet").write_bytes(b"second")
    (tmp_path / "a.parquet").write_bytes(b"first")
    listing = "".join(f"{name} {hashlib.sha256(data).hexdigest()}\n"
                      for name, data in (("a.parquet", b"first"), ("b.parquet", b"second")))
    assert source_sha256(tmp_path) == hashlib.sha256(listing.encode()).hexdigest()
    # Published test vector (FIPS 180-2, appendix B.1): SHA-256 of "abc".
    (tmp_path / "abc").write_bytes(b"abc")
    assert source_sha256(tmp_path / "abc") == \
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"


# --- charts -----------------------------------------------------------------------------------

def _chart_formulas(path, sheet: str) -> list[list[str]]:
    """The cell ranges (``<c:f>``) of every chart on ``sheet``, chart by chart, in anchor order."""
    with zipfile.ZipFile(path) as z:
        def rels(part):
            p = PurePosixPath(part)
            name = f"{p.parent}/_rels/{p.name}.rels"
            if name not in z.namelist():
                return {}
            root = ElementTree.fromstring(z.read(name))
            return {r.get("Id"): str(PurePosixPath(p.parent, r.get("Target")))
                    for r in root}

        def norm(target):
            parts = []
            for piece in target.split("/"):
                if piece == "..":
                    parts.pop()
                elif piece not in (".", ""):
                    parts.append(piece)
            return "/".join(parts)

        book = ElementTree.fromstring(z.read("xl/workbook.xml"))
        book_rels = rels("xl/workbook.xml")
        sheet_id = next(s.get(f"{REL}id") for s in book.iter(f"{MAIN}sheet") if s.get("name") == sheet)
        sheet_part = norm(book_rels[sheet_id])
        drawings = [norm(t) for t in rels(sheet_part).values() if "drawing" in t]
        out = []
        for drawing in drawings:
            for target in rels(drawing).values():
                xml = ElementTree.fromstring(z.read(norm(target)))
                # Filtering the table must not blank the chart: hidden rows are still plotted.
                assert xml.find(f".//{CHART}plotVisOnly").get("val") in ("0", "false")
                out.append([f.text for f in xml.iter(f"{CHART}f")])
        return out


def _rows_of(ref: str) -> tuple[str, int, int]:
    m = re.fullmatch(r"'?([^'!]+)'?!\$([A-Z]+)\$(\d+):\$[A-Z]+\$(\d+)", ref)
    return m.group(2), int(m.group(3)), int(m.group(4))


DRAWING = "{http://schemas.openxmlformats.org/drawingml/2006/spreadsheetDrawing}"


def _bins_charts(path) -> list[dict]:
    """Each chart of the Bins sheet: its anchor cell (1-based) and its series, in anchor order.

    A series is (legend text, category range, value range, drawn with a line).
    """
    with zipfile.ZipFile(path) as z:
        book = ElementTree.fromstring(z.read("xl/workbook.xml"))
        index = [s.get("name") for s in book.iter(f"{MAIN}sheet")].index("Bins") + 1
        sheet_rels = ElementTree.fromstring(z.read(f"xl/worksheets/_rels/sheet{index}.xml.rels"))
        drawing = next(r.get("Target") for r in sheet_rels if "drawing" in r.get("Target"))
        drawing = "xl/drawings/" + PurePosixPath(drawing).name
        rels = ElementTree.fromstring(z.read(f"xl/drawings/_rels/{PurePosixPath(drawing).name}.rels"))
        targets = {r.get("Id"): "xl/charts/" + PurePosixPath(r.get("Target")).name for r in rels}
        out = []
        for anchor in ElementTree.fromstring(z.read(drawing)):
            start = anchor.find(f"{DRAWING}from")
            chart_id = next(e.get(f"{REL}id") for e in anchor.iter(f"{CHART}chart"))
            xml = ElementTree.fromstring(z.read(targets[chart_id]))
            series = []
            for ser in xml.iter(f"{CHART}ser"):
                title = ser.find(f"{CHART}tx/{CHART}v").text
                cat = ser.find(f"{CHART}cat//{CHART}f")
                val = ser.find(f"{CHART}val//{CHART}f").text
                line = ser.find(f"{CHART}spPr/{{http://schemas.openxmlformats.org/drawingml/2006/main}}ln")
                joined = line is not None and line.find(
                    "{http://schemas.openxmlformats.org/drawingml/2006/main}noFill") is None
                series.append((title, None if cat is None else cat.text, val, joined))
            blanks = xml.find(f".//{CHART}dispBlanksAs").get("val")
            out.append({"row": int(start.find(f"{DRAWING}row").text) + 1,
                        "col": int(start.find(f"{DRAWING}col").text) + 1,
                        "height_emu": int(anchor.find(f"{DRAWING}ext").get("cy")),
                        "series": series, "blanks": blanks})
        return sorted(out, key=lambda c: c["row"])


def test_each_characteristic_has_its_chart_beside_its_own_rows(demo, book):
    # The printed page must show a characteristic's rows and its chart together.
    path = demo[1]
    ws = book["Bins"]
    table = _table(ws)
    found = _bins_charts(path)
    names = list(dict.fromkeys(table["Characteristic"]))
    assert len(found) == len(names)
    breaks = {b.id for b in ws.row_breaks.brk}
    for chart in found:
        first = chart["row"]
        owner = ws.cell(first, 1).value
        mine = table.index[table["Characteristic"] == owner] + 2
        assert first == mine[0], owner
        # Beside the table, never over it.
        assert chart["col"] > len(_header(ws)), owner
        # The chart fits in the height of its rows, and no page break falls inside them.
        rows_pt = sum(ws.row_dimensions[r].height for r in mine)
        assert chart["height_emu"] / 12700 <= rows_pt, owner
        assert not breaks & set(range(mine[0], mine[-1])), owner
        names.remove(owner)
    assert names == []


def test_ranges_make_the_line_and_missing_and_sentinel_bins_stand_apart(demo, book):
    path = demo[1]
    ws = book["Bins"]
    table = _table(ws)
    letter = {name: chr(ord("A") + i) for i, name in enumerate(_header(ws))}
    apart_col = len(_header(ws)) + 1
    assert ws.column_dimensions[chr(ord("A") + apart_col - 1)].hidden
    seen_apart = seen_empty_missing = 0
    for chart in _bins_charts(path):
        first = chart["row"]
        owner = ws.cell(first, 1).value
        mine = table[table["Characteristic"] == owner]
        rows = list(mine.index + 2)
        filled = [r for r in rows if table.loc[r - 2, "Rows"] > 0]
        (bars, cats, values, _), ordered, *apart = chart["series"]
        assert bars == "Bad rate" and chart["blanks"] == "gap"
        assert _rows_of(cats) == (letter["Attribute"], first, filled[-1])
        assert _rows_of(values) == (letter["Bad rate"], first, filled[-1])
        kinds = mine["Kind"].tolist()
        lead = next(i for i, k in enumerate(kinds + ["end"]) if k not in (RANGE, LEVELS))
        # The ordered bins: a line through ranges of values, bare points for groups of levels.
        assert _rows_of(ordered[2]) == (letter["Weight of evidence"], first, first + lead - 1)
        assert ordered[3] == (kinds[0] == RANGE)
        others = [r for r in rows[lead:] if r <= filled[-1]]
        if apart:
            (title, _, values, joined), = apart
            assert not joined and "missing" in title
            assert _rows_of(values) == (chr(ord("A") + apart_col - 1), first, filled[-1])
            seen_apart += 1
        for r in rows:
            value = ws.cell(r, apart_col).value
            if r in others and table.loc[r - 2, "Rows"] > 0:
                assert value == pytest.approx(table.loc[r - 2, "Weight of evidence"])
            else:
                # An empty missing bin has no weight of evidence to draw: no point at 0.
                assert value is None
                seen_empty_missing += (table.loc[r - 2, "Kind"] == MISSING
                                       and table.loc[r - 2, "Rows"] == 0 and r < filled[-1])
        assert bool(apart) == any(table.loc[r - 2, "Rows"] > 0 for r in others)
    # The demo has both cases this test is about.
    assert seen_apart and seen_empty_missing


def test_the_score_tables_after_the_charts_start_a_printed_page(book):
    # Their headings then head them in print, where no repeated row would.
    ws = book["Score bands"]
    title = next(r for r in range(1, ws.max_row + 1)
                 if ws.cell(r, 1).value == "Score, odds and bad probability")
    assert title - 1 in {b.id for b in ws.row_breaks.brk}


def test_the_fairness_tables_by_group_start_a_printed_page(book):
    ws = book["Fairness"]
    title = next(r for r in range(1, ws.max_row + 1)
                 if str(ws.cell(r, 1).value).startswith("Approval rate by group"))
    assert {b.id for b in ws.row_breaks.brk} == {title - 1}


def test_no_stability_table_runs_over_a_printed_page(book):
    # Each comparison starts a page, and no characteristic's table is split by a page break, so
    # every printed table keeps its own title and headings (common practice for printed reports).
    ws = book["Stability"]
    breaks = sorted(b.id for b in ws.row_breaks.brk)
    titles = [r for r in range(2, ws.max_row + 1)
              if ": index " in str(ws.cell(r, 1).value or "")]
    comparisons = [r for r in range(2, ws.max_row + 1)
                   if str(ws.cell(r, 1).value or "").endswith("(current)")]
    assert titles and comparisons
    for first in comparisons:
        assert first - 1 in breaks
    for title in titles:
        last = title + 1
        while ws.cell(last + 1, 1).value not in (None, ""):
            last += 1
        assert not [b for b in breaks if title <= b < last], ws.cell(title, 1).value
    # Pages hold several tables: breaks come only where a page is full.
    assert len(breaks) < len(titles)


def test_score_band_and_stability_charts_read_their_tables(demo, book):
    path = demo[1]
    score_charts = _chart_formulas(path, "Score bands")
    assert len(score_charts) == 2
    ws = book["Score bands"]
    title = next(r for r in range(1, ws.max_row + 1) for c in range(1, 20)
                 if str(ws.cell(r, c).value).startswith("Score distribution of the"))
    n_groups = len(frames.distribution_frame(demo[0].histograms[demo[0].gains_sample]))
    for refs in score_charts:
        for ref in refs:
            _, first, last = _rows_of(ref)
            assert (first, last) == (title + 2, title + 1 + n_groups)
    stability = _chart_formulas(path, "Stability")
    assert len(stability) == len(demo[0].stability)
    ws = book["Stability"]
    for refs in stability:
        col, first, last = _rows_of(refs[0])
        assert ws[f"{col}{first - 1}"].value == "Band"
        assert last - first + 1 == len(demo[0].band_starts)


# --- the calculator, recalculated by LibreOffice ----------------------------------------------

UNSEEN_LEVEL = "a level never seen in development"


def _typed_values(char) -> list:
    """Raw values that try every rule of a numeric characteristic's calculator row.

    Each cut exactly (a range holds its lower bound), a number a billionth below each cut, each
    sentinel, an empty cell where the card has a missing attribute, the ends of the development
    range and a step beyond each end. Below a cut by less than that, the two disagree by
    design: spreadsheet programs compare numbers to about 15 significant digits (LibreOffice
    takes the nearest number below 3 for 3), the product's scoring compares exactly.
    """
    values = []
    for cut in char.cuts:
        values += [float(cut), float(cut) - 1e-9 * max(1.0, abs(float(cut)))]
    values += [float(v) for v in char.sentinels]
    if char.bin_index(MISSING) is not None:
        values.append(None)
    if char.development_range is not None:
        low, high = char.development_range
        values += [low, high, low - 1.5, high + 1.5]
    return values


def _chosen_levels(char) -> list[tuple[str, object]]:
    """(attribute chosen in the calculator, a raw value of that attribute) of a categorical."""
    labels = card_frames.attribute_labels(char)
    raw = {LEVELS: lambda b: b.levels[0], MISSING: lambda b: None, UNSEEN: lambda b: UNSEEN_LEVEL}
    return [(label, raw[b.kind](b)) for label, b in zip(labels, char.bins) if b.kind in raw]


def _entries(card) -> list[dict]:
    """Rows of entries that go through every rule of every characteristic at least once.

    Each row maps a characteristic to (what is typed or chosen in the calculator, the raw
    value the product scores).
    """
    options = {}
    for c in card.characteristics:
        if c.kind == "numeric":
            options[c.name] = [(v, v) for v in _typed_values(c)]
        else:
            options[c.name] = _chosen_levels(c)
    n = max(map(len, options.values()))
    return [{name: opts[j % len(opts)] for name, opts in options.items()} for j in range(n)]


def _worst_entries(card) -> dict:
    """Per characteristic, the entry (a typed value or a label) of its fewest points."""
    entries = {}
    for c in card.characteristics:
        worst = min(range(len(c.bins)), key=lambda i: (c.bins[i].points, i))
        entries[c.name] = typical_value(c, worst) if c.kind == "numeric" \
            else card_frames.attribute_labels(c)[worst]
    return entries


def _calculator_copies(path, target, card, rows: list[dict], extra: dict) -> Path:
    """The workbook with one copy of the Calculator per row of entries (sheets "Row 1"...),
    and one copy per named set of wrong entries in ``extra``."""
    wb = load_workbook(path)
    filled = [(f"Row {j}", {k: v[0] for k, v in row.items()}) for j, row in enumerate(rows, 1)]
    for title, entries in filled + list(extra.items()):
        ws = wb.copy_worksheet(wb["Calculator"])
        ws.title = title
        for i, c in enumerate(card.characteristics, start=2):
            assert ws.cell(i, 1).value == c.name
            if c.name in entries:
                ws.cell(i, 2).value = safe_value(entries[c.name])
    wb.save(target)
    return target


def _product_scores(card, model, rows: list[dict], folder: Path) -> pd.DataFrame:
    """The product's scores and points of the rows' raw values: ``scorecard score`` on a CSV."""
    from cli_harness import assert_done, run
    data = pd.DataFrame({c.name: pd.Series([row[c.name][1] for row in rows],
                                           dtype=float if c.kind == "numeric" else object)
                         for c in card.characteristics})
    data.to_csv(folder / "typed.csv", index=False)
    assert_done(run("score", model, folder / "typed.csv", "--out", folder / "scored.csv"))
    return pd.read_csv(folder / "scored.csv")


def _recalculate(paths, workdir: Path) -> list[Path]:
    out = workdir / "recalculated"
    profile = (workdir / "profile").as_uri()
    subprocess.run(["soffice", f"-env:UserInstallation={profile}", "--headless", "--convert-to",
                    "xlsx", "--outdir", str(out), *map(str, paths)],
                   check=True, capture_output=True, timeout=240)
    return [out / p.name for p in paths]


def _check_calculator(ws, card, expected) -> None:
    """The recalculated sheet ``ws`` against one row of ``scorecard score``'s output."""
    k = len(card.characteristics)
    for j, c in enumerate(card.characteristics, start=2):
        entry = (ws.title, c.name, ws.cell(j, 2).value)
        assert ws.cell(j, 1).value == c.name
        assert ws.cell(j, 5).value == "ok", entry
        assert ws.cell(j, 4).value == expected[f"points_{c.name}"], entry
    total = ws.cell(k + 3, 4).value
    assert total == expected["score"], ws.title
    s = card.scaling
    assert ws.cell(k + 4, 4).value == pytest.approx(math.exp((total - s.offset) / s.factor), rel=1e-12)
    assert ws.cell(k + 5, 4).value == pytest.approx(
        float(scorecard.card.scoring.bad_probability(card, total)), rel=1e-12)


@pytest.mark.skipif(shutil.which("soffice") is None, reason="LibreOffice (soffice) is not installed")
def test_libreoffice_recalculates_typed_values_to_the_scores_of_scorecard_score(demo, tiny, tmp_path):
    # Reference: the product's own scorer (`scorecard score`) on the same raw values; a real
    # spreadsheet program (LibreOffice) evaluates every formula of the calculator.
    builds = [(demo[0], demo[1], "demo"), (tiny, tiny.outputs["workbook"], "tiny")]
    files, plans = [], []
    for result, path, name in builds:
        card = result.card
        rows = _entries(card)
        numeric = next(c for c in card.characteristics if c.kind == "numeric")
        categorical = next(c for c in card.characteristics if c.kind == "categorical")
        extra = {"Text typed": {numeric.name: "twelve"},
                 "Not an attribute": {categorical.name: "not an attribute"},
                 "Worst": _worst_entries(card)}
        files.append(_calculator_copies(path, tmp_path / f"{name}.xlsx", card, rows, extra))
        (tmp_path / name).mkdir()
        expected = _product_scores(card, result.outputs["model"], rows, tmp_path / name)
        plans.append((card, rows, expected, numeric, categorical))
    done = _recalculate(files, tmp_path)
    for file, (card, rows, expected, numeric, categorical) in zip(done, plans):
        book = load_workbook(file, data_only=True)
        assert len(expected) == len(rows)
        for j, scored in enumerate(expected.to_dict("records"), start=1):
            _check_calculator(book[f"Row {j}"], card, scored)
        k = len(card.characteristics)
        for title, char, message in (("Text typed", numeric, "type a number"),
                                     ("Not an attribute", categorical, "choose one of its attributes")):
            ws = book[title]
            row = 2 + card.names.index(char.name)
            assert ws.cell(row, 5).value == message
            assert ws.cell(row, 4).value == "#N/A" and ws.cell(k + 3, 4).value == "#N/A"
        # The worst entry of every characteristic gives the card's lowest score.
        assert book["Worst"].cell(k + 3, 4).value == card.min_score
        assert {book["Worst"].cell(r, 5).value for r in range(2, k + 2)} == {"ok"}
        # The default entries of the calculator score as the product scores their attributes.
        assert book["Calculator"].cell(k + 3, 4).value == sum(
            c.bins[max(range(len(c.bins)), key=lambda i: (c.bins[i].count, -i))].points
            for c in card.characteristics)
    demo_card, demo_rows = plans[0][0], plans[0][1]
    # The entries went through every kind of rule this test is about.
    typed = [row[c.name][0] for row in demo_rows for c in demo_card.characteristics
             if c.kind == "numeric"]
    cuts = {float(x) for c in demo_card.characteristics for x in c.cuts}
    assert cuts <= set(typed) and None in typed
    assert {float(v) for c in demo_card.characteristics for v in c.sentinels} & set(typed)
    assert any(b.kind == OUT_OF_RANGE for c in plans[1][0].characteristics for b in c.bins)
    odd = [row for row in plans[1][1] if str(row["channel"][0])[:1] in "=+@"]
    assert odd


@pytest.mark.skipif(shutil.which("soffice") is None, reason="LibreOffice (soffice) is not installed")
def test_the_calculator_says_a_refused_value_is_refused_as_scorecard_score_does(tmp_path):
    # Reference: the product's own scorer on the same raw values: a value in a bin the card
    # refuses gets no score, no points for that characteristic and REJECTED:<name>; the
    # spreadsheet (LibreOffice recalculating) shows no points, no total and says why.
    from cli_harness import assert_done, run

    config = _tiny_config(tmp_path)
    config.write_text(config.read_text().replace(
        "scoring: {out_of_range: worst}", "scoring: {out_of_range: reject, unseen_level: reject}"))
    result = scorecard.api.build(config)
    card = result.card
    numeric = next(c for c in card.characteristics if c.kind == "numeric")
    categorical = next(c for c in card.characteristics if c.kind == "categorical")
    unseen = card_frames.attribute_labels(categorical)[categorical.bin_index(UNSEEN)]
    beyond = numeric.development_range[1] + 10
    assert numeric.bins[numeric.bin_index(OUT_OF_RANGE)].rejected
    assert categorical.bins[categorical.bin_index(UNSEEN)].rejected
    plain = [lv for b in categorical.bins for lv in b.levels][0]
    raw = pd.DataFrame({numeric.name: [beyond, 0.0], categorical.name: [plain, "houseboat"]})
    raw.to_csv(tmp_path / "raw.csv", index=False)
    assert_done(run("score", result.outputs["model"], tmp_path / "raw.csv", "--out",
                    tmp_path / "scored.csv"))
    scored = pd.read_csv(tmp_path / "scored.csv")
    attribute = card_frames.attribute_labels(categorical)[
        next(i for i, b in enumerate(categorical.bins) if plain in b.levels)]
    entries = {"Beyond": {numeric.name: beyond, categorical.name: attribute},
               "Unseen": {numeric.name: 0.0, categorical.name: unseen}}
    book = _calculator_copies(result.outputs["workbook"], tmp_path / "refused.xlsx", card, [],
                              entries)
    done = load_workbook(_recalculate([book], tmp_path)[0], data_only=True)
    k = len(card.characteristics)
    for title, char, j in (("Beyond", numeric, 0), ("Unseen", categorical, 1)):
        ws = done[title]
        row = 2 + card.names.index(char.name)
        assert pd.isna(scored.loc[j, "score"]) and pd.isna(scored.loc[j, f"points_{char.name}"])
        assert scored.loc[j, "reason_1"] == f"REJECTED:{char.name}"
        assert ws.cell(row, 5).value == f"refused: the card gives no score (REJECTED:{char.name})"
        assert ws.cell(row, 4).value == "#N/A" and ws.cell(k + 3, 4).value == "#N/A"
        other = 2 + card.names.index((categorical if char is numeric else numeric).name)
        assert ws.cell(other, 5).value == "ok"


def test_calculator_lists_come_from_named_ranges_on_the_points_sheet(book):
    ws = book["Calculator"]
    rules = ws.data_validations.dataValidation
    assert len(rules) == len(_table(book["Points"])["Characteristic"].unique())
    points = book["Points"]
    kinds = {ws.cell(int(str(r.sqref).lstrip("B")), 1).value: r.type for r in rules}
    # Numeric characteristics take a typed number (empty means missing); the rest a list.
    assert set(kinds.values()) == {"decimal", "list"}
    for rule in rules:
        if rule.type == "decimal":
            assert rule.allow_blank
            continue
        assert rule.type == "list" and not rule.allow_blank
        name = rule.formula1.lstrip("=")
        assert re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", name)
        (sheet, cells), = book.defined_names[name].destinations
        assert sheet == "Points"
        first, last = (int(x) for x in re.findall(r"\d+", cells))
        row = int(str(rule.sqref).lstrip("B"))
        owner = {points.cell(r, 1).value for r in range(first, last + 1)}
        assert owner == {ws.cell(row, 1).value}


# --- safety -----------------------------------------------------------------------------------

def _tiny_config(folder: Path) -> Path:
    """A small build whose categorical levels and title look like formulas."""
    rng = np.random.default_rng(11)
    n = 3000
    levels = np.array(INJECTIONS + ("plain",))
    channel = rng.integers(0, len(levels), n)
    x = rng.normal(size=n)
    logit = -2.0 + 0.8 * channel - 0.9 * x
    bad = rng.random(n) < 1 / (1 + np.exp(-logit))
    pd.DataFrame({"channel": levels[channel], "x value (=1)": x,
                  "outcome": np.where(bad, "bad", "good")}).to_csv(folder / "tiny.csv", index=False)
    config = folder / "tiny.yaml"
    config.write_text(
        "name: \"=SUM(1,2)\"\n"
        "data: {source: tiny.csv, target: outcome, bad: [bad], good: [good]}\n"
        "samples: {holdout: 0.3, seed: 7}\n"
        "selection: {min_iv: 0.0, entry_p_value: 0.5}\n"
        "scoring: {out_of_range: worst}\n"
        "output: {workbook: out/tiny.xlsx, model: out/tiny.json}\n", encoding="utf-8")
    return config


def test_without_a_holdout_every_figure_comes_from_development(tmp_path):
    config = _tiny_config(tmp_path)
    config.write_text(config.read_text().replace("holdout: 0.3", "holdout: null"))
    with pytest.warns(UserWarning, match="no holdout"):
        result = scorecard.api.build(config)
    book = load_workbook(result.outputs["workbook"])
    stability = [c.value for c in book["Stability"]["A"] if c.value]
    assert stability[-1] == "No holdout or out-of-time sample: nothing to compare with."
    assert _table(book["Stability"]).empty
    texts = [c.value for row in book["Score bands"].iter_rows() for c in row if isinstance(c.value, str)]
    assert any(t.startswith("Sample: development") for t in texts)


def _cells(path) -> list[tuple[str, str, ElementTree.Element]]:
    """(sheet part, cell type, cell element) of every cell in the file."""
    out = []
    with zipfile.ZipFile(path) as z:
        for name in z.namelist():
            if name.startswith("xl/worksheets/sheet"):
                for c in ElementTree.fromstring(z.read(name)).iter(f"{MAIN}c"):
                    out.append((name, c.get("t"), c))
    return out


def _text(cell) -> str:
    return "".join(t.text or "" for t in cell.iter(f"{MAIN}t"))


def test_labels_that_look_like_formulas_stay_text(tiny):
    result = tiny
    path = result.outputs["workbook"]
    assert "channel" in result.card.names
    found = set()
    for part, kind, cell in _cells(path):
        text = _text(cell)
        if any(s in text for s in INJECTIONS) or text == "=SUM(1,2)":
            assert kind in ("s", "inlineStr"), (part, text)
            assert cell.find(f"{MAIN}f") is None, (part, text)
            found.add(text)
    assert set(INJECTIONS) <= found and "=SUM(1,2)" in found
    # Formulas exist only where the product writes them: none carries a data label.
    formulas = [c.find(f"{MAIN}f").text for _, _, c in _cells(path) if c.find(f"{MAIN}f") is not None]
    assert formulas and not any("HYPERLINK" in f or "SUM(A1)" in f for f in formulas)
    points = CalamineWorkbook.from_path(str(path)).get_sheet_by_name("Points").to_python()
    assert set(INJECTIONS) <= {r[1] for r in points}
    book = load_workbook(path)
    assert all(re.fullmatch(r"[A-Za-z_][A-Za-z0-9_]*", n) for n in book.defined_names)


@settings(max_examples=150, deadline=None)
@given(st.text(max_size=40))
def test_any_text_is_written_as_a_string_cell(text):
    ws = Workbook().active
    cell = ws.cell(1, 1, safe_value(text))
    cleaned = re.sub(r"[\x00-\x08\x0b\x0c\x0e-\x1f]", "", text)
    if cleaned == "":
        assert cell.value in ("", None) or str(cell.value) == ""
    else:
        assert cell.data_type == "s"
        assert str(cell.value) == cleaned


@settings(max_examples=100, deadline=None)
@given(st.one_of(st.floats(allow_nan=True, allow_infinity=True), st.integers(-2**62, 2**62),
                 st.booleans(), st.none()))
def test_numbers_stay_numbers_and_non_finite_values_become_empty(value):
    out = safe_value(np.float64(value) if isinstance(value, float) else value)
    if isinstance(value, float) and not math.isfinite(value):
        assert out is None
    else:
        assert out == value and type(out) is type(value)


def test_defined_names_are_safe_and_unique_whatever_the_text():
    taken = set()
    names = [defined_name("attributes", t, taken) for t in ("A1", "a1", "=x!", "ä b", "A1")]
    assert all(re.fullmatch(r"attributes_[A-Za-z0-9_]+", n) for n in names)
    assert len({n.lower() for n in names}) == len(names)


def test_write_table_returns_its_rows_and_keeps_formats():
    ws = Workbook().active
    frame = pd.DataFrame({"Attribute": ["=1+1", "b"], "Bad rate": [0.25, np.nan]})
    assert write_table(ws, frame, start_row=3, title="T", formats={"Bad rate": "0.0%"}) == (4, 6)
    assert ws["A3"].value == "T" and ws["A4"].value == "Attribute"
    assert ws["A5"].data_type == "s" and str(ws["A5"].value) == "=1+1"
    assert ws["B5"].number_format == "0.0%" and ws["B6"].value is None
    with pytest.raises(ValueError, match="Bad rates"):
        write_table(ws, frame, formats={"Bad rates": "0%"})


# --- tables as data ---------------------------------------------------------------------------

def test_attribute_labels_are_unique_within_a_characteristic():
    from scorecard.card.scorecard import Bin, Characteristic
    bins = (Bin("missing", LEVELS, 1, 1, 0, 1, levels=("missing",)),
            Bin("missing", MISSING, 1, 1, 0, 2), Bin("a", LEVELS, 1, 1, 0, 3, levels=("a",)))
    labels = card_frames.attribute_labels(Characteristic("x", "categorical", bins, 1.0, "R01", "x"))
    assert len(set(labels)) == 3 and labels[2] == "a"


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 400), st.lists(st.integers(0, 50), min_size=1, max_size=300),
       st.integers(1, 60))
def test_distribution_table_keeps_every_row_and_ends_at_one(low, goods, max_rows):
    from scorecard.evaluation.histograms import ScoreHistogram
    g = np.array(goods, dtype=float)
    b = g[::-1].copy() + 1
    table = frames.distribution_frame(ScoreHistogram(low, g, b), max_rows=max_rows)
    assert table["Goods"].sum() == pytest.approx(g.sum())
    assert table["Bads"].sum() == pytest.approx(b.sum())
    assert table["Score from"].iloc[0] == low and table["Score to"].iloc[-1] == low + len(g) - 1
    assert np.all(table["Score from"].to_numpy()[1:] == table["Score to"].to_numpy()[:-1] + 1)
    assert table["Cumulative share of bads"].iloc[-1] == pytest.approx(1)
    if g.sum() > 0:
        assert table["Cumulative share of goods"].iloc[-1] == pytest.approx(1)


# --- whole or nothing, and the same every time -------------------------------------------------

def test_a_failed_write_leaves_the_previous_workbook_whole(demo, tmp_path, monkeypatch):
    target = tmp_path / "book.xlsx"
    target.write_bytes(b"previous")

    def broken_save(self, filename):
        filename.write(b"half")     # the archive is assembled in memory, then written whole
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(Workbook, "save", broken_save)
    with pytest.raises(OSError):
        write_workbook(demo[0], target)
    assert target.read_bytes() == b"previous"
    assert [p.name for p in tmp_path.iterdir()] == ["book.xlsx"]


def test_rebuilding_gives_the_same_cells_except_the_run_time(demo, tmp_path):
    result, first, folder = demo
    again = scorecard.api.build(result.config.config_file, workbook=tmp_path / "again.xlsx",
                                model=tmp_path / "again.json")
    one, two = load_workbook(first), load_workbook(again.outputs["workbook"])
    assert one.sheetnames == two.sheetnames
    differing = []
    for ws in one:
        other = two[ws.title]
        assert ws.max_row == other.max_row and ws.max_column == other.max_column, ws.title
        for row_a, row_b in zip(ws.iter_rows(), other.iter_rows()):
            for a, b in zip(row_a, row_b):
                if a.value != b.value:
                    differing.append((ws.title, a.coordinate))
    run_time_row = next(r for r in range(1, one["Overview"].max_row + 1)
                        if one["Overview"].cell(r, 1).value == RUN_TIME_LABEL)
    assert set(differing) <= {("Overview", f"B{run_time_row}")}


def test_a_declined_source_is_shown_without_folders_whether_file_or_query(tmp_path):
    from scorecard.config.sources import DatabaseQuery
    from scorecard.outputs.workbook.rejects_sheet import shown_source
    query = DatabaseQuery("rejects.source", f"sqlite:///{tmp_path}/declined.db",
                          "SELECT * FROM declined ORDER BY id",
                          database_file=tmp_path / "declined.db")
    assert shown_source(query) == "rejects.source (sqlite:///declined.db)"
    assert shown_source(str(tmp_path / "declined.csv")) == "declined.csv"


def test_no_sheet_names_a_path_of_the_build_machine(demo):
    # A committee document carries file names and hashes, not the modeller's folders.
    _, path, folder = demo
    book = load_workbook(path)
    for ws in book:
        cells = [str(c) for row in ws.iter_rows(values_only=True) for c in row if c is not None]
        assert not [c for c in cells if str(folder) in c or str(folder.resolve()) in c], ws.title
    cells = [str(c) for row in book["Overview"].iter_rows(values_only=True) for c in row]
    assert "applications.csv" in cells and "scorecard.yaml" in cells
    assert "declined.csv" in [c.value for c in book["Reject inference"]["B"]]
