"""What a build returns: the scorecard and every fact the outputs need."""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from scorecard.card.scorecard import Characteristic, Scorecard


@dataclass
class CharacteristicReport:
    """What happened to one column: its classing, measures and fate."""

    name: str
    kind: str
    status: str                     # 'in model' | 'not selected' | 'not binned' | 'not used'
    stage: str
    reason: str
    fine_classes: int = 0
    trend: str = ""
    information_value: float = math.nan
    strength: str = ""
    mutual_information_nats: float = math.nan
    mutual_information_bits: float = math.nan
    characteristic: Characteristic | None = None   # bins with development counts and WoE
    sample_counts: np.ndarray | None = None         # (bins, samples, good/bad) weights


@dataclass
class SampleFacts:
    rows_read: int
    left_out: int                   # outcome neither bad nor good
    rows: dict                      # sample name -> rows
    goods: dict                     # sample name -> weight of goods
    bads: dict


@dataclass
class BuildResult:
    """Everything the outputs need: the scorecard and the facts behind it."""

    config: object
    card: Scorecard
    reports: list
    selection: object
    samples: SampleFacts
    histograms: dict                # sample name -> ScoreHistogram
    performance: dict               # sample name -> Discrimination
    gains: pd.DataFrame
    gains_sample: str
    band_starts: np.ndarray
    patterns: object = None
    fairness: object = None         # scorecard.evaluation.fairness.FairnessReport, or None without protected columns
    rejects: object = None          # scorecard.build.rejects.RejectInference, or None without declined applications
    outputs: dict = field(default_factory=dict)

    def tables(self) -> dict:
        """Every table the workbook shows, as DataFrames keyed by the sheet's name for them.

        For a notebook: ``result.tables()["Bins"]`` is the Bins sheet, without a spreadsheet.
        """
        from scorecard.build import frames
        from scorecard.card import frames as card_frames
        return {
            "Samples": frames.samples_frame(self.samples),
            "Discrimination": frames.discrimination_frame(self.performance),
            "Characteristics": frames.characteristics_frame(self.reports),
            "Bins": frames.bins_frame(self.reports),
            "Model": frames.coefficients_frame(self.selection),
            "Steps": frames.steps_frame(self.selection),
            "Points": card_frames.points_frame(self.card),
            "Score bands": self.gains,
            "Score to odds": card_frames.odds_frame(self.card),
        }

    def _repr_html_(self) -> str:
        tables = self.tables()
        parts = [self.card._repr_html_().split("</p>", 1)[0] + "</p>"]
        for name in ("Discrimination", "Characteristics", "Points"):
            parts.append(f"<h4>{name}</h4>")
            parts.append(tables[name].to_html(index=False, na_rep="",
                                              float_format="{:.4f}".format))
        return "\n".join(parts)
