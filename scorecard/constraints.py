"""Every tunable setting's default, bounds and allowed values, declared once.

The config reader (:mod:`scorecard.config`) and the algorithms that take the same settings as
arguments (:mod:`scorecard.binning.optimal`, :mod:`scorecard.fit.selection`,
:mod:`scorecard.measures.stability`, :mod:`scorecard.evaluation`) all read their defaults and
limits from here, so a limit cannot be one thing in a config file and another in a function
call. Each :class:`Setting` names its default, the :class:`Interval` its numbers must lie in,
whether they must be whole, and the words it may take.

Why here, at stage 0 beside :mod:`scorecard.errors`, and not inside ``config/``: the stability
measures (stage 0) need the watch and shift cut-offs and may import nothing from a later
stage, and an algorithm should check its arguments without loading the YAML reader. So this
module imports only the standard library.

Defaults that belong to the config alone and have no bounds (file paths, the CSV delimiter,
empty lists) are declared where the config objects are, in :mod:`scorecard.config.schema`.

Examples
--------
>>> MAX_VIF.default, MAX_VIF.interval.describe()
(5.0, 'above 1')
>>> TRENDS
('detect', 'rises', 'falls', 'any')
"""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass
from typing import Any

__all__ = [
    "Interval", "Setting", "cutoffs_in_order",
    "TRENDS", "KINDS", "METHODS", "ENTRIES", "UNSEEN_ACTIONS", "OUT_OF_RANGE_ACTIONS",
    "EXCLUSION_CONDITIONS",
    "HOLDOUT", "SEED",
    "FINE_BINS", "MAX_BINS", "CHOOSE_MAX_BINS", "CHOSEN_BINS_UP_TO", "BIN_COUNT_FOLDS",
    "MIN_BIN_SHARE", "MIN_BIN_GOODS", "MIN_BIN_BADS", "PRIOR_ROWS", "TREND",
    "RARE_LEVEL_SHARE", "MAX_LEVELS",
    "MIN_IV", "MAX_CORRELATION", "MAX_VIF", "METHOD", "ENTRY", "ENTRY_P_VALUE", "GAIN_FOLDS",
    "MAX_CHARACTERISTICS",
    "SCALE_LIMIT", "BASE_SCORE", "BASE_ODDS", "PDO",
    "UNSEEN_LEVEL", "UNSEEN_MISSING", "OUT_OF_RANGE", "REASONS",
    "SCORE_BANDS", "WATCH", "SHIFT",
    "APPROVAL_RATE", "APPROVAL_RATES", "PROXY_CRAMERS_V", "MIN_GROUP_SIZE", "IMPACT_RATIO",
]


def _shown(bound: float) -> str:
    return str(int(bound)) if bound == int(bound) and abs(bound) < 1e15 else f"{bound:g}"


@dataclass(frozen=True, slots=True)
class Interval:
    """The numbers from ``low`` to ``high``; an open end leaves out the bound itself.

    Parameters
    ----------
    low, high : float or None
        Bounds; None leaves that side unbounded.
    low_open, high_open : bool
        True excludes the bound.

    Examples
    --------
    >>> share = Interval(0, 0.5, high_open=True)
    >>> 0.0 in share, 0.5 in share, share.describe()
    (True, False, 'at least 0 and below 0.5')
    """

    low: float | None = None
    high: float | None = None
    low_open: bool = False
    high_open: bool = False

    def __contains__(self, value: float) -> bool:
        if self.low is not None and (value <= self.low if self.low_open else value < self.low):
            return False
        return self.high is None or (value < self.high if self.high_open else value <= self.high)

    def describe(self) -> str:
        """The interval in words, as messages give it: ``'above 0 and at most 1'``."""
        limits = []
        if self.low is not None:
            low = _shown(self.low)
            limits.append(f"above {low}" if self.low_open else f"at least {low}")
        if self.high is not None:
            high = _shown(self.high)
            limits.append(f"below {high}" if self.high_open else f"at most {high}")
        return " and ".join(limits) or "any finite number"


@dataclass(frozen=True, slots=True)
class Setting:
    """One setting: its default and the values it may take.

    Parameters
    ----------
    default : object
        The value used when neither the config nor the caller gives one.
    interval : Interval or None
        For a number: where it must lie (it must also be finite).
    whole : bool
        For a number: True when it must be a whole number.
    choices : tuple of str
        For a word: the words allowed; empty for a number.
    renamed : tuple of (str, str)
        For a word: former spellings, each with the word that replaced it, so that a config
        written with the old word is refused with the new one named.

    Examples
    --------
    >>> MAX_BINS.allows(6), MAX_BINS.allows(1), MAX_BINS.allows(2.5)
    (True, False, False)
    >>> METHOD.allows("all"), METHOD.allows("backward")
    (True, False)
    """

    default: Any
    interval: Interval | None = None
    whole: bool = False
    choices: tuple[str, ...] = ()
    renamed: tuple[tuple[str, str], ...] = ()

    def allows(self, value: Any) -> bool:
        """True when ``value`` is of the right kind and within the limits."""
        if self.choices:
            return isinstance(value, str) and value in self.choices
        # numpy's scalars register as numbers.Real and numbers.Integral; yes/no values do not count.
        if isinstance(value, bool) or not isinstance(value, numbers.Real):
            return False
        if self.whole and not isinstance(value, numbers.Integral):
            return False
        return math.isfinite(value) and (self.interval is None or value in self.interval)

    def expected(self) -> str:
        """What the setting takes, in words: ``'a whole number at least 2'``."""
        if self.choices:
            return "one of " + ", ".join(self.choices)
        kind = "a whole number" if self.whole else "a number"
        return kind if self.interval is None else f"{kind} {self.interval.describe()}"


def cutoffs_in_order(watch: float, shift: float) -> bool:
    """True when the stability cut-offs leave a watch band: ``0 < watch < shift < inf``.

    An index equal to a cut-off reaches that status, so ``watch == shift`` would leave no index
    that is only to be watched; that is refused wherever the cut-offs are given.

    Examples
    --------
    >>> cutoffs_in_order(WATCH.default, SHIFT.default), cutoffs_in_order(0.2, 0.2)
    (True, False)
    """
    return 0 < watch < shift < math.inf


# ---- words ---------------------------------------------------------------------------------
# How the bad rate must move with the value: found from the data, rising, falling, or any order.
TRENDS = ("detect", "rises", "falls", "any")
KINDS = ("numeric", "categorical")
METHODS = ("stepwise", "all")
# What lets a candidate enter in stepwise selection: a gain on held-out folds, or the score test.
ENTRIES = ("gain", "score")
UNSEEN_ACTIONS = ("neutral", "worst", "reject")
OUT_OF_RANGE_ACTIONS = ("edge", "neutral", "worst", "reject")
# How an exclusion rule (data.exclude) catches a row: its value is one of a list, below a
# bound, at least a bound, or missing. One condition per rule, never an expression.
EXCLUSION_CONDITIONS = ("in", "below", "at_least", "missing")

_SHARE = Interval(0, 1, low_open=True, high_open=True)
_UP_TO_ONE = Interval(0, 1, low_open=True)
_POSITIVE = Interval(0, low_open=True)

# ---- samples ---------------------------------------------------------------------------------
HOLDOUT = Setting(0.3, _SHARE)
SEED = Setting(2024, Interval(0), whole=True)

# ---- binning ---------------------------------------------------------------------------------
FINE_BINS = Setting(40, Interval(2), whole=True)
MAX_BINS = Setting(6, Interval(2), whole=True)
# binning.choose_max_bins: the limit is chosen for each characteristic by held-out
# log-likelihood on folds of its fine-class counts (scorecard.binning.bin_count), from 2 up to
# CHOSEN_BINS_UP_TO, instead of max_bins for all. Off by default: on the quality benchmark
# (three splits of eight data sets) it moved the AUC by about +0.0006 on average, within the
# splits' noise, and cost one data set 0.02 at one split (folds of 2,100 rows chose 3 bins
# for a strong, smooth characteristic). With the monotone trend and the 1% bin share the
# optimum seldom has more than about 10 bins, so 12 leaves room; the folds and the limit are
# not config keys.
CHOOSE_MAX_BINS = Setting(False)
CHOSEN_BINS_UP_TO = Setting(12, Interval(2), whole=True)
BIN_COUNT_FOLDS = Setting(5, Interval(2), whole=True)
# Precision comes from the prior: every bin's weight of evidence is shrunk toward 0 as if it
# held PRIOR_ROWS more rows at the overall bad rate, so a small bin keeps only the evidence its
# size supports. 20 pseudo-rows weigh as much as the smallest bin a rule of 10 goods and 10 bads
# admitted (standard error of its WoE about 0.45, at an even rate). Hard minimums of 10 goods and
# 10 bads instead kept strong small levels (a level of 30 rows, nearly all bad) out of cards.
# The share only guards against slivers; a 5% share kept the top of a risky tail out too.
MIN_BIN_SHARE = Setting(0.01, Interval(0, 0.5, high_open=True))
MIN_BIN_GOODS = Setting(1, Interval(0), whole=True)
MIN_BIN_BADS = Setting(1, Interval(0), whole=True)
PRIOR_ROWS = Setting(20.0, Interval(0))
TREND = Setting("detect", choices=TRENDS, renamed=(
    ("auto", "detect"), ("ascending", "rises"), ("descending", "falls"), ("free", "any")))
RARE_LEVEL_SHARE = Setting(0.01, Interval(0, 0.5, high_open=True))
MAX_LEVELS = Setting(50, Interval(2), whole=True)

# ---- selection -------------------------------------------------------------------------------
# No flat floor by default: it is blind to the sample size, and a characteristic weak alone can
# add ranking within strong ones; the stepwise entry test, which sees the others, decides.
MIN_IV = Setting(0.0, Interval(0))
MAX_CORRELATION = Setting(0.6, _UP_TO_ONE)
# A VIF is at least 1 by definition (1 exactly when uncorrelated), so a ceiling of 1 would drop
# every column with any correlation at all: the ceiling must lie above 1.
MAX_VIF = Setting(5.0, Interval(1, low_open=True))
METHOD = Setting("stepwise", choices=METHODS)
# The score test of a weight-of-evidence coded candidate does not know that its WoE was
# estimated on the same rows, so it lets in most unrelated characteristics of many bins; the
# held-out gain re-estimates the WoE without the rows it is judged on (scorecard.fit.folds).
# Not the default yet: on the demo, an extreme value in one to three rows can move a
# characteristic's bins and with them other candidates' held-out gains by about a nat, so one
# whose gain sits near 0 flips (tests/test_hostile_values.py), even with folds that move only
# with the patterns they touch; a margin on the gain moves that threshold, it does not remove it.
ENTRY = Setting("score", choices=ENTRIES)
ENTRY_P_VALUE = Setting(0.05, _UP_TO_ONE)
# Folds of the development counts for the held-out gain (not a config key).
GAIN_FOLDS = Setting(5, Interval(2), whole=True)
MAX_CHARACTERISTICS = Setting(12, Interval(1), whole=True)

# ---- scaling ---------------------------------------------------------------------------------
# Scores are integers summed in 64 bits: points, the base score, the points to double the odds
# and the base odds (either way round) stay below this, so no sum can overflow or lose meaning.
SCALE_LIMIT = 1e6
BASE_SCORE = Setting(600.0, Interval(-SCALE_LIMIT, SCALE_LIMIT, low_open=True, high_open=True))
BASE_ODDS = Setting(50.0, Interval(1 / SCALE_LIMIT, SCALE_LIMIT, high_open=True))
PDO = Setting(20.0, Interval(1 / SCALE_LIMIT, SCALE_LIMIT, high_open=True))

# ---- scoring ---------------------------------------------------------------------------------
UNSEEN_LEVEL = Setting("neutral", choices=UNSEEN_ACTIONS)
UNSEEN_MISSING = Setting("neutral", choices=UNSEEN_ACTIONS)
OUT_OF_RANGE = Setting("edge", choices=OUT_OF_RANGE_ACTIONS)
REASONS = Setting(4, Interval(0), whole=True)

# ---- evaluation and stability ----------------------------------------------------------------
SCORE_BANDS = Setting(10, Interval(2), whole=True)
# Common practice: an index below 0.10 is stable, from 0.10 to watch, from 0.25 a shift.
WATCH = Setting(0.10, _POSITIVE)
SHIFT = Setting(0.25, _POSITIVE)

# ---- fairness --------------------------------------------------------------------------------
APPROVAL_RATE = Setting(None, _SHARE)          # each of the approval rates
APPROVAL_RATES = Setting((0.5, 0.7, 0.9))
PROXY_CRAMERS_V = Setting(0.15, _UP_TO_ONE)
MIN_GROUP_SIZE = Setting(50, Interval(1), whole=True)
IMPACT_RATIO = Setting(0.8, _UP_TO_ONE)
