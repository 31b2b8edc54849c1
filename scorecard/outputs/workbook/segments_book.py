"""The workbook of a segmented build: an Overview of the segments, the pooled score's sheets,
then each card's sheets.

The Overview holds the exclusion waterfall of the rows read, the table of segments (rows,
goods, bads, bad rate, characteristics and the AUC of each sample, per segment and pooled over
all), the shared scaling and the run manifest. Score bands follows for every segment's scores
pooled on the one scale, then the Calculator (the segment value and the raw values typed once,
the card picked by formula, :mod:`scorecard.outputs.workbook.segment_calculator`), then Risk
grades when the config asks for grades; Score bands and Risk grades are written by the single
card's own sheet writers (:mod:`scorecard.outputs.workbook.pooled_scores`).
Each segment's card follows with the sheets of a single card, named ``<sheet> (<segment>)``:
Characteristics, Bins, Model, Points, Score bands, Stability and Calculator (the single card's,
reading the Calculator's entries), Fairness when the config names protected columns (each
segment's card examined on its own rows) and Reject inference with declined applications.
"""

from __future__ import annotations

import re
from pathlib import Path

from openpyxl import Workbook
from openpyxl.utils import get_column_letter

from scorecard.outputs.atomic import save_book
from scorecard.outputs.cautions import CAUTION
from scorecard.outputs.workbook import (
    overview,
    segment_calculator,
    sheets,
    style,
)
from scorecard.outputs.workbook.card_sheets import CARD_SHEETS, write_card_sheets
from scorecard.outputs.workbook.manifest import run_manifest
from scorecard.outputs.workbook.pooled_scores import pooled_scores
from scorecard.outputs.workbook.tables import set_print_layout

POOLED_BANDS = "Score bands"
MAX_SHEET_NAME = 31
_NOT_IN_SHEET_NAME = re.compile(r"[\[\]:*?/\\']")


def segment_sheet_name(sheet: str, segment: str, taken: set) -> str:
    """``<sheet> (<segment>)`` within a spreadsheet's 31 characters, unique among ``taken``.

    Examples
    --------
    >>> segment_sheet_name("Points", "new", set())
    'Points (new)'
    >>> segment_sheet_name("Score bands", "months_as_customer >= 12", set())
    'Score bands (months_as_custome)'
    """
    room = MAX_SHEET_NAME - len(sheet) - 3
    base = f"{sheet} ({_NOT_IN_SHEET_NAME.sub('_', segment)[:room]})"[:MAX_SHEET_NAME]
    name, k = base, 1
    while name.lower() in taken:
        k += 1
        name = f"{base[:MAX_SHEET_NAME - len(str(k)) - 1]}~{k}"
    taken.add(name.lower())
    return name


def write_segmented_workbook(result, path, waterfall=None) -> Path:
    """Write the workbook of a :class:`~scorecard.build.segments.SegmentedBuildResult`;
    ``waterfall`` is the exclusion waterfall of the rows read, for the Overview."""
    wb = Workbook()
    ws = wb.active
    ws.title = "Overview"
    _write_overview(ws, result, waterfall)
    pooled = pooled_scores(result)
    sheets.write_score_bands(wb.create_sheet(POOLED_BANDS), pooled)
    calculator_sheet = wb.create_sheet(segment_calculator.SHEET)
    if result.config.grades is not None:
        from scorecard.outputs.workbook.grades_sheet import TITLE, write_grades_sheet
        write_grades_sheet(wb.create_sheet(TITLE), pooled)
    taken = {name.lower() for name in wb.sheetnames}
    names: set = set()          # workbook names of the formulas, shared by every calculator
    inputs = segment_calculator.input_cells(result.card)
    calculators = {}
    for name, part in result.segments.items():
        own = {sheet: wb.create_sheet(segment_sheet_name(sheet, name, taken))
               for sheet in CARD_SHEETS}
        calculators[name] = own["Calculator"].title
        write_card_sheets(own, part, points_sheet=own["Points"].title, taken=names,
                          inputs=inputs)
        if part.fairness is not None:
            from scorecard.outputs.workbook.fairness_sheet import write_fairness_sheet
            write_fairness_sheet(wb.create_sheet(segment_sheet_name("Fairness", name, taken)),
                                 part.fairness)
        if part.rejects is not None:
            from scorecard.outputs.workbook.rejects_sheet import write_rejects_sheet
            write_rejects_sheet(wb.create_sheet(segment_sheet_name("Reject inference", name,
                                                                   taken)), part.rejects, part)
    segment_calculator.write_segment_calculator(calculator_sheet, result.card, calculators,
                                                names)
    # Spreadsheet programs compute the calculators' formulas when the file opens.
    wb.calculation.fullCalcOnLoad = True
    wb.properties.creator = "scorecard"
    path = Path(path)
    save_book(wb, path)
    return path


def _write_overview(ws, result, waterfall) -> None:
    config, card = result.config, result.card
    ws.column_dimensions["A"].width = overview.LABEL_WIDTH
    for k in range(overview.VALUE_COLUMNS):
        ws.column_dimensions[get_column_letter(2 + k)].width = overview.VALUE_WIDTH
    page = overview._Page(ws)
    ws.cell(1, 1, config.name).font = style.TITLE_FONT
    page.row = 2
    page.paragraph(f"{len(card.cards)} points scorecards, one per segment of column "
                   f"'{card.rule.column}', ranking applications by their risk of the outcome "
                   f"'{', '.join(map(str, config.data.bad))}' in column "
                   f"'{config.data.target}': a higher score means lower risk. Each row is "
                   "scored by its own segment's card; every card has the same scaling, so a "
                   "score means the same odds in every segment and one cut-off serves all.")
    page.paragraph(CAUTION, style.BOLD)

    page.heading("Data")
    overview.source_facts(page, config.data.source)
    overview.waterfall_table(page, waterfall)

    page.heading("Segments")
    page.fact("Segment column", card.rule.column)
    for name, levels in zip(card.rule.names, _rules(card.rule)):
        page.fact(f"Segment {name}", levels)
    table = result.segment_table()
    page.table(table, {"Rows": style.COUNT, "Goods": style.COUNT, "Bads": style.COUNT,
                       "Bad rate": style.PERCENT, "Characteristics": style.INTEGER,
                       **{c: style.MEASURE for c in table.columns if c.startswith("AUC")}})
    page.paragraph("AUC of a segment: its own rows scored by its own card. AUC of all "
                   "segments: every row scored by its segment's card and ranked together, "
                   "which is what one cut-off across the segments acts on (sheet "
                   f"{POOLED_BANDS}: every segment's scores pooled).", style.NOTE_FONT)

    page.heading("Scaling (every card)")
    s = card.scaling
    page.fact("Base score", s.base_score, "0")
    page.fact("Good:bad odds at the base score", s.base_odds, "0.##")
    page.fact("Points to double the odds", s.pdo, "0.##")
    page.fact("Lowest and highest attainable score", f"{card.min_score} to {card.max_score}")
    page.paragraph("The Calculator takes the value of the segment column and the raw values, "
                   "and scores them with the segment's card (each card's own Calculator sheet "
                   "does the work); the odds of a score are base odds x 2^((score - base "
                   "score) / points to double).", style.NOTE_FONT)

    manifest = run_manifest(config, rows_sha256=result.rows_sha256)
    page.heading("Run manifest")
    page.fact("Config file", Path(manifest.config_file).name)
    page.fact("Config file SHA-256", manifest.config_sha256)
    page.fact(overview.QUERY_HASH_LABEL if manifest.data_query else overview.DATA_HASH_LABEL,
              manifest.data_sha256)
    page.fact("Random seed of the holdout split", manifest.seed)
    for number, rule in enumerate(manifest.exclusions, start=1):
        page.fact(f"Exclusion rule {number} (data.exclude)", rule)
    for name, version in manifest.versions:
        page.fact(f"Version of {name}", version)
    page.fact(overview.RUN_TIME_LABEL, manifest.run_time)
    page.heading("How to read this workbook")
    page.paragraph(overview.READING)
    # Fitted to the page width like the single card's Overview, so no column is cut off.
    set_print_layout(ws)
    ws.page_setup.orientation = "portrait"


def _rules(rule) -> list[str]:
    if rule.cuts is None:
        return [", ".join(group) for group in rule.groups]
    out = []
    for index in range(len(rule.names)):
        low, high = rule.bounds(index)
        out.append(" and ".join(part for part in (
            None if low is None else f"{rule.column} >= {low:g}",
            None if high is None else f"{rule.column} < {high:g}") if part))
    return out
