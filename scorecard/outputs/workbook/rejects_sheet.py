"""The Reject inference sheet: how the declined applicants entered the build, and what it changed.

Top to bottom: the cautions, the findings in words (the reviewer's ratio against its common
range), the headline rates, the method's settings with their reasons, accepts and rejects by
score band of the accepts-only card, and the two cards side by side.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.build.rejects import EXPECTED_RATIO, HAND_HENLEY
from scorecard.config.rejects import REJECT_SETTINGS
from scorecard.config.sources import is_query
from scorecard.outputs.cautions import CAUTION
from scorecard.outputs.workbook import style
from scorecard.outputs.workbook.tables import safe_value, set_print_layout, write_table

METHOD_WORDS = {
    "fuzzy": "fuzzy augmentation: each declined applicant enters twice, as a good weighted by "
             "its probability of good and as a bad weighted by its probability of bad, both "
             "from the accepts-only card",
    "parcelling": "parcelling: in each score band of the accepts-only card the declined are "
                  "given outcomes at random (seeded) at the accepts' bad rate there times the "
                  "uplift",
    "hard_cutoff": "hard cut-off: declined applicants scoring below the cut-off on the "
                   "accepts-only card count as bad, the rest as good",
    "reweighting": "reweighting: no rows added; each development accept weighs the inverse of "
                   "the acceptance rate of its score band on the accepts-only card",
    "none": "none: the card is the accepts-only card; the declined are scored and reported only",
}
_WIDTH = 9          # columns the paragraphs span


def write_rejects_sheet(ws: Worksheet, inference, final_result) -> int:
    """Write the reject inference of a build into ``ws``; return the last row written.

    Parameters
    ----------
    ws : Worksheet
    inference : scorecard.build.rejects.RejectInference
    final_result : scorecard.build.result.BuildResult
        The build the card came from (its card and performance sit beside the accepts-only
        card's).
    """
    ws.cell(1, 1, "Reject inference").font = style.TITLE_FONT
    row = _paragraph(ws, 2, f"{CAUTION} {HAND_HENLEY}", style.BOLD)
    findings = [f"Method: {METHOD_WORDS[inference.method]}."]
    low, high = EXPECTED_RATIO
    warnings = inference.warnings()
    if inference.method != "none" and not warnings:
        findings.append(f"The rejects' inferred bad rate is {inference.ratio:.2f} times the "
                        f"accepts', within the {low:g} to {high:g} that practitioners commonly "
                        "expect (common practice, no single source).")
    findings += [f"Warning: {w}" for w in warnings]
    row = _lines(ws, row + 1, "Findings", findings, style.BOLD)
    _, row = write_table(ws, _rates(inference), start_row=row + 1,
                         formats={"Value": "0.0000"}, title="Bad rates (weights)")
    _format_rates(ws, row, inference)
    config = getattr(final_result, "config", None)
    source = config.rejects.source if config is not None and config.rejects is not None \
        else inference.source
    header, row = write_table(ws, _settings(inference, source), start_row=row + 2,
                              title=f"Settings of the method ({inference.method})")
    for r in range(header + 1, row + 1):
        # The reasons are sentences: wrapped in their cell, not spilling across the page.
        reason = ws.cell(r, 4)
        reason.alignment = style.WRAP
        ws.row_dimensions[r].height = 15 * (len(str(reason.value or "")) // 55 + 1)
    money = {"Accepts": style.COUNT, "Rejects": style.COUNT, "Declined share": style.PERCENT,
             "Accepts' bad rate (development)": style.PERCENT,
             "Rejects' inferred bad rate": style.PERCENT, "Ratio": "0.00",
             "Rejects' known bad rate": style.PERCENT}
    _, row = write_table(ws, inference.bands, start_row=row + 2, formats={k: f for k, f in money.items() if k in inference.bands.columns},
                         title="Accepts (every sample, with an outcome) and rejects by score band "
                               "of the accepts-only card")
    if inference.known_bad_rate is not None:
        row = _paragraph(ws, row + 1, _known_words(inference), style.NOTE_FONT)
    _, row = write_table(ws, _cards(inference.accepts_only, final_result), start_row=row + 2,
                         formats={"Information value, accepts only": style.WOE,
                                  "Information value, with rejects": style.WOE},
                         title="The two cards side by side (information value on each build's "
                               "development counts)")
    _, row = write_table(ws, _performance(inference.accepts_only, final_result),
                         start_row=row + 2,
                         formats={"AUC, accepts-only card": style.MEASURE,
                                  "AUC, card with rejects": style.MEASURE},
                         title="AUC of each card on accepts (known outcomes only)")
    set_print_layout(ws)
    return row


def _known_words(inference) -> str:
    return (f"Rejects' known bad rate: from column '{inference.known_outcome}' of the declined "
            "applications, outcomes a lender does not normally have (here known only if the data "
            "are invented, or observed elsewhere such as at a credit bureau); used only for this "
            "check, never to build.")


def _rates(inference) -> pd.DataFrame:
    rows = [
        ("Declined applications read", inference.rows),
        ("Of these refused by the accepts-only card (left out)", inference.refused),
        ("Weight of the declined applications scored", inference.weight),
        ("Accepts' bad rate (development)", inference.accepts_bad_rate),
        ("Rejects' bad rate expected by the accepts-only card", inference.expected_bad_rate),
        ("Rejects' inferred bad rate (" + inference.method + ")", inference.inferred_bad_rate),
        ("Ratio of the rejects' inferred bad rate to the accepts'", inference.ratio),
        ("Ratio practitioners commonly expect (common practice)",
         f"{EXPECTED_RATIO[0]:g} to {EXPECTED_RATIO[1]:g}"),
    ]
    if inference.cutoff is not None:
        rows.append(("Cut-off score used (hard cut-off)", inference.cutoff))
    if inference.known_bad_rate is not None:
        rows.append((f"Rejects' known bad rate (column {inference.known_outcome}; known only "
                     "because the data are invented or observed elsewhere)",
                     inference.known_bad_rate))
    return pd.DataFrame(rows, columns=["Figure", "Value"])


def _format_rates(ws: Worksheet, last_row: int, inference) -> None:
    """Counts as counts, rates as percentages, the ratio as a plain number."""
    first = last_row - len(_rates(inference)) + 1
    for r in range(first, last_row + 1):
        label = str(ws.cell(r, 1).value)
        cell = ws.cell(r, 2)
        if "rate" in label and "Ratio" not in label:
            cell.number_format = style.PERCENT
        elif label.startswith(("Declined", "Of these", "Weight", "Cut-off")):
            cell.number_format = style.COUNT
        else:
            cell.number_format = "0.00"


def shown_source(source) -> str:
    """A source as a committee document shows it: a file by its name, a query by its URL.

    The build machine's folders stay out, as on the Overview; the run manifest holds the hash.

    Examples
    --------
    >>> shown_source("/home/modeller/leases/declined.csv")
    'declined.csv'
    """
    return str(source) if is_query(source) else Path(source).name


def _settings(inference, source) -> pd.DataFrame:
    rows = [(name, "null" if value is None else value,
             "null" if REJECT_SETTINGS[name][0] is None else REJECT_SETTINGS[name][0],
             REJECT_SETTINGS[name][1]) for name, value in inference.settings.items()]
    rows.insert(0, ("source", shown_source(source), "", "The declined applications, no outcome."))
    return pd.DataFrame(rows, columns=["Setting", "Value", "Default", "Why the default"])


def _cards(accepts_only, final) -> pd.DataFrame:
    def facts(result):
        reports = {r.name: r for r in result.reports}
        points = {c.name: (min(b.points for b in c.bins), max(b.points for b in c.bins))
                  for c in result.card.characteristics}
        return reports, points

    before, before_points = facts(accepts_only)
    after, after_points = facts(final)
    names = list(before_points) + [n for n in after_points if n not in before_points]

    def points(table, name):
        return f"{table[name][0]} to {table[name][1]}" if name in table else "not in card"

    return pd.DataFrame({
        "Characteristic": names,
        "Points, accepts-only card": [points(before_points, n) for n in names],
        "Points, card with rejects": [points(after_points, n) for n in names],
        "Information value, accepts only": [before[n].information_value for n in names],
        "Information value, with rejects": [after[n].information_value if n in after else None
                                            for n in names],
    })


def _performance(accepts_only, final) -> pd.DataFrame:
    names = [n for n in ("holdout", "out of time", "development") if n in accepts_only.performance]
    return pd.DataFrame({
        "Sample (accepts)": names,
        "AUC, accepts-only card": [accepts_only.performance[n].auc for n in names],
        "AUC, card with rejects": [final.performance[n].auc if n in final.performance else None
                                   for n in names],
    })


def _paragraph(ws: Worksheet, row: int, text: str, font) -> int:
    cell = ws.cell(row, 1, safe_value(text))
    cell.font = font
    cell.alignment = style.WRAP
    ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=_WIDTH)
    ws.row_dimensions[row].height = 15 * (len(text) // 110 + 1) + 4
    return row


def _lines(ws: Worksheet, row: int, heading: str, lines, font) -> int:
    ws.cell(row, 1, heading).font = style.HEADING_FONT
    for i, text in enumerate(lines, start=row + 1):
        _paragraph(ws, i, text, font)
    return row + len(lines)
