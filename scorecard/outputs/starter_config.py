"""A starter config for a new data file: every column classified, every default written out."""

from __future__ import annotations

import difflib
import os
from pathlib import Path

import numpy as np
import pandas as pd
import yaml

from scorecard import constraints as defaults
from scorecard.data.read import column_kind, read_frame, sniff_csv
from scorecard.errors import InputError

IDENTIFIER_SHARE = 0.5   # a text column with more distinct values than this share of rows
NUMBER_SHARE = 0.9       # a text column whose levels are mostly numbers holds mixed values


def _text_among_numbers(series: pd.Series) -> str | None:
    """A text level of a column whose levels are otherwise mostly numbers, else None."""
    levels = pd.Series(series.cat.categories.astype(str))
    numbers = pd.to_numeric(levels, errors="coerce").notna()
    if len(levels) < 2 or numbers.mean() < NUMBER_SHARE:
        return None
    return levels[~numbers].iloc[0]


def _column_role(series: pd.Series) -> tuple[str, str]:
    kind = column_kind(series)
    if kind == "date":
        return "date", "a date: usable for an out-of-time sample, not as a characteristic"
    distinct = series.nunique(dropna=True)
    if distinct == 0:
        return "constant", "no values: every row is missing"
    if distinct == 1:
        return "constant", "a single value: it cannot rank applicants"
    text = _text_among_numbers(series) if isinstance(series.dtype, pd.CategoricalDtype) else None
    if text is not None:
        return "mixed", (f"numbers mixed with text such as {text!r}, so read as text: clean it "
                         "(or list it under characteristics) to use it")
    if kind == "categorical" and distinct > IDENTIFIER_SHARE * series.notna().sum():
        return "identifier", f"identifier-like: {distinct} distinct values"
    if kind == "numeric" and pd.api.types.is_integer_dtype(series.dtype) \
            and distinct == series.notna().sum() and distinct >= 50 \
            and series.max() - series.min() < 2 * distinct:
        return "identifier", "identifier-like: distinct, nearly consecutive whole numbers"
    missing = series.isna().mean()
    return kind, f"{kind}, {distinct} distinct values, {missing:.1%} missing"


def _scalar(value) -> str:
    return yaml.safe_dump(value, default_flow_style=True).strip().removesuffix("\n...").strip()


def starter_config(data, target: str, out=None, *, encoding: str = "utf-8",
                   delimiter: str | None = None, decimal: str | None = None) -> str:
    """YAML text of a starter config for ``data`` with outcome column ``target``.

    The outcome's commonest value is proposed as good and the next as bad; every other column
    is listed under ``characteristics`` (with its kind) or under ``ignore`` (with the reason),
    as a comment beside it, for the modeller to check.

    Parameters
    ----------
    data : path
        The data file (see :func:`scorecard.data.read.read_frame`).
    target : str
        The outcome column.
    out : path, optional
        Where the config will be written; ``data.source`` is made relative to its folder.
    encoding, delimiter, decimal : str
        How to read a CSV file; written into the config when not the defaults. The field
        separator and the decimal mark are found from the file's first lines when not given.

    Raises
    ------
    InputError
        The data cannot be read, lacks ``target``, or its outcome has fewer than two values;
        or ``out`` is the data file itself.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> path = pathlib.Path(tempfile.mkdtemp()) / "rows.csv"
    >>> _ = path.write_text("age,outcome\\n31,repaid\\n45,defaulted\\n52,repaid\\n")
    >>> print(starter_config(path, "outcome", path.parent / "c.yaml").splitlines()[4])
      bad: [defaulted]            # check: which values are bad
    """
    data = Path(data)
    if out is not None and data.exists() and Path(out).resolve() == data.resolve():
        raise InputError(f"{out}: --out would overwrite the data {data}; inputs are never modified")
    found = sniff_csv(data, encoding)
    delimiter = found[0] if delimiter is None else delimiter
    decimal = found[1] if decimal is None else decimal
    frame = read_frame(data, encoding=encoding, delimiter=delimiter, decimal=decimal)
    if target not in frame.columns:
        hint = difflib.get_close_matches(target, [str(c) for c in frame.columns], n=1)
        raise InputError(f"{data}: column {target}: the target column is not in the data"
                         + (f"; did you mean {hint[0]!r}?" if hint else ""))
    values = frame[target].dropna().value_counts()
    values = values[values > 0]
    if len(values) < 2:
        raise InputError(f"{data}: column {target}: the outcome needs at least two distinct "
                         f"values, found {len(values)}")
    # The two commonest values are taken as good (commonest) and bad; rarer ones are left out.
    good, bad, others = [values.index[0]], values.index[1], list(values.index[2:])
    base = Path(out).parent if out else Path(".")
    source = os.path.relpath(data.resolve(), base.resolve())
    ignore, chars, dates = [], [], []
    for name in frame.columns:
        if name == target:
            continue
        role, why = _column_role(frame[name])
        if role in ("identifier", "constant", "mixed"):
            ignore.append((name, why))
        elif role == "date":
            dates.append((name, why))
            ignore.append((name, why))
        else:
            chars.append((name, role, why))
    lines = [f"name: {_scalar(data.stem.replace('_', ' ').capitalize())}",
             "data:",
             f"  source: {_scalar(source)}",
             f"  target: {_scalar(target)}",
             f"  bad: [{_scalar(_plain(bad))}]            # check: which values are bad",
             f"  good: [{', '.join(_scalar(_plain(v)) for v in good)}]" +
             (f"            # left out: {', '.join(str(_plain(v)) for v in others)}" if others else ""),
             "  weight: null",
             *([f"  encoding: {_scalar(encoding)}"] if encoding != "utf-8" else []),
             *([f"  delimiter: {_scalar(delimiter)}"] if delimiter != "," else []),
             *([f"  decimal: {_scalar(decimal)}"] if decimal != "." else []),
             "  ignore:" + ("" if ignore else " []")]
    lines += [f"    - {_scalar(n)}            # {why}" for n, why in ignore]
    d = defaults
    lines += ["  protected: []                # columns never used, examined for fairness",
              "samples:", f"  holdout: {d.HOLDOUT.default}", f"  seed: {d.SEED.default}"]
    if dates:
        lines += [f"  out_of_time: null            # e.g. {{column: {dates[0][0]}, from: 2025-01-01}}"]
    else:
        lines += ["  out_of_time: null"]
    lines += ["binning:", f"  fine_bins: {d.FINE_BINS.default}",
              f"  max_bins: {d.MAX_BINS.default}",
              f"  choose_max_bins: {str(d.CHOOSE_MAX_BINS.default).lower()}"
              "        # true: limits chosen on held-out folds (leave out max_bins)",
              f"  min_bin_share: {d.MIN_BIN_SHARE.default}",
              f"  min_bin_goods: {d.MIN_BIN_GOODS.default}",
              f"  min_bin_bads: {d.MIN_BIN_BADS.default}",
              f"  prior_rows: {d.PRIOR_ROWS.default:g}", f"  trend: {d.TREND.default}",
              "  sentinels: []", "characteristics:" + ("" if chars else " {}")]
    lines += [f"  {_scalar(n)}: {{kind: {role}}}            # {why}" for n, role, why in chars]
    lines += ["selection:", f"  min_iv: {d.MIN_IV.default}",
              f"  max_correlation: {d.MAX_CORRELATION.default}",
              f"  max_vif: {d.MAX_VIF.default}", f"  method: {d.METHOD.default}",
              f"  entry: {d.ENTRY.default}", f"  entry_p_value: {d.ENTRY_P_VALUE.default}",
              f"  max_characteristics: {d.MAX_CHARACTERISTICS.default}", "  keep: []",
              "scaling:", f"  base_score: {d.BASE_SCORE.default:g}",
              f"  base_odds: {d.BASE_ODDS.default:g}", f"  pdo: {d.PDO.default:g}",
              "output:", "  workbook: out/scorecard.xlsx", "  model: out/scorecard.json",
              "engine: local"]
    return "\n".join(lines) + "\n"


def _plain(value):
    return value.item() if isinstance(value, np.generic) else value
