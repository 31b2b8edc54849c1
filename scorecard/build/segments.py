"""The build of a segmented model: one card per segment, every card on the config's one scale.

The outcome pass codes the rows and draws the samples once over the whole file, as for one
card; one more pass codes each row's segment. Each segment's card is then built by the steps of
a single card (:func:`scorecard.build.pipeline._build_steps`) on the rows of that segment only,
and all segments' builds advance together: every pass they ask for (summary, fine classes, bins,
patterns) runs once over the rows for all of them, the segment one more code beside the sample
and the outcome. Each row is coded once, by its own segment's bins; no copy of the data is made.
What follows the pattern pass (selection, fit, the benchmark regression and the fairness check
on a segment's own rows) is each card's own.

A segment too small to build is refused with one line naming it and its counts.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from functools import partial
from pathlib import Path

import numpy as np
import pandas as pd

from scorecard.build.pipeline import (
    BINS,
    FINE,
    PATTERNS,
    REJECT_SCORES,
    SCORES,
    SUMMARY,
    _build_steps,
    _one_pass,
    _outcome_facts,
    rejects_steps,
    require_rule_columns,
)
from scorecard.build.rejects import RejectScores, score_chunk_by_segment
from scorecard.build.result import BuildResult
from scorecard.card.segmented import NO_SEGMENT, SegmentedScorecard, SegmentRule
from scorecard.config import Config
from scorecard.data.outcome import BAD, GOOD
from scorecard.data.read import read_source
from scorecard.data.samples import DEVELOPMENT, EXCLUDED, SAMPLE_NAMES
from scorecard.engines.local import LocalEngine
from scorecard.engines.passes import (
    RowFacts,
    SegmentFacts,
    bin_counts_by_segment,
    fine_counts_by_segment,
    merge_bin_counts,
    merge_by_segment,
    merge_fine,
    merge_patterns_by_segment,
    merge_scores,
    pattern_radix,
    patterns_by_segment,
    scores_by_segment,
)
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


def built_together(steps: dict, refused) -> dict:
    """Every segment's build (``steps``: name to the steps of its build, in segment order), the
    passes they ask for answered once for all segments; ``refused(name, error)`` words a
    segment's bad input."""
    index = {name: i for i, name in enumerate(steps)}
    results, answers, waiting = {}, dict.fromkeys(steps), dict(steps)
    joined = _Joined()
    while waiting:
        asks = {}
        for name, build in waiting.items():
            try:
                asks[name] = build.send(answers[name])
            except StopIteration as done:
                results[name] = done.value
            except InputError as exc:
                raise refused(name, exc) from None
        waiting = {name: waiting[name] for name in asks}
        if asks:
            answers = _shared_pass({index[n]: a for n, a in asks.items()}, len(steps), joined)
            answers = {name: answers[index[name]] for name in asks}
    return results


class _Joined:
    """The facts of every segment joined into one :class:`SegmentFacts`, kept while the
    segments ask with the same facts, so that an engine that ships facts ships them once."""

    def __init__(self):
        self.key, self.facts = (), None

    def __call__(self, asks: dict) -> SegmentFacts:
        key = tuple(asks[i].rows for i in sorted(asks))
        if len(key) != len(self.key) or any(a is not b for a, b in zip(key, self.key)):
            self.key, self.facts = key, joined_facts({i: asks[i].rows for i in asks})
        return self.facts


def joined_facts(own: dict) -> SegmentFacts:
    """One set of facts holding each segment's own (``own``: segment index to its facts, over
    the same rows): a row takes the facts of the segment that counts it, and a row no segment
    counts is outside every sample.

    Examples
    --------
    >>> a = RowFacts(np.zeros(3, np.int8), np.ones(3), np.array([0, -1, -1], np.int8))
    >>> b = RowFacts(np.ones(3, np.int8), np.full(3, 2.0), np.array([-1, 1, -1], np.int8))
    >>> f = joined_facts({0: a, 1: b})
    >>> f.segment.tolist(), f.label.tolist(), f.weight.tolist(), f.sample.tolist()
    ([0, 1, -1], [0, 1, 0], [1.0, 2.0, 1.0], [0, 1, -1])
    """
    first = next(iter(own.values()))
    n = len(first.label)
    label, weight = first.label.copy(), first.weight.copy()
    sample = np.full(n, EXCLUDED, np.int8)
    segment = np.full(n, NO_SEGMENT, np.int8)
    for index, facts in own.items():
        held = facts.sample != EXCLUDED
        if (held & (segment != NO_SEGMENT)).any():
            raise ValueError("a row is counted in two segments")
        segment[held] = index
        label[held], weight[held], sample[held] = (facts.label[held], facts.weight[held],
                                                   facts.sample[held])
    return SegmentFacts(label, weight, sample, segment)


def _shared_pass(asks: dict, n_segments: int, joined: _Joined) -> dict:
    """One pass answering the same kind of ask of several segments (``asks``: segment index to
    its ask); the answer of each, by segment index."""
    kinds = {ask.kind for ask in asks.values()}
    if len(kinds) != 1:
        raise RuntimeError(f"the segments' builds asked for different passes: {sorted(kinds)}")
    first = next(iter(asks.values()))
    # The segments ask over the same rows: the accepts, or the accepts with the same number of
    # copies of the declined applications (every segment takes the config's one method).
    engine = first.engine
    if first.kind == SUMMARY:
        # The summary has no per-row facts, and every segment asks it of the same columns.
        summary = _one_pass(first)
        return dict.fromkeys(asks, summary)
    if first.kind == REJECT_SCORES:
        return _declined_scores(asks, n_segments)
    facts = joined(asks)
    if first.kind == FINE:
        # The fine classes depend on the config and the summary alone: the same in every segment.
        layouts = first.what
        counted = engine.reduce(fine_counts_by_segment, partial(merge_by_segment, merge_fine),
                                facts, layouts, n_segments, columns=list(layouts))
        return {i: counted[i] for i in asks}
    if first.kind == SCORES:
        cards = tuple(asks[i].what if i in asks else None for i in range(n_segments))
        columns = list(dict.fromkeys(n for card in cards if card for n in card.names))
        score, refused = engine.reduce(scores_by_segment, merge_scores, facts, cards,
                                       columns=columns)
        return dict.fromkeys(asks, (score, refused))
    own = tuple(tuple(asks[i].what) if i in asks else () for i in range(n_segments))
    columns = list(dict.fromkeys(c.name for drafts in own for c in drafts))
    if first.kind == BINS:
        if not columns:
            return {i: [] for i in asks}
        counted = engine.reduce(bin_counts_by_segment, partial(merge_by_segment, merge_bin_counts),
                                facts, own, columns=columns)
        return {i: counted[i] for i in asks}
    if first.kind == PATTERNS:
        radices = tuple(pattern_radix(drafts) for drafts in own)
        counted = engine.reduce(patterns_by_segment, partial(merge_patterns_by_segment, radices),
                                facts, own, columns=columns)
        return {i: counted[i] for i in asks}
    raise RuntimeError(f"no shared pass for {first.kind!r}")


def _declined_scores(asks: dict, n_segments: int) -> dict:
    """One pass over the declined applications: each scored by its own segment's card, the
    exclusion rules evaluated once; each segment's :class:`RejectScores` marks its rows."""
    first = next(iter(asks.values())).what
    rule = first.segment[0]
    cards = tuple(asks[i].what.card if i in asks else None for i in range(n_segments))
    columns = list(dict.fromkeys(c for i in asks for c in asks[i].what.columns))
    *scored, segment = next(iter(asks.values())).engine.collect(
        partial(score_chunk_by_segment, cards=cards, rule=rule, **first.options),
        columns=columns)
    return {i: RejectScores(*scored, member=segment == i) for i in asks}


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
