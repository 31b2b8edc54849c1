"""Exact merging of adjacent fine classes into the coarse classes of highest information value.

A characteristic arrives as ordered fine classes with their weighted counts of goods and bads.
:func:`optimal_bins` merges runs of adjacent fine classes into at most ``max_bins`` coarse
classes (bins) so that the information value of the bins is as large as possible, subject to
minimum bin sizes and, optionally, a strictly monotone bad rate. The search is exact: a dynamic
programme over the boundaries between fine classes, vectorised with numpy.

Every candidate bin ``[i, j)`` (fine classes ``i`` to ``j - 1``) gets its counts from prefix
sums, so the whole table of bins is a set of ``(n + 1, n + 1)`` arrays. For ``k`` bins the
programme keeps, for each last bin ``[i, j)``, the best IV of a partition of ``[0, j)`` ending
in that bin. Adding a bin ``[i, j)`` needs the best partition whose last bin ``[h, i)`` has a
lower bad rate (trend ``'rises'``); with the bins ending at ``i`` sorted by bad rate once, that is a
running maximum read at the right place, so each step costs ``O(n^2)``.

A single turn of the bad rate (``'valley'``: it falls, then rises, each at least once;
``'peak'``: it rises, then falls) is the same programme run twice: layers of bins in the first
direction, and layers whose last bin is in the second direction, fed by either kind through the
same running maximum. ``trend='detect'`` takes such a turn only when the data demand it: the
turn must have the higher information value, and it must raise the binomial log-likelihood of
the bins over the best monotone partition by a likelihood-ratio statistic of at least
:data:`TURN_EVIDENCE` (chi-squared with one degree of freedom, the turning point, at the 0.001
level), so that a monotone characteristic stays monotone.

With ``prior_rows`` each bin's weight of evidence is shrunk toward 0 by a beta prior centred on
the overall bad rate (:func:`scorecard.measures.information.shrunk_woe`), and the IV weighs the
shares by the shrunk weight of evidence. Each bin's term still depends on its own counts and
the totals only, so the programme stays exact; small bins simply earn less.

Ties are broken the same way every time: among partitions whose IV agree to a relative
``1e-12``, fewer bins win; among those with equal bin counts, the last bin starts as early as
possible, then the bin before it, and so on towards the first.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
from scipy import special

from scorecard.constraints import MAX_BINS, TREND, TRENDS
from scorecard.errors import InputError
from scorecard.measures.information import iv_terms, shrunk_woe

# The single-turn shapes, which the optimiser accepts beside the config's trends: the bad rate
# moves in the first direction, then in the second.
TURNS = {"valley": ("falls", "rises"), "peak": ("rises", "falls")}

# Likelihood-ratio statistic a turn must reach over the best monotone partition for 'detect'
# to take it: the 0.999 quantile of chi-squared with one degree of freedom.
TURN_EVIDENCE = 10.828

# IV values this close (relative) count as equal, so that rounding in the last bits never
# decides between partitions that are equal in exact arithmetic.
_IV_TIE = 1e-12

# A caller's total may be summed in another order than ours; allow that much shortfall.
_TOTAL_SLACK = 1e-9


class Coarsening(NamedTuple):
    """The chosen coarse classes of one characteristic.

    Attributes
    ----------
    starts : tuple of int
        Index of the first fine class of each coarse bin; ``starts[0] == 0``.
    trend : str
        The bad-rate trend used: ``'rises'``, ``'falls'``, ``'valley'``, ``'peak'`` or
        ``'any'``. For ``trend='detect'`` it is the winning shape.
    iv : float
        Information value of the coarse bins (nats), with shares taken of the given totals.
    feasible : bool
        False when not even two bins meet the constraints; the result is then one bin.
    reason : str
        Empty when feasible, else a plain sentence saying why no split works.
    """

    starts: tuple[int, ...]
    trend: str
    iv: float
    feasible: bool
    reason: str


class _Limits(NamedTuple):
    count: float
    goods: float
    bads: float


class _Candidates(NamedTuple):
    """Every candidate bin ``[i, j)`` of the fine classes, indexed ``[i, j]``."""

    cum_goods: np.ndarray  # (n + 1,) goods in fine classes [0, j)
    cum_bads: np.ndarray  # (n + 1,) bads in fine classes [0, j)
    valid: np.ndarray  # bin meets every size limit and has some goods and some bads
    term: np.ndarray  # the bin's IV term; -inf where not valid
    rate: np.ndarray  # the bin's bad rate; nan where not valid
    memo: dict  # orderings and layers by direction, found once for every trend that needs them


def optimal_bins(
    goods,
    bads,
    *,
    total_goods=None,
    total_bads=None,
    trend=TREND.default,
    max_bins=MAX_BINS.default,
    min_bin_count=0.0,
    min_bin_goods=0.0,
    min_bin_bads=0.0,
    prior_rows=0.0,
) -> Coarsening:
    """Merge adjacent fine classes into the coarse bins of highest information value.

    Each bin is a run of adjacent fine classes with ``goods + bads >= min_bin_count``,
    ``goods >= min_bin_goods``, ``bads >= min_bin_bads`` and a positive (weighted) count of
    both goods and bads, so that its weight of evidence is finite (with a prior, of rows). The
    IV of a partition is ``sum((g / G - b / B) * WoE)`` over its bins, where ``G`` and ``B``
    are the totals and ``WoE = ln((g / G) / (b / B))``, or its shrunk value with a prior. The
    result is the exact maximum; see the module notes for how ties are broken.

    Parameters
    ----------
    goods, bads : array_like of float, shape (n,)
        Weighted counts of goods and bads in the ordered fine classes (numeric classes in value
        order, categorical levels already ordered by bad rate).
    total_goods, total_bads : float, optional
        Totals over all bins of the characteristic, including any missing or sentinel
        bins kept apart by the caller, so that IV adds up across them. Default: the sums of
        ``goods`` and ``bads``.
    trend : {'detect', 'rises', 'falls', 'valley', 'peak', 'any'}, default 'detect'
        ``'rises'``: the bad rate strictly increases from bin to bin; ``'falls'``: it strictly
        decreases; ``'valley'``: it strictly falls at least once, then strictly rises at least
        once; ``'peak'``: the mirror image; ``'any'``: any order; ``'detect'``: the better of
        rises and falls (rises on a tie), or the better of valley and peak when that has the
        higher information value and beats it by the likelihood-ratio statistic
        :data:`TURN_EVIDENCE`.
    max_bins : int, default 6
        Largest number of bins, at least 2.
    min_bin_count, min_bin_goods, min_bin_bads : float, default 0.0
        Smallest weighted count of cases, goods and bads in each bin.
    prior_rows : float, default 0.0
        Pseudo-rows at the overall bad rate that shrink each bin's weight of evidence toward 0;
        the trend then holds for the shrunk bad rates. 0: no shrinkage.

    Returns
    -------
    Coarsening
        The starts of the bins, the trend used, their IV and whether two or more bins were
        possible. When they are not (a single fine class, or no split meeting the
        constraints), the result is one bin with ``feasible=False`` and a ``reason``; its IV
        is infinite if the fine classes hold goods but no bads or bads but no goods, and
        for ``trend='detect'`` its trend is ``'rises'``.

    Raises
    ------
    InputError
        If the counts are not finite, non-negative, one-dimensional and of equal length, a
        total falls short of its counts, or a limit or the trend is out of range.

    Examples
    --------
    >>> result = optimal_bins([40, 30, 20, 10], [2, 3, 5, 8], max_bins=3)
    >>> result.starts, result.trend, round(result.iv, 4), result.feasible
    ((0, 2, 3), 'rises', 0.9296, True)
    """
    return optimal_bins_each(goods, bads, total_goods=total_goods, total_bads=total_bads,
                             trend=trend, max_bins=max_bins, min_bin_count=min_bin_count,
                             min_bin_goods=min_bin_goods, min_bin_bads=min_bin_bads,
                             prior_rows=prior_rows, least_bins=max_bins)[-1]


def optimal_bins_each(goods, bads, *, total_goods=None, total_bads=None, trend=TREND.default,
                      max_bins=MAX_BINS.default, min_bin_count=0.0, min_bin_goods=0.0,
                      min_bin_bads=0.0, prior_rows=0.0, least_bins=2) -> tuple[Coarsening, ...]:
    """:func:`optimal_bins` for every limit from ``least_bins`` to ``max_bins``, from one run.

    The programme's layer for ``k`` bins depends only on the layers for fewer, so one run up
    to ``max_bins`` holds the optimum for every smaller limit: entry ``i`` of the result equals
    ``optimal_bins(..., max_bins=least_bins + i)`` exactly. Same parameters as
    :func:`optimal_bins`, and ``least_bins`` (at least 2, at most ``max_bins``).

    Examples
    --------
    >>> [r.starts for r in optimal_bins_each([40, 30, 20, 10], [2, 3, 5, 8], max_bins=4)]
    [(0, 2), (0, 2, 3), (0, 1, 2, 3)]
    """
    goods = _counts(goods, "goods")
    bads = _counts(bads, "bads")
    if bads.size != goods.size:
        raise InputError(f"bads: has {bads.size} fine classes but goods has {goods.size}")
    total_goods = _total(total_goods, goods, "total_goods")
    total_bads = _total(total_bads, bads, "total_bads")
    if trend not in TURNS and not TREND.allows(trend):
        raise InputError(f"trend: must be one of {', '.join(TRENDS + tuple(TURNS))}; "
                         f"got {trend!r}")
    max_bins = _max_bins(max_bins)
    least_bins = _max_bins(least_bins)
    if least_bins > max_bins:
        raise InputError(f"least_bins: must be at most max_bins ({max_bins}); got {least_bins}")
    limits = _Limits(
        _limit(min_bin_count, "min_bin_count"),
        _limit(min_bin_goods, "min_bin_goods"),
        _limit(min_bin_bads, "min_bin_bads"),
    )
    cand = _candidates(goods, bads, total_goods, total_bads, limits, _prior(prior_rows))
    each = range(least_bins, max_bins + 1)
    if trend == "detect":
        rising, falling = (_best(cand, each, d) for d in ("rises", "falls"))
        valleys, peaks = (_best_turn(cand, each, s) for s in TURNS)
        chosen = []
        for (found, used), (turn, shape) in zip(map(_better, rising, falling),
                                                map(_better_turn, valleys, peaks)):
            # The turn must win on both counts: the likelihood-ratio evidence, and the
            # information value the optimiser maximises (more bins can raise the likelihood
            # while merging away the contrast that the IV measures).
            if turn is not None and (found is None or (
                    turn[1] > found[1] + _IV_TIE * abs(found[1])
                    and _evidence(cand, turn[0], found[0]) >= TURN_EVIDENCE)):
                found, used = turn, shape
            chosen.append((found, used))
    elif trend in TURNS:
        chosen = [(found, trend) for found in _best_turn(cand, each, trend)]
    else:
        chosen = [(found, trend) for found in _best(cand, each, trend)]
    results = []
    for found, used in chosen:
        if found is None:
            iv = _single_bin_iv(cand, total_goods, total_bads)
            results.append(Coarsening((0,), used, iv, False, _why_no_split(cand, trend, limits)))
        else:
            starts, iv = found
            results.append(Coarsening(starts, used, iv, True, ""))
    return tuple(results)


def bin_of_fine_class(starts, n_fine) -> np.ndarray:
    """Look up the coarse bin of every fine class.

    Parameters
    ----------
    starts : sequence of int
        Index of the first fine class of each bin, strictly increasing from 0, as in
        :attr:`Coarsening.starts`.
    n_fine : int
        Number of fine classes.

    Returns
    -------
    numpy.ndarray of int, shape (n_fine,)
        Entry ``f`` is the index of the bin that holds fine class ``f``.

    Raises
    ------
    InputError
        If ``starts`` does not begin at 0, is not strictly increasing, or reaches past
        ``n_fine``.

    Examples
    --------
    >>> bin_of_fine_class((0, 2, 3), 5)
    array([0, 0, 1, 2, 2])
    """
    if isinstance(n_fine, bool) or not isinstance(n_fine, (int, np.integer)) or n_fine < 1:
        raise InputError(f"n_fine: must be a whole number of at least 1; got {n_fine!r}")
    starts = np.asarray(starts)
    if starts.ndim != 1 or starts.size == 0 or not np.issubdtype(starts.dtype, np.integer):
        raise InputError("starts: must be a non-empty sequence of whole numbers")
    if starts[0] != 0:
        raise InputError(f"starts: must begin with 0; got {int(starts[0])}")
    if np.any(np.diff(starts) <= 0):
        raise InputError("starts: must be strictly increasing")
    if starts[-1] >= n_fine:
        raise InputError(
            f"starts: bin start {int(starts[-1])} is past the last of {n_fine} fine classes"
        )
    return np.searchsorted(starts, np.arange(n_fine), side="right") - 1


def _counts(values, name):
    try:
        counts = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"{name}: must be numbers") from None
    if counts.ndim != 1:
        raise InputError(f"{name}: must be one-dimensional; got {counts.ndim} dimensions")
    if counts.size == 0:
        raise InputError(f"{name}: must hold at least one fine class")
    wrong = ~np.isfinite(counts) | (counts < 0)
    if wrong.any():
        first = int(np.argmax(wrong))
        raise InputError(
            f"{name}: fine class {first} has {counts[first]!r}; "
            "counts must be finite and non-negative"
        )
    return counts


def _total(value, counts, name):
    observed = float(counts.sum())
    if value is None:
        return observed
    try:
        total = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name}: must be a number; got {value!r}") from None
    if not np.isfinite(total) or total < observed * (1 - _TOTAL_SLACK):
        raise InputError(
            f"{name}: {value!r} is less than the sum over the fine classes ({observed:g})"
        )
    return total


def _max_bins(value):
    if not MAX_BINS.allows(value):
        raise InputError(f"max_bins: must be {MAX_BINS.expected()}; got {value!r}")
    return int(value)


def _limit(value, name):
    try:
        limit = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name}: must be a number; got {value!r}") from None
    if not np.isfinite(limit) or limit < 0:
        raise InputError(f"{name}: must be finite and non-negative; got {value!r}")
    return limit


def _prior(value):
    try:
        prior = float(value)
    except (TypeError, ValueError):
        raise InputError(f"prior_rows: must be a number; got {value!r}") from None
    if not (math.isfinite(prior) and prior >= 0):
        raise InputError(f"prior_rows: must be finite and non-negative; got {value!r}")
    return prior


def _candidates(goods, bads, total_goods, total_bads, limits, prior_rows=0.0):
    """Counts, validity, IV term and bad rate of every run of fine classes.

    With a prior, the IV term weighs the shares by the shrunk weight of evidence and the rate
    is the shrunk bad rate, so that the trend holds for the weights of evidence the bins get;
    a bin then needs rows, but not both outcomes, for its weight of evidence to be finite.
    """
    cum_goods = np.concatenate(([0.0], np.cumsum(goods)))
    cum_bads = np.concatenate(([0.0], np.cumsum(bads)))
    g = cum_goods[None, :] - cum_goods[:, None]
    b = cum_bads[None, :] - cum_bads[:, None]
    n_bounds = cum_goods.size
    estimable = ((g > 0) & (b > 0)) if prior_rows == 0 else (g + b > 0)
    valid = (
        np.triu(np.ones((n_bounds, n_bounds), dtype=bool), k=1)
        & estimable
        & (g + b >= limits.count)
        & (g >= limits.goods)
        & (b >= limits.bads)
    )
    # Only valid bins are computed: they have goods and bads, so no 0/0 or log(0) arises, and
    # the costly logarithm skips the empty, reversed and too-small bins.
    g, b = g[valid], b[valid]
    term = np.full((n_bounds, n_bounds), -np.inf)
    woe = shrunk_woe(g, b, total_goods, total_bads, prior_rows)
    term[valid] = iv_terms(g / total_goods, b / total_bads, woe)
    rate = np.full((n_bounds, n_bounds), np.nan)
    shrunk = prior_rows * total_bads / (total_goods + total_bads) if prior_rows else 0.0
    rate[valid] = (b + shrunk) / (g + b + prior_rows)
    return _Candidates(cum_goods, cum_bads, valid, term, rate, {})


def _best(cand, each, trend):
    """For each limit ``k`` in ``each``, the best partition into 2 to ``k`` bins as
    ``(starts, iv)``, or None."""
    # A key that must strictly increase from each bin to the next; None for no order.
    key = _key(cand, trend)
    layers = _directed_layers(cand, trend, each[-1])
    def trace(n_bins):
        starts = _trace(layers[:n_bins], key)
        bin_ends = starts[1:] + (end_of(cand),)
        return starts, sum(float(cand.term[s, e]) for s, e in zip(starts, bin_ends))

    return _per_limit(np.array([layer[:, -1].max() for layer in layers[1:]]), each, trace)


def _per_limit(ends, each, trace):
    """For each limit ``k`` in ``each``, ``trace(n)`` of the best bin count ``n <= k`` by the
    best IV ``ends[n - 2]`` of exactly ``n`` bins, or None where no count is feasible; each
    count is traced once."""
    traced = {}
    found = []
    for k in each:
        within = ends[:k - 1]
        if within.size == 0 or within.max() == -np.inf:
            found.append(None)
            continue
        n_bins = 2 + _first_near_max(within)
        if n_bins not in traced:
            traced[n_bins] = trace(n_bins)
        found.append(traced[n_bins])
    return found


def _key(cand, direction):
    """A key that must strictly increase from each bin to the next; None for no order."""
    if direction == "any":
        return None
    return cand.rate if direction == "rises" else -cand.rate


def _directed_predecessors(cand, direction):
    """:func:`_predecessors` of the direction's key, found once per set of candidates."""
    if direction not in cand.memo:
        cand.memo[direction] = _predecessors(_key(cand, direction))
    return cand.memo[direction]


def _directed_layers(cand, direction, max_bins):
    """:func:`_layers` in one direction, found once per set of candidates (for 'detect' the
    monotone and the turning partitions share them)."""
    memo = ("layers", direction, max_bins)
    if memo not in cand.memo:
        preds = None if direction == "any" else _directed_predecessors(cand, direction)
        cand.memo[memo] = _layers(cand.term, preds, max_bins)
    return cand.memo[memo]


def _layers(term, preds, max_bins):
    """``layers[k - 1][i, j]``: best IV of ``k`` bins covering ``[0, j)``, the last ``[i, j)``.

    ``preds``: the :func:`_predecessors` of the bins' key, or None for no order. Entries are
    -inf where no such partition exists.
    """
    n_bounds = term.shape[0]
    bounds = np.arange(n_bounds)
    if preds is None:
        order = np.broadcast_to(bounds[:, None], (n_bounds, n_bounds))
        preceding = np.full((n_bounds, n_bounds), n_bounds)
    else:
        order, preceding = preds
    no_bin = np.full((1, n_bounds), -np.inf)
    layer = np.full_like(term, -np.inf)
    layer[0] = term[0]
    layers = [layer]
    for _ in range(2, min(max_bins, n_bounds - 1) + 1):
        # best_first[c, i]: best layer value among the first c bins ending at i, in key order.
        by_key = layers[-1][order, bounds]
        best_first = np.vstack((no_bin, np.maximum.accumulate(by_key, axis=0)))
        layers.append(best_first[preceding, bounds[:, None]] + term)
    return layers


def _predecessors(key):
    """Sort the bins ending at each boundary by key, and count those that may precede.

    ``order[:, i]`` lists the starts ``h`` of the bins ``[h, i)`` by increasing key (invalid
    bins, whose key is nan, last). ``preceding[i, j]`` is the number of them whose key is
    below that of ``[i, j)``, so they are exactly the first ``preceding[i, j]`` in that order.
    """
    n_bounds = key.shape[0]
    order = np.argsort(key, axis=0, kind="stable")
    # Row i lists the keys of the bins starting at i, then of those ending at i; a stable
    # sort puts a starting bin before ending bins of equal key, which are thus not counted.
    merged = np.concatenate((key, key.T), axis=1)
    position = np.argsort(merged, axis=1, kind="stable")
    is_ending = position >= n_bounds
    ending_so_far = np.cumsum(is_ending, axis=1)
    rows, slots = np.nonzero(~is_ending)
    preceding = np.empty((n_bounds, n_bounds), dtype=np.intp)
    preceding[rows, position[rows, slots]] = ending_so_far[rows, slots]
    return order, preceding


def _trace(layers, key):
    """Walk back from the last bin, taking the earliest start among near-best choices."""
    end = layers[0].shape[0] - 1
    start = _first_near_max(layers[-1][:, end])
    starts = [start]
    for layer in reversed(layers[:-1]):
        before = layer[:, start]
        if key is not None:
            before = np.where(key[:, start] < key[start, end], before, -np.inf)
        start, end = _first_near_max(before), start
        starts.append(start)
    return tuple(reversed(starts))


def _best_turn(cand, each, shape):
    """For each limit ``k`` in ``each``, the best single-turn partition into at most ``k``
    bins as ``(starts, iv)``, or None.

    ``first[k - 1][i, j]`` is the best IV of ``k`` bins over ``[0, j)`` ending in ``[i, j)``
    with every step in the first direction; ``second[k - 1][i, j]`` the same with at least
    one step in the first direction and then at least one in the second. A single bin is no
    step, so ``first[0]`` feeds no turn.
    """
    key_first, key_second = (_key(cand, d) for d in TURNS[shape])
    first = _directed_layers(cand, TURNS[shape][0], each[-1])
    n_bounds = cand.term.shape[0]
    bounds = np.arange(n_bounds)
    order, preceding = _directed_predecessors(cand, TURNS[shape][1])
    no_bin = np.full((1, n_bounds), -np.inf)
    second = [np.full_like(cand.term, -np.inf)]
    for k in range(1, len(first)):
        before = np.maximum(first[k - 1], second[k - 1]) if k > 1 else second[0]
        best_first = np.vstack((no_bin, np.maximum.accumulate(before[order, bounds], axis=0)))
        second.append(best_first[preceding, bounds[:, None]] + cand.term)
    return _per_limit(np.array([layer[:, -1].max() for layer in second[1:]]), each,
                      lambda n_bins: _trace_turn(cand, first, second, n_bins, key_first,
                                                 key_second))


def _trace_turn(cand, first, second, n_bins, key_first, key_second):
    """Walk back from the last bin of the best turn of ``n_bins`` bins: ``(starts, iv)``."""
    end = end_of(cand)
    start = _first_near_max(second[n_bins - 1][:, end])
    starts, in_second = [start], True
    for k in range(n_bins - 2, -1, -1):
        if in_second:
            allowed = key_second[:, start] < key_second[start, end]
            stay = np.where(allowed, second[k][:, start], -np.inf)
            turn = np.where(allowed & (k > 0), first[k][:, start], -np.inf)
            both = np.maximum(stay, turn)
            previous = _first_near_max(both)
            top = both[previous]
            in_second = bool(stay[previous] >= top - _IV_TIE * abs(top))
        else:
            allowed = key_first[:, start] < key_first[start, end]
            previous = _first_near_max(np.where(allowed, first[k][:, start], -np.inf))
        start, end = previous, start
        starts.append(start)
    starts = tuple(reversed(starts))
    bin_ends = starts[1:] + (end_of(cand),)
    return starts, sum(float(cand.term[s, e]) for s, e in zip(starts, bin_ends))


def end_of(cand):
    return cand.term.shape[0] - 1


def _better_turn(valley, peak):
    """The better of the two turns and its name; valley unless beaten beyond a tie."""
    if valley is None and peak is None:
        return None, ""
    if valley is None or (peak is not None and peak[1] > valley[1] + _IV_TIE * abs(valley[1])):
        return peak, "peak"
    return valley, "valley"


def _log_likelihood(cand, starts):
    """Binomial log-likelihood of the outcome given the bins starting at ``starts``."""
    bounds = np.array(starts + (end_of(cand),))
    g = np.diff(cand.cum_goods[bounds])
    b = np.diff(cand.cum_bads[bounds])
    n = g + b
    return float(np.sum(special.xlogy(g, g / n)) + np.sum(special.xlogy(b, b / n)))


def _evidence(cand, turn_starts, monotone_starts):
    """Likelihood-ratio statistic of the turn's bins over the monotone ones."""
    return 2.0 * (_log_likelihood(cand, turn_starts) - _log_likelihood(cand, monotone_starts))


def _first_near_max(values):
    top = values.max()
    return int(np.argmax(values >= top - _IV_TIE * abs(top)))


def _better(rising, falling):
    """The better of the two directions and its name; rises unless beaten beyond a tie."""
    if rising is None and falling is not None:
        return falling, "falls"
    if falling is not None and falling[1] > rising[1] + _IV_TIE * abs(rising[1]):
        return falling, "falls"
    return rising, "rises"


def _single_bin_iv(cand, total_goods, total_bads):
    good_share = cand.cum_goods[-1] / total_goods if total_goods > 0 else 0.0
    bad_share = cand.cum_bads[-1] / total_bads if total_bads > 0 else 0.0
    # 0 when the shares are equal (both 0 included), inf when only one of them is 0.
    return float(iv_terms(good_share, bad_share))


def _why_no_split(cand, trend, limits):
    """Name the first constraint that no two-bin split can meet.

    Merging all bins after the first of a feasible partition keeps every limit and the
    direction of the bad rate, so no split into two bins means no split at all.
    """
    n_fine = cand.cum_goods.size - 1
    if n_fine == 1:
        return "there is only one fine class, so there is nothing to split"
    cuts = np.arange(1, n_fine)
    goods_left = cand.cum_goods[cuts]
    goods_right = cand.cum_goods[-1] - goods_left
    bads_left = cand.cum_bads[cuts]
    bads_right = cand.cum_bads[-1] - bads_left
    count_left = goods_left + bads_left
    count_right = goods_right + bads_right
    checks = (
        (
            "no split leaves some goods and some bads on each side",
            (goods_left > 0) & (bads_left > 0) & (goods_right > 0) & (bads_right > 0),
        ),
        (
            f"no split leaves {limits.count:g} cases on each side",
            (count_left >= limits.count) & (count_right >= limits.count),
        ),
        (
            f"no split leaves {limits.goods:g} goods on each side",
            (goods_left >= limits.goods) & (goods_right >= limits.goods),
        ),
        (
            f"no split leaves {limits.bads:g} bads on each side",
            (bads_left >= limits.bads) & (bads_right >= limits.bads),
        ),
        (
            "no split meets all the size limits on both sides at once",
            cand.valid[0, cuts] & cand.valid[cuts, n_fine],
        ),
    )
    for reason, met in checks:
        if not met.any():
            return reason
    return {
        "rises": "no split that meets the size limits has a higher bad rate on the right",
        "falls": "no split that meets the size limits has a lower bad rate on the right",
        "valley": "no three bins that meet the size limits have a bad rate that falls, then rises",
        "peak": "no three bins that meet the size limits have a bad rate that rises, then falls",
        "detect": "every split that meets the size limits leaves the same bad rate on both sides",
    }[trend]
