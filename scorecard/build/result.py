"""What a build returns: the scorecard and every fact the outputs need.

Every object here is frozen: the build constructs each once with all its fields (or derives a
new one with :func:`dataclasses.replace`), so what an API caller holds is what the workbook shows.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from scorecard.build.rejects import RejectInference
from scorecard.card.scorecard import Characteristic, Scorecard
from scorecard.config import Config
from scorecard.data.exclusions import Waterfall
from scorecard.engines.patterns import Patterns
from scorecard.evaluation.additivity import PairDeparture
from scorecard.evaluation.benchmark import Benchmark
from scorecard.evaluation.fairness import FairnessReport
from scorecard.evaluation.histograms import ScoreHistogram
from scorecard.evaluation.stability import StabilityComparison
from scorecard.fit.selection import Selection
from scorecard.measures.ranking import Discrimination


@dataclass(frozen=True)
class CharacteristicReport:
    """What happened to one column: its classing, measures and fate."""

    name: str
    kind: str
    status: str                     # 'in model' | 'not selected' | 'not binned' | 'not used'
    stage: str
    reason: str
    fine_classes: int = 0
    trend: str = ""
    bins_reason: str = ""           # how many bins, and why that many
    information_value: float = math.nan
    strength: str = ""
    mutual_information_nats: float = math.nan
    mutual_information_bits: float = math.nan
    characteristic: Characteristic | None = None   # bins with development counts and WoE
    sample_counts: np.ndarray | None = None         # (bins, samples, good/bad) weights


@dataclass(frozen=True)
class SampleFacts:
    rows_read: int
    left_out: int                   # outcome neither bad nor good
    rows: dict[str, int]            # sample name -> rows
    goods: dict[str, float]         # sample name -> weight of goods
    bads: dict[str, float]


@dataclass(frozen=True)
class BuildResult:
    """Everything the outputs need: the scorecard and the facts behind it."""

    config: Config
    card: Scorecard
    reports: tuple[CharacteristicReport, ...]      # in the data's column order
    selection: Selection
    samples: SampleFacts
    histograms: dict[str, ScoreHistogram]           # by sample name
    performance: dict[str, Discrimination]          # by sample name
    gains: pd.DataFrame
    gains_sample: str
    band_starts: np.ndarray
    patterns: Patterns
    # Development against holdout, then against out of time, for those present.
    stability: tuple[StabilityComparison, ...]
    fairness: FairnessReport | None = None          # None without protected columns
    benchmark: Benchmark | None = None              # card against a raw logistic regression
    outputs: dict[str, Path] = field(default_factory=dict)   # set by api.build (replace)
    unmeasured: dict[str, str] = field(default_factory=dict)   # sample -> why no AUC, Gini, KS
    extreme_values: dict[str, str] = field(default_factory=dict)   # column -> values far beyond
    previous: Scorecard | None = None   # the model file this build replaced, when one loaded
    rejects: RejectInference | None = None   # without declined applications: None
    rows_sha256: str | None = None   # of the rows a database query returned (set by api.build)
    # Rows read, removed by each data.exclude rule, of another outcome, used (None: not built
    # from a data file's rows).
    waterfall: Waterfall | None = None
    # Every pair of the card's characteristics, the largest departure from additivity first.
    additivity: tuple[PairDeparture, ...] = ()

    def tables(self) -> dict:
        """Every table the workbook shows, as DataFrames keyed by the sheet's name for them.

        For a notebook: ``result.tables()["Bins"]`` is the Bins sheet, without a spreadsheet.
        """
        from scorecard.build import frames
        from scorecard.card import frames as card_frames
        return {
            "Samples": frames.samples_frame(self.samples),
            **({} if self.waterfall is None else {"Exclusions": self.waterfall.frame()}),
            "Discrimination": frames.discrimination_frame(self.performance),
            "Characteristics": frames.characteristics_frame(self.reports),
            "Bins": frames.bins_frame(self.reports),
            "Model": frames.coefficients_frame(self.selection),
            "Steps": frames.steps_frame(self.selection),
            "Points": card_frames.points_frame(self.card),
            "Score bands": self.gains,
            "Cut-off at each band edge": self.band_cutoffs(),
            "Score to odds": card_frames.odds_frame(self.card),
            **({} if self.grades() is None else {"Risk grades": self.grades().table}),
        }

    def band_cutoffs(self):
        """Approval rate and bad rates when cutting at each score band's lowest score."""
        from scorecard.evaluation.strategy import band_cutoffs
        hist = self.histograms[self.gains_sample]
        return band_cutoffs(hist.low, hist.goods, hist.bads, self.band_starts)

    def grades(self):
        """The risk grades the config asks for (on the gains table's sample), or None."""
        spec = getattr(self.config, "grades", None)
        if spec is None:
            return None
        from scorecard.evaluation.grades import grade_table
        return grade_table(self.histograms[self.gains_sample], self.card.scaling,
                           count=spec.count, edges=spec.edges,
                           long_run_bad_rate=spec.long_run_bad_rate)

    def _repr_html_(self) -> str:
        tables = self.tables()
        parts = [self.card._repr_html_().split("</p>", 1)[0] + "</p>"]
        for name in ("Discrimination", "Characteristics", "Points"):
            parts.append(f"<h4>{name}</h4>")
            parts.append(tables[name].to_html(index=False, na_rep="",
                                              float_format="{:.4f}".format))
        return "\n".join(parts)
