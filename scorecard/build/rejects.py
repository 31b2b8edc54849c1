"""Reject inference: outcomes for the declined applicants, from the accepts-only card.

Outcomes exist only for the applicants the old policy accepted. Each method below turns the
rejects' accepts-only scores (and the accepts' counts by score band) into weights of inferred
goods and bads, or into new weights for the accepts; the build then counts the rejects with
those weights through the same passes as the accepts. Every method is a small pure function of
arrays (one value per reject row, or per score band) returning a named result.

The methods by their published names (Siddiqi, *Credit Risk Scorecards*, 2006, chapter on
reject inference; Anderson, *The Credit Scoring Toolkit*, 2007):

* fuzzy augmentation: each reject enters twice, as a good with weight P(good) and as a bad
  with weight P(bad) from the accepts-only card;
* parcelling: outcomes drawn in each score band at the accepts' bad rate times an uplift;
* hard cut-off: rejects below a score count as bad, the rest as good;
* reweighting: no rows added; each accept weighs the inverse of its band's acceptance rate.

Whatever the method, the inferred outcomes rest on assumptions about the declined that no data
can prove (Hand & Henley, 1993, 1997): :data:`HAND_HENLEY` says so in every report.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np
import pandas as pd

from scorecard.card.points import Scaling, bad_probability_of_score
from scorecard.card.scoring import apply_scorecard
from scorecard.data.exclusions import first_rule
from scorecard.data.outcome import BAD, GOOD, OTHER, code_outcome, row_weights
from scorecard.data.samples import DEVELOPMENT, EXCLUDED
from scorecard.engines.passes import RowFacts
from scorecard.evaluation.histograms import ScoreHistogram, band_edges

# The ratio of the rejects' inferred bad rate to the accepts' that reviewers commonly expect:
# declined applicants are worse than accepted ones, by a factor of about 1.5 to 4 (common
# practice, no single source; from memory). Outside this range the workbook warns.
EXPECTED_RATIO = (1.5, 4.0)

HAND_HENLEY = ("Reject inference rests on assumptions about the declined applicants that no data "
               "can prove or disprove: their outcomes were never observed (Hand & Henley, 1993, "
               "1997). Treat the inferred outcomes as a modelling choice to be reviewed, not as "
               "facts, and measure the card on accepts, where outcomes are known.")


# ---- the pass over the rejects -----------------------------------------------------------------

class RejectScores(NamedTuple):
    """Per reject row: accepts-only score, weight, refused by the card, known outcome, and the
    ``data.exclude`` rule that catches it."""

    score: np.ndarray       # int64; 0 where refused
    weight: np.ndarray      # float64
    refused: np.ndarray     # bool: the card refuses the row (a bin marked reject)
    known: np.ndarray       # int8 GOOD / BAD / OTHER; OTHER throughout without a known outcome
    caught: np.ndarray | None = None   # number (from 1) of the first rule met, 0 for none
    member: np.ndarray | None = None   # bool: rows of the card's segment (None: every row)

    @property
    def used(self) -> np.ndarray:
        """Rows the inference counts: in the card's segment, no rule catches them and the card
        scores them."""
        used = ~self.refused if self.caught is None else ~self.refused & (self.caught == 0)
        return used if self.member is None else used & self.member


def score_chunk(chunk: pd.DataFrame, card, weight: str | None, known: str | None,
                bad=(), good=(), exclude=()) -> tuple:
    """One chunk of rejects scored by ``card`` and checked against the ``exclude`` rules (a pass
    for ``engine.collect``): the rules are evaluated in the same pass, so the declined leave the
    inference by the rules the accepts left the build by."""
    scores = apply_scorecard(card, chunk)
    w = np.ones(len(chunk)) if weight is None else row_weights(chunk[weight], weight)
    outcome = np.full(len(chunk), OTHER, np.int8) if known is None else \
        code_outcome(chunk[known], bad, good).label
    return (scores.score.astype(np.int64), np.asarray(w, np.float64), scores.rejected, outcome,
            first_rule(chunk, exclude))


def score_chunk_by_segment(chunk: pd.DataFrame, cards, rule, weight: str | None,
                           known: str | None, bad=(), good=(), exclude=()) -> tuple:
    """:func:`score_chunk` with each row scored by its own segment's card (``rule``), and the
    segment of each row last: one pass over the declined applications serves every card."""
    segment = rule.codes(chunk[rule.column])
    score = np.zeros(len(chunk), np.int64)
    refused = np.zeros(len(chunk), bool)
    for index, card in enumerate(cards):
        at = np.flatnonzero(segment == index)
        if len(at):
            scores = apply_scorecard(card, chunk[list(card.names)].take(at))
            score[at], refused[at] = scores.score, scores.rejected
    w = np.ones(len(chunk)) if weight is None else row_weights(chunk[weight], weight)
    outcome = np.full(len(chunk), OTHER, np.int8) if known is None else \
        code_outcome(chunk[known], bad, good).label
    return (score, np.asarray(w, np.float64), refused, outcome, first_rule(chunk, exclude),
            segment)


# ---- score bands -------------------------------------------------------------------------------

def score_bands(accepts: np.ndarray, development_goods: np.ndarray,
                development_bads: np.ndarray, rejects: np.ndarray, low: int,
                n_bands: int) -> np.ndarray:
    """Lowest score of each band of the through-the-door population (accepts plus rejects).

    Arrays are weights by integer score from ``low``. Bands hold about equal shares of all
    applicants; a band without development accepts (so without a bad rate) joins its neighbour.

    Examples
    --------
    >>> a = np.array([0., 0., 10., 10.]); r = np.array([10., 10., 0., 0.])
    >>> score_bands(a, a / 2, a / 2, r, 100, 4).tolist()
    [100, 103]
    """
    every = accepts + rejects
    starts = band_edges(ScoreHistogram(low, every, np.zeros_like(every)), n_bands)
    known = development_goods + development_bads
    while len(starts) > 1:
        per_band = np.add.reduceat(known, starts - low)
        empty = np.flatnonzero(per_band <= 0)
        if not len(empty):
            break
        # Joining a band to the one above removes its start; the top band joins the one below.
        i = int(empty[0])
        starts = np.delete(starts, i + 1 if i + 1 < len(starts) else i)
    return starts


def band_of(scores: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """Band index of each score (scores below the first start fall in the first band)."""
    return np.maximum(np.searchsorted(starts, scores, side="right") - 1, 0)


# ---- the methods -------------------------------------------------------------------------------

class FuzzyAugmentation(NamedTuple):
    """Weights of each reject as a good and as a bad."""

    good_weight: np.ndarray
    bad_weight: np.ndarray


def fuzzy_augmentation(bad_probability: np.ndarray, weight: np.ndarray) -> FuzzyAugmentation:
    """Each reject as a good with weight P(good) and as a bad with weight P(bad), times its weight.

    Examples
    --------
    >>> f = fuzzy_augmentation(np.array([0.2, 0.5]), np.array([1.0, 2.0]))
    >>> f.good_weight.tolist(), f.bad_weight.tolist()
    ([0.8, 1.0], [0.2, 1.0])
    """
    p = np.asarray(bad_probability, dtype=np.float64)
    w = np.asarray(weight, dtype=np.float64)
    return FuzzyAugmentation((1.0 - p) * w, p * w)


class Parcels(NamedTuple):
    """Outcome drawn for each reject, and the bad rate each band's draws were made at."""

    label: np.ndarray           # int8 GOOD / BAD per reject row
    band_bad_rate: np.ndarray   # per band: accepts' bad rate times the uplift, at most 1


def parcelling(band: np.ndarray, accepts_bad_rate: np.ndarray, uplift: float,
               seed: int) -> Parcels:
    """Outcomes allotted in each score band at the band's accepts bad rate times ``uplift``.

    The draws are seeded and made over every reject row in file order, so a rerun (on any
    engine) gives the same outcomes.

    Examples
    --------
    >>> p = parcelling(np.array([0, 0, 1, 1]), np.array([1.0, 0.0]), 1.0, seed=1)
    >>> p.label.tolist(), p.band_bad_rate.tolist()
    ([1, 1, 0, 0], [1.0, 0.0])
    """
    rate = np.minimum(np.asarray(accepts_bad_rate, dtype=np.float64) * uplift, 1.0)
    draw = np.random.default_rng(seed).random(len(band))
    label = np.where(draw < rate[band], BAD, GOOD).astype(np.int8)
    return Parcels(label, rate)


class HardCutoff(NamedTuple):
    """Outcome of each reject (bad below ``cutoff``), and the cut-off score used."""

    label: np.ndarray
    cutoff: int


def hard_cutoff(score: np.ndarray, weight: np.ndarray, cutoff: float | None = None,
                bad_rate: float | None = None) -> HardCutoff:
    """Rejects scoring below ``cutoff`` count as bad; or below the score that makes ``bad_rate``.

    Without ``cutoff`` the cut-off is the lowest integer score at which at least ``bad_rate`` of
    the rejects' weight scores below it (ties at a score are never split).

    Examples
    --------
    >>> h = hard_cutoff(np.array([500, 510, 520, 530]), np.ones(4), bad_rate=0.5)
    >>> h.label.tolist(), h.cutoff
    ([1, 1, 0, 0], 511)
    """
    score = np.asarray(score)
    if cutoff is None:
        if bad_rate is None:
            raise ValueError("give cutoff or bad_rate")
        values, at = np.unique(score, return_inverse=True)
        below = np.cumsum(np.bincount(at, weights=weight, minlength=len(values)))
        total = below[-1] if len(below) else 0.0
        reach = np.flatnonzero(below >= bad_rate * total - 1e-12 * total)
        cut = int(values[reach[0]]) + 1 if len(reach) else int(score.max(initial=0)) + 1
    else:
        cut = int(np.ceil(cutoff))
    return HardCutoff(np.where(score < cut, BAD, GOOD).astype(np.int8), cut)


class Reweighting(NamedTuple):
    """Per band: the acceptance rate and the factor each accept's weight is multiplied by."""

    acceptance_rate: np.ndarray
    factor: np.ndarray


def reweighting(accepts_by_band: np.ndarray, rejects_by_band: np.ndarray) -> Reweighting:
    """Accepts reweighted by the inverse of their band's acceptance rate.

    Examples
    --------
    >>> r = reweighting(np.array([10.0, 30.0]), np.array([30.0, 10.0]))
    >>> r.acceptance_rate.tolist(), r.factor.tolist()
    ([0.25, 0.75], [4.0, 1.3333333333333333])
    """
    a = np.asarray(accepts_by_band, dtype=np.float64)
    r = np.asarray(rejects_by_band, dtype=np.float64)
    with np.errstate(invalid="ignore", divide="ignore"):
        rate = a / (a + r)
        factor = np.where(a > 0, 1.0 / rate, 1.0)
    return Reweighting(rate, factor)


# ---- the inference of a build ------------------------------------------------------------------

@dataclass(frozen=True)
class RejectInference:
    """What the inference did and how it compares: the facts behind the workbook's sheet.

    ``bands`` has one row per score band of the accepts-only card; ``accepts_only`` is the build
    result of the accepts-only card (its card, reports and performance).
    """

    method: str
    settings: dict
    source: str
    rows: int                        # reject rows read
    refused: int                     # rows the accepts-only card refuses (left out)
    weight: float                    # weight of the scored rejects
    inferred_bads: float             # weight of inferred bads among them
    accepts_bad_rate: float          # development accepts
    expected_bad_rate: float         # mean P(bad) of the rejects under the accepts-only card
    bands: pd.DataFrame
    accepts_only: object = None
    known_bad_rate: float | None = None     # from rejects.known_outcome, when given
    known_outcome: str | None = None
    cutoff: int | None = None               # hard cut-off: the score used
    notes: tuple = field(default_factory=tuple)
    excluded: int = 0                       # rows a data.exclude rule catches (left out)

    @property
    def inferred_bad_rate(self) -> float:
        return self.inferred_bads / self.weight if self.weight > 0 else float("nan")

    @property
    def ratio(self) -> float:
        """Inferred bad rate of the rejects over the accepts' bad rate (development)."""
        return self.inferred_bad_rate / self.accepts_bad_rate if self.accepts_bad_rate > 0 \
            else float("nan")

    def warnings(self) -> tuple[str, ...]:
        low, high = EXPECTED_RATIO
        ratio = self.ratio
        found = list(self.notes)
        if self.method != "none" and not low <= ratio <= high:
            found.append(f"The rejects' inferred bad rate is {ratio:.2f} times the accepts' "
                         f"(development), outside the {low:g} to {high:g} that practitioners "
                         "commonly expect: check the method and its settings.")
        return tuple(found)

    def record(self) -> dict:
        """What the model file keeps: the method, its settings and the headline rates."""
        return {"method": self.method, "settings": {k: v for k, v in self.settings.items()},
                "rejects": self.rows, "rejects_refused": self.refused,
                **({"rejects_excluded": self.excluded} if self.excluded else {}),
                "accepts_bad_rate": round(self.accepts_bad_rate, 6),
                "rejects_inferred_bad_rate": round(self.inferred_bad_rate, 6),
                **({"cutoff": self.cutoff} if self.cutoff is not None else {})}


class Augmentation(NamedTuple):
    """What the augmented build counts: reject copies' facts and the accepts' new weights."""

    copies: tuple            # RowFacts over the reject rows, one per copy
    accepts_weight: np.ndarray


def infer(rejects_config, seed: int, scale: Scaling, rows: RowFacts,
          accepts_scores: np.ndarray | None, scored: RejectScores, histograms: dict
          ) -> tuple[Augmentation, dict]:
    """Run the configured method; return the augmentation and the per-band facts.

    ``histograms`` are the accepts-only build's score histograms by sample; ``accepts_scores``
    (per accepts row) is needed only for reweighting.
    """
    method = rejects_config.method
    low = next(iter(histograms.values())).low
    width = len(next(iter(histograms.values())).goods)
    ok = scored.used
    w = np.where(ok, scored.weight, 0.0)
    at = np.clip(scored.score - low, 0, width - 1)
    rejects_hist = np.bincount(at, weights=w, minlength=width)
    accepts_hist = sum(h.goods + h.bads for h in histograms.values())
    dev = histograms["development"]
    starts = score_bands(accepts_hist, dev.goods, dev.bads, rejects_hist, low,
                         rejects_config.bands)
    n = len(starts)
    by_band = lambda values: np.add.reduceat(values, starts - low)  # noqa: E731
    dev_goods, dev_bads = by_band(dev.goods), by_band(dev.bads)
    with np.errstate(invalid="ignore", divide="ignore"):
        accepts_rate = dev_bads / (dev_goods + dev_bads)
    band = band_of(scored.score, starts)
    p_bad = bad_probability_of_score(scored.score.astype(np.float64), scale)

    copies: list = []
    accepts_weight = rows.weight
    bad_weight = np.zeros(len(w))
    extra: dict = {}
    sample = np.where(ok, DEVELOPMENT, EXCLUDED).astype(np.int8)
    if method == "fuzzy":
        f = fuzzy_augmentation(p_bad, w)
        copies = [RowFacts(np.full(len(w), GOOD, np.int8), f.good_weight, sample),
                  RowFacts(np.full(len(w), BAD, np.int8), f.bad_weight, sample)]
        bad_weight = f.bad_weight
    elif method == "parcelling":
        p = parcelling(band, accepts_rate, rejects_config.uplift,
                       seed if rejects_config.seed is None else rejects_config.seed)
        copies = [RowFacts(p.label, w, sample)]
        bad_weight = np.where(p.label == BAD, w, 0.0)
    elif method == "hard_cutoff":
        rate = rejects_config.reject_bad_rate
        if rate is None and rejects_config.cutoff is None:
            rate = float(np.sum(p_bad * w) / np.sum(w)) if np.sum(w) > 0 else 0.0
        h = hard_cutoff(np.where(ok, scored.score, np.iinfo(np.int64).max), w,
                        rejects_config.cutoff, rate)
        copies = [RowFacts(h.label, w, sample)]
        bad_weight = np.where(h.label == BAD, w, 0.0)
        extra["cutoff"] = h.cutoff
    elif method == "reweighting":
        r = reweighting(by_band(accepts_hist), by_band(rejects_hist))
        accepts_band = band_of(accepts_scores, starts)
        accepts_weight = np.where(rows.sample == DEVELOPMENT,
                                  rows.weight * r.factor[accepts_band], rows.weight)
        # The assumption behind reweighting: rejects in a band go bad at the accepts' rate there.
        bad_weight = w * np.nan_to_num(accepts_rate)[band]
    else:   # none: the card's own expectation, reported, not used
        bad_weight = p_bad * w

    known = scored.known
    with np.errstate(invalid="ignore", divide="ignore"):
        table = pd.DataFrame({
            "Band": np.arange(1, n + 1),
            "Lowest score": starts,
            "Highest score": np.append(starts[1:] - 1, low + width - 1),
            "Accepts": by_band(accepts_hist),
            "Rejects": np.bincount(band, weights=w, minlength=n),
        })
        table["Declined share"] = table["Rejects"] / (table["Accepts"] + table["Rejects"])
        table["Accepts' bad rate (development)"] = accepts_rate
        inferred = np.bincount(band, weights=bad_weight, minlength=n)
        table["Rejects' inferred bad rate"] = inferred / table["Rejects"].to_numpy()
        table["Ratio"] = table["Rejects' inferred bad rate"] / accepts_rate
        if (known != OTHER).any():
            kb = np.bincount(band, weights=np.where(ok & (known == BAD), w, 0.0), minlength=n)
            kn = np.bincount(band, weights=np.where(ok & (known != OTHER), w, 0.0), minlength=n)
            table["Rejects' known bad rate"] = kb / kn
            extra["known_bad_rate"] = float(kb.sum() / kn.sum()) if kn.sum() > 0 else None
    extra.update(bands=table, weight=float(w.sum()), inferred_bads=float(bad_weight.sum()),
                 accepts_bad_rate=float(dev.bads.sum() / (dev.goods.sum() + dev.bads.sum())),
                 expected_bad_rate=float(np.sum(p_bad * w) / w.sum()) if w.sum() > 0
                 else float("nan"))
    return Augmentation(tuple(copies), accepts_weight), extra
