"""Every segment's build advancing together, each pass they ask for run once for all of them.

A build is a sequence of steps that asks for its passes over the rows
(:class:`scorecard.build.pipeline.Ask`). A segmented build runs one such sequence per segment
and answers each round of asks with one shared pass: the segment is one more code beside the
sample and the outcome (:class:`scorecard.engines.passes.SegmentFacts`), each row is coded by
its own segment's bins or scored by its own segment's card, and each segment gets the counts
its own pass would have given.
"""

from __future__ import annotations

from functools import partial

import numpy as np

from scorecard.build.pipeline import (
    BINS,
    FINE,
    PATTERNS,
    REJECT_SCORES,
    SCORES,
    SUMMARY,
    _one_pass,
)
from scorecard.build.rejects import RejectScores, score_chunk_by_segment
from scorecard.card.segmented import NO_SEGMENT
from scorecard.data.samples import EXCLUDED
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


def joined_facts(own: dict[int, RowFacts]) -> SegmentFacts:
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
