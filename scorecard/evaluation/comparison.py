"""``scorecard compare``: has the population moved, and does the scorecard still rank and predict?

Both files are scored once with the scorecard (:func:`scorecard.card.scoring.apply_scorecard`);
everything after that works on counts per score and per attribute. The score's population
stability index is taken over score bands cut at the baseline's score deciles, and every
characteristic's stability index over its scorecard bins (:mod:`scorecard.evaluation.stability`).

Where a file holds the outcome column, its goods and bads give AUC, Gini and KS, observed
against expected bad rates per score band with a two-sided binomial test, a Hosmer-Lemeshow test
over the bands, and the bad rate of every attribute against its development weight of evidence.

An attribute *has turned* when the development sample and the current one both show its risk
clearly, and the other way round. "Clearly" is a two-sided 5% z-test on log-odds, with the
standard error ``sqrt(1/g + 1/b)`` of a bin's WoE from its goods ``g`` and bads ``b`` (from
memory), so that a bin near average risk does not turn by chance. The attribute has turned when

* its WoE is clearly non-zero in both samples and of opposite signs; or
* it is a value range, and its WoE minus the previous range's WoE is clearly non-zero in both
  samples and of opposite signs: the order of bad rates breaks the development trend.

WoE is relative to the sample's own average risk, so a population that grows riskier overall
does not turn its attributes; only a change in how they rank does.

Ranking *held* unless the current AUC is below the baseline's beyond chance (one-sided 5%, with
the Hanley-McNeil 1982 standard error of an AUC, from memory); calibration *held* when the
current sample's Hosmer-Lemeshow p-value is at least 0.05.

A segmented model scores each row with its segment's card on one scale, so the score's index,
the ranking and the calibration are those of the pooled scores of every segment; each card's
characteristics are compared on its own segment's rows, named ``<characteristic> (<segment>)``
(:mod:`scorecard.evaluation.segment_counts`). Beside the pooled figures, each segment gets its
own score index (bands cut at that segment's baseline score quantiles, so a segment that only
grows or shrinks in the mix does not move its own index) and its own AUC, Gini and KS in each
file that holds the outcome (:class:`SegmentComparison`).
"""

from __future__ import annotations

import json
import math
import warnings
from typing import NamedTuple

import numpy as np
import pandas as pd
from scipy import stats

from scorecard.card.scorecard import RANGE
from scorecard.card.segmented import SegmentedScorecard, load_model
from scorecard.card.scoring import bad_probability
from scorecard.constraints import SCORE_BANDS, SHIFT, WATCH, cutoffs_in_order
from scorecard.errors import InputError
from scorecard.evaluation.group_counts import GroupCounts, count_groups
from scorecard.evaluation.histograms import ScoreHistogram, band_edges
from scorecard.evaluation.scored_rows import outcome_labels, read_rows, require_characteristics
from scorecard.evaluation.segment_counts import count_segments, pooled_card, segment_label
from scorecard.evaluation.stability import (
    IndexResult,
    StabilityComparison,
    band_labels,
    characteristic_stability,
    score_stability,
)
from scorecard.measures.calibration import HosmerLemeshow, hosmer_lemeshow
from scorecard.measures.information import woe_of_shares, woe_standard_error
from scorecard.measures.ranking import Discrimination, discrimination

SIGNIFICANCE = 0.05
_Z_TWO_SIDED = float(stats.norm.ppf(1 - SIGNIFICANCE / 2))
_Z_ONE_SIDED = float(stats.norm.ppf(1 - SIGNIFICANCE))
BASELINE, CURRENT = "baseline", "current"
_TURN_REASONS = np.array(["", "weight of evidence changed sign",
                          "order against the previous range reversed",
                          "weight of evidence changed sign; order against the previous range "
                          "reversed"], dtype=object)


class _FileCounts(NamedTuple):
    """What one pass over a file leaves behind: counts by score and by attribute."""

    path: str
    rows: int
    rejected: int
    score_rows: np.ndarray          # rows at each score from card.min_score (rejected left out)
    score_goods: np.ndarray | None  # None when the file has no outcome column
    score_bads: np.ndarray | None
    bin_rows: list                  # per characteristic: rows per bin
    bin_goods: list | None
    bin_bads: list | None
    left_out: int                   # rows whose outcome is neither good nor bad
    unusual: dict                   # name -> scoring.UnusualValues


class SamplePerformance(NamedTuple):
    """Ranking and calibration of one file that holds the outcome.

    Attributes
    ----------
    sample : str
        ``'baseline'`` or ``'current'``.
    goods, bads, left_out : int
        Rows with a good, a bad and another outcome.
    discrimination : Discrimination or None
        AUC, Gini and KS of the score; None without both goods and bads.
    auc_standard_error : float
        Hanley-McNeil standard error of the AUC (nan without both goods and bads).
    calibration : pandas.DataFrame
        Per score band: observed against expected bad rate and the binomial p-value.
    hosmer_lemeshow : HosmerLemeshow or None
        Over the bands that hold rows with an outcome; None when fewer than three do.
    attributes : pandas.DataFrame
        Per attribute: current bad rate and WoE against the development WoE, and whether it
        has turned.
    """

    sample: str
    goods: int
    bads: int
    left_out: int
    discrimination: Discrimination | None
    auc_standard_error: float
    calibration: pd.DataFrame
    hosmer_lemeshow: HosmerLemeshow | None
    attributes: pd.DataFrame


class SegmentComparison(NamedTuple):
    """One segment of a segmented model, on that segment's rows alone.

    Attributes
    ----------
    rows : dict
        ``{'baseline': N, 'current': M}`` rows the segment takes in each file.
    characteristics : list of str
        Its card's characteristics under their pooled names.
    score : IndexResult or None
        The score's index over bands cut at the segment's baseline score quantiles; None when
        either file has no scored row in the segment.
    performance : dict
        ``'baseline'`` / ``'current'`` -> (goods, bads, Discrimination or None) for the files
        with an outcome; None where the segment lacks goods or bads.
    """

    rows: dict
    characteristics: list
    score: IndexResult | None
    performance: dict

    def to_dict(self) -> dict:
        s = self.score
        return {"rows": dict(self.rows), "characteristics": list(self.characteristics),
                "score": None if s is None else {
                    "psi": s.index, "status": s.status, "critical_value": s.critical_value,
                    "beyond_chance": s.beyond_chance},
                "performance": {sample: {"goods": goods, "bads": bads,
                                         "auc": None if d is None else d.auc,
                                         "gini": None if d is None else d.gini,
                                         "ks": None if d is None else d.ks}
                                for sample, (goods, bads, d) in self.performance.items()}}


class Comparison(NamedTuple):
    """Stability and performance of a scorecard between a baseline and a current file.

    Attributes
    ----------
    model, baseline, current : str
        The paths compared.
    rows : dict
        ``{'baseline': N, 'current': M}`` rows read.
    rejected : dict
        Rows per file that the scorecard refuses to score; they are left out of the score's
        index and of the performance by score band.
    stability : StabilityComparison
        Score and characteristic stability indices with their tables.
    unusual : pandas.DataFrame
        Per characteristic and sample ('baseline', 'current'): levels not seen in development,
        missing values where development had none, values beyond the development range.
    performance : dict
        ``'baseline'`` / ``'current'`` -> SamplePerformance, for the files with an outcome.
    ranking_held, calibration_held : bool or None
        The verdicts of the module docstring; None when they cannot be assessed.
    watch, shift : float
        The status cut-offs used.
    segments : dict
        Segment name -> :class:`SegmentComparison` under a segmented model; empty for one card.
    """

    model: str
    baseline: str
    current: str
    rows: dict
    rejected: dict
    stability: StabilityComparison
    unusual: pd.DataFrame
    performance: dict
    ranking_held: bool | None
    calibration_held: bool | None
    watch: float
    shift: float
    segments: dict = {}

    @property
    def indices(self) -> tuple[IndexResult, ...]:
        """The score's index, then every characteristic's."""
        return (self.stability.score,) + self.stability.characteristics

    @property
    def shifted(self) -> bool:
        """True when any index reaches 'shift'."""
        return self.reached("shift")

    def reached(self, status: str) -> bool:
        """True when any index reaches ``status`` ('watch' includes 'shift')."""
        levels = {"watch": ("watch", "shift"), "shift": ("shift",)}[status]
        return any(r.status in levels for r in self.indices)

    def to_dict(self) -> dict:
        """The ``compare --json`` content (the documented keys, with extra keys beside them)."""
        score = self.stability.score
        return {
            "score": {"psi": score.index, "status": score.status,
                      "critical_value": score.critical_value,
                      "beyond_chance": score.beyond_chance},
            "characteristics": {
                r.name: {"csi": r.index, "status": r.status, "critical_value": r.critical_value,
                         "beyond_chance": r.beyond_chance, "points_shift": r.points_shift}
                for r in self.stability.characteristics},
            "rows": dict(self.rows),
            "rejected": dict(self.rejected),
            "ranking_held": self.ranking_held,
            "calibration_held": self.calibration_held,
            "performance": {name: _performance_dict(p) for name, p in self.performance.items()},
            **({"segments": {name: part.to_dict() for name, part in self.segments.items()}}
               if self.segments else {}),
        }

    def to_json(self) -> str:
        return json.dumps(_finite(self.to_dict()), indent=1, allow_nan=False) + "\n"

    def text(self) -> str:
        """A short table for the terminal."""
        width = max(len(r.name) for r in self.indices) + 2
        lines = [f"{self.baseline} ({self.rows[BASELINE]} rows) -> "
                 f"{self.current} ({self.rows[CURRENT]} rows)",
                 f"{'':{width}}{'index':>8}  {'status':7}{'critical':>9}  {'points shift':>12}"]
        for r in self.indices:
            chance = "  beyond chance" if r.beyond_chance else ""
            moved = "" if r.points_shift is None else f"{r.points_shift:+.2f}"
            lines.append(f"{r.name:{width}}{r.index:8.4f}  {r.status:7}{r.critical_value:9.4f}"
                         f"  {moved:>12}{chance}")
        for p in self.performance.values():
            lines.append(_performance_line(p))
        lines.append(f"ranking {_verdict(self.ranking_held)}, "
                     f"calibration {_verdict(self.calibration_held)}")
        for name, part in self.segments.items():
            lines.append(_segment_line(name, part))
        return "\n".join(lines)


def _segment_line(name: str, part: SegmentComparison) -> str:
    line = (f"segment {name}: {part.rows[BASELINE]} -> {part.rows[CURRENT]} rows; score index "
            + ("not assessed" if part.score is None
               else f"{part.score.index:.4f} {part.score.status}"))
    for sample, (_, _, d) in part.performance.items():
        if d is not None:
            line += f"; {sample} AUC {d.auc:.4f}, Gini {d.gini:.4f}, KS {d.ks:.4f}"
    return line + f"; characteristics scored by its own card, named '<name> ({name})'"


def _verdict(held: bool | None) -> str:
    return "not assessed" if held is None else ("held" if held else "did not hold")


def _performance_line(p: SamplePerformance) -> str:
    line = f"{p.sample}: {p.goods} goods, {p.bads} bads"
    if p.discrimination is not None:
        d = p.discrimination
        line += f"; AUC {d.auc:.4f}, Gini {d.gini:.4f}, KS {d.ks:.4f}"
    if p.hosmer_lemeshow is not None:
        line += f"; Hosmer-Lemeshow p {p.hosmer_lemeshow.p_value:.4f}"
    turned = int(p.attributes["Turned"].sum())
    return line + f"; {turned} attributes turned"


def _performance_dict(p: SamplePerformance) -> dict:
    d, hl = p.discrimination, p.hosmer_lemeshow
    turned = p.attributes[p.attributes["Turned"]]
    return {
        "goods": p.goods, "bads": p.bads, "left_out": p.left_out,
        "auc": None if d is None else d.auc, "gini": None if d is None else d.gini,
        "ks": None if d is None else d.ks,
        "hosmer_lemeshow": None if hl is None else {"statistic": hl.statistic, "dof": hl.dof,
                                                    "p_value": hl.p_value},
        "turned": [{"characteristic": c, "attribute": a}
                   for c, a in zip(turned["Characteristic"], turned["Attribute"])],
    }


def _finite(value):
    """nan and infinities as null, so that the file is strict JSON."""
    if isinstance(value, dict):
        return {k: _finite(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_finite(v) for v in value]
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def _count_file(card, path, frame: pd.DataFrame) -> tuple[_FileCounts, dict]:
    """Score ``frame`` once and keep only counts; with them, under a segmented model, each
    segment's counts by its own card (empty for one card)."""
    require_characteristics(card, path, frame)
    label = outcome_labels(card, frame)
    try:
        if isinstance(card, SegmentedScorecard):
            counted = count_segments(card, frame, label)
            counts = counted.pooled
            parts = {name: counts_of_group(part, 0, str(path))
                     for name, part in counted.segments.items()}
        else:
            counts, parts = count_groups(card, frame, label=label), {}
    except InputError as exc:
        raise InputError(f"{path}: {exc}") from None
    return counts_of_group(counts, 0, str(path)), parts


def counts_of_group(counts: GroupCounts, i: int, path: str) -> _FileCounts:
    """The counts of group ``i`` (position in ``counts.groups``) as one sample's counts."""
    def each(tables):
        return None if tables is None else [t[i] for t in tables]

    return _FileCounts(path, int(counts.rows[i]), int(counts.rejected[i]), counts.score_rows[i],
                       None if counts.score_goods is None else counts.score_goods[i],
                       None if counts.score_bads is None else counts.score_bads[i],
                       each(counts.bin_rows), each(counts.bin_goods), each(counts.bin_bads),
                       int(counts.left_out[i]), counts.unusual)


def _band_sums(values: np.ndarray, index: np.ndarray, n_bands: int) -> np.ndarray:
    return np.bincount(index, weights=values, minlength=n_bands)


def score_index(card, base: _FileCounts, cur: _FileCounts, starts, watch, shift) -> IndexResult:
    """The score's stability index from ``base`` to ``cur`` over the bands starting at
    ``starts``."""
    index = np.searchsorted(starts, np.arange(card.min_score, card.max_score + 1), "right") - 1
    n = len(starts)
    return score_stability(_band_sums(base.score_rows, index, n),
                           _band_sums(cur.score_rows, index, n),
                           band_labels(starts, card.max_score), watch=watch, shift=shift)


def _stability(card, base: _FileCounts, cur: _FileCounts, starts, watch, shift):
    score = score_index(card, base, cur, starts, watch, shift)
    chars = tuple(characteristic_stability(c, b, m, watch=watch, shift=shift)
                  for c, b, m in zip(card.characteristics, base.bin_rows, cur.bin_rows))
    return StabilityComparison(base.path, cur.path, score, chars)


def _calibration(card, counts: _FileCounts, starts):
    """Observed against expected bads per score band, and Hosmer-Lemeshow over the bands."""
    scores = np.arange(card.min_score, card.max_score + 1)
    index = np.searchsorted(starts, scores, "right") - 1
    n = len(starts)
    labelled = counts.score_goods + counts.score_bads
    rows = _band_sums(labelled, index, n)
    bads = _band_sums(counts.score_bads, index, n)
    expected = _band_sums(labelled * bad_probability(card, scores), index, n)
    filled = rows > 0
    with np.errstate(invalid="ignore", divide="ignore"):
        observed_rate = np.where(filled, bads / rows, np.nan)
        expected_rate = np.where(filled, expected / rows, np.nan)
    p_values = np.full(n, np.nan)
    for i in np.flatnonzero(filled):
        p_values[i] = stats.binomtest(int(bads[i]), int(rows[i]), expected_rate[i]).pvalue
    table = pd.DataFrame({"Band": band_labels(starts, card.max_score), "Rows": rows,
                          "Bads": bads, "Observed bad rate": observed_rate,
                          "Expected bad rate": expected_rate, "Binomial p-value": p_values})
    fit = hosmer_lemeshow(bads[filled], expected[filled], rows[filled]) \
        if filled.sum() >= 3 else None
    return table, fit


def _woe(goods: np.ndarray, bads: np.ndarray):
    """WoE and its standard error per bin; nan where a bin lacks goods or bads."""
    usable = (goods > 0) & (bads > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        woe = woe_of_shares(goods / goods.sum(), bads / bads.sum())
    error = woe_standard_error(goods, bads)
    return np.where(usable, woe, np.nan), np.where(usable, error, np.nan)


def _turned(char, woe: np.ndarray, error: np.ndarray):
    """Which attributes have turned, and why (see the module docstring)."""
    goods = np.array([b.goods for b in char.bins], dtype=float)
    bads = np.array([b.bads for b in char.bins], dtype=float)
    development = np.array([b.woe for b in char.bins], dtype=float)
    # A bin the development sample could not estimate has no standard error, so it never turns.
    development_error = _woe(goods, bads)[1]
    opposite = _clearly_opposite(development, development_error, woe, error)
    reversed_order = np.zeros(len(char.bins), dtype=bool)
    ranges = np.flatnonzero([b.kind == RANGE for b in char.bins])
    if len(ranges) > 1:
        before, after = ranges[:-1], ranges[1:]
        reversed_order[after] = _clearly_opposite(
            development[after] - development[before],
            np.hypot(development_error[after], development_error[before]),
            woe[after] - woe[before], np.hypot(error[after], error[before]))
    why = _TURN_REASONS[opposite.astype(int) + 2 * reversed_order.astype(int)]
    return opposite | reversed_order, development, why


def _clearly_opposite(development, development_error, current, current_error) -> np.ndarray:
    """Both values beyond chance from zero, and of opposite signs; False where one is nan."""
    with np.errstate(invalid="ignore"):
        clear = (np.abs(development) > _Z_TWO_SIDED * development_error) \
            & (np.abs(current) > _Z_TWO_SIDED * current_error)
        return clear & (np.sign(development) * np.sign(current) < 0)


def _attributes(card, counts: _FileCounts) -> pd.DataFrame:
    parts = []
    for char, goods, bads in zip(card.characteristics, counts.bin_goods, counts.bin_bads):
        rows = goods + bads
        if goods.sum() > 0 and bads.sum() > 0:
            woe, error = _woe(goods, bads)
        else:
            woe = error = np.full(len(goods), np.nan)
        turned, development, why = _turned(char, woe, error)
        with np.errstate(invalid="ignore", divide="ignore"):
            rate = np.where(rows > 0, bads / rows, np.nan)
        parts.append(pd.DataFrame({
            "Characteristic": char.name, "Attribute": [b.label for b in char.bins],
            "Development weight of evidence": development, "Rows": rows, "Goods": goods,
            "Bads": bads, "Bad rate": rate, "Weight of evidence": woe, "Turned": turned,
            "Why": why}))
    return pd.concat(parts, ignore_index=True)


def _auc_standard_error(auc: float, goods: float, bads: float) -> float:
    """Hanley and McNeil (1982) standard error of an AUC, goods scoring higher (from memory)."""
    q_goods = auc / (2 - auc)
    q_bads = 2 * auc ** 2 / (1 + auc)
    variance = (auc * (1 - auc) + (goods - 1) * (q_goods - auc ** 2)
                + (bads - 1) * (q_bads - auc ** 2)) / (goods * bads)
    return math.sqrt(max(variance, 0.0))


def _performance(card, counts: _FileCounts, sample: str, starts) -> SamplePerformance:
    goods, bads = counts.score_goods.sum(), counts.score_bads.sum()
    ranked, error = None, math.nan
    if goods > 0 and bads > 0:
        ranked = discrimination(counts.score_goods, counts.score_bads)
        error = _auc_standard_error(ranked.auc, goods, bads)
    else:
        warnings.warn(f"{counts.path}: the {sample} file needs both goods and bads for AUC, "
                      f"Gini and KS (found {goods:g} goods, {bads:g} bads)", stacklevel=3)
    table, fit = _calibration(card, counts, starts)
    return SamplePerformance(sample, int(goods), int(bads), counts.left_out, ranked, error,
                             table, fit, _attributes(card, counts))


def _ranking_held(performance: dict) -> bool | None:
    base, cur = performance.get(BASELINE), performance.get(CURRENT)
    if base is None or cur is None or base.discrimination is None \
            or cur.discrimination is None:
        return None
    drop = base.discrimination.auc - cur.discrimination.auc
    spread = math.hypot(base.auc_standard_error, cur.auc_standard_error)
    return bool(drop <= _Z_ONE_SIDED * spread)


def _calibration_held(performance: dict) -> bool | None:
    cur = performance.get(CURRENT)
    if cur is None or cur.hosmer_lemeshow is None:
        return None
    return bool(cur.hosmer_lemeshow.p_value >= SIGNIFICANCE)


def _unusual(card, files: dict) -> pd.DataFrame:
    records = [{"Characteristic": name, "Sample": sample,
                "Levels not seen in development": u.unseen_levels,
                "Missing where development had none": u.unseen_missing,
                "Beyond the development range": u.out_of_range}
               for name in card.names for sample, counts in files.items()
               for u in (counts.unusual[name],)]
    return pd.DataFrame(records)


def check_band_options(bands, watch, shift) -> None:
    """InputError unless the score bands and the stability cut-offs are as declared."""
    if not SCORE_BANDS.allows(bands):
        raise InputError(f"--bands: must be {SCORE_BANDS.expected()}, got {bands!r}")
    if not (WATCH.allows(watch) and SHIFT.allows(shift) and cutoffs_in_order(watch, shift)):
        raise InputError(f"watch, shift: need 0 < watch < shift, got {watch!r}, {shift!r}")


def compare(model_path, baseline_path, current_path, *, bands=None, watch=None,
            shift=None) -> Comparison:
    """Compare the scores and attributes of two files under one scorecard.

    Parameters
    ----------
    model_path : path
        A model file written by ``scorecard build``: one card or a segmented model.
    baseline_path, current_path : path
        Data files (CSV, Parquet or a folder of Parquet files) holding every characteristic
        of the scorecard; the outcome column is optional in each.
    bands : int, optional
        Number of score bands, cut at the baseline's score quantiles (default 10).
    watch, shift : float, optional
        Status cut-offs of the indices (default 0.10 and 0.25, common practice).

    Returns
    -------
    Comparison

    Raises
    ------
    InputError
        Naming the file and column: a characteristic the file lacks, a column whose type
        differs from the scorecard's, a file without rows.

    Examples
    --------
    >>> import tempfile, pathlib
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
    >>> result.stability.score.index, result.shifted
    (0.0, False)
    """
    bands = SCORE_BANDS.default if bands is None else bands
    watch = WATCH.default if watch is None else watch
    shift = SHIFT.default if shift is None else shift
    check_band_options(bands, watch, shift)
    model = load_model(model_path)
    base, base_segments = _count_file(model, baseline_path, read_rows(baseline_path))
    cur, cur_segments = _count_file(model, current_path, read_rows(current_path))
    # A segmented model's scores pool (one scale); its characteristics stay per segment card.
    card = pooled_card(model) if isinstance(model, SegmentedScorecard) else model
    if base.score_rows.sum() == 0:
        raise InputError(f"{baseline_path}: the scorecard refuses every row, so there are no "
                         "scores to cut bands on")
    if cur.score_rows.sum() == 0:
        raise InputError(f"{current_path}: the scorecard refuses every row, so there are no "
                         "scores to compare")
    starts = band_edges(ScoreHistogram(card.min_score, base.score_rows,
                                       np.zeros_like(base.score_rows)), bands)
    performance = {sample: _performance(card, counts, sample, starts)
                   for sample, counts in ((BASELINE, base), (CURRENT, cur))
                   if counts.score_goods is not None}
    return Comparison(
        model=str(model_path), baseline=str(baseline_path), current=str(current_path),
        rows={BASELINE: base.rows, CURRENT: cur.rows},
        rejected={BASELINE: base.rejected, CURRENT: cur.rejected},
        stability=_stability(card, base, cur, starts, watch, shift),
        unusual=_unusual(card, {BASELINE: base, CURRENT: cur}),
        performance=performance,
        ranking_held=_ranking_held(performance),
        calibration_held=_calibration_held(performance),
        watch=watch, shift=shift,
        segments=_segments(model, base_segments, cur_segments, bands, watch, shift))


def _segments(model, base: dict, cur: dict, bands: int, watch, shift) -> dict:
    """Per segment: its rows in each file, its characteristics' pooled names, its own score
    index and each file's AUC, Gini and KS on its rows alone."""
    out = {}
    for name, b in base.items():
        card, c = model.segments[name], cur[name]
        score = None
        if b.score_rows.sum() > 0 and c.score_rows.sum() > 0:
            starts = band_edges(ScoreHistogram(card.min_score, b.score_rows,
                                               np.zeros_like(b.score_rows)), bands)
            score = score_index(card, b, c, starts, watch, shift)
        out[name] = SegmentComparison(
            {BASELINE: b.rows, CURRENT: c.rows},
            [segment_label(n, name) for n in card.names], score,
            {sample: ranking_of(counts) for sample, counts in ((BASELINE, b), (CURRENT, c))
             if counts.score_goods is not None})
    return out


def ranking_of(counts: _FileCounts) -> tuple:
    """(goods, bads, AUC/Gini/KS) of the scored rows with an outcome; the measures are None
    without both goods and bads."""
    goods, bads = counts.score_goods.sum(), counts.score_bads.sum()
    ranked = discrimination(counts.score_goods, counts.score_bads) \
        if goods > 0 and bads > 0 else None
    return int(goods), int(bads), ranked
