"""The Overview sheet: a cover page a reviewer reads first.

Label in column A, value in column B; short tables where a fact has one row per sample; long
sentences in wrapped cells merged across the page width.
"""

from __future__ import annotations

import math
from pathlib import Path

from openpyxl.utils import get_column_letter
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.build import frames
from scorecard.card import frames as card_frames
from scorecard.config.sources import is_query
from scorecard.evaluation.additivity import LEVEL, MAX_PATTERNS, departures_frame, notable
from scorecard.outputs.cautions import CAUTION
from scorecard.outputs.workbook import style
from scorecard.outputs.workbook.manifest import Manifest
from scorecard.outputs.workbook.tables import safe_value, set_print_layout, write_table

LABEL_WIDTH, VALUE_WIDTH, VALUE_COLUMNS = 48, 14, 6
RUN_TIME_LABEL = "Time of the run (UTC)"
DATA_HASH_LABEL = "Data SHA-256 (of the file, or of a folder's file hashes)"
QUERY_HASH_LABEL = "Data SHA-256 (of the rows the query returned, in order)"
READING = ("Colour repeats what signs and words say, so a black-and-white print reads the same: "
           "a blue tint marks lower risk (positive weight of evidence, shown with +), a sand tint "
           "higher risk (negative, shown with -). Every figure names the sample it comes from: "
           "development (the fit), holdout (set aside at random) or out of time (a later period).")

BENCHMARK_LABEL = "Cost of the scorecard form (AUC)"


# More pairs than this are left to the build's result (result.additivity).
MAX_PAIRS_SHOWN = 10


def benchmark_text(b) -> str:
    """How the benchmark beside the card was made, in one sentence."""
    return (f"The benchmark is a logistic regression on the raw columns the build classed "
            f"(numbers standardised, missing values and sentinels at the median; categories "
            f"one-hot), fitted on {b.fitted:,} development rows; it and the card are scored on "
            f"the same {b.compared:,} {b.sample} rows. The gap is what the points-table form "
            f"costs in ranking.")


class _Page:
    """A cursor down the cover page."""

    def __init__(self, ws: Worksheet):
        self.ws, self.row = ws, 1

    def heading(self, text: str) -> None:
        self.row += 1
        self.ws.cell(self.row, 1, safe_value(text)).font = style.HEADING_FONT
        self.row += 1

    def fact(self, label: str, value, number_format: str | None = None) -> None:
        self.ws.cell(self.row, 1, safe_value(label)).font = style.BOLD
        cell = self.ws.cell(self.row, 2, safe_value(value))
        # Numbers and text line up under one another on a cover page.
        cell.alignment = style.LEFT
        if number_format is not None:
            cell.number_format = number_format
        self.row += 1

    def paragraph(self, text: str, font=None) -> None:
        """Text wrapped across the value columns, its row tall enough for every line."""
        ws, row = self.ws, self.row
        ws.merge_cells(start_row=row, start_column=1, end_row=row, end_column=1 + VALUE_COLUMNS)
        cell = ws.cell(row, 1, safe_value(text))
        cell.alignment = style.WRAP
        if font is not None:
            cell.font = font
        characters_per_line = (LABEL_WIDTH + VALUE_WIDTH * VALUE_COLUMNS) * 0.95
        lines = math.ceil(len(text) / characters_per_line)
        ws.row_dimensions[row].height = 15 * lines + 3
        self.row += 1

    def table(self, frame, formats) -> None:
        _, last = write_table(self.ws, frame, start_row=self.row, formats=formats)
        self.row = last + 1


def write_overview(ws: Worksheet, result, manifest: Manifest) -> None:
    """Fill the cover page from a build result and its run manifest."""
    ws.column_dimensions["A"].width = LABEL_WIDTH
    for k in range(VALUE_COLUMNS):
        ws.column_dimensions[get_column_letter(2 + k)].width = VALUE_WIDTH
    config, card, samples = result.config, result.card, result.samples
    page = _Page(ws)
    ws.cell(1, 1, safe_value(config.name)).font = style.TITLE_FONT
    page.row = 2
    page.paragraph(f"A points scorecard ranking applications by their risk of the outcome "
                   f"'{', '.join(map(str, config.data.bad))}' against "
                   f"'{', '.join(map(str, config.data.good))}' in column "
                   f"'{config.data.target}': a higher score means lower risk.")
    page.paragraph(CAUTION, style.BOLD)

    page.heading("Data")
    source_facts(page, config.data.source)
    page.fact("Rows read", samples.rows_read, style.COUNT)
    page.fact("Rows left out (outcome neither bad nor good)", samples.left_out, style.COUNT)
    page.table(frames.samples_frame(samples),
               {"Rows": style.COUNT, "Goods": style.COUNT, "Bads": style.COUNT,
                "Bad rate": style.PERCENT})
    waterfall_table(page, getattr(result, "waterfall", None))
    for name, what in getattr(result, "extreme_values", {}).items():
        page.paragraph(f"Warning: column {name}: {what}.", style.BOLD)

    inference = getattr(result, "rejects", None)
    if inference is not None:
        page.heading("Declined applications (reject inference)")
        rejects = config.rejects.source if config.rejects is not None else inference.source
        if is_query(rejects):
            page.fact("Declined applications (database)", rejects.shown_url)
            page.fact("Declined applications query", rejects.query)
        else:
            page.fact("Declined applications file", Path(inference.source).name)
        page.fact("Declined applications read", inference.rows, style.COUNT)
        page.fact("Reject inference method", inference.method)
        page.fact("Rejects' inferred bad rate against the accepts'",
                  f"{inference.inferred_bad_rate:.1%} against {inference.accepts_bad_rate:.1%} "
                  "(see the Reject inference sheet)")
        if inference.method != "none":
            page.paragraph("The card was fitted on the development accepts plus the declined "
                           "applicants with their inferred outcomes (so the Bins sheet's counts "
                           "include them); the samples below and every measure of performance "
                           "are accepts only.", style.NOTE_FONT)

    page.heading("Scaling")
    s = card.scaling
    page.fact("Base score", s.base_score, "0")
    page.fact("Good:bad odds at the base score", s.base_odds, "0.##")
    page.fact("Points to double the odds", s.pdo, "0.##")
    page.fact("Factor (points to double the odds / ln 2)", s.factor, style.WOE)
    page.fact("Offset (base score - factor x ln odds)", s.offset, style.WOE)
    page.fact("Largest score change caused by rounding", card.rounding_change, "0.00")
    page.fact("Lowest and highest attainable score", f"{card.min_score} to {card.max_score}")

    page.heading("How well the score separates goods from bads")
    page.table(frames.discrimination_frame(result.performance),
               {"AUC": style.MEASURE, "Gini": style.MEASURE, "KS": style.MEASURE})
    for name, why in getattr(result, "unmeasured", {}).items():
        page.paragraph(f"Warning: the {name} sample {why}, so its measures are not available.",
                       style.BOLD)
    if getattr(result, "benchmark", None) is not None:
        b = result.benchmark
        page.fact(BENCHMARK_LABEL, f"card {b.card_auc:.4f}; raw logistic regression "
                                   f"{b.logistic_auc:.4f} ({b.sample})")
        page.paragraph(benchmark_text(b))
    additivity_section(page, getattr(result, "additivity", ()),
                       getattr(result, "rejects", None) is not None)

    page.heading(f"Characteristics in the model ({len(card.characteristics)})")
    page.table(card_frames.model_frame(card), {"Information value": style.WOE, "Coefficient": style.WOE,
                                    "Lowest points": style.INTEGER, "Highest points": style.INTEGER})

    page.heading("Run manifest")
    page.fact("Config file", Path(manifest.config_file).name)
    page.fact("Config file SHA-256", manifest.config_sha256)
    page.fact(QUERY_HASH_LABEL if manifest.data_query else DATA_HASH_LABEL, manifest.data_sha256)
    page.fact("Rows read", samples.rows_read, style.COUNT)
    page.fact("Rows per sample", "; ".join(f"{name} {rows:,}" for name, rows in samples.rows.items()))
    page.fact("Random seed of the holdout split", manifest.seed)
    for number, rule in enumerate(manifest.exclusions, start=1):
        page.fact(f"Exclusion rule {number} (data.exclude)", rule)
    for name, version in manifest.versions:
        page.fact(f"Version of {name}", version)
    page.fact(RUN_TIME_LABEL, manifest.run_time)

    page.heading("How to read this workbook")
    page.paragraph(READING)
    set_print_layout(ws)
    ws.page_setup.orientation = "portrait"


def additivity_section(page, departures, with_rejects: bool) -> None:
    """The pairs of characteristics whose joint bins the card's added points do not fit."""
    if not departures:
        return
    found = notable(departures)
    page.heading("Pairs the added points cannot hold (additivity screen)")
    page.paragraph(
        f"{len(departures)} pairs of characteristics, each with at least one in the card, were "
        f"screened on the development rows (on a random {MAX_PATTERNS:,} of their distinct "
        "patterns where there are more): rows grouped by the bins of both, the card's own "
        "log-odds as they stand, and the departure from added points measured by a score "
        "statistic beyond what new points for each characteristic alone could fit. A pair is "
        f"listed when its p-value is below {LEVEL:g} divided by the number of pairs. A listed "
        "pair means the trend of one characteristic differs between bins of the other; a "
        "segmented card (segments: in the config) on the column named may rank better, and "
        "it should be checked on the holdout before use."
        + (" With reject inference, the screen is of the accepts-only card on the development "
           "accepts, whose outcomes are known." if with_rejects else ""), style.NOTE_FONT)
    if not found:
        page.paragraph("No pair departs from additivity beyond chance.")
        return
    page.table(departures_frame(found[:MAX_PAIRS_SHOWN]),
               {"Score statistic": "0.0", "Degrees of freedom": style.INTEGER,
                "p-value": "0.0E+00", "Gain per 1,000 rows (nats)": "0.00"})


def source_facts(page, source) -> None:
    """The data source as a committee document names it.

    A file by its name (its hash is in the run manifest), never a path of the modeller's
    machine; a database query by its URL without password and the query itself.
    """
    if is_query(source):
        page.fact("Data source (database)", source.shown_url)
        page.fact("Data query", source.query)
    else:
        page.fact("Data file", Path(source).name)


def waterfall_table(page, waterfall) -> None:
    """The exclusion waterfall under its heading: rows read, removed by each rule, of another
    outcome, used (nothing when the build has none)."""
    if waterfall is None:
        return
    page.heading("From rows read to rows used (exclusion waterfall)")
    page.table(waterfall.frame(), {"Rows removed": style.COUNT, "Rows left": style.COUNT})
