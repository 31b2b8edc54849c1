"""The main job: from a config to a built scorecard and the facts a reviewer needs.

Steps: read and code the outcome, draw the samples, count fine classes, class every
characteristic, code the rows into bins and count per distinct pattern, select and fit, scale
to points, and evaluate each sample from its score histogram. Every step after a pass over the
rows works on count tables only.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import replace
from functools import partial
from typing import Callable, NamedTuple

import numpy as np
import pandas as pd

from scorecard.binning import coarse as binning
from scorecard.binning.fine import NumericLayout, candidate_cuts
from scorecard.build import rejects
from scorecard.build.result import BuildResult, CharacteristicReport, SampleFacts
from scorecard.card.points import attribute_points, largest_rounding_change, scaling
from scorecard.card.scorecard import (
    LEVELS,
    MISSING,
    OUT_OF_RANGE,
    RANGE,
    UNSEEN,
    Characteristic,
    Development,
    Fate,
    Scorecard,
)
from scorecard.card.scoring import apply_scorecard
from scorecard.constraints import SCALE_LIMIT
from scorecard.data.coding import categorical_codes
from scorecard.data.exclusions import declined_rows, exclusion_waterfall, first_rule
from scorecard.data.outcome import BAD, GOOD, OTHER, code_outcome
from scorecard.data.read import column_kind, decimal_comma_column, read_source
from scorecard.data.samples import (
    DEVELOPMENT,
    EXCLUDED,
    HOLDOUT,
    OUT_OF_TIME,
    SAMPLE_NAMES,
    assign_samples,
    parse_dates,
)
from scorecard.engines.augmented import AugmentedEngine
from scorecard.engines.local import LocalEngine
from scorecard.engines.passes import (
    RowFacts,
    bin_counts,
    coded_patterns,
    column_summary,
    fine_counts,
    merge_bin_counts,
    merge_fine,
    merge_patterns,
    merge_summaries,
    pattern_radix,
)
from scorecard.errors import InputError, ResultWarning
from scorecard.evaluation.additivity import MAX_PATTERNS, additivity_check, notable
from scorecard.evaluation.benchmark import benchmark
from scorecard.evaluation.fairness import compute_fairness
from scorecard.evaluation.histograms import band_edges, gains_table, performance, score_histogram
from scorecard.evaluation.stability import build_stability
from scorecard.fit.design import CodedColumns
from scorecard.fit.selection import floor_fates, select_characteristics
from scorecard.measures.information import iv_strength, iv_terms, outcome_mutual_information


def _say(progress, text):
    if progress is not None:
        progress(text)


def _candidate_kinds(config, head: pd.DataFrame, reports: dict) -> dict:
    data = config.data
    reserved = {data.target, data.weight} | set(data.ignore) | set(data.protected)
    if config.samples.out_of_time is not None:
        reserved.add(config.samples.out_of_time.column)
    if config.segments is not None:
        reserved.add(config.segments.column)
    kinds = {}
    for name in head.columns:
        if name in reserved:
            continue
        override = config.characteristics.get(name)
        kind = column_kind(head[name])
        if override is not None and override.kind is not None:
            kind = override.kind
        elif kind == "categorical":
            _refuse_decimal_commas(config, name, head[name])
        if override is not None and override.use is False:
            reports[name] = CharacteristicReport(name, kind, "not used", "config",
                                                 "use: false in the config")
            continue
        if kind == "date":
            reports[name] = CharacteristicReport(name, kind, "not used", "data",
                                                 "a date column is not a characteristic")
            continue
        kinds[name] = kind
    return kinds


def _refuse_decimal_commas(config, name: str, column: pd.Series) -> None:
    # Numbers in another notation must not silently become a categorical characteristic.
    example = decimal_comma_column(column)
    if example is not None:
        raise InputError(f"{config.data.source}: column {name}: values such as {example!r} are "
                         "numbers with a decimal comma, so they read as text; give data.decimal: "
                         f"',' (or kind: categorical under characteristics.{name} to keep text)")


def _outcome_facts(config, engine) -> tuple[RowFacts, np.ndarray]:
    """The per-row facts, and the number of the exclusion rule that caught each row (0: none).

    Rows an exclusion rule catches are left out like rows of another outcome, before the
    samples are drawn, so no later pass counts them.
    """
    data = config.data
    oot = config.samples.out_of_time

    def per_chunk(chunk):
        if data.target not in chunk.columns:
            raise InputError(f"column {data.target}: the target column is not in the data")
        caught = first_rule(chunk, data.exclude)
        weight = chunk[data.weight] if data.weight else None
        out = code_outcome(chunk[data.target], data.bad, data.good, weight, data.weight or "")
        late = np.zeros(len(chunk), dtype=bool)
        if oot is not None:
            dates = parse_dates(chunk[oot.column], oot.column)
            late = dates >= np.datetime64(pd.Timestamp(oot.from_date), "ns")
        label = np.where(caught > 0, OTHER, out.label).astype(np.int8)
        return label, np.where(caught > 0, 0.0, out.weight), late, caught

    needed = [data.target] + [c for c in (data.weight, oot.column if oot else None) if c]
    needed += [rule.column for rule in data.exclude if rule.column not in needed]
    label, weight, late, caught = engine.collect(per_chunk, columns=list(dict.fromkeys(needed)))
    sample = assign_samples(label, config.samples.holdout, config.samples.seed,
                            late if oot is not None else None)
    return RowFacts(label, weight, sample), caught


def _sample_facts(rows: RowFacts, excluded: int = 0) -> SampleFacts:
    """Rows, goods and bads of each sample; ``excluded`` rows are not counted as left out."""
    masks = {name: rows.sample == code for code, name in SAMPLE_NAMES.items()}
    return SampleFacts(
        len(rows.label), int((rows.sample == EXCLUDED).sum()) - excluded,
        rows={name: int(mask.sum()) for name, mask in masks.items()},
        goods={name: float(rows.weight[mask & (rows.label == GOOD)].sum())
               for name, mask in masks.items()},
        bads={name: float(rows.weight[mask & (rows.label == BAD)].sum())
              for name, mask in masks.items()})


def _layouts(config, kinds, summary, reports):
    layouts = {}
    for name, kind in kinds.items():
        if kind == "numeric":
            # The grid covers the bulk: a few values far beyond it fall in the end classes
            # instead of flattening every other value into one class.
            bulk = summary[name].bulk()
            layouts[name] = NumericLayout(candidate_cuts(bulk.low, bulk.high),
                                          _sentinels(config, name), (bulk.below, bulk.above))
        else:
            levels = tuple(sorted(summary[name]))
            if len(levels) > config.binning.max_levels:
                reports[name] = CharacteristicReport(name, kind, "not used", "data",
                                                     _too_many_levels(levels, config))
                continue
            layouts[name] = levels
    return layouts


def _too_many_levels(levels, config) -> str:
    numeric = pd.to_numeric(pd.Series(levels), errors="coerce").notna()
    if numeric.mean() >= 0.5:
        texts = [lv for lv, is_number in zip(levels, numeric) if not is_number][:3]
        return (f"numbers mixed with text: {numeric.sum()} of {len(levels)} distinct values are "
                f"numbers, the others text such as {', '.join(map(repr, texts))}; recode the text "
                "(to empty, or to a number listed in binning.sentinels) and rebuild")
    return (f"identifier-like: {len(levels)} distinct levels "
            f"(more than max_levels {config.binning.max_levels})")


def _sentinels(config, name) -> tuple:
    override = config.characteristics.get(name)
    values = override.sentinels if override is not None and override.sentinels is not None \
        else config.binning.sentinels
    return tuple(float(v) for v in values)


def _class_all(config, layouts, counts, limits, reports) -> list:
    drafts = []
    b = config.binning
    for name, layout in layouts.items():
        override = config.characteristics.get(name)
        fc = counts[name]
        key = f"characteristics.{name}"
        if isinstance(layout, NumericLayout):
            cuts = override.cuts if override is not None else None
            if cuts is not None and fc.development_range is not None:
                _check_cuts(key, cuts, fc.development_range)
            trend = override.trend if override is not None and override.trend else b.trend
            outcome = binning.class_numeric(
                name, layout, fc.goods, fc.bads, fine_bins=b.fine_bins, trend=trend,
                limits=limits, development_range=fc.development_range, manual_cuts=cuts,
                out_of_range_bin=config.scoring.out_of_range != "edge")
            kind = "numeric"
        else:
            groups = override.groups if override is not None else None
            outcome = binning.class_categorical(
                name, layout, fc.goods, fc.bads, rare_share=b.rare_level_share, limits=limits,
                manual_groups=groups, override_key=key)
            kind = "categorical"
        report = CharacteristicReport(name, kind, "not binned", "binning", outcome.reason,
                                      fine_classes=outcome.fine_classes, trend=outcome.trend,
                                      bins_reason=outcome.bins_reason)
        reports[name] = report
        if outcome.draft is not None:
            drafts.append(outcome.draft)
    return drafts


def _check_cuts(key, cuts, development_range):
    lo, hi = development_range
    if not math.isnan(lo) and (cuts[0] <= lo or cuts[-1] > hi):
        raise InputError(f"{key}.cuts: every cut must lie inside the development range "
                         f"{lo:g} to {hi:g}")


def _with_counts(draft: Characteristic, table: np.ndarray, limits) -> Characteristic:
    dev = table[:, DEVELOPMENT, :]
    goods, bads = dev[:, GOOD], dev[:, BAD]
    woe, notes = binning.bin_weights_of_evidence(goods, bads, [b.kind for b in draft.bins], limits)
    bins = tuple(replace(b, goods=float(g), bads=float(bd), woe=float(w), note=n)
                 for b, g, bd, w, n in zip(draft.bins, goods, bads, woe, notes))
    return replace(draft, bins=bins, prior_rows=limits.prior_rows)


def _unseen_rules(char: Characteristic, rules, coefficient: float = 1.0) -> Characteristic:
    """Apply the config's rules to bins the development sample never filled.

    'worst' takes the weight of evidence of the estimated bin with the fewest points, which
    depends on the sign of the coefficient, so the build applies the rules again once the
    coefficient is known.
    """
    estimated = [b.woe for b in char.bins
                 if b.count > 0 and (b.kind in (RANGE, LEVELS) or not b.note)]
    worst = min(estimated, key=lambda w: coefficient * w) if estimated else 0.0
    bins = []
    for b in char.bins:
        rule = None
        if b.kind == UNSEEN:
            rule = rules.unseen_level
        elif b.kind == MISSING and b.count == 0:
            rule = rules.unseen_missing
        elif b.kind == OUT_OF_RANGE:
            rule = rules.out_of_range
        if rule == "worst":
            b = replace(b, woe=worst, note="scored as the worst attribute (config)")
        elif rule == "reject":
            b = replace(b, rejected=True, note="rows here are refused (config)")
        elif rule == "neutral":
            b = replace(b, woe=0.0, note="scored as average risk: weight of evidence 0 (config)")
        bins.append(b)
    return replace(char, bins=tuple(bins))


def _default_reason(name: str) -> str:
    return f"{name.replace('_', ' ').capitalize()} scored below its best attribute"


def _scale(config, selection, chosen: list) -> Scorecard:
    fit = selection.fit
    coef = dict(zip(fit.names, fit.coefficients))
    intercept = float(coef["intercept"])
    sc = config.scaling
    scale = scaling(sc.base_score, sc.base_odds, sc.pdo)
    k = len(chosen)
    chars, exact = [], []
    for i, char in enumerate(chosen, start=1):
        beta = float(coef[char.name])
        char = _unseen_rules(char, config.scoring, beta)
        pts = attribute_points([b.woe for b in char.bins], beta, intercept, k, scale)
        if not np.all(np.abs(pts.exact) < SCALE_LIMIT):
            raise InputError(f"scaling: the points of {char.name} reach beyond "
                             f"±{SCALE_LIMIT:,.0f}; lower scaling.pdo or scaling.base_score")
        override = config.characteristics.get(char.name)
        code = (override.reason_code if override is not None and override.reason_code else f"R{i:02d}")
        text = override.reason if override is not None and override.reason else _default_reason(char.name)
        bins = tuple(replace(b, points=int(p)) for b, p in zip(char.bins, pts.points))
        chars.append(replace(char, bins=bins, coefficient=beta, reason_code=code, reason=text))
        exact.append(pts.exact)
    d = config.data
    target = {"column": d.target, "bad": list(d.bad), "good": list(d.good)}
    return Scorecard(config.name, scale, intercept, tuple(chars), target,
                     largest_rounding_change(exact), config.scoring.reasons)


_HISTOGRAM_ROWS = 1 << 15


def _pattern_scores(card: Scorecard, patterns, names) -> tuple[np.ndarray, np.ndarray]:
    """Each pattern's score, and whether the card refuses it."""
    cols = [2 + names.index(c.name) for c in card.characteristics]
    tables = [np.array([b.points for b in c.bins], dtype=np.int64) for c in card.characteristics]
    refusing = [(col, np.array([b.rejected for b in c.bins]))
                for col, c in zip(cols, card.characteristics) if any(b.rejected for b in c.bins)]
    score = np.zeros(len(patterns.codes), dtype=np.int64)
    refused = np.zeros(len(patterns.codes), dtype=bool)
    # A block of patterns at a time, so that each gathered column is added while in the cache.
    for start in range(0, len(score), _HISTOGRAM_ROWS):
        codes = patterns.codes[start:start + _HISTOGRAM_ROWS]
        block, out = score[start:start + _HISTOGRAM_ROWS], refused[start:start + _HISTOGRAM_ROWS]
        for col, table in zip(cols, tables):
            block += table[codes[:, col]]
        for col, rejected in refusing:
            out |= rejected[codes[:, col]]
    return score, refused


def _histograms(card: Scorecard, patterns, names, scored) -> dict:
    """Score histogram of each sample, straight from the pattern counts and their scores."""
    score, refused = scored
    low, high = card.min_score, card.max_score
    out = {}
    for code, name in SAMPLE_NAMES.items():
        # Rows the scorecard refuses get no score in production, so none here either.
        mask = (patterns.codes[:, 0] == code) & ~refused
        if not mask.any():
            continue
        out[name] = score_histogram(score[mask], patterns.codes[mask, 1],
                                    patterns.weights[mask, 0], low, high)
    return out


def _additivity(card: Scorecard, candidates, patterns, scored, seed: int) -> tuple:
    """The departures from additivity of every pair of candidates of which at least one is in
    the card, on the development patterns the card scores."""
    score, refused = scored
    keep = np.flatnonzero((patterns.codes[:, 0] == DEVELOPMENT) & ~refused)
    if len(keep) > MAX_PATTERNS:
        keep = np.sort(np.random.default_rng(seed).choice(keep, MAX_PATTERNS,
                                                           replace=False))
    codes = patterns.codes[keep]
    weights = patterns.weights[keep, 0]
    log_odds = (score[keep] - card.scaling.offset) / card.scaling.factor
    return additivity_check(codes[:, 2:], [len(c.bins) for c in candidates],
                            [c.name for c in candidates],
                            np.where(codes[:, 1] == GOOD, weights, 0.0),
                            np.where(codes[:, 1] == BAD, weights, 0.0), log_odds,
                            among=card.names)


def _development(card: Scorecard, histograms: dict, perf: dict, facts, config,
                 reports) -> Development:
    """The development score histogram, bin counts and every sample's ranking, for the model file.

    ``reports`` carry each characteristic's counts by (bin, sample, outcome) of the data file's
    rows, which is what later samples are compared with.
    """
    dev = histograms["development"]
    tables = {r.name: r.sample_counts[:, DEVELOPMENT, :] for r in reports
              if r.name in card.names and r.sample_counts is not None}
    return Development(
        rows=int(facts.rows["development"]), unit="weights" if config.data.weight else "rows",
        score_goods=tuple(float(v) for v in dev.goods), score_bads=tuple(float(v) for v in dev.bads),
        performance={name: {"auc": p.auc, "gini": p.gini, "ks": p.ks} for name, p in perf.items()},
        bin_goods={n: tuple(float(v) for v in t[:, GOOD]) for n, t in tables.items()},
        bin_bads={n: tuple(float(v) for v in t[:, BAD]) for n, t in tables.items()})


def _fate(report: CharacteristicReport) -> Fate:
    iv = report.information_value
    return Fate(report.name, report.status, report.stage, report.reason,
                None if iv is None or math.isnan(iv) else float(iv), report.bins_reason)


def _uncounted(drafts, layouts) -> tuple[list, list]:
    """Which fine class falls into which bin of each characteristic (None where a fine class
    is split), and the characteristics whose bins must be counted in a pass over the rows."""
    maps = [binning.bins_of_fine_classes(d, layouts[d.name]) for d in drafts]
    return maps, [d for d, m in zip(drafts, maps) if m is None]


def _bin_tables(drafts, maps, counted: list, counts) -> list[np.ndarray]:
    """Weights by (bin, sample, outcome) of every characteristic.

    Summed from the fine classes wherever each fine class falls whole into one bin; the other
    characteristics (off-grid manual cuts, out-of-range bins) come from a pass over the rows
    (``counted``, in their order). Both are exact.
    """
    counted = iter(counted)
    tables = []
    for draft, fine_bin in zip(drafts, maps):
        if fine_bin is None:
            tables.append(next(counted))
            continue
        table = np.zeros((len(draft.bins),) + counts[draft.name].table.shape[1:])
        np.add.at(table, fine_bin, counts[draft.name].table)
        tables.append(table)
    return tables


def _binned_report(draft: Characteristic, table: np.ndarray, limits, config,
                   report: CharacteristicReport) -> CharacteristicReport:
    """``report`` with the bins' counts, WoE, IV and MI and the binned characteristic."""
    char = _unseen_rules(_with_counts(draft, table, limits), config.scoring)
    woe = np.array([bn.woe for bn in char.bins])
    g, bd = table[:, DEVELOPMENT, GOOD], table[:, DEVELOPMENT, BAD]
    # IV of the bins as the model codes them (fallback WoE included).
    iv = float(np.sum(iv_terms(g / g.sum(), bd / bd.sum(), woe)))
    mi = outcome_mutual_information(g, bd)
    return replace(report, characteristic=replace(char, information_value=iv),
                   sample_counts=table, information_value=iv, strength=iv_strength(iv),
                   mutual_information_nats=mi.nats, mutual_information_bits=mi.bits)


def build_scorecard(config, engine, progress: Callable[[str], None] | None = None,
                    rejects_engine=None) -> BuildResult:
    """Build a scorecard from a validated config on an engine holding the data.

    With a ``rejects`` section the card is built on the accepts plus the inferred rejects
    (:func:`_build_with_rejects`); ``rejects_engine`` holds the declined applications (read
    from ``rejects.source`` into memory when not given). Use :func:`scorecard.api.build` to
    start from a config file.
    """
    try:
        if config.rejects is None:
            return _build(config, engine, progress)
        return _build_with_rejects(config, engine, rejects_engine, progress)
    except InputError as exc:
        # A data error found while checking values names the column (and row); the message
        # gains the file it is in.
        text = str(exc)
        if text.startswith("column "):
            raise InputError(f"{config.data.source}: {text}") from None
        raise


# What a build asks a pass over the rows for (see :class:`Ask`).
SUMMARY, FINE, BINS, PATTERNS = "summary", "fine classes", "bins", "patterns"
SCORES, REJECT_SCORES = "scores", "declined scores"


class Ask(NamedTuple):
    """A pass a build asks for: its ``kind``, what it counts, the rows' facts and the engine
    holding the rows.

    ``what`` is, by kind: (kinds, sentinels) of the columns to summarise; the layouts of the
    fine classes; the characteristics whose bins are counted on the rows (possibly none); the
    candidates coded into patterns; the card that scores the rows (SCORES: each row's score and
    whether the card refuses it); a :class:`DeclinedAsk` (REJECT_SCORES). A single build answers
    each ask with one pass (:func:`_one_pass`); a segmented build answers every segment's ask
    with one shared pass.
    """

    kind: str
    what: object
    rows: RowFacts | None = None
    engine: object = None


class DeclinedAsk(NamedTuple):
    """The declined applications scored by ``card`` (:func:`rejects.score_chunk` with the
    ``options`` besides the card, reading ``columns``); ``member`` marks the rows of the
    segment whose card it is, ``segment`` is (rule, index) of that segment (None: one card)."""

    card: Scorecard
    options: dict
    columns: list
    member: np.ndarray | None = None
    segment: tuple | None = None


def _build(config, engine, progress, rows: RowFacts | None = None,
           fairness: bool = True, caught: np.ndarray | None = None) -> BuildResult:
    """The build on the rows of ``engine``; ``rows`` gives their facts when already drawn,
    ``caught`` the exclusion rule of each (None: rows that are not the data file's alone)."""
    return answered(_build_steps(config, engine, progress, rows, fairness, caught), _one_pass)


def answered(steps, answer):
    """The result of a build's ``steps`` (a generator), each pass it asks for given by
    ``answer(ask)``."""
    try:
        ask = next(steps)
        while True:
            ask = steps.send(answer(ask))
    except StopIteration as done:
        return done.value


def _one_pass(ask: Ask):
    """One pass over the rows of ``ask.engine`` answering ``ask``."""
    engine = ask.engine
    if ask.kind == SCORES:
        card = ask.what
        return engine.collect(lambda chunk: tuple(getattr(apply_scorecard(card, chunk), k)
                                                  for k in ("score", "rejected")),
                              columns=list(card.names))
    if ask.kind == REJECT_SCORES:
        d = ask.what
        return rejects.RejectScores(*engine.collect(
            partial(rejects.score_chunk, card=d.card, **d.options), columns=d.columns),
            member=d.member)
    if ask.kind == SUMMARY:
        kinds, sentinels = ask.what
        return engine.reduce(lambda c: column_summary(c, kinds, sentinels), merge_summaries,
                             columns=list(kinds))
    if ask.kind == FINE:
        return engine.reduce(fine_counts, merge_fine, ask.rows, ask.what, columns=list(ask.what))
    names = [c.name for c in ask.what]
    if ask.kind == BINS:
        return engine.reduce(bin_counts, merge_bin_counts, ask.rows, ask.what,
                             columns=names) if ask.what else []
    if ask.kind == PATTERNS:
        radix = pattern_radix(ask.what)
        return engine.reduce(coded_patterns, lambda a, c: merge_patterns(a, c, radix), ask.rows,
                             ask.what, columns=names)
    raise ValueError(f"no pass answers {ask.kind!r}")


def _build_steps(config, engine, progress, rows, fairness, caught):
    """The steps of :func:`_build`, yielding an :class:`Ask` for each pass that counts rows."""
    reports: dict = {}
    head = engine.sample_rows()
    kinds = _candidate_kinds(config, head, reports)

    if rows is None:
        rows, caught = _outcome_facts(config, engine)
    facts = _sample_facts(rows, 0 if caught is None else int(np.count_nonzero(caught)))
    waterfall = None if caught is None else exclusion_waterfall(
        config.data.exclude, caught, facts.left_out,
        {name: count for name, count in facts.rows.items() if count})
    dev_goods, dev_bads = facts.goods["development"], facts.bads["development"]
    if dev_goods <= 0 or dev_bads <= 0:
        held = engine.reduce(lambda c: column_summary(c, {config.data.target: "categorical"}, {}),
                             merge_summaries, columns=[config.data.target])[config.data.target]
        shown = ", ".join(sorted(map(repr, held))[:8]) or "none"
        raise InputError(f"column {config.data.target}: the development sample needs both goods "
                         f"and bads (found {dev_goods:g} goods, {dev_bads:g} bads); data.bad and "
                         f"data.good must name values the column holds: {shown}")
    excluded = "" if waterfall is None or not config.data.exclude else \
        f", {waterfall.excluded} excluded by data.exclude"
    _say(progress, f"outcome coded: {facts.rows_read} rows{excluded}, {facts.left_out} left out")

    sentinels = {n: _sentinels(config, n) for n, k in kinds.items() if k == "numeric"}
    summary = yield Ask(SUMMARY, (kinds, sentinels), None, engine)
    layouts = _layouts(config, kinds, summary, reports)
    counts = yield Ask(FINE, layouts, rows, engine)
    extreme = _extreme_values(config, counts)
    _check_settings(config, engine, layouts, counts)
    _say(progress, f"fine classes counted for {len(layouts)} characteristics")

    b = config.binning
    limits = binning.limits_from(dev_goods + dev_bads,
                                 None if b.choose_max_bins else b.max_bins, b.min_bin_share,
                                 b.min_bin_goods, b.min_bin_bads, b.prior_rows,
                                 config.samples.seed)
    drafts = _class_all(config, layouts, counts, limits, reports)
    if not drafts:
        raise InputError(f"{config.data.source}: no characteristic could be binned")
    _say(progress, f"coarse classes formed for {len(drafts)} characteristics")

    maps, uncounted = _uncounted(drafts, layouts)
    tables = _bin_tables(drafts, maps, (yield Ask(BINS, uncounted, rows, engine)), counts)
    for draft, table in zip(drafts, tables):
        reports[draft.name] = _binned_report(draft, table, limits, config, reports[draft.name])
    binned = [reports[draft.name].characteristic for draft in drafts]

    # Only characteristics that pass the information value floor (or are kept) can enter the
    # model, so only they take part in the pattern table: it stays small however many weak
    # characteristics the data hold.
    s = config.selection
    names = [c.name for c in binned]
    floored = floor_fates(names, [c.information_value for c in binned], s.min_iv, s.keep)
    candidates = [c for c in binned if c.name not in floored]
    patterns = yield Ask(PATTERNS, candidates, rows, engine)
    _say(progress, f"{len(candidates)} candidates coded into {len(patterns.codes)} distinct "
                   "patterns")

    dev = patterns.codes[:, 0] == DEVELOPMENT
    codes = patterns.codes[dev]
    w = patterns.weights[dev, 0]
    successes = np.where(codes[:, 1] == GOOD, w, 0.0)
    failures = np.where(codes[:, 1] == BAD, w, 0.0)
    # The WoE design stays as bin codes with each column's WoE table: no float matrix of
    # patterns by candidates is made.
    design = CodedColumns(codes[:, 2:], [[b.woe for b in c.bins] for c in candidates])
    selection = select_characteristics(
        design, successes, failures, [c.name for c in candidates],
        [c.information_value for c in candidates],
        min_iv=s.min_iv, max_correlation=s.max_correlation, max_vif=s.max_vif, method=s.method,
        entry=s.entry, entry_p_value=s.entry_p_value, max_characteristics=s.max_characteristics,
        keep=tuple(s.keep), prior_rows=b.prior_rows, seed=config.samples.seed)
    selection = selection._replace(fates={**floored, **selection.fates})
    for name, fate in selection.fates.items():
        reports[name] = replace(reports[name], status="in model" if fate.selected
                                else "not selected", stage=fate.stage, reason=fate.reason)
    if not selection.selected:
        raise InputError(f"{config.data.source}: no characteristic entered the model "
                         "(see the information values; lower selection.min_iv or entry_p_value)")
    _say(progress, f"model fitted on {len(selection.selected)} characteristics")

    by_name = {c.name: c for c in binned}
    card = _scale(config, selection, [by_name[n] for n in selection.selected])
    for char in card.characteristics:
        reports[char.name] = replace(reports[char.name], characteristic=char)
    scored = _pattern_scores(card, patterns, [c.name for c in candidates])
    histograms = _histograms(card, patterns, [c.name for c in candidates], scored)
    departures = _additivity(card, candidates, patterns, scored, config.samples.seed)
    found = notable(departures)
    if found:
        top = found[0]
        _say(progress, f"additivity: {top.first} and {top.second} do not add up (p "
                       f"{top.p_value:.2g}; {len(found)} such pair{'s' if len(found) > 1 else ''}"
                       f"); a card segmented on {top.segment_on} may rank better")
    unmeasured = _unmeasured(config, histograms)
    perf = {name: performance(h) for name, h in histograms.items() if name not in unmeasured}
    gains_sample = "holdout" if "holdout" in perf else "development"
    starts = band_edges(histograms[gains_sample], config.evaluation.score_bands)
    gains = gains_table(histograms[gains_sample], starts, card.scaling)
    ordered = tuple(reports[n] for n in head.columns if n in reports)
    stability = build_stability(
        card, histograms, starts, {c.name: reports[c.name].sample_counts
                                   for c in card.characteristics},
        facts.rows, watch=config.stability.watch, shift=config.stability.shift,
        unit="weights" if config.data.weight else "rows")
    # The model file carries the development distributions and every column's fate, so that
    # monitoring and diffs need only the model file.
    card = replace(card, development=_development(card, histograms, perf, facts, config, ordered),
                   fates=tuple(_fate(r) for r in ordered), exclusions=config.data.exclude)
    # The same raw columns the card could use: every characteristic that was classed.
    compared = benchmark(engine, rows, card, {c.name: layouts[c.name] for c in binned},
                         config.samples.seed)
    if compared is not None:
        _say(progress, f"benchmark on {compared.compared} {compared.sample} rows: card AUC "
                       f"{compared.card_auc:.4f}, raw logistic regression "
                       f"{compared.logistic_auc:.4f}")
    fairness = compute_fairness(config, engine, rows, card) if fairness else None
    if fairness is not None:
        _say(progress, f"fairness check on {', '.join(config.data.protected)}: "
                       f"{len(fairness.flags)} findings")
    return BuildResult(config, card, ordered, selection, facts, histograms, perf, gains,
                       gains_sample, starts, patterns, stability, fairness=fairness,
                       unmeasured=unmeasured, extreme_values=extreme,
                       benchmark=compared, waterfall=waterfall, additivity=departures)


def _check_settings(config, engine, layouts: dict, counts: dict) -> None:
    """Sentinels and group levels the development sample never holds are warnings;
    a level the data hold but no group lists is an error naming its first row."""
    unheld = {}                 # global sentinel -> held by some characteristic
    for name, layout in layouts.items():
        override = config.characteristics.get(name)
        fc = counts[name]
        held = fc.goods + fc.bads
        if isinstance(layout, NumericLayout):
            own = override is not None and override.sentinels is not None
            for i, value in enumerate(layout.sentinels):
                there = held[layout.missing_code + 1 + i] > 0
                if own and not there:
                    warnings.warn(f"characteristics.{name}.sentinels: {value:g} never occurs "
                                  f"in {name} in the development sample")
                elif not own:
                    unheld[value] = unheld.get(value, False) or there
            continue
        groups = override.groups if override is not None else None
        if groups is None:
            continue
        present = {lv for lv, c in zip(layout, held) if c > 0}
        listed = [lv for g in groups for lv in g]
        lost = next((lv for lv in layout if lv in present and lv not in listed), None)
        if lost is not None:
            row = _first_row_holding(engine, name, lost)
            raise InputError(f"{config.data.source}: row {row}: column {name}: level {lost!r} "
                             f"is in no group of characteristics.{name}.groups")
        for level in listed:
            if level not in present:
                warnings.warn(f"characteristics.{name}.groups: level {level!r} of {name} never "
                              "occurs in the development sample")
    for value, there in unheld.items():
        if not there:
            warnings.warn(f"binning.sentinels: {value:g} occurs in no characteristic in the "
                          "development sample")


def _first_row_holding(engine, name: str, level: str) -> int:
    found = engine.collect(lambda chunk: (categorical_codes(chunk[name], (level,)) == 0,),
                           columns=[name])[0]
    return int(np.flatnonzero(found)[0]) + 1


def _extreme_values(config, counts: dict) -> dict:
    """Per column holding values far beyond the rest: a line naming how many and their rows.

    Each is also a warning that changes the result (the values sit in the end classes).
    """
    out = {}
    for name, fc in counts.items():
        if not fc.extremes:
            continue
        rows = ", ".join(str(i + 1) for i in fc.extreme_rows)
        hidden = fc.extremes - len(fc.extreme_rows)
        more = f" and {hidden} more" if hidden else ""
        out[name] = (f"{fc.extremes} value{'s' * (fc.extremes > 1)} far beyond the rest "
                     f"(row{'s' * (fc.extremes > 1)} {rows}{more}), classed with the "
                     "nearest end of the range")
        warnings.warn(f"{config.data.source}: column {name}: {out[name]}", ResultWarning)
    return out


def _unmeasured(config, histograms: dict) -> dict:
    """Why each configured sample has no AUC, Gini or KS (it lacks goods or bads), by name.

    Each is also a warning that changes the result, so it shows even under ``--quiet``.
    """
    wanted = [SAMPLE_NAMES[HOLDOUT]] * bool(config.samples.holdout) \
        + [SAMPLE_NAMES[OUT_OF_TIME]] * (config.samples.out_of_time is not None)
    out = {}
    for name in wanted:
        hist = histograms.get(name)
        goods, bads = (0.0, 0.0) if hist is None else (hist.goods.sum(), hist.bads.sum())
        if goods > 0 and bads > 0:
            continue
        out[name] = (f"holds {goods:,.0f} goods and {bads:,.0f} bads; AUC, Gini and KS need "
                     "both")
        warnings.warn(f"the {name} sample {out[name]}: its measures are not available",
                      ResultWarning)
    return out


def _build_with_rejects(config, engine, rejects_engine, progress) -> BuildResult:
    """Accepts-only card; one pass scoring the rejects; the card rebuilt on accepts plus rejects.

    Holdout and out-of-time samples stay accepts only: the inferred rejects join development.
    """
    r = config.rejects
    own = rejects_engine is None
    if own:
        rejects_engine = LocalEngine(read_source(r.source, encoding=r.encoding,
                                                 delimiter=r.delimiter))
    try:
        require_rule_columns(config, rejects_engine)
        rows, caught = _outcome_facts(config, engine)
        return answered(rejects_steps(config, engine, rejects_engine, progress, rows, caught),
                        _one_pass)
    finally:
        if own:
            rejects_engine.close()


def require_rule_columns(config, rejects_engine) -> None:
    """The declined applications leave the inference by the rules of ``data.exclude`` too, so
    they need every column a rule reads."""
    for rule in config.data.exclude:
        if rule.column not in rejects_engine.columns:
            raise InputError(f"{config.rejects.source}: column {rule.column}: the declined "
                             f"applications lack it, and data.exclude rule '{rule.describe()}' "
                             "applies to them too")


def _accepts_histogram(rows: RowFacts, card: Scorecard, scored: tuple):
    """Score histogram of the development accepts under ``card`` (``scored``: each row's
    score and refusal under it)."""
    score, refused = scored
    keep = (rows.sample == DEVELOPMENT) & ~refused
    return score_histogram(score[keep], rows.label[keep], rows.weight[keep], card.min_score,
                           card.max_score)


def _accepts_bin_counts(reports: list, tables: list) -> list:
    """The reports with each sample's counts per bin taken from the accepts alone (``tables``,
    of the reports that have counts, in order).

    The bins keep the counts they were fitted on (accepts plus inferred rejects); the counts by
    sample serve stability, which compares accepts with accepts.
    """
    binned = [rep for rep in reports if rep.sample_counts is not None]
    counted = {rep.name: table for rep, table in zip(binned, tables)}
    return [replace(rep, sample_counts=counted[rep.name]) if rep.name in counted else rep
            for rep in reports]


def rejects_steps(config, engine, rejects_engine, progress, rows, caught,
                  member: np.ndarray | None = None, segment: tuple | None = None):
    """The steps of a build with reject inference, yielding an :class:`Ask` for each pass.

    ``member`` marks the declined rows of the card's segment, ``segment`` is (rule, index) of
    that segment; the other declined rows are outside the inference, as the other segments'
    accepts are outside every sample.
    """
    accepts_only = yield from _build_steps(config, engine, progress, rows, True, caught)
    r = config.rejects
    card = accepts_only.card
    candidates = [rep.name for rep in accepts_only.reports if rep.status != "not used"]
    needed = candidates + [c for c in (config.data.weight, r.known_outcome) if c]
    missing = [c for c in needed if c not in rejects_engine.columns]
    if missing:
        raise InputError(f"{r.source}: column {missing[0]}: the declined applications need every "
                         "characteristic of the data (and data.weight, rejects.known_outcome "
                         "when given)")
    d = config.data
    columns = list(card.names) + needed[len(candidates):] + [rule.column for rule in d.exclude]
    columns += [segment[0].column] if segment is not None else []
    options = {"weight": d.weight, "known": r.known_outcome, "bad": d.bad, "good": d.good,
               "exclude": d.exclude}
    scored = yield Ask(REJECT_SCORES, DeclinedAsk(card, options, list(dict.fromkeys(columns)),
                                                  member, segment), None, rejects_engine)
    held = scored.member if scored.member is not None else np.ones(len(scored.score), bool)
    excluded = int(np.count_nonzero(held & (scored.caught > 0)))
    _say(progress, f"{int(held.sum())} declined applications scored by the accepts-only card"
                   + (f", {excluded} excluded by data.exclude" if d.exclude else ""))
    accepts_scores = None
    if r.method == "reweighting":
        accepts_scores = (yield Ask(SCORES, card, rows, engine))[0]
    augmentation, facts = rejects.infer(r, config.samples.seed, card.scaling, rows,
                                        accepts_scores, scored, accepts_only.histograms)
    if r.method == "none":
        final = accepts_only
    else:
        copies = augmentation.copies
        both = RowFacts(*(np.concatenate([part, *(getattr(c, key) for c in copies)])
                          for key, part in zip(RowFacts._fields,
                                               (rows.label, augmentation.accepts_weight,
                                                rows.sample))))
        final = yield from _build_steps(config, AugmentedEngine(engine, rejects_engine,
                                                                len(copies)),
                                        progress, both, False, None)
        # The samples are the data file's (accepts); the bins and patterns hold the inferred
        # rejects too, which the Reject inference sheet accounts for.
        samples = accepts_only.samples
        # Performance is measured where outcomes are known: the development figures too come
        # from the development accepts alone, scored by the new card in one more pass.
        histograms = {**final.histograms,
                      "development": _accepts_histogram(
                          rows, final.card, (yield Ask(SCORES, final.card, rows, engine)))}
        binned = [rep.characteristic for rep in final.reports if rep.sample_counts is not None]
        reports = _accepts_bin_counts(final.reports, (yield Ask(BINS, binned, rows, engine)))
        perf = {n: performance(h) for n, h in histograms.items() if n not in final.unmeasured}
        # Stability and the development distributions the model file carries compare accepts
        # with accepts, as monitoring will.
        stability = build_stability(
            final.card, histograms, final.band_starts,
            {r_.name: r_.sample_counts for r_ in reports if r_.name in final.card.names},
            samples.rows, watch=config.stability.watch, shift=config.stability.shift,
            unit="weights" if config.data.weight else "rows")
        card = replace(final.card, development=_development(final.card, histograms, perf,
                                                            samples, config, reports))
        # The additivity screen needs rows whose outcome is known: an inferred row's goods
        # and bads follow the accepts-only card, so they add information but no evidence.
        final = replace(final, card=card, samples=samples, waterfall=accepts_only.waterfall,
                        histograms=histograms, additivity=accepts_only.additivity,
                        reports=reports, performance=perf, stability=stability,
                        fairness=compute_fairness(config, engine, rows, card))
    inference = rejects.RejectInference(
        method=r.method, settings=r.settings(), source=str(r.source), rows=int(held.sum()),
        refused=int((held & scored.refused & (scored.caught == 0)).sum()),
        accepts_only=accepts_only, known_outcome=r.known_outcome, excluded=excluded, **facts)
    _say(progress, f"reject inference ({r.method}): rejects' bad rate "
                   f"{inference.inferred_bad_rate:.1%} against the accepts' "
                   f"{inference.accepts_bad_rate:.1%}")
    card = replace(final.card, inference=inference.record())
    waterfall = accepts_only.waterfall
    if waterfall is not None and d.exclude:
        waterfall = replace(waterfall, declined=declined_rows(d.exclude, scored.caught))
    return replace(final, card=card, rejects=inference, waterfall=waterfall)
