"""The number of bins chosen by held-out log-likelihood on folds of the fine-class counts."""

import math
import statistics

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from scorecard.binning.bin_count import (
    characteristic_seed,
    choose_bin_count,
    held_out_log_likelihoods,
)
from scorecard.binning.coarse import Limits, class_categorical, class_numeric
from scorecard.binning.fine import NumericLayout
from scorecard.binning.optimal import bin_of_fine_class, optimal_bins, optimal_bins_each
from scorecard.card.scorecard import RANGE
from scorecard.constraints import BIN_COUNT_FOLDS, CHOSEN_BINS_UP_TO
from scorecard.measures.fold_split import cell_keys, split_counts


@st.composite
def fine_counts(draw):
    n = draw(st.integers(2, 9))
    goods = draw(st.lists(st.integers(0, 60), min_size=n, max_size=n))
    bads = draw(st.lists(st.integers(0, 30), min_size=n, max_size=n))
    return np.array(goods, float) + 1, np.array(bads, float)


@settings(deadline=None, max_examples=60)
@given(fine_counts(), st.sampled_from(["detect", "rises", "falls", "any", "valley", "peak"]),
       st.integers(2, 7), st.sampled_from([0.0, 20.0]), st.sampled_from([0.0, 15.0]))
def test_every_limit_from_one_run_equals_its_own_run(counts, trend, max_bins, prior, min_count):
    # Invariant: the programme's layer for k bins depends only on those for fewer, so the
    # optimum at each limit from one run is the optimum of a run at that limit (which
    # tests/test_optimal.py checks against brute force).
    goods, bads = counts
    options = dict(trend=trend, min_bin_count=min_count, prior_rows=prior)
    each = optimal_bins_each(goods, bads, max_bins=max_bins, **options)
    assert len(each) == max_bins - 1
    for k, found in zip(range(2, max_bins + 1), each):
        assert found == optimal_bins(goods, bads, max_bins=k, **options)


def _plain_held_out(goods, bads, cells, seed, folds, prior, upper):
    """The held-out log-likelihood of each limit by plain loops (no vectorised scoring):
    fit the optimal bins on the other folds, estimate each bin's bad rate shrunk toward the
    training rate by ``prior`` pseudo-rows, score each held-out fine class's rows."""
    held_g = split_counts(goods, cell_keys(cells, seed, 0), folds)
    held_b = split_counts(bads, cell_keys(cells, seed, 1), folds)
    table = []
    for fold in range(folds):
        tg, tb = goods - held_g[fold], bads - held_b[fold]
        total_g, total_b = tg.sum(), tb.sum()
        rate = total_b / (total_g + total_b)
        row = []
        for k in range(2, upper + 1):
            found = optimal_bins(tg, tb, max_bins=k, trend="rises", prior_rows=prior)
            bins = bin_of_fine_class(found.starts, len(goods))
            ll = 0.0
            for f in range(len(goods)):
                members = [i for i in range(len(goods)) if bins[i] == bins[f]]
                g = sum(tg[i] for i in members)
                b = sum(tb[i] for i in members)
                p_bad = (b + prior * rate) / (g + b + prior)
                ll += held_g[fold][f] * math.log(1 - p_bad) + held_b[fold][f] * math.log(p_bad)
            row.append(ll)
        table.append(row)
    return np.array(table)


@settings(deadline=None, max_examples=25)
@given(st.lists(st.floats(0.02, 0.4), min_size=3, max_size=8), st.integers(100, 400),
       st.integers(0, 2**31 - 1))
def test_chosen_limit_is_the_plain_loop_choice(rates, rows, seed):
    # Reference: the definition, computed by plain loops (brute force over k, each fold's
    # bins from the exact optimiser, shrunk rates, binomial log-likelihood of the held rows).
    rates = np.sort(np.array(rates))
    bads = np.round(rates * rows)
    goods = rows - bads
    cells = np.arange(len(goods))
    folds, prior, upper = 5, 20.0, len(goods)

    def fit(g, b, total_g, total_b):
        return [bin_of_fine_class(r.starts, len(g)) for r in optimal_bins_each(
            g, b, total_goods=total_g, total_bads=total_b, max_bins=upper, trend="rises",
            prior_rows=prior)]

    table = held_out_log_likelihoods(goods, bads, cells, fit, seed, folds, prior)
    plain = _plain_held_out(goods, bads, cells, seed, folds, prior, upper)
    np.testing.assert_allclose(table, plain, rtol=1e-10)
    totals = [sum(plain[f][k] for f in range(folds)) for k in range(upper - 1)]
    best = max(range(upper - 1), key=lambda k: (totals[k], -k))
    choice = choose_bin_count(table, range(2, upper + 1))
    assert choice.best == choice.bins == 2 + best
    choice = choose_bin_count(table, range(2, upper + 1), standard_errors=1.0)
    # The fewest bins within one standard error of the best (paired across folds). When one
    # fold alone differs, gap and standard error are equal in exact arithmetic; rounding
    # then decides, so such draws are left out.
    margins = [totals[best] - totals[k] - math.sqrt(folds) * statistics.stdev(
        [plain[f][best] - plain[f][k] for f in range(folds)]) for k in range(upper - 1)]
    assume(all(abs(m) > 1e-9 * abs(totals[best]) or m == 0 for m in margins))
    within = [k for k in range(upper - 1) if margins[k] <= 0]
    assert choice.bins == 2 + within[0]


def _simulated(shape, rows=60_000, seed=3):
    rng = np.random.default_rng(seed)
    cuts = np.arange(1, 100, dtype=float)
    layout = NumericLayout(cuts, ())
    x = rng.uniform(0, 100, rows)
    if shape == "steps":
        log_odds_bad = np.select([x < 30, x < 65], [-3.0, -2.0], -1.0)
    else:
        log_odds_bad = -4.0 + 3.5 * (x / 100) ** 1.5
    bad = rng.random(rows) < 1 / (1 + np.exp(-log_odds_bad))
    cell = np.searchsorted(cuts, x, side="right")
    goods = np.bincount(cell[~bad], minlength=layout.n_codes).astype(float)
    bads = np.bincount(cell[bad], minlength=layout.n_codes).astype(float)
    return layout, goods, bads


def _range_bins(outcome):
    return sum(1 for b in outcome.draft.bins if b.kind == RANGE)


def test_a_step_function_gets_about_its_steps_and_a_smooth_curve_many_bins():
    # Known truth (simulation): a bad rate of three flat levels is best told by three bins
    # (four when a fine class straddles a step); a smoothly rising one by as many as the
    # data support. Four simulated samples of each.
    limits = Limits(None, 600.0, 1.0, 1.0, 20.0, 11)
    found = {shape: [_range_bins(class_numeric(
        shape, *_simulated(shape, seed=seed), fine_bins=40, trend="detect", limits=limits,
        development_range=(0.0, 100.0))) for seed in (3, 4, 5, 6)]
        for shape in ("steps", "smooth")}
    assert sum(3 <= k <= 4 for k in found["steps"]) >= 3, found
    assert max(found["steps"]) <= 6, found
    assert min(found["smooth"]) >= 8, found
    steps = class_numeric("steps", *_simulated("steps"), fine_bins=40, trend="detect",
                          limits=limits, development_range=(0.0, 100.0))
    assert steps.bins_reason.startswith(f"{_range_bins(steps)} bins: limit ")


def test_a_fixed_max_bins_is_used_as_it_is():
    layout, goods, bads = _simulated("smooth")
    fixed = class_numeric("x", layout, goods, bads, fine_bins=40, trend="detect",
                          limits=Limits(6, 600.0, 1.0, 1.0, 20.0), development_range=(0, 100))
    assert _range_bins(fixed) == 6
    assert fixed.bins_reason == "6 bins: at most binning.max_bins (6)"


def test_the_choice_is_deterministic_and_keyed_by_the_characteristic():
    layout, goods, bads = _simulated("smooth", rows=8_000)
    limits = Limits(None, 80.0, 1.0, 1.0, 20.0, 5)
    first, again = (class_numeric("x", layout, goods, bads, fine_bins=40, trend="detect",
                                  limits=limits, development_range=(0, 100)) for _ in range(2))
    assert first == again
    assert characteristic_seed(5, "x") != characteristic_seed(5, "y")
    assert characteristic_seed(5, "x") != characteristic_seed(6, "x")


def test_categorical_choice_does_not_depend_on_the_order_of_levels():
    rng = np.random.default_rng(2)
    levels = [f"level {i:02d}" for i in range(14)]
    rates = np.linspace(0.03, 0.3, len(levels))
    rows = rng.integers(300, 900, len(levels)).astype(float)
    bads = np.round(rows * rates)
    goods = rows - bads
    limits = Limits(None, 30.0, 1.0, 1.0, 20.0, 9)
    # The last entry holds the missing values.
    base = class_categorical("c", levels, np.append(goods, 0.0), np.append(bads, 0.0),
                             rare_share=0.01, limits=limits)
    order = rng.permutation(len(levels))
    shuffled = class_categorical("c", [levels[i] for i in order],
                                 np.append(goods[order], 0.0), np.append(bads[order], 0.0),
                                 rare_share=0.01, limits=limits)
    assert base == shuffled
    assert base.bins_reason


def test_a_few_changed_rows_move_only_their_own_fine_classes_folds():
    # Each fine class's split comes from its own key: adding rows to one class leaves the
    # other classes' parts as they were.
    goods = np.array([500.0, 400, 300, 200])
    bads = np.array([10.0, 20, 30, 40])
    cells = np.arange(4)
    seed = characteristic_seed(1, "x")
    before = split_counts(goods, cell_keys(cells, seed, 0), BIN_COUNT_FOLDS.default)
    changed = goods.copy()
    changed[2] += 3
    after = split_counts(changed, cell_keys(cells, seed, 0), BIN_COUNT_FOLDS.default)
    np.testing.assert_array_equal(np.delete(before, 2, axis=1), np.delete(after, 2, axis=1))


def test_choose_takes_the_fewest_bins_on_ties_and_knows_its_limits():
    per_fold = np.array([[-10.0, -9.0, -9.0], [-11.0, -9.5, -9.5]])
    choice = choose_bin_count(per_fold, (2, 3, 4))
    assert (choice.best, choice.bins) == (3, 3)
    assert choice.limits == (2, 3, 4)
    assert CHOSEN_BINS_UP_TO.default >= 6


@pytest.mark.parametrize("chosen, best", [(3, 3), (3, 5)])
def test_the_reason_names_the_bins_and_the_rule(chosen, best):
    choice = choose_bin_count(np.zeros((2, 4)), (2, 3, 4, 5))._replace(bins=chosen, best=best)
    text = choice.reason(3)
    assert text.startswith("3 bins: limit 3")
    assert ("noise" in text) == (chosen != best)


def test_a_build_with_chosen_limits_says_how_many_bins_and_why(demo_config_path, demo_build):
    # Invariants of a whole build: each characteristic classed by the optimiser says in its
    # report, the Characteristics table and the model file's fates how many bins it has and
    # why; the count in the sentence is the count of its range or level bins.
    import re

    from scorecard.api import open_engine
    from scorecard.build.frames import characteristics_frame
    from scorecard.build.pipeline import build_scorecard
    from scorecard.card.scorecard import LEVELS
    from scorecard.config.loading import load_config

    text = demo_config_path.read_text(encoding="utf-8")
    assert "  sentinels: [-999]\n" in text
    path = demo_config_path.with_name("chosen_limits.yaml")
    path.write_text(text.replace("  sentinels: [-999]\n",
                                 "  sentinels: [-999]\n  choose_max_bins: true\n"),
                    encoding="utf-8")
    config = load_config(path)
    chosen = build_scorecard(config, open_engine(config))
    for built, rule in ((chosen, r"^(\d+) bins: limit (\d+)"),
                        (demo_build, r"^(\d+) bins: at most binning\.max_bins \(6\)$")):
        told = 0
        for report in built.reports:
            if report.characteristic is None or report.trend == "manual":
                assert report.bins_reason == ""
                continue
            found = re.match(rule, report.bins_reason)
            assert found, report.bins_reason
            bins = sum(b.kind in (RANGE, LEVELS) for b in report.characteristic.bins)
            assert int(found.group(1)) == bins <= CHOSEN_BINS_UP_TO.default
            told += 1
        assert told >= 5
        fates = {f.name: f.bins for f in built.card.fates}
        assert fates == {r.name: r.bins_reason for r in built.reports}
        frame = characteristics_frame(built.reports).set_index("Characteristic")
        assert all((frame.loc[r.name, "Bins"] or "") == r.bins_reason for r in built.reports)
