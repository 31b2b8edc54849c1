"""The passes over the rows. Each takes one chunk of rows and returns small count tables.

Counts from different chunks add up, so an engine may run a pass over one in-memory frame or
over the partitions of a Dask dataframe and merge the results with :func:`merge`.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import pandas as pd

from .data import DEVELOPMENT, EXCLUDED, GOOD, BAD
from .fine import NumericLayout, numeric_codes, regular_range
from .patterns import Patterns, distinct_patterns
from .scoring import bin_codes, categorical_codes, level_labels, numeric_values

N_SAMPLES = 3  # development, holdout, out of time


class RowFacts(NamedTuple):
    """Per-row outcome, weight and sample of one chunk."""

    label: np.ndarray
    weight: np.ndarray
    sample: np.ndarray


def column_summary(frame: pd.DataFrame, kinds: dict, special_values: dict) -> dict:
    """Per column: (min, max) of regular numeric values, or the set of categorical levels."""
    out = {}
    for name, kind in kinds.items():
        series = frame[name]
        if kind == "numeric":
            out[name] = regular_range(numeric_values(series, name), special_values[name])
        else:
            cat = series if isinstance(series.dtype, pd.CategoricalDtype) else series.astype("category")
            used = np.unique(cat.cat.codes.to_numpy())
            out[name] = frozenset(level_labels(cat.cat.categories[used[used >= 0]]))
    return out


def merge_summaries(a: dict, b: dict) -> dict:
    out = dict(a)
    for name, value in b.items():
        if name not in out:
            out[name] = value
        elif isinstance(value, frozenset):
            out[name] = out[name] | value
        else:
            lo, hi = out[name]
            out[name] = (np.fmin(lo, value[0]), np.fmax(hi, value[1]))
    return out


class FineCounts(NamedTuple):
    """Development goods and bads per fine code, and the development value range."""

    goods: np.ndarray
    bads: np.ndarray
    development_range: tuple[float, float] | None


def _goods_bads(codes: np.ndarray, rows: RowFacts, n_codes: int, dev: np.ndarray):
    c, lab, w = codes[dev], rows.label[dev], rows.weight[dev]
    pair = np.bincount(c * 2 + (lab == BAD), weights=w, minlength=2 * n_codes).reshape(-1, 2)
    return pair[:, 0], pair[:, 1]


def fine_counts(frame: pd.DataFrame, rows: RowFacts, layouts: dict) -> dict:
    """Fine-class counts on the development rows for every characteristic.

    ``layouts`` maps a name to a :class:`NumericLayout` or to the tuple of its levels.
    Categorical codes are the level index, with the missing code last.
    """
    dev = rows.sample == DEVELOPMENT
    out = {}
    for name, layout in layouts.items():
        series = frame[name]
        if isinstance(layout, NumericLayout):
            x = numeric_values(series, name)
            codes = numeric_codes(x, layout)
            g, b = _goods_bads(codes, rows, layout.n_codes, dev)
            out[name] = FineCounts(g, b, regular_range(x[dev], layout.special_values))
        else:
            idx = categorical_codes(series, layout)
            codes = np.where(idx < 0, len(layout), idx)
            g, b = _goods_bads(codes, rows, len(layout) + 1, dev)
            out[name] = FineCounts(g, b, None)
    return out


def merge_fine(a: dict, b: dict) -> dict:
    out = {}
    for name, fa in a.items():
        fb = b[name]
        rng = None
        if fa.development_range is not None:
            rng = (float(np.fmin(fa.development_range[0], fb.development_range[0])),
                   float(np.fmax(fa.development_range[1], fb.development_range[1])))
        out[name] = FineCounts(fa.goods + fb.goods, fa.bads + fb.bads, rng)
    return out


def coded_patterns(frame: pd.DataFrame, rows: RowFacts, drafts) -> Patterns:
    """Counts per distinct (sample, outcome, bin of each characteristic) over the chunk.

    The first two columns of the pattern codes are the sample and the outcome (0 good, 1 bad);
    the rest are the bin index of each characteristic in ``drafts`` order. Weights: one column.
    """
    keep = rows.sample != EXCLUDED
    sub = frame[keep] if not keep.all() else frame
    codes = np.empty((int(keep.sum()), 2 + len(drafts)), dtype=np.int16)
    codes[:, 0] = rows.sample[keep]
    codes[:, 1] = rows.label[keep]
    for j, char in enumerate(drafts):
        codes[:, 2 + j] = bin_codes(char, sub[char.name])[0]
    radix = [N_SAMPLES, 2] + [len(c.bins) for c in drafts]
    return distinct_patterns(codes, radix, [rows.weight[keep]])


def merge_patterns(a: Patterns, b: Patterns, radix) -> Patterns:
    codes = np.concatenate([a.codes, b.codes])
    weights = np.concatenate([a.weights, b.weights])
    return distinct_patterns(codes, radix, [weights[:, 0]])


def bin_tables(patterns: Patterns, n_bins) -> list[np.ndarray]:
    """Per characteristic: weights by (bin, sample, outcome) as an array (bins, 3, 2)."""
    sample, label = patterns.codes[:, 0].astype(np.int64), patterns.codes[:, 1].astype(np.int64)
    w = patterns.weights[:, 0]
    out = []
    for j, nb in enumerate(n_bins):
        key = (patterns.codes[:, 2 + j].astype(np.int64) * N_SAMPLES + sample) * 2 + label
        out.append(np.bincount(key, weights=w, minlength=nb * N_SAMPLES * 2).reshape(nb, N_SAMPLES, 2))
    return out
