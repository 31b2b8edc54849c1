"""The table sheets: Characteristics, Model, Points and Score bands (Bins has its own module).

Each writer fills one worksheet with its header in row 1 and states, in a note under the
table, which sample its figures come from.
"""

from __future__ import annotations

import math

from openpyxl.utils import get_column_letter
from openpyxl.worksheet.pagebreak import Break
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.build import frames
from scorecard.card import frames as card_frames
from scorecard.constraints import GAIN_FOLDS
from scorecard.outputs.workbook import charts, style
from scorecard.outputs.workbook.tables import (
    finish_table_sheet,
    safe_value,
    write_table,
)

BIN_FORMATS = {"Rows": style.COUNT, "Goods": style.COUNT, "Bads": style.COUNT,
               "Bad rate": style.PERCENT, "Share of rows": style.PERCENT,
               "Weight of evidence": style.SIGNED_WOE, "IV contribution": style.WOE,
               "Points": style.INTEGER}
GAINS_FORMATS = {"Band": style.INTEGER, "Lowest score": style.INTEGER,
                 "Highest score": style.INTEGER, "Rows": style.COUNT, "Goods": style.COUNT,
                 "Bads": style.COUNT, "Bad rate": style.PERCENT,
                 "Predicted bad rate": style.PERCENT, "Share of rows": style.PERCENT,
                 "Cumulative share of bads": style.PERCENT,
                 "Cumulative share of goods": style.PERCENT, "Gap (KS)": style.PERCENT}
DISTRIBUTION_FORMATS = {"Score from": style.INTEGER, "Score to": style.INTEGER,
                        "Goods": style.COUNT, "Bads": style.COUNT,
                        "Share of goods": style.PERCENT, "Share of bads": style.PERCENT,
                        "Cumulative share of goods": style.PERCENT,
                        "Cumulative share of bads": style.PERCENT, "Gap (KS)": style.PERCENT}


def note(ws: Worksheet, row: int, text: str, col: int = 1) -> int:
    """Write a one-line note in small italics; returns the next free row."""
    ws.cell(row, col, safe_value(text)).font = style.NOTE_FONT
    return row + 1


def tint_by_sign(ws: Worksheet, column: int, first_row: int, last_row: int) -> None:
    """Blue for lower risk (positive), sand for higher risk (negative); the sign says it too."""
    for row in range(first_row, last_row + 1):
        cell = ws.cell(row, column)
        if isinstance(cell.value, (int, float)) and cell.value != 0:
            cell.fill = style.LOWER_RISK_FILL if cell.value > 0 else style.HIGHER_RISK_FILL


def separate_groups(ws: Worksheet, frame, header: int, column: str = "Characteristic") -> None:
    """A thin rule above the first row of each characteristic, so its block reads as one."""
    values = frame[column].tolist()
    for i in range(1, len(values)):
        if values[i] != values[i - 1]:
            for col in range(1, len(frame.columns) + 1):
                ws.cell(header + 1 + i, col).border = style.GROUP_BORDER


def column_of(frame, name: str, start_col: int = 1) -> int:
    return start_col + list(frame.columns).index(name)


def write_characteristics(ws: Worksheet, result) -> None:
    frame = frames.characteristics_frame(result.reports)
    formats = {"Fine classes": style.INTEGER, "Information value": style.WOE,
               "Mutual information (nats)": style.WOE, "Mutual information (bits)": style.WOE}
    header, last = write_table(ws, frame, formats=formats)
    status_col = column_of(frame, "Status")
    for row in range(header + 1, last + 1):
        if ws.cell(row, status_col).value == frames.IN_MODEL:
            for col in range(1, len(frame.columns) + 1):
                ws.cell(row, col).font = style.BOLD
    finish_table_sheet(ws, header, last, len(frame.columns))
    note(ws, last + 2, "Ranked by information value, measured on the development sample; "
                       "characteristics in the model are in bold.")


def write_model(ws: Worksheet, result) -> None:
    selection = result.selection
    coefficients = frames.coefficients_frame(selection)
    formats = {"Coefficient": style.WOE, "Standard error": style.WOE, "z": "0.00",
               "p-value": "0.00E+00", "VIF": "0.00"}
    header, last = write_table(ws, coefficients, formats=formats)
    finish_table_sheet(ws, header, last, len(coefficients.columns), more_tables=True)
    fit = selection.fit
    row = note(ws, last + 2, f"Logistic regression of the log-odds of good on weight-of-evidence "
                             f"coded characteristics, fitted on the development sample. "
                             f"Log-likelihood {fit.log_likelihood:.4f}; "
                             f"{'converged' if fit.converged else 'did NOT converge'} after "
                             f"{fit.iterations} {'iteration' if fit.iterations == 1 else 'iterations'}.")
    steps = frames.steps_frame(selection)
    _, last = write_table(ws, steps, start_row=row + 1,
                          title="Characteristic selection steps (method: "
                                f"{result.config.selection.method})",
                          formats={"Step": style.INTEGER, "Score-test p-value": "0.00E+00",
                                   "Log-likelihood": style.WOE, "Held-out gain": style.WOE})
    s = result.config.selection
    if s.method == "stepwise" and s.entry == "gain":
        note(ws, last + 2, "Candidates are asked in order of their score statistic; the first "
                           "that raises the log-likelihood of held-out development rows enters "
                           f"(held-out gain, in nats: {GAIN_FOLDS.default} folds of the "
                           "development counts, each held out in turn, with the weights of "
                           "evidence and the model estimated on the others).")
    elif s.method == "stepwise":
        note(ws, last + 2, "The candidate with the largest score statistic enters while its "
                           f"score-test p-value is below {s.entry_p_value:g}.")


def write_points(ws: Worksheet, result) -> tuple[int, int]:
    """The points table; returns its (header_row, last_row) for the calculator's lookups."""
    card = result.card
    frame = card_frames.points_frame(card)
    header, last = write_table(ws, frame, formats={"Points": style.INTEGER,
                                                   "Weight of evidence": style.SIGNED_WOE,
                                                   "Coefficient": style.WOE})
    tint_by_sign(ws, column_of(frame, "Weight of evidence"), header + 1, last)
    separate_groups(ws, frame, header)
    finish_table_sheet(ws, header, last, len(frame.columns))
    s = card.scaling
    row = note(ws, last + 2, f"Score = sum of the points of one attribute per characteristic. "
                             f"{s.base_score:g} points at good:bad odds of {s.base_odds:g}:1; every "
                             f"{s.pdo:g} points double the odds (factor {s.factor:.4f}, offset "
                             f"{s.offset:.4f}).")
    note(ws, row, f"Scores range from {card.min_score} to {card.max_score}. Rounding each "
                  f"attribute to whole points changes any score by at most "
                  f"{card.rounding_change:.2f} points.")
    return header, last


def write_score_bands(ws: Worksheet, result) -> None:
    sample = result.gains_sample
    gains = result.gains
    header, last = write_table(ws, gains, formats=GAINS_FORMATS)
    finish_table_sheet(ws, header, last, len(gains.columns), more_tables=True)
    rows = result.samples.rows.get(sample, 0)
    row = note(ws, last + 2, f"Sample: {sample} ({rows:,} rows). Band 1 is the highest risk; "
                             f"bands hold about equal shares of the sample. The predicted bad "
                             f"rate is the scaling's at the band's mean score.")
    perf = result.performance.get(sample)
    hist = result.histograms[sample]
    if perf is not None and not math.isnan(perf.ks):
        row = note(ws, row, f"Largest gap between the cumulative shares of bads and goods "
                            f"(KS): {perf.ks:.1%} at score {hist.low + perf.ks_index}.")
    # What the scores are when they are not one card's (a segmented model's pooled scores).
    for text in getattr(result, "notes", ()):
        row = note(ws, row, text)
    row = _cutoff_view(ws, result, row + 1)
    grid = charts.chart_grid(charts.table_width_cm(ws, len(gains.columns)))
    chart_row = row + 1
    table_row = chart_row + grid.rows_per_chart + 1
    # The two long tables start a printed page, so their headings head them in print too.
    ws.row_breaks.append(Break(id=table_row - 1))
    odds = card_frames.odds_frame(result.card)
    write_table(ws, odds, start_row=table_row, title="Score, odds and bad probability",
                formats={"Score": style.INTEGER, "Good:bad odds": "[<10]0.000;#,##0.0",
                         "Bad probability": "0.00%"})
    dist_col = len(odds.columns) + 2
    distribution = frames.distribution_frame(hist)
    dist_header, dist_last = write_table(
        ws, distribution, start_row=table_row, start_col=dist_col,
        title=f"Score distribution of the {sample} sample", formats=DISTRIBUTION_FORMATS)
    _score_charts(ws, sample, distribution, dist_col, dist_header, dist_last, chart_row, grid)


def _cutoff_view(ws: Worksheet, result, row: int) -> int:
    """The trade-off at each band edge, so the reviewer sees it without a second command."""
    view = result.band_cutoffs()
    _, last = write_table(ws, view, start_row=row,
                          title=f"Cut-off at each band edge ({result.gains_sample})",
                          formats={"Cut-off (approve at or above)": style.INTEGER,
                                   "Approval rate": style.PERCENT,
                                   "Bad rate of the approved": "0.00%",
                                   "Bad rate of the declined": "0.00%"})
    return note(ws, last + 1, "Approving every application at or above the band's lowest score; rates "
                              "among applications with a good or bad outcome. The strategy "
                              "command lists every cut-off, with profit and swap sets.")


def _score_charts(ws, sample, distribution, dist_col, header, last, top, grid) -> None:
    def col(name):
        return column_of(distribution, name, dist_col)

    first = header + 1
    shares = charts.bar_chart(
        ws, f"Score distribution of goods and bads ({sample})", first, last,
        label_col=col("Score from"), x_title="Score (lowest of the group)",
        y_title="Share of the sample's goods or bads",
        series=[charts.Plotted(col("Share of goods"), "Share of goods", style.GOOD_LINE),
                charts.Plotted(col("Share of bads"), "Share of bads", style.BAD_LINE)])
    shares.width, shares.height = grid.width_cm, grid.height_cm
    ws.add_chart(shares, f"A{top}")
    cumulative = charts.line_chart(
        ws, f"Cumulative shares of goods and bads, and their gap ({sample})", first, last,
        label_col=col("Score to"), x_title="Score (highest of the group)",
        y_title="Cumulative share", y_max=1,
        series=[charts.Plotted(col("Cumulative share of goods"), "Cumulative share of goods",
                            style.GOOD_LINE),
                charts.Plotted(col("Cumulative share of bads"), "Cumulative share of bads",
                            style.BAD_LINE, "dash"),
                charts.Plotted(col("Gap (KS)"), "Gap (KS)", style.NEUTRAL_LINE, "sysDot")])
    cumulative.width, cumulative.height = grid.width_cm, grid.height_cm
    second = charts.column_after(ws, 1, grid.width_cm + 0.5)
    ws.add_chart(cumulative, f"{get_column_letter(second)}{top}")

