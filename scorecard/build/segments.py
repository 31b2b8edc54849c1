"""The build of a segmented model: one card per segment, every card on the config's one scale.

The outcome pass codes the rows and draws the samples once over the whole file, as for one
card; one more pass codes each row's segment. Each segment's card is then built by the steps of
a single card (:func:`scorecard.build.pipeline._build_steps`) on the rows of that segment only,
and all segments' builds advance together: every pass they ask for (summary, fine classes, bins,
patterns) runs once over the rows for all of them, the segment one more code beside the sample
and the outcome. Each row is coded once, by its own segment's bins; no copy of the data is made.
What follows the pattern pass (selection, fit, the benchmark regression and the fairness check
on a segment's own rows) is each card's own. With declined applications, each card infers the
outcomes of its own segment's declined applicants, and the rebuilds share their passes again
(:mod:`scorecard.build.shared_passes` answers every segment's asks).

A segment too small to build is refused with one line naming it and its counts.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from functools import partial
from pathlib import Path

import numpy as np
import pandas as pd

from scorecard.build.pipeline import (
    _build_steps,
    _outcome_facts,
    rejects_steps,
    require_rule_columns,
)
from scorecard.build.result import BuildResult
from scorecard.build.shared_passes import built_together
from scorecard.card.segmented import NO_SEGMENT, SegmentedScorecard, SegmentRule
from scorecard.config import Config
from scorecard.data.outcome import BAD, GOOD
from scorecard.data.read import read_source
from scorecard.data.samples import DEVELOPMENT, SAMPLE_NAMES
from scorecard.engines.local import LocalEngine
from scorecard.engines.passes import RowFacts, SegmentFacts
from scorecard.errors import InputError
from scorecard.evaluation.histograms import performance, pooled_histogram
from scorecard.measures.ranking import Discrimination

POOLED = "all segments"


@dataclass(frozen=True)
class SegmentedBuildResult:
    """A segmented build: the model, each segment's own build and the pooled measures.

    ``segments`` maps a segment's name to the :class:`BuildResult` of its card (its workbook
    sheets, counts and samples); ``pooled`` holds each sample's AUC, Gini and KS over every
    segment's rows scored by their own card (the cards share one scale, so their scores pool).
    """

    config: Config
    card: SegmentedScorecard
    segments: dict[str, BuildResult]
    pooled: dict[str, Discrimination]
    outputs: dict[str, Path] = field(default_factory=dict)   # set by api.build (replace)
    previous: object = None
    rows_sha256: str | None = None   # of the rows a database query returned (set by api.build)

    @property
    def performance(self) -> dict[str, Discrimination]:
        return self.pooled

    def segment_table(self) -> pd.DataFrame:
        """One row per segment and one for all: rows, goods, bads, bad rate, characteristics
        in the card and the AUC of every sample measured."""
        return segment_table(self.segments, self.pooled)

    def tables(self) -> dict:
        """The Segments table, then each segment's tables under ``"<segment>: <table>"``."""
        out = {"Segments": self.segment_table()}
        for name, result in self.segments.items():
            out.update({f"{name}: {key}": table for key, table in result.tables().items()})
        return out


def segment_table(segments: dict, pooled: dict) -> pd.DataFrame:
    samples = [s for s in SAMPLE_NAMES.values()
               if any(s in r.performance for r in segments.values())]
    rows = []
    for name, r in segments.items():
        f = r.samples
        goods, bads = sum(f.goods.values()), sum(f.bads.values())
        rows.append({"Segment": name, "Rows": f.rows_read, "Goods": goods, "Bads": bads,
                     "Bad rate": bads / (goods + bads) if goods + bads else np.nan,
                     "Characteristics": len(r.card.characteristics),
                     **{f"AUC {s}": r.performance[s].auc if s in r.performance else np.nan
                        for s in samples}})
    total = {k: sum(row[k] for row in rows) for k in ("Rows", "Goods", "Bads")}
    rows.append({"Segment": POOLED, **total,
                 "Bad rate": total["Bads"] / max(total["Goods"] + total["Bads"], 1e-300),
                 "Characteristics": np.nan,
                 **{f"AUC {s}": pooled[s].auc if s in pooled else np.nan for s in samples}})
    return pd.DataFrame(rows)


def segment_rule(config: Config) -> SegmentRule:
    s = config.segments
    if s.cuts is not None:
        return SegmentRule(s.column, s.names, cuts=s.cuts)
    return SegmentRule(s.column, s.names, groups=tuple(levels for _, levels in s.groups))


def build_segmented(config: Config, engine, progress=None,
                    rejects_engine=None) -> SegmentedBuildResult:
    """Build one card per segment of ``config.segments`` on the rows of ``engine``.

    Each card has its own binning, selection and fit; every card takes the config's scaling.
    With a ``rejects`` section each card infers the outcomes of its own segment's declined
    applications (``rejects_engine``, read from ``rejects.source`` when not given), assigned to
    segments by the same rule.
    """
    r = config.rejects
    own_rejects = r is not None and rejects_engine is None
    if own_rejects:
        rejects_engine = LocalEngine(read_source(r.source, encoding=r.encoding,
                                                 delimiter=r.delimiter))
    try:
        return _build_segmented(config, engine, progress, rejects_engine)
    except InputError as exc:
        # A pass shared by every segment names the column (and row); the message gains the
        # file it is in, as for one card.
        if str(exc).startswith("column "):
            raise InputError(f"{config.data.source}: {exc}") from None
        raise
    finally:
        if own_rejects:
            rejects_engine.close()


def _build_segmented(config: Config, engine, progress, rejects_engine) -> SegmentedBuildResult:
    rule = segment_rule(config)
    declined = None
    if rejects_engine is not None:
        require_rule_columns(config, rejects_engine)
        declined = _declined_segments(config, rejects_engine, rule)
    # Rows an exclusion rule catches are outside every sample already, in every segment.
    rows, _ = _outcome_facts(config, engine)
    segment = engine.collect(lambda chunk: (rule.codes(chunk[rule.column]),),
                             columns=[rule.column])[0]
    _refuse_rows_without_segment(config, engine, rule, segment)
    shared = SegmentFacts(rows.label, rows.weight, rows.sample, segment.astype(np.int8))
    steps = {}
    for index, name in enumerate(rule.names):
        own = shared.own(index)
        held = int((segment == index).sum())
        _refuse_if_too_small(config, name, own, held)
        said = None if progress is None else partial(_segment_line, progress, name, held)
        named = replace(config, name=f"{config.name}: {name}")
        steps[name] = _build_steps(named, engine, said, own, True, None) if declined is None \
            else rejects_steps(named, engine, rejects_engine, said, own, None,
                               declined == index, (rule, index))

    def refused(name: str, exc: InputError) -> InputError:
        index = rule.names.index(name)
        return InputError(f"segments: segment {name!r} "
                          f"({_counts(shared.own(index), segment == index)}): {exc}")

    built = built_together(steps, refused)
    results = {}
    for index, name in enumerate(rule.names):
        result = built[name]
        held = int((segment == index).sum())
        facts = replace(result.samples, rows_read=held,
                        left_out=held - sum(result.samples.rows.values()))
        results[name] = replace(result, samples=facts)
    card = SegmentedScorecard(config.name, rule, tuple(r.card for r in results.values()))
    pooled = {}
    for sample in SAMPLE_NAMES.values():
        hists = [r.histograms[sample] for r in results.values() if sample in r.histograms]
        if len(hists) == len(results):
            hist = pooled_histogram(hists)
            if hist.goods.sum() > 0 and hist.bads.sum() > 0:
                pooled[sample] = performance(hist)
    if progress is not None and pooled:
        shown = "holdout" if "holdout" in pooled else "development"
        progress(f"{len(results)} segment cards on one scale; pooled {shown} AUC "
                 f"{pooled[shown].auc:.4f}")
    return SegmentedBuildResult(config, card, results, pooled)


def _declined_segments(config: Config, rejects_engine, rule: SegmentRule) -> np.ndarray:
    """The segment of every declined application, by the rule that splits the accepts."""
    source = config.rejects.source
    if rule.column not in rejects_engine.columns:
        raise InputError(f"{source}: column {rule.column}: the declined applications lack it, "
                         "and segments assigns them to segments by it")
    segment = rejects_engine.collect(lambda chunk: (rule.codes(chunk[rule.column]),),
                                     columns=[rule.column])[0]
    lost = np.flatnonzero(segment == NO_SEGMENT)
    if len(lost):
        value = rejects_engine.collect(
            lambda chunk: (chunk[rule.column].astype(object).to_numpy(),),
            columns=[rule.column])[0][int(lost[0])]
        what = "is missing" if pd.isna(value) else f"holds {str(value)!r}, which no segment lists"
        raise InputError(f"{source}: row {int(lost[0]) + 1}: column {rule.column}: {what} "
                         f"({len(lost)} such rows); segments.{'cuts' if rule.cuts else 'groups'} "
                         "must give every declined application a segment")
    return segment


def _segment_line(progress, name: str, held: int, text: str) -> None:
    # The build's first line counts the rows outside this segment as left out; say what is
    # meant instead.
    if text.startswith("outcome coded:"):
        text = f"{held} rows in the segment"
    progress(f"{name}: {text}")


def _counts(rows: RowFacts, member: np.ndarray) -> str:
    dev = member & (rows.sample == DEVELOPMENT)
    goods = rows.weight[dev & (rows.label == GOOD)].sum()
    bads = rows.weight[dev & (rows.label == BAD)].sum()
    return f"{int(member.sum())} rows, {goods:g} goods and {bads:g} bads in development"


def _refuse_if_too_small(config: Config, name: str, rows: RowFacts, held: int) -> None:
    # Two bins of the smallest size the config allows: below that no characteristic can be
    # classed, so the build could only fail later with a less telling message.
    b = config.binning
    dev = rows.sample == DEVELOPMENT
    goods = float(rows.weight[dev & (rows.label == GOOD)].sum())
    bads = float(rows.weight[dev & (rows.label == BAD)].sum())
    if goods < 2 * b.min_bin_goods or bads < 2 * b.min_bin_bads:
        raise InputError(f"segments: segment {name!r} is too small to build: {held} rows, "
                         f"{goods:g} goods and {bads:g} bads in development (needs at least "
                         f"{2 * b.min_bin_goods} goods and {2 * b.min_bin_bads} bads, two bins of "
                         "binning.min_bin_goods and min_bin_bads); merge it with another segment")


def _refuse_rows_without_segment(config, engine, rule: SegmentRule, segment: np.ndarray) -> None:
    lost = np.flatnonzero(segment == NO_SEGMENT)
    if not len(lost):
        return
    at = int(lost[0])
    value = engine.collect(lambda chunk: (chunk[rule.column].astype(object).to_numpy(),),
                           columns=[rule.column])[0][at]
    what = "is missing" if pd.isna(value) else f"holds {str(value)!r}, which no segment lists"
    raise InputError(f"{config.data.source}: row {at + 1}: column {rule.column}: {what} "
                     f"({len(lost)} such rows); segments.{'cuts' if rule.cuts else 'groups'} "
                     "must give every row a segment")
