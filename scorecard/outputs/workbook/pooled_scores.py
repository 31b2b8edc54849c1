"""The pooled scores of a segmented build, as the single card's Score bands and Risk grades
sheets read a build.

Every segment's card has the same scaling, so the score histograms of the segments add up on
one scale (:func:`~scorecard.evaluation.histograms.pooled_histogram`); one cut-off acts on them
all. :class:`PooledScores` offers what :func:`~scorecard.outputs.workbook.sheets.write_score_bands`
and :func:`~scorecard.outputs.workbook.grades_sheet.write_grades_sheet` read of a build result
(gains table, band edges, histograms, measures, samples, card, config), so the segmented
workbook writes those sheets with the single card's own writers.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from scorecard.build.result import BuildResult
from scorecard.evaluation.histograms import (
    ScoreHistogram,
    band_edges,
    gains_table,
    pooled_histogram,
)


@dataclass(frozen=True)
class PooledSamples:
    """Rows of each sample over every segment (what the Score bands sheet's note reads)."""

    rows: dict


@dataclass(frozen=True)
class PooledScores:
    """The build-result view of every segment's scores pooled (see the module docstring)."""

    config: object
    card: object                    # the SegmentedScorecard: its score range and scaling
    samples: PooledSamples
    histograms: dict                # sample name -> pooled ScoreHistogram
    performance: dict               # sample name -> pooled Discrimination
    gains: pd.DataFrame
    gains_sample: str
    band_starts: np.ndarray
    notes: tuple = ("Every segment's scores pooled: each row scored by its own segment's card, "
                    "all on the one scale, so one cut-off acts on them together. Each "
                    "segment's own bands are on its Score bands (<segment>) sheet.",)

    # The build result's own readings of its scores, so that both are read alike.
    band_cutoffs = BuildResult.band_cutoffs
    grades = BuildResult.grades


def pooled_scores(result) -> PooledScores:
    """The pooled view of a :class:`~scorecard.build.segments.SegmentedBuildResult`.

    The gains table's sample is the holdout when every segment measured one, else the
    development sample, as for one card; the bands are cut as the config asks for one card.
    """
    parts = list(result.segments.values())
    histograms: dict[str, ScoreHistogram] = {}
    for sample in parts[0].histograms:
        if all(sample in p.histograms for p in parts):
            histograms[sample] = pooled_histogram(p.histograms[sample] for p in parts)
    sample = "holdout" if "holdout" in result.pooled else "development"
    hist = histograms[sample]
    starts = band_edges(hist, result.config.evaluation.score_bands)
    rows = {name: sum(p.samples.rows.get(name, 0) for p in parts) for name in histograms}
    return PooledScores(result.config, result.card, PooledSamples(rows), histograms,
                        dict(result.pooled), gains_table(hist, starts, result.card.scaling),
                        sample, starts)
