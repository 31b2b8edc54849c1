"""The reviewer's workbook of a built scorecard (an .xlsx file).

Sheets, in the fixed order of the output contract: Overview, Characteristics, Bins, Model,
Points, Score bands, Stability, Calculator, then Fairness when the build examined fairness,
Reject inference when the build had declined applications, and Risk grades when the config
asks for grades.
"""

from __future__ import annotations

from pathlib import Path

from openpyxl import Workbook

from scorecard.outputs.atomic import save_book
from scorecard.outputs.workbook import overview
from scorecard.outputs.workbook.card_sheets import CARD_SHEETS, write_card_sheets
from scorecard.outputs.workbook.manifest import run_manifest

__all__ = ["SHEETS", "write_workbook"]

SHEETS = ("Overview",) + CARD_SHEETS
FAIRNESS = "Fairness"
REJECT_INFERENCE = "Reject inference"


def write_workbook(result, path, waterfall=None) -> Path:
    """Write the workbook of a build to ``path``, whole or not at all.

    Parameters
    ----------
    result : scorecard.build.result.BuildResult
        The build, the only thing read; ``result.fairness``, when not None, adds the Fairness
        sheet.
    path : path
        The .xlsx file to write; its folder is created if needed.
    waterfall : Waterfall, optional
        For a segmented build, the exclusion waterfall of the rows read (a single card's build
        carries its own).

    Returns
    -------
    Path
        ``path``.

    Examples
    --------
    >>> import tempfile, scorecard.demo.files, scorecard.api
    >>> folder = tempfile.mkdtemp()
    >>> result = scorecard.api.build(scorecard.demo.files.write_demo(folder, rows=2000))
    >>> write_workbook(result, f"{folder}/again.xlsx").name
    'again.xlsx'
    """
    if getattr(result, "segments", None) is not None:
        from scorecard.outputs.workbook.segments_book import write_segmented_workbook
        return write_segmented_workbook(result, path, waterfall)
    wb = Workbook()
    wb.remove(wb.active)
    ws = {name: wb.create_sheet(name) for name in SHEETS}
    manifest = run_manifest(result.config, rows_sha256=getattr(result, "rows_sha256", None))
    overview.write_overview(ws["Overview"], result, manifest)
    write_card_sheets(ws, result)
    fairness = result.fairness
    if fairness is not None:
        from scorecard.outputs.workbook.fairness_sheet import write_fairness_sheet
        write_fairness_sheet(wb.create_sheet(FAIRNESS), fairness)
    if result.rejects is not None:
        from scorecard.outputs.workbook.rejects_sheet import write_rejects_sheet
        write_rejects_sheet(wb.create_sheet(REJECT_INFERENCE), result.rejects, result)
    if result.config.grades is not None:
        from scorecard.outputs.workbook.grades_sheet import TITLE, write_grades_sheet
        write_grades_sheet(wb.create_sheet(TITLE), result)
    # Spreadsheet programs compute the calculator's formulas when the file opens.
    wb.calculation.fullCalcOnLoad = True
    wb.properties.creator = "scorecard"
    path = Path(path)
    save_book(wb, path)
    return path
