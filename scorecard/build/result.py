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
    outputs: dict = field(default_factory=dict)
