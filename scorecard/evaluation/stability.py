"""Population and characteristic stability between two samples scored by one scorecard.

Every function here works on counts per score band or per attribute. The index of a binning is
``sum (c_i - b_i) ln(c_i / b_i)`` over the shares of the baseline ``b`` and the current ``c``
sample (:func:`scorecard.measures.stability.stability_index`). Bins that are empty in both samples are
left out: they carry no information and would only add a degree of freedom. When a remaining
bin is empty in one sample, 0.5 is added to every remaining bin of both samples, and the
table's note says so. The table of every result carries that note in ``table.attrs["note"]``.

The critical value is the 95th percentile of the index for two samples of ``N`` and ``M`` rows
drawn from one population, ``(1/N + 1/M) chi2.ppf(0.95, B - 1)`` over ``B`` bins (Yurdakul,
2018, from memory): an index above it is more movement than chance explains.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import pandas as pd

from scorecard.constraints import SHIFT, WATCH
from scorecard.data.samples import DEVELOPMENT, HOLDOUT, OUT_OF_TIME, SAMPLE_NAMES
from scorecard.measures.stability import (
    stability_critical_value,
    stability_index,
    stability_status,
)

__all__ = [
    "IndexResult",
    "StabilityComparison",
    "band_counts",
    "band_labels",
    "build_stability",
    "characteristic_stability",
    "score_stability",
]

SMOOTHING = 0.5
SCORE = "score"


class IndexResult(NamedTuple):
    """One stability index with its verdict and the table behind it.

    Attributes
    ----------
    name : str
        ``"score"`` for the score distribution, else the characteristic's name.
    index : float
        The stability index (PSI of the score, CSI of a characteristic).
    status : str
        ``'stable'``, ``'watch'`` or ``'shift'`` by the cut-offs.
    critical_value : float
        95th percentile of the index under no change, for these sample sizes and bins.
    beyond_chance : bool
        ``index > critical_value``.
    table : pandas.DataFrame
        One row per band or attribute; ``table.attrs["note"]`` says what was counted and
        whether counts were smoothed.
    points_shift : float or None
        For a characteristic: ``sum (current share - baseline share) x points``, the change of
        the mean score that the characteristic's movement causes. None for the score.
    """

    name: str
    index: float
    status: str
    critical_value: float
    beyond_chance: bool
    table: pd.DataFrame
    points_shift: float | None


class StabilityComparison(NamedTuple):
    """Score and characteristic stability of one pair of samples."""

    baseline: str
    current: str
    score: IndexResult
    characteristics: tuple[IndexResult, ...]


class _Index(NamedTuple):
    index: float
    critical_value: float
    contributions: np.ndarray
    note: str


def _as_counts(values, name: str) -> np.ndarray:
    counts = np.asarray(values, dtype=float)
    if counts.ndim != 1 or counts.size == 0:
        raise ValueError(f"{name}: must be a non-empty 1-d array of counts")
    if not np.all(np.isfinite(counts) & (counts >= 0)):
        raise ValueError(f"{name}: counts must be finite and non-negative")
    if not counts.sum() > 0:
        raise ValueError(f"{name}: total is zero; a stability index needs a non-empty sample")
    return counts


def _paired_counts(baseline_counts, current_counts, n_bins: int):
    baseline = _as_counts(baseline_counts, "baseline_counts")
    current = _as_counts(current_counts, "current_counts")
    for name, counts in (("baseline_counts", baseline), ("current_counts", current)):
        if counts.size != n_bins:
            raise ValueError(f"{name}: expected {n_bins} bins, got {counts.size}")
    return baseline, current


def _index(baseline: np.ndarray, current: np.ndarray, sizes, unit: str) -> _Index:
    """Index over the bins that hold rows in either sample; empty-in-both bins contribute 0."""
    occupied = (baseline > 0) | (current > 0)
    n_baseline, n_current = (baseline.sum(), current.sum()) if sizes is None else sizes
    result = stability_index(baseline[occupied], current[occupied], smoothing=SMOOTHING)
    contributions = np.zeros(baseline.size)
    contributions[occupied] = result.contributions
    n_bins = int(occupied.sum())
    if n_bins >= 2:
        critical = stability_critical_value(n_baseline, n_current, n_bins)
    else:
        # One occupied bin: both samples sit in it entirely, so nothing can have moved.
        critical = 0.0
    smoothed = bool(np.any((baseline[occupied] == 0) | (current[occupied] == 0)))
    note = f"Shares of {unit}; critical value from {n_baseline:g} and {n_current:g} rows " \
           f"over {n_bins} bins."
    if smoothed:
        note += f" A bin is empty in one sample, so {SMOOTHING} was added to every bin's " \
                "count before shares were taken for the contributions."
    if n_bins < baseline.size:
        left_out = baseline.size - n_bins
        note += f" {left_out} {'bin' if left_out == 1 else 'bins'} empty in both samples " \
                f"{'is' if left_out == 1 else 'are'} left out."
    return _Index(result.total, critical, contributions, note)


def _result(name, computed: _Index, table, watch, shift, points_shift=None) -> IndexResult:
    table["Contribution"] = computed.contributions
    table.attrs["note"] = computed.note
    return IndexResult(
        name=name,
        index=computed.index,
        status=stability_status(computed.index, watch, shift),
        critical_value=computed.critical_value,
        beyond_chance=bool(computed.index > computed.critical_value),
        table=table,
        points_shift=points_shift,
    )


def score_stability(baseline_counts, current_counts, band_labels, *, watch=WATCH.default, shift=SHIFT.default,
                    sizes=None, unit="rows") -> IndexResult:
    """Population stability index of the score over score bands.

    Parameters
    ----------
    baseline_counts, current_counts : array_like
        Rows (or weights) per score band, in band order.
    band_labels : sequence of str
        One label per band.
    watch, shift : float, default 0.10 and 0.25
        Status cut-offs (common practice).
    sizes : (float, float), optional
        Row counts N and M for the critical value when the counts are weights; default the
        totals of the counts.
    unit : str, default "rows"
        What the counts are, for the note (``"rows"`` or ``"weights"``).

    Returns
    -------
    IndexResult
        Table columns: Band, Baseline rows, Current rows, Baseline share, Current share,
        Contribution.

    Examples
    --------
    >>> r = score_stability([50, 30, 20], [40, 30, 30], ["low", "middle", "high"])
    >>> round(r.index, 4), r.status
    (0.0629, 'stable')
    """
    labels = [str(label) for label in band_labels]
    baseline, current = _paired_counts(baseline_counts, current_counts, len(labels))
    table = _share_table({"Band": labels}, baseline, current)
    return _result(SCORE, _index(baseline, current, sizes, unit), table, watch, shift)


def characteristic_stability(char, baseline_counts, current_counts, *, watch=WATCH.default, shift=SHIFT.default,
                             sizes=None, unit="rows") -> IndexResult:
    """Characteristic stability index of one scorecard characteristic over its attributes.

    Parameters
    ----------
    char : scorecard.card.scorecard.Characteristic
        The characteristic; its bins give the attributes and their points.
    baseline_counts, current_counts : array_like
        Rows (or weights) per bin of ``char``, in bin order.
    watch, shift, sizes, unit
        As for :func:`score_stability`.

    Returns
    -------
    IndexResult
        Table columns: Attribute, Points, Baseline rows, Current rows, Baseline share,
        Current share, Contribution. ``points_shift`` uses the unsmoothed shares.

    Examples
    --------
    >>> from scorecard.card.scorecard import Bin, Characteristic, RANGE
    >>> bins = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0),
    ...         Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0))
    >>> char = Characteristic("x", "numeric", bins, 1.0, "R01", "x is low", cuts=(1.0,))
    >>> r = characteristic_stability(char, [50, 50], [60, 40])
    >>> round(r.points_shift, 6)
    -2.0
    """
    baseline, current = _paired_counts(baseline_counts, current_counts, len(char.bins))
    points = np.array([b.points for b in char.bins], dtype=float)
    table = _share_table({"Attribute": [b.label for b in char.bins], "Points": points.astype(int)},
                         baseline, current)
    moved = table["Current share"].to_numpy() - table["Baseline share"].to_numpy()
    points_shift = float(np.dot(moved, points))
    computed = _index(baseline, current, sizes, unit)
    return _result(char.name, computed, table, watch, shift, points_shift)


def _share_table(columns: dict, baseline: np.ndarray, current: np.ndarray) -> pd.DataFrame:
    return pd.DataFrame({
        **columns,
        "Baseline rows": baseline,
        "Current rows": current,
        "Baseline share": baseline / baseline.sum(),
        "Current share": current / current.sum(),
    })


def band_labels(starts, highest: int) -> list[str]:
    """Labels ``"lo to hi"`` of score bands starting at ``starts`` and ending at ``highest``.

    Examples
    --------
    >>> band_labels([300, 520, 600], 700)
    ['300 to 519', '520 to 599', '600 to 700']
    """
    starts = [int(s) for s in starts]
    ends = [s - 1 for s in starts[1:]] + [int(highest)]
    return [f"{lo} to {hi}" for lo, hi in zip(starts, ends)]


def band_counts(hist, starts) -> np.ndarray:
    """Weight of a score histogram in each band starting at ``starts``.

    Examples
    --------
    >>> from scorecard.evaluation.histograms import ScoreHistogram
    >>> hist = ScoreHistogram(300, np.array([1.0, 2, 3]), np.array([0.0, 1, 0]))
    >>> band_counts(hist, [300, 301]).tolist()
    [1.0, 6.0]
    """
    index = np.searchsorted(np.asarray(starts), hist.scores, side="right") - 1
    return np.bincount(index, weights=hist.goods + hist.bads, minlength=len(starts))


def build_stability(card, histograms, band_starts, bin_counts, sample_rows, *, watch=0.10,
                    shift=0.25, unit="rows") -> tuple[StabilityComparison, ...]:
    """Stability of a build's holdout and out-of-time samples against development.

    Score bands start at ``band_starts``; characteristics are those of ``card``, on their
    scorecard bins. Shares are of the counts given (weights, when the build has a weight
    column); the critical values use the unweighted row counts of the samples.

    Parameters
    ----------
    card : scorecard.card.scorecard.Scorecard
    histograms : dict
        Sample name -> :class:`~scorecard.evaluation.histograms.ScoreHistogram`; a sample
        without one is left out.
    band_starts : array_like of int
        First score of each band.
    bin_counts : dict
        Characteristic name -> its ``(bins, samples, good/bad)`` weights, for every
        characteristic of ``card``.
    sample_rows : dict
        Sample name -> rows.
    watch, shift : float
        The status cut-offs.
    unit : str
        What the counts are, for the tables' notes: ``'rows'`` or ``'weights'``.

    Returns
    -------
    tuple of StabilityComparison
        Development vs holdout, then development vs out of time, for those present.
    """
    starts = np.asarray(band_starts)
    labels = band_labels(starts, card.max_score)
    baseline_name = SAMPLE_NAMES[DEVELOPMENT]
    base_hist = histograms[baseline_name]
    comparisons = []
    for code in (HOLDOUT, OUT_OF_TIME):
        current_name = SAMPLE_NAMES[code]
        if current_name not in histograms:
            continue
        sizes = (sample_rows[baseline_name], sample_rows[current_name])
        options = {"watch": watch, "shift": shift, "sizes": sizes, "unit": unit}
        score = score_stability(band_counts(base_hist, starts),
                                band_counts(histograms[current_name], starts), labels,
                                **options)
        by_sample = [bin_counts[c.name].sum(axis=2) for c in card.characteristics]
        chars = tuple(characteristic_stability(c, rows[:, DEVELOPMENT], rows[:, code], **options)
                      for c, rows in zip(card.characteristics, by_sample))
        comparisons.append(StabilityComparison(baseline_name, current_name, score, chars))
    return tuple(comparisons)
