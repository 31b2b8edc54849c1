"""The config objects: one frozen dataclass per section of the YAML file.

Every attribute is named as its YAML key. Defaults that have bounds or allowed words come from
:mod:`scorecard.constraints`, where each is declared once for the config and the algorithms
alike; the rest (paths, separators, empty lists) are declared here. Nothing in this module
reads or checks a file: see :mod:`scorecard.config.reading`.
"""

from __future__ import annotations

import datetime
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Generic, TypeVar, Union

from scorecard import constraints as c
from scorecard.config.rejects import RejectsConfig

if TYPE_CHECKING:   # the exclusion rules' reader imports this module's value types
    from scorecard.config.exclusions import ExclusionRule
    from scorecard.config.sources import DatabaseQuery

__all__ = [
    "BinningConfig",
    "CharacteristicOverride",
    "Config",
    "DataConfig",
    "EngineConfig",
    "EvaluationConfig",
    "FairnessConfig",
    "FrozenMapping",
    "OutOfTime",
    "OutputConfig",
    "SamplesConfig",
    "ScalingConfig",
    "ScoringConfig",
    "SelectionConfig",
    "StabilityConfig",
]

OutcomeValue = Union[str, int, float, bool]
SentinelValue = Union[str, int, float]

K = TypeVar("K")
V = TypeVar("V")


class FrozenMapping(Mapping, Generic[K, V]):
    """A read-only mapping that can be hashed and pickled.

    Parameters
    ----------
    items : mapping or iterable of (key, value) pairs, optional
        The contents; copied, so later changes to the argument do not show through.

    Examples
    --------
    >>> FrozenMapping({"age": 1})["age"]
    1
    """

    __slots__ = ("_items",)

    def __init__(self, items: Mapping[K, V] | Iterable[tuple[K, V]] = ()) -> None:
        self._items = dict(items)

    def __getitem__(self, key: K) -> V:
        return self._items[key]

    def __iter__(self) -> Iterator[K]:
        return iter(self._items)

    def __len__(self) -> int:
        return len(self._items)

    def __hash__(self) -> int:
        return hash(frozenset(self._items.items()))

    def __repr__(self) -> str:
        return f"FrozenMapping({self._items!r})"

    def __reduce__(self) -> tuple:
        return (FrozenMapping, (self._items,))


@dataclass(frozen=True, slots=True)
class DataConfig:
    """Where the rows are and how their outcome is coded (the ``data`` section).

    Attributes
    ----------
    source : Path or DatabaseQuery
        A data file (CSV, compressed CSV, Parquet file or folder, SAS dataset, .xlsx sheet),
        resolved against the config's folder, or a query against a database
        (:class:`scorecard.config.sources.DatabaseQuery`).
    target : str
        The outcome column.
    bad, good : tuple
        Outcome values, as written in the config, that count as bad and as good. Rows with any
        other outcome are left out and counted. Text matches exactly (quote ``'Yes'`` to match
        only Yes); an unquoted yes/no word matches every spelling of yes or of no.
    weight : str or None
        Optional sample-weight column.
    ignore : tuple of str
        Columns never used as characteristics.
    protected : tuple of str
        Columns never used as characteristics and examined in the fairness check.
    encoding : str
        Text encoding of a CSV source.
    delimiter : str
        Field separator of a CSV source, one character.
    decimal : str
        Decimal mark of the numbers in a CSV source: ``.`` or ``,``.
    sheet : str or None
        The sheet of an ``.xlsx`` source, by name (None: the first sheet).
    exclude : tuple of ExclusionRule
        Rules that keep rows out of the build before anything is counted, in order: a row is
        counted against the first rule it meets.
    """

    source: Path | DatabaseQuery
    target: str
    bad: tuple[OutcomeValue, ...]
    good: tuple[OutcomeValue, ...]
    weight: str | None = None
    ignore: tuple[str, ...] = ()
    protected: tuple[str, ...] = ()
    encoding: str = "utf-8"
    delimiter: str = ","
    decimal: str = "."
    sheet: str | None = None
    exclude: tuple[ExclusionRule, ...] = ()


@dataclass(frozen=True, slots=True)
class OutOfTime:
    """The out-of-time sample: rows whose ``column`` date is on or after ``from_date``.

    The YAML key is ``from``; the attribute is ``from_date`` because ``from`` is a Python keyword.
    """

    column: str
    from_date: datetime.date


@dataclass(frozen=True, slots=True)
class SamplesConfig:
    """How rows are split into development, holdout and out-of-time samples.

    Attributes
    ----------
    holdout : float or None
        Share of rows set aside at random (stratified by outcome); None for no holdout.
    seed : int
        Seed of the random holdout split.
    out_of_time : OutOfTime or None
        The out-of-time sample, or None for none.
    """

    holdout: float | None = c.HOLDOUT.default
    seed: int = c.SEED.default
    out_of_time: OutOfTime | None = None


@dataclass(frozen=True, slots=True)
class BinningConfig:
    """Defaults for classing every characteristic (the ``binning`` section).

    Attributes
    ----------
    fine_bins : int
        Quantile classes before merging.
    max_bins : int
        Most classes a numeric characteristic keeps after merging (missing values and
        sentinels have their own bins on top).
    choose_max_bins : bool
        True: instead of ``max_bins`` for all, each characteristic's limit is chosen from 2 to
        12 as the one whose bins best predict held-out folds of the development counts
        (:mod:`scorecard.binning.bin_count`); ``max_bins`` must then be left out.
    min_bin_share : float
        Smallest share of rows in a merged class: a guard against slivers only.
    min_bin_goods, min_bin_bads : int
        Fewest goods and bads in a merged class.
    prior_rows : float
        Weight of the prior that shrinks each bin's weight of evidence toward 0 (average risk):
        the bin counts as if it held this many more rows at the development sample's bad rate.
        Large bins barely move; small ones keep only the evidence their size supports. 0 turns
        the shrinkage off (a bin then needs goods and bads, and small missing or sentinel bins
        get weight of evidence 0).
    trend : str
        How the bad rate moves with the value: ``detect`` (found from the data), ``rises``,
        ``falls`` or ``any`` (no order).
    sentinels : tuple
        Values that stand for a fact rather than a quantity (such as -999 for "no credit
        file"); each gets a bin of its own, never merged into the numeric range.
    rare_level_share : float
        Categorical levels below this share of rows are pooled into one 'other levels' class.
    max_levels : int
        A categorical column with more distinct levels than this is treated as identifier-like
        and skipped.
    """

    fine_bins: int = c.FINE_BINS.default
    max_bins: int = c.MAX_BINS.default
    choose_max_bins: bool = c.CHOOSE_MAX_BINS.default
    min_bin_share: float = c.MIN_BIN_SHARE.default
    min_bin_goods: int = c.MIN_BIN_GOODS.default
    min_bin_bads: int = c.MIN_BIN_BADS.default
    prior_rows: float = c.PRIOR_ROWS.default
    trend: str = c.TREND.default
    sentinels: tuple[SentinelValue, ...] = ()
    rare_level_share: float = c.RARE_LEVEL_SHARE.default
    max_levels: int = c.MAX_LEVELS.default


@dataclass(frozen=True, slots=True)
class CharacteristicOverride:
    """Manual settings for one characteristic; None means "use the binning defaults".

    Attributes
    ----------
    kind : str or None
        ``numeric`` or ``categorical``; given ``cuts`` imply numeric and ``groups`` categorical.
    trend : str or None
        Replaces ``binning.trend`` for this characteristic.
    cuts : tuple of float or None
        Strictly increasing cut points that fix the numeric classes.
    groups : tuple of tuple of str or None
        Levels grouped into classes; no level is in two groups.
    sentinels : tuple or None
        Replaces ``binning.sentinels`` for this characteristic.
    use : bool
        False keeps the characteristic out of selection.
    reason : str or None
        Plain-language text shown when this characteristic is a reason code.
    reason_code : str or None
        Short code shown with the reason.
    """

    kind: str | None = None
    trend: str | None = None
    cuts: tuple[float, ...] | None = None
    groups: tuple[tuple[str, ...], ...] | None = None
    sentinels: tuple[SentinelValue, ...] | None = None
    use: bool = True
    reason: str | None = None
    reason_code: str | None = None


@dataclass(frozen=True, slots=True)
class SelectionConfig:
    """Which characteristics enter the model (the ``selection`` section)."""

    min_iv: float = c.MIN_IV.default
    max_correlation: float = c.MAX_CORRELATION.default
    max_vif: float = c.MAX_VIF.default
    method: str = c.METHOD.default
    entry: str = c.ENTRY.default
    entry_p_value: float = c.ENTRY_P_VALUE.default
    max_characteristics: int = c.MAX_CHARACTERISTICS.default
    keep: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class ScalingConfig:
    """Score scale: ``base_score`` at good:bad odds ``base_odds``, ``pdo`` points per doubling."""

    base_score: float = c.BASE_SCORE.default
    base_odds: float = c.BASE_ODDS.default
    pdo: float = c.PDO.default


@dataclass(frozen=True, slots=True)
class OutputConfig:
    """Where the workbook and the model file go, resolved against the config's folder."""

    workbook: Path = Path("out/scorecard.xlsx")
    model: Path = Path("out/scorecard.json")


@dataclass(frozen=True, slots=True)
class EngineConfig:
    """Where the passes over the rows run.

    Attributes
    ----------
    dask : str or None
        None runs in this process with numpy; ``"local"`` starts a local Dask cluster; a
        ``"tcp://host:port"`` address uses a running Dask scheduler.
    """

    dask: str | None = None


@dataclass(frozen=True, slots=True)
class ScoringConfig:
    """How new rows are scored.

    Attributes
    ----------
    unseen_level : str
        Points for a categorical level not seen in development: ``neutral``, ``worst`` or
        ``reject``.
    unseen_missing : str
        Points for a missing value where development had none: same choices.
    out_of_range : str
        Points for a value beyond the development range: ``edge``, ``neutral``, ``worst`` or
        ``reject``.
    reasons : int
        Reason codes given per scored row.
    """

    unseen_level: str = c.UNSEEN_LEVEL.default
    unseen_missing: str = c.UNSEEN_MISSING.default
    out_of_range: str = c.OUT_OF_RANGE.default
    reasons: int = c.REASONS.default


@dataclass(frozen=True, slots=True)
class EvaluationConfig:
    """Number of score bands in the gains and calibration tables."""

    score_bands: int = c.SCORE_BANDS.default


@dataclass(frozen=True, slots=True)
class StabilityConfig:
    """Population stability thresholds: at or above ``watch`` to watch, ``shift`` for a shift."""

    watch: float = c.WATCH.default
    shift: float = c.SHIFT.default
    score_bands: int = c.SCORE_BANDS.default


@dataclass(frozen=True, slots=True)
class FairnessConfig:
    """Settings of the fairness check over the protected columns.

    Attributes
    ----------
    approval_rates : tuple of float
        Approval rates at which cutoffs are examined, strictly increasing, each in (0, 1).
    cutoffs : tuple of float
        Extra explicit cutoff scores, strictly increasing.
    proxy_cramers_v : float
        Association (Cramér's V) with a protected column above which a characteristic is
        flagged as a possible proxy.
    min_group_size : int
        Smallest group reported on its own.
    impact_ratio : float
        Approval-rate ratio below which a group is flagged.
    """

    approval_rates: tuple[float, ...] = c.APPROVAL_RATES.default
    cutoffs: tuple[float, ...] = ()
    proxy_cramers_v: float = c.PROXY_CRAMERS_V.default
    min_group_size: int = c.MIN_GROUP_SIZE.default
    impact_ratio: float = c.IMPACT_RATIO.default


@dataclass(frozen=True, slots=True)
class GradesConfig:
    """Risk grades of the build's workbook (the ``grades`` section).

    Attributes
    ----------
    count : int or None
        Number of grades of about equal shares of the rows (at least 2).
    edges : tuple of float or None
        Explicit scores that start a grade, strictly increasing (instead of ``count``).
    long_run_bad_rate : float or None
        Long-run average bad rate, in (0, 1), to calibrate the grades' PDs to.
    """

    count: int | None = None
    edges: tuple[float, ...] | None = None
    long_run_bad_rate: float | None = None


@dataclass(frozen=True, slots=True)
class SegmentsConfig:
    """How rows are split into segments, each with its own card.

    Attributes
    ----------
    column : str
        The column that picks the segment; never a characteristic of any card.
    groups : tuple of (name, tuple of levels), or None
        Named groups of the column's levels, in the order the cards are listed.
    cuts : tuple of float, or None
        Cuts of a numeric column: ``len(cuts) + 1`` segments, each ``lower <= x < upper``.
    names : tuple of str
        Names of the segments, in order (given, or made from the cuts).
    """

    column: str
    groups: tuple[tuple[str, tuple[str, ...]], ...] | None = None
    cuts: tuple[float, ...] | None = None
    names: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class Config:
    """A validated scorecard config.

    Attributes are named as the YAML keys. ``config_file`` (the name used in messages) and
    ``key_lines`` (key path such as ``"data.ignore[1]"`` -> 1-based line) are not compared.
    """

    data: DataConfig
    name: str = "scorecard"
    samples: SamplesConfig = field(default_factory=SamplesConfig)
    binning: BinningConfig = field(default_factory=BinningConfig)
    characteristics: FrozenMapping[str, CharacteristicOverride] = field(
        default_factory=FrozenMapping
    )
    selection: SelectionConfig = field(default_factory=SelectionConfig)
    scaling: ScalingConfig = field(default_factory=ScalingConfig)
    output: OutputConfig = field(default_factory=OutputConfig)
    engine: EngineConfig = field(default_factory=EngineConfig)
    scoring: ScoringConfig = field(default_factory=ScoringConfig)
    evaluation: EvaluationConfig = field(default_factory=EvaluationConfig)
    stability: StabilityConfig = field(default_factory=StabilityConfig)
    fairness: FairnessConfig = field(default_factory=FairnessConfig)
    grades: GradesConfig | None = None
    rejects: RejectsConfig | None = None
    segments: SegmentsConfig | None = None
    config_file: str = field(default="", compare=False)
    key_lines: FrozenMapping[str, int] = field(
        default_factory=FrozenMapping, compare=False, repr=False
    )
