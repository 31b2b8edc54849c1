"""The validator's workbook of ``scorecard compare``: what moved, and does the scorecard hold?

Sheets, in order: Summary (the caution, the findings in sentences, every index), Score
stability, Characteristic stability, Performance, and By segment under a segmented model (each
segment's rows, own score index and AUC, Gini and KS). Every finding is written in words, so
that nothing rests on colour.
"""

from __future__ import annotations

import pandas as pd
from openpyxl import Workbook
from openpyxl.styles import Alignment
from openpyxl.worksheet.worksheet import Worksheet

from scorecard.evaluation.comparison import (
    BASELINE,
    CURRENT,
    Comparison,
    SamplePerformance,
)
from scorecard.outputs.atomic import save_book
from scorecard.outputs.cautions import CAUTION
from scorecard.outputs.workbook import style
from scorecard.outputs.workbook.tables import (
    finish_table_sheet,
    safe_value,
    set_print_layout,
    write_lines,
    write_table,
)

SHEETS = ("Summary", "Score stability", "Characteristic stability", "Performance")
SEGMENTS_SHEET = "By segment"      # after the others, under a segmented model
INDEX = "0.0000"
P_VALUE = "0.0000"
# The caution spans the width of the index table, so it reads as one paragraph above it.
_CAUTION_COLUMNS = 6

_SHARE_FORMATS = {"Baseline rows": style.COUNT, "Current rows": style.COUNT,
                  "Baseline share": style.PERCENT, "Current share": style.PERCENT,
                  "Contribution": INDEX}


def write_compare_workbook(comparison: Comparison, path) -> None:
    """Write the comparison's workbook to ``path`` (.xlsx), whole or not at all.

    Parameters
    ----------
    comparison : scorecard.evaluation.comparison.Comparison
    path : path

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from openpyxl import load_workbook
    >>> from scorecard.evaluation.comparison import compare
    >>> from scorecard.card.scorecard import Bin, Characteristic, Scorecard, RANGE, MISSING
    >>> from scorecard.card.points import scaling
    >>> b = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0),
    ...      Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0), Bin("missing", MISSING, 0, 0, 0.0, 20))
    >>> char = Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,))
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "card.json").write_text(Scorecard("demo", scaling(600, 50, 20), 0.5,
    ...                                                 (char,)).to_json())
    >>> _ = (folder / "a.csv").write_text("x\\n0.5\\n2\\n0.2\\n3\\n")
    >>> result = compare(folder / "card.json", folder / "a.csv", folder / "a.csv", bands=2)
    >>> write_compare_workbook(result, folder / "compare.xlsx")
    >>> load_workbook(folder / "compare.xlsx").sheetnames
    ['Summary', 'Score stability', 'Characteristic stability', 'Performance']
    """
    book = Workbook()
    summary = book.active
    summary.title = SHEETS[0]
    _write_summary(summary, comparison)
    _write_score_sheet(book.create_sheet(SHEETS[1]), comparison)
    _write_characteristic_sheet(book.create_sheet(SHEETS[2]), comparison)
    _write_performance_sheet(book.create_sheet(SHEETS[3]), comparison)
    if comparison.segments:
        _write_segments_sheet(book.create_sheet(SEGMENTS_SHEET), comparison)
    save_book(book, path)


def _write_summary(ws: Worksheet, comparison: Comparison) -> None:
    ws.cell(1, 1, "Scorecard comparison").font = style.TITLE_FONT
    caution = ws.cell(2, 1, CAUTION)
    caution.font = style.BOLD
    caution.alignment = Alignment(wrap_text=True, vertical="top")
    ws.merge_cells(start_row=2, start_column=1, end_row=2, end_column=_CAUTION_COLUMNS)
    ws.row_dimensions[2].height = 60
    row = write_lines(ws, 4, "What was compared", _files(comparison), None)
    row = write_lines(ws, row + 1, "Findings", _findings(comparison), style.BOLD)
    _, row = write_table(ws, _index_table(comparison), start_row=row + 1,
                         title="Stability indices (current against baseline)",
                         formats={"Stability index": INDEX, "Critical value (95%)": INDEX,
                                  "Points shift": "+0.00;-0.00;0.00"})
    write_lines(ws, row + 2, "How the figures were made", _method(comparison), style.NOTE_FONT)
    set_print_layout(ws)




def _files(comparison: Comparison) -> list[str]:
    out = [f"Model: {comparison.model}"]
    for sample, path in ((BASELINE, comparison.baseline), (CURRENT, comparison.current)):
        refused = comparison.rejected[sample]
        out.append(f"{sample.capitalize()}: {path} ({comparison.rows[sample]:,} rows"
                   + (f", {refused:,} refused by the scorecard)" if refused else ")"))
    return out


def _index_phrase(result) -> str:
    chance = "beyond" if result.beyond_chance else "within"
    return (f"{result.index:.4f} ({result.status}; {chance} chance, critical value "
            f"{result.critical_value:.4f})")


def _findings(comparison: Comparison) -> list[str]:
    """The Summary's findings, one sentence each.

    Parameters
    ----------
    comparison : scorecard.evaluation.comparison.Comparison

    Returns
    -------
    list of str
        Score index; the characteristics that reached watch or shift, or that none did; the
        ranking and calibration verdicts; attributes that turned; unusual values.
    """
    out = [f"Score: population stability index {_index_phrase(comparison.stability.score)}."]
    moved = [r for r in comparison.stability.characteristics if r.status != "stable"]
    for r in sorted(moved, key=lambda r: -r.index):
        out.append(f"{r.name}: characteristic stability index {_index_phrase(r)}; "
                   f"its movement changes the mean score by {r.points_shift:+.2f} points.")
    if not moved:
        out.append("No characteristic reaches watch.")
    out.append(_ranking_sentence(comparison))
    out.append(_calibration_sentence(comparison))
    out.extend(_turned_sentences(comparison))
    out.extend(_unusual_sentences(comparison))
    return out


def _ranking_sentence(comparison: Comparison) -> str:
    perf = comparison.performance
    if comparison.ranking_held is None:
        cur = perf.get(CURRENT)
        if cur is not None and cur.discrimination is not None:
            d = cur.discrimination
            return (f"Ranking not assessed against the baseline (it has no outcome); current "
                    f"AUC {d.auc:.4f}, Gini {d.gini:.4f}, KS {d.ks:.4f}.")
        if cur is None:
            return "Ranking not assessed: the current file has no outcome column."
        return "Ranking not assessed: the current file lacks goods or bads to rank."
    base, cur = perf[BASELINE].discrimination, perf[CURRENT].discrimination
    verdict = "held" if comparison.ranking_held else "weakened beyond chance"
    return (f"Ranking {verdict}: Gini {cur.gini:.4f} now against {base.gini:.4f} in the "
            f"baseline (AUC {cur.auc:.4f} against {base.auc:.4f}).")


def _calibration_sentence(comparison: Comparison) -> str:
    if comparison.calibration_held is None:
        if CURRENT not in comparison.performance:
            return "Calibration not assessed: the current file has no outcome column."
        return "Calibration not assessed: fewer than three score bands hold rows with an outcome."
    fit = comparison.performance[CURRENT].hosmer_lemeshow
    verdict = "held" if comparison.calibration_held else "did not hold"
    degrees = "degree" if fit.dof == 1 else "degrees"
    return (f"Calibration {verdict}: Hosmer-Lemeshow statistic {fit.statistic:.2f} on {fit.dof} "
            f"{degrees} of freedom, p-value {fit.p_value:.4f} in the current file.")


def _turned_sentences(comparison: Comparison) -> list[str]:
    cur = comparison.performance.get(CURRENT)
    if cur is None:
        return []
    turned = cur.attributes[cur.attributes["Turned"]]
    if turned.empty:
        return ["No attribute has turned in the current file."]
    return [f"{c}, {a}: turned in the current file ({why})."
            for c, a, why in zip(turned["Characteristic"], turned["Attribute"], turned["Why"])]


_UNUSUAL_PHRASES = {"Levels not seen in development": "levels not seen in development",
                    "Missing where development had none": "missing values where development "
                                                          "had none",
                    "Beyond the development range": "values beyond the development range"}


def _unusual_sentences(comparison: Comparison) -> list[str]:
    out = []
    current = comparison.unusual[comparison.unusual["Sample"] == CURRENT]
    for record in current.to_dict("records"):
        parts = [f"{record[k]:,} {phrase}" for k, phrase in _UNUSUAL_PHRASES.items() if record[k]]
        if parts:
            out.append(f"{record['Characteristic']} in the current file: " + "; ".join(parts) + ".")
    return out


def _index_table(comparison: Comparison) -> pd.DataFrame:
    """Every index of the comparison, the score's first."""
    score = comparison.stability.score
    labelled = [("the score", score)] + [(r.name, r) for r in comparison.stability.characteristics]
    return pd.DataFrame([{"Index of": label, "Stability index": r.index, "Status": r.status,
                          "Critical value (95%)": r.critical_value,
                          "Beyond chance": "yes" if r.beyond_chance else "no",
                          "Points shift": r.points_shift} for label, r in labelled])


def _method(comparison: Comparison) -> list[str]:
    score = comparison.stability.score
    return [
        f"Status: stable below {comparison.watch:g}, watch from {comparison.watch:g}, shift "
        f"from {comparison.shift:g} (common practice).",
        "Index = sum over bins of (current share - baseline share) x ln(current share / "
        "baseline share).",
        "Critical value: (1/N + 1/M) x the 95th percentile of chi-square with bins - 1 degrees "
        "of freedom, for N and M rows; an index above it is more than chance explains "
        "(Yurdakul 2018).",
        f"Score bands: {len(score.table)} bands cut at the baseline's score quantiles.",
        "Points shift: sum over attributes of (current share - baseline share) x points, the "
        "change of the mean score the characteristic's movement causes.",
        "An attribute has turned when both files show its risk clearly (5% z-test on its "
        "weight of evidence) and the other way round, or when its order against the previous "
        "value range reverses clearly.",
        "Ranking weakened: the current AUC is below the baseline's beyond chance (one-sided "
        "5%, Hanley-McNeil standard errors). Calibration held: Hosmer-Lemeshow p-value at "
        "least 0.05 over the score bands.",
    ]


def _note_below(ws: Worksheet, row: int, notes) -> None:
    for i, text in enumerate(notes, start=row):
        ws.cell(i, 1, safe_value(text)).font = style.NOTE_FONT


def _write_score_sheet(ws: Worksheet, comparison: Comparison) -> None:
    table = comparison.stability.score.table
    header, last = write_table(ws, table, formats=_SHARE_FORMATS)
    finish_table_sheet(ws, header, last, len(table.columns))
    _note_below(ws, last + 2, [f"Baseline {comparison.baseline}; current {comparison.current}.",
                               table.attrs.get("note", "")])


def _characteristic_table(comparison: Comparison) -> pd.DataFrame:
    """Every characteristic's attributes with their shares and contributions, one table."""
    parts = []
    for r in comparison.stability.characteristics:
        part = r.table.copy()
        part.insert(0, "Characteristic", r.name)
        parts.append(part)
    return pd.concat(parts, ignore_index=True)


def _write_characteristic_sheet(ws: Worksheet, comparison: Comparison) -> None:
    table = _characteristic_table(comparison)
    header, last = write_table(ws, table, formats=_SHARE_FORMATS)
    finish_table_sheet(ws, header, last, len(table.columns))
    notes = [f"{r.name}: {r.table.attrs.get('note', '')}"
             for r in comparison.stability.characteristics]
    _note_below(ws, last + 2, notes)
    write_table(ws, comparison.unusual, start_row=last + 3 + len(notes),
                title="Values the development sample never showed",
                formats={k: style.COUNT for k in comparison.unusual.columns[2:]})


def _performance_table(comparison: Comparison) -> pd.DataFrame:
    """Ranking and calibration of each file that holds the outcome."""
    records = []
    for p in comparison.performance.values():
        d, fit = p.discrimination, p.hosmer_lemeshow
        records.append({
            "File": p.sample, "Goods": p.goods, "Bads": p.bads, "Other outcome": p.left_out,
            "AUC": None if d is None else d.auc,
            "AUC standard error": p.auc_standard_error,
            "Gini": None if d is None else d.gini, "KS": None if d is None else d.ks,
            "Hosmer-Lemeshow statistic": None if fit is None else fit.statistic,
            "Degrees of freedom": None if fit is None else fit.dof,
            "Hosmer-Lemeshow p-value": None if fit is None else fit.p_value})
    return pd.DataFrame(records)


def _write_performance_sheet(ws: Worksheet, comparison: Comparison) -> None:
    if not comparison.performance:
        ws.cell(1, 1, "Neither file holds the outcome column, so ranking and calibration are "
                      "not assessed.").font = style.BOLD
        return
    table = _performance_table(comparison)
    header, last = write_table(ws, table, formats={
        "Goods": style.COUNT, "Bads": style.COUNT, "Other outcome": style.COUNT,
        "AUC": style.MEASURE, "AUC standard error": INDEX, "Gini": style.MEASURE,
        "KS": style.MEASURE, "Hosmer-Lemeshow statistic": "0.00",
        "Hosmer-Lemeshow p-value": P_VALUE})
    finish_table_sheet(ws, header, last, len(table.columns))
    row = last + 2
    for p in comparison.performance.values():
        row = _write_sample_tables(ws, p, row) + 2


def _write_sample_tables(ws: Worksheet, p: SamplePerformance, row: int) -> int:
    _, row = write_table(ws, p.calibration, start_row=row,
                         title=f"Observed against expected bad rate by score band ({p.sample})",
                         formats={"Rows": style.COUNT, "Bads": style.COUNT,
                                  "Observed bad rate": style.PERCENT,
                                  "Expected bad rate": style.PERCENT,
                                  "Binomial p-value": P_VALUE})
    attributes = p.attributes.assign(Turned=p.attributes["Turned"].map({True: "yes", False: "no"}))
    _, row = write_table(ws, attributes, start_row=row + 2,
                         title=f"Bad rate by attribute against development ({p.sample})",
                         formats={"Development weight of evidence": style.SIGNED_WOE,
                                  "Rows": style.COUNT, "Goods": style.COUNT,
                                  "Bads": style.COUNT, "Bad rate": style.PERCENT,
                                  "Weight of evidence": style.SIGNED_WOE})
    return row


def segments_frame(comparison: Comparison) -> pd.DataFrame:
    """Per segment: rows in each file, its own score index, and each file's AUC, Gini and KS
    on the segment's rows alone (blank where the file has no outcome or the segment lacks
    goods or bads)."""
    records = []
    for name, part in comparison.segments.items():
        s = part.score
        record = {"Segment": name, "Baseline rows": part.rows[BASELINE],
                  "Current rows": part.rows[CURRENT],
                  "Score stability index": None if s is None else s.index,
                  "Status": "not assessed" if s is None else s.status,
                  "Critical value (95%)": None if s is None else s.critical_value}
        for sample in (BASELINE, CURRENT):
            d = part.performance.get(sample, (0, 0, None))[2]
            for measure in ("auc", "gini", "ks"):
                heading = f"{sample.capitalize()} {'Gini' if measure == 'gini' else measure.upper()}"
                record[heading] = None if d is None else getattr(d, measure)
        records.append(record)
    return pd.DataFrame.from_records(records)


def _write_segments_sheet(ws: Worksheet, comparison: Comparison) -> None:
    table = segments_frame(comparison)
    header, last = write_table(ws, table, formats={
        "Baseline rows": style.COUNT, "Current rows": style.COUNT,
        "Score stability index": INDEX, "Critical value (95%)": INDEX,
        **{c: style.MEASURE for c in table.columns if c.split(" ")[-1] in ("AUC", "Gini", "KS")}})
    finish_table_sheet(ws, header, last, len(table.columns))
    _note_below(ws, last + 2, [
        "Each segment's rows alone, scored by its own card; the Summary's figures pool every "
        "segment (one scale).",
        "Score stability index: bands cut at the segment's own baseline score quantiles, so a "
        "segment that only grows or shrinks in the mix keeps its own index.",
        "AUC, Gini and KS: blank where the file has no outcome column or the segment lacks "
        "goods or bads."])
