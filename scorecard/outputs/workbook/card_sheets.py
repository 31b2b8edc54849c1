"""The sheets of one card, written alike for a single card and for each card of a segmented
model (one home, so the two workbooks cannot drift apart)."""

from __future__ import annotations

from scorecard.outputs.workbook import bins_sheet, calculator, sheets, stability_sheet

CARD_SHEETS = ("Characteristics", "Bins", "Model", "Points", "Score bands", "Stability",
               "Calculator")


def write_card_sheets(ws: dict, result, **calculator_options) -> None:
    """Fill ``ws`` (each name of :data:`CARD_SHEETS` -> its worksheet) from one card's build
    ``result``; ``calculator_options`` go to :func:`calculator.write_calculator`."""
    sheets.write_characteristics(ws["Characteristics"], result)
    bins_sheet.write_bins(ws["Bins"], result)
    sheets.write_model(ws["Model"], result)
    points_header, _ = sheets.write_points(ws["Points"], result)
    sheets.write_score_bands(ws["Score bands"], result)
    limits = result.config.stability
    stability_sheet.write_stability(ws["Stability"], result.stability,
                                    watch=limits.watch, shift=limits.shift)
    calculator.write_calculator(ws["Calculator"], result.card, points_header,
                                **calculator_options)
