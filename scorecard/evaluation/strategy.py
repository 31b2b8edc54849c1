"""``scorecard strategy``: from a score to a decision.

A lender adopts a cut-off, not a scorecard: applications scoring at or above the cut-off are
approved, the others declined. The file is scored once
(:mod:`scorecard.evaluation.scored_rows`); the rows, goods and bads at each integer score are
then all that the cut-off table needs. At every cut-off ``c``:

* approval rate = rows scoring ``>= c`` / all rows (rows the scorecard refuses count as declined
  at every cut-off; rows with an outcome that is neither good nor bad count as applicants);
* bad rate of the approved = bads / (goods + bads) among rows scoring ``>= c``; of the declined,
  the same among the others;
* profit = goods approved x gain per good - bads approved x loss per bad.

Without the outcome column the goods and bads at each score are the card's expected ones,
``rows x (1 - p)`` and ``rows x p`` with ``p`` the bad probability of the score under the
scaling; every bad rate is then labelled *expected*.

The chosen cut-off follows one stated rule: the highest cut-off that approves at least the
target approval rate when one is given; else the lowest cut-off whose approved bad rate is at
most the target bad rate when one is given; else the cut-off of largest profit (the highest of
equal ones). All three are reported when they can be found.

With an incumbent (the score or decision in use today) the swap set at the chosen cut-off is a
2 x 2 count of rows by (new card approves, incumbent approves): kept in, kept out, swapped in
(newly approved) and swapped out (newly declined). A score incumbent is cut at its own value
whose approval rate is nearest the new card's, so that both approve about as many.
"""

from __future__ import annotations

import json
import math
from typing import NamedTuple

import numpy as np
import pandas as pd

from scorecard.card.scorecard import Scorecard
from scorecard.card.segmented import load_model
from scorecard.card.scoring import bad_probability
from scorecard.data.coding import categorical_codes
from scorecard.data.outcome import BAD, GOOD
from scorecard.errors import InputError
from scorecard.evaluation.scored_rows import outcome_labels, read_rows, score_rows

# Placeholders a lender replaces with its own economics. A default on a lease typically costs
# several times the margin earned on a lease repaid in full, so the loss is set five times the
# gain: at these values a cut-off pays while the marginal bad rate stays below 1 / (1 + 5).
DEFAULT_GAIN_PER_GOOD = 1.0
DEFAULT_LOSS_PER_BAD = 5.0
# Round steps for the printed grid of cut-offs, and the most rows the grid should hold.
GRID_STEPS = (1, 2, 5, 10, 20, 25, 50, 100, 200, 500, 1000)
MAX_GRID_ROWS = 60
HIGHER_IS_BETTER, HIGHER_IS_RISKIER = "higher-is-better", "higher-is-riskier"
DIRECTIONS = (HIGHER_IS_BETTER, HIGHER_IS_RISKIER)
SWAP_CELLS = ("kept_in", "kept_out", "swapped_in", "swapped_out")
CUTOFF_COLUMNS = ("score", "approved", "declined", "approval_rate", "approved_goods",
                  "approved_bads", "approved_bad_rate", "declined_goods", "declined_bads",
                  "declined_bad_rate", "profit")


def cutoff_table(low: int, rows, goods, bads, *, gain_per_good: float = DEFAULT_GAIN_PER_GOOD,
                 loss_per_bad: float = DEFAULT_LOSS_PER_BAD, refused=(0.0, 0.0, 0.0)
                 ) -> pd.DataFrame:
    """Approval rate, bad rates and profit at every integer cut-off, from counts by score.

    Parameters
    ----------
    low : int
        Score of the first entry of the count arrays.
    rows, goods, bads : array-like
        Rows, goods and bads at each score from ``low`` upwards (rows may exceed goods + bads
        by the rows whose outcome is neither).
    gain_per_good, loss_per_bad : float
        Gain from approving a good, loss from approving a bad.
    refused : (rows, goods, bads)
        Rows the scorecard refuses: declined at every cut-off.

    Returns
    -------
    pandas.DataFrame
        One row per cut-off from ``low`` to ``low + len(rows)`` (the last declines every row),
        columns :data:`CUTOFF_COLUMNS`. Rates are nan where nothing is counted.

    Examples
    --------
    >>> t = cutoff_table(500, [10, 10], [5, 9], [5, 1], gain_per_good=1, loss_per_bad=5)
    >>> t[["score", "approval_rate", "approved_bad_rate", "profit"]].values.tolist()
    [[500.0, 1.0, 0.3, -16.0], [501.0, 0.5, 0.1, 4.0], [502.0, 0.0, nan, 0.0]]
    """
    rows, goods, bads = (np.asarray(a, dtype=float) for a in (rows, goods, bads))

    def at_or_above(a):
        return np.append(np.cumsum(a[::-1])[::-1], 0.0)

    def below(a, extra):
        # Summed from the bottom, not as total minus approved: no rounding residue where no
        # one is declined.
        return np.concatenate(([0.0], np.cumsum(a))) + extra

    approved, approved_goods, approved_bads = (at_or_above(a) for a in (rows, goods, bads))
    total = rows.sum() + refused[0]
    declined = below(rows, refused[0])
    declined_goods = below(goods, refused[1])
    declined_bads = below(bads, refused[2])
    with np.errstate(invalid="ignore", divide="ignore"):
        table = pd.DataFrame({
            "score": np.arange(low, low + len(rows) + 1),
            "approved": approved, "declined": declined,
            "approval_rate": approved / total if total > 0 else np.nan,
            "approved_goods": approved_goods, "approved_bads": approved_bads,
            "approved_bad_rate": approved_bads / (approved_goods + approved_bads),
            "declined_goods": declined_goods, "declined_bads": declined_bads,
            "declined_bad_rate": declined_bads / (declined_goods + declined_bads),
            "profit": approved_goods * gain_per_good - approved_bads * loss_per_bad,
        })
    return table


def grid_step(span: int, max_rows: int = MAX_GRID_ROWS) -> int:
    """The smallest round step that shows ``span`` points of cut-offs in at most ``max_rows``.

    >>> grid_step(40), grid_step(300)
    (1, 5)
    """
    return next((s for s in GRID_STEPS if span / s <= max_rows), GRID_STEPS[-1])


class Chosen(NamedTuple):
    """A cut-off with the rule that found it."""

    rule: str
    score: int


class Swap(NamedTuple):
    """The swap set at the chosen cut-off against the incumbent.

    Attributes
    ----------
    column, kind, direction : str
        The incumbent column; ``'score'`` or ``'decision'``; the direction of a score and how
        it was known (``'higher-is-better (stated)'``, ``'... (detected from the outcome)'``).
    cutoff : float or None
        The incumbent score's cut-off (None for a decision column).
    approval_rate : float
        The incumbent's approval rate.
    missing : int
        Rows where the incumbent is missing; the incumbent counts them as declined.
    table : pandas.DataFrame
        One row per cell of :data:`SWAP_CELLS`: rows, goods, bads, other outcome, bad rate.
    """

    column: str
    kind: str
    direction: str
    cutoff: float | None
    approval_rate: float
    missing: int
    table: pd.DataFrame


def swap_table(new_approved, old_approved, label=None, expected_bad=None) -> pd.DataFrame:
    """Rows, goods, bads and bad rate in each cell of (new card, incumbent) decisions.

    ``label`` codes each row 1 bad, 0 good, -1 other; without it ``expected_bad`` (each row's
    bad probability under the new card) gives expected goods and bads.

    Examples
    --------
    >>> t = swap_table(np.array([1, 1, 0, 0], bool), np.array([1, 0, 1, 0], bool),
    ...                np.array([0, 1, 1, -1]))
    >>> t["cell"].tolist()
    ['kept_in', 'kept_out', 'swapped_in', 'swapped_out']
    >>> t["rows"].tolist(), t["bad_rate"].tolist()
    ([1.0, 1.0, 1.0, 1.0], [0.0, nan, 1.0, 1.0])
    """
    # Cell index: kept in 0, kept out 1, swapped in 2, swapped out 3.
    new, old = np.asarray(new_approved, bool), np.asarray(old_approved, bool)
    cell = np.where(new, np.where(old, 0, 2), np.where(old, 3, 1))
    rows = np.bincount(cell, minlength=4).astype(float)
    if label is not None:
        label = np.asarray(label)
        goods = np.bincount(cell[label == GOOD], minlength=4).astype(float)
        bads = np.bincount(cell[label == BAD], minlength=4).astype(float)
    else:
        bads = np.bincount(cell, weights=np.asarray(expected_bad, float), minlength=4)
        goods = rows - bads
    with np.errstate(invalid="ignore", divide="ignore"):
        rate = bads / (goods + bads)
    return pd.DataFrame({"cell": SWAP_CELLS, "rows": rows, "goods": goods, "bads": bads,
                         "other_outcome": rows - goods - bads, "bad_rate": rate})


def nearest_cut(goodness: np.ndarray, target_rate: float, total: int) -> tuple[float, float]:
    """The value ``t`` of ``goodness`` whose approval rate (``goodness >= t``) is nearest the
    target; missing values are never approved. Returns ``(t, approval rate)``."""
    present = goodness[~np.isnan(goodness)]
    if len(present) == 0:
        return math.nan, 0.0
    values, counts = np.unique(present, return_counts=True)
    rates = np.cumsum(counts[::-1])[::-1] / total
    # Ties go to the higher cut-off: the incumbent then approves no more than the new card.
    k = len(rates) - 1 - int(np.argmin(np.abs(rates - target_rate)[::-1]))
    return float(values[k]), float(rates[k])


def _incumbent_direction(column, values, label, score, kept) -> str:
    """The stated direction, or one detected from the outcome (else from the new score)."""
    present = ~np.isnan(values)
    if label is not None:
        goods = values[present & (label == GOOD)]
        bads = values[present & (label == BAD)]
        if len(goods) and len(bads) and goods.mean() != bads.mean():
            better = goods.mean() > bads.mean()
            return (HIGHER_IS_BETTER if better else HIGHER_IS_RISKIER) + " (detected: goods " \
                f"average {goods.mean():.4g}, bads {bads.mean():.4g})"
    both = present & kept
    if both.sum() > 2:
        ranks = pd.DataFrame({"old": values[both], "new": score[both]}).rank()
        agreement = ranks["old"].corr(ranks["new"])
        if np.isfinite(agreement) and agreement != 0:
            return (HIGHER_IS_BETTER if agreement > 0 else HIGHER_IS_RISKIER) + \
                f" (detected: rank correlation {agreement:+.3f} with the new score)"
    raise InputError(f"--incumbent {column}: cannot tell its direction from the file; state it "
                     "with --incumbent-direction")


def _incumbent(frame, path, column, direction, approved_values, new_approved, label,
               expected_bad, score, kept) -> Swap:
    if column not in frame.columns:
        raise InputError(f"{path}: column {column}: named by --incumbent but the file lacks it"
                         + _did_you_mean(column, frame.columns))
    series = frame[column]
    total = len(frame)
    if approved_values:
        if direction is not None:
            raise InputError("--incumbent-direction: applies to a score, but --incumbent-approved "
                             f"makes {column} a decision column")
        codes = categorical_codes(series.astype("category") if not isinstance(
            series.dtype, pd.CategoricalDtype) else series, [str(v) for v in approved_values])
        old_approved = codes >= 0
        missing = int(series.isna().sum())
        kind, stated, cutoff = "decision", "approves " + ", ".join(map(str, approved_values)), None
    else:
        numeric = pd.api.types.is_numeric_dtype(series.dtype) \
            and not isinstance(series.dtype, pd.CategoricalDtype)
        if not numeric:
            raise InputError(f"{path}: column {column}: the incumbent holds text, not a score; "
                             "name the values that mean approved with --incumbent-approved")
        values = series.to_numpy(dtype=float, na_value=np.nan)
        stated = f"{direction} (stated)" if direction is not None else \
            _incumbent_direction(column, values, label, score, kept)
        riskier = stated.startswith(HIGHER_IS_RISKIER)
        goodness = -values if riskier else values
        cut, _ = nearest_cut(goodness, float(new_approved.mean()), total)
        with np.errstate(invalid="ignore"):
            old_approved = goodness >= cut
        missing = int(np.isnan(values).sum())
        kind, cutoff = "score", (-cut if riskier else cut)
    table = swap_table(new_approved, old_approved, label, expected_bad)
    return Swap(column, kind, stated, cutoff, float(old_approved.mean()), missing, table)


def _did_you_mean(word: str, options) -> str:
    import difflib
    close = difflib.get_close_matches(word, [str(o) for o in options], n=1)
    return f"; did you mean '{close[0]}'?" if close else ""


def _check_options(gain, loss, target_approval, target_bad_rate, refer_width, step,
                   direction) -> None:
    for option, value in (("--gain-per-good", gain), ("--loss-per-bad", loss)):
        if not (isinstance(value, (int, float)) and math.isfinite(value) and value >= 0):
            raise InputError(f"{option}: must be a finite number of at least 0, got {value!r}")
    for option, value in (("--target-approval", target_approval),
                          ("--target-bad-rate", target_bad_rate)):
        if value is not None and not (isinstance(value, (int, float)) and 0 < value < 1):
            raise InputError(f"{option}: must be a rate between 0 and 1 (both excluded), "
                             f"got {value!r}")
    for option, value in (("--refer-width", refer_width), ("--step", step)):
        if value is not None and not (isinstance(value, (int, np.integer))
                                      and not isinstance(value, bool) and value >= 1):
            raise InputError(f"{option}: must be a whole number of points of at least 1, "
                             f"got {value!r}")
    if direction is not None and direction not in DIRECTIONS:
        raise InputError(f"--incumbent-direction: must be one of {', '.join(DIRECTIONS)}, "
                         f"got {direction!r}")


class Strategy(NamedTuple):
    """Cut-offs of a scorecard on one file, the chosen one, and the swap set.

    Attributes
    ----------
    model, data : str
        The paths read.
    rows, refused, left_out : int
        Rows read; rows the scorecard refuses (declined at every cut-off); rows whose outcome
        is neither good nor bad (applicants without a bad rate).
    bad_rates : str
        ``'observed'`` (the file holds the outcome) or ``'expected'`` (from the card's
        probabilities).
    gain_per_good, loss_per_bad : float
    table : pandas.DataFrame
        :func:`cutoff_table` at every integer cut-off from the lowest score in the file to one
        above the highest.
    step : int
        Points between the cut-offs of :attr:`grid`.
    targets : dict
        ``'approval'``, ``'bad_rate'``, ``'profit_maximum'`` -> cut-off score or None.
    target_approval, target_bad_rate : float or None
    chosen : Chosen
    refer_width : int or None
        Points below the chosen cut-off that go to manual review instead of a decline.
    swap : Swap or None
    """

    model: str
    data: str
    rows: int
    refused: int
    left_out: int
    bad_rates: str
    gain_per_good: float
    loss_per_bad: float
    table: pd.DataFrame
    step: int
    targets: dict
    target_approval: float | None
    target_bad_rate: float | None
    chosen: Chosen
    refer_width: int | None
    swap: Swap | None

    def at(self, score: int) -> dict:
        """The cut-off table's row at ``score`` as a dict of plain numbers."""
        low = int(self.table["score"].iloc[0])
        row = self.table.iloc[min(max(score - low, 0), len(self.table) - 1)]
        return {k: (int(row[k]) if k == "score" else float(row[k])) for k in CUTOFF_COLUMNS}

    @property
    def grid(self) -> pd.DataFrame:
        """Cut-offs every :attr:`step` points, with the targets and the chosen one added."""
        scores = self.table["score"]
        shown = (scores % self.step == 0) | (scores == scores.iloc[0]) \
            | (scores == scores.iloc[-1])
        for value in list(self.targets.values()) + [self.chosen.score]:
            if value is not None:
                shown |= scores == value
        return self.table[shown].reset_index(drop=True)

    @property
    def refer(self) -> dict | None:
        """Rows scoring in the refer band below the chosen cut-off, and their bad rate."""
        if self.refer_width is None:
            return None
        top, bottom = self.at(self.chosen.score), self.at(self.chosen.score - self.refer_width)
        rows = bottom["approved"] - top["approved"]
        goods = bottom["approved_goods"] - top["approved_goods"]
        bads = bottom["approved_bads"] - top["approved_bads"]
        return {"from": self.chosen.score - self.refer_width, "to": self.chosen.score - 1,
                "count": rows, "share": rows / self.rows,
                "bad_rate": bads / (goods + bads) if goods + bads > 0 else None}

    def to_dict(self) -> dict:
        """The ``strategy --json`` content (DESIGN.md's keys, with extra keys beside them)."""
        def entry(row: dict) -> dict:
            return {"score": row["score"], "approval_rate": row["approval_rate"],
                    "approved_bad_rate": row["approved_bad_rate"],
                    "declined_bad_rate": row["declined_bad_rate"], "profit": row["profit"],
                    "approved": row["approved"], "declined": row["declined"]}

        grid = self.grid
        chosen = entry(self.at(self.chosen.score))
        chosen.update(rule=self.chosen.rule, refer=self.refer)
        out = {
            "cutoffs": [entry(self.at(int(s))) for s in grid["score"]],
            "chosen": chosen,
            "swap": None if self.swap is None else {
                r["cell"]: {"count": r["rows"], "bad_rate": r["bad_rate"], "goods": r["goods"],
                            "bads": r["bads"]} for r in self.swap.table.to_dict("records")},
            "targets": {name: None if s is None else entry(self.at(s))
                        for name, s in self.targets.items()},
            "incumbent": None if self.swap is None else {
                "column": self.swap.column, "kind": self.swap.kind,
                "direction": self.swap.direction, "cutoff": self.swap.cutoff,
                "approval_rate": self.swap.approval_rate, "missing": self.swap.missing},
            "bad_rates": self.bad_rates,
            "gain_per_good": self.gain_per_good, "loss_per_bad": self.loss_per_bad,
            "rows": self.rows, "refused": self.refused, "left_out": self.left_out,
            "approve_when": "score at or above the cut-off",
        }
        return out

    def to_json(self) -> str:
        return json.dumps(_finite(self.to_dict()), indent=1, allow_nan=False) + "\n"

    def text(self) -> str:
        """The closing note: the chosen cut-off, the other targets and the swap set."""
        word = "" if self.bad_rates == "observed" else "expected "
        source = "bad rates observed" if self.bad_rates == "observed" else \
            "no outcome column: bad rates expected from the scorecard's probabilities"
        lines = [f"{self.data}: {self.rows:,} rows; {source}"
                 + (f"; {self.left_out:,} with another outcome" if self.left_out else "")
                 + (f"; {self.refused:,} refused by the scorecard" if self.refused else "")]
        c = self.at(self.chosen.score)
        lines.append(f"chosen cut-off {c['score']} ({self.chosen.rule}): approves "
                     f"{c['approval_rate']:.1%} ({c['approved']:,.0f} rows), {word}bad rate of "
                     f"the approved {_pct(c['approved_bad_rate'])}, of the declined "
                     f"{_pct(c['declined_bad_rate'])}, profit {c['profit']:,.1f} "
                     f"(gain {self.gain_per_good:g} per good, loss {self.loss_per_bad:g} per bad)")
        for name, label in (("approval", f"target approval {_rate(self.target_approval)}"),
                            ("bad_rate", f"target bad rate {_rate(self.target_bad_rate)}"),
                            ("profit_maximum", "profit maximum")):
            s = self.targets.get(name)
            if s is not None and label.split()[-1] != "None":
                r = self.at(s)
                lines.append(f"  {label}: cut-off {s}, approves {r['approval_rate']:.1%}, "
                             f"{word}bad rate {_pct(r['approved_bad_rate'])}, profit "
                             f"{r['profit']:,.1f}")
        refer = self.refer
        if refer is not None:
            lines.append(f"  refer band {refer['from']} to {refer['to']}: {refer['count']:,.0f} "
                         f"rows ({refer['share']:.1%}), {word}bad rate {_pct(refer['bad_rate'])}")
        if self.swap is not None:
            s = self.swap
            against = f"cut at {s.cutoff:g}" if s.cutoff is not None else s.direction
            lines.append(f"swap set against {s.column} ({s.kind}; "
                         + (f"{s.direction}; " if s.kind == "score" else "")
                         + f"{against}, approving {s.approval_rate:.1%}):")
            lines.append(f"  {'':12}{'rows':>10}  {word + 'bad rate':>14}")
            for r in s.table.to_dict("records"):
                lines.append(f"  {r['cell'].replace('_', ' '):12}{r['rows']:>10,.0f}  "
                             f"{_pct(r['bad_rate']):>14}")
        return "\n".join(lines)


def _rate(value) -> str:
    return "None" if value is None else f"{value:.1%}"


def _pct(value) -> str:
    return "-" if value is None or not math.isfinite(value) else f"{value:.2%}"


def _finite(value):
    """nan and infinities as null, numpy numbers as plain ones, so the file is strict JSON."""
    if isinstance(value, dict):
        return {k: _finite(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_finite(v) for v in value]
    if isinstance(value, (np.integer,)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        return float(value) if math.isfinite(value) else None
    return value


def _targets(table: pd.DataFrame, target_approval, target_bad_rate) -> dict:
    scores = table["score"].to_numpy()
    out = {"approval": None, "bad_rate": None}
    if target_approval is not None:
        meets = np.flatnonzero(table["approval_rate"].to_numpy() >= target_approval)
        out["approval"] = int(scores[meets[-1]]) if len(meets) else None
    if target_bad_rate is not None:
        # nan (nothing approved) never meets a target.
        meets = np.flatnonzero(table["approved_bad_rate"].to_numpy() <= target_bad_rate)
        out["bad_rate"] = int(scores[meets[0]]) if len(meets) else None
    profit = table["profit"].to_numpy()
    out["profit_maximum"] = int(scores[len(profit) - 1 - int(np.argmax(profit[::-1]))])
    return out


def _choose(targets: dict, target_approval, target_bad_rate, table) -> Chosen:
    if target_approval is not None:
        if targets["approval"] is None:
            best = float(table["approval_rate"].max())
            raise InputError(f"--target-approval {target_approval:g}: no cut-off approves that "
                             f"many; at most {best:.4f} of the rows can be approved")
        return Chosen(f"highest cut-off approving at least {target_approval:.1%}",
                      targets["approval"])
    if target_bad_rate is not None:
        if targets["bad_rate"] is None:
            low = float(np.nanmin(table["approved_bad_rate"].to_numpy()))
            raise InputError(f"--target-bad-rate {target_bad_rate:g}: no cut-off brings the bad "
                             f"rate of the approved that low; the lowest is {low:.4f}")
        return Chosen(f"lowest cut-off with a bad rate of the approved at most "
                      f"{target_bad_rate:.1%}", targets["bad_rate"])
    return Chosen("profit maximum", targets["profit_maximum"])


def strategy(model_path, data_path, *, incumbent: str | None = None,
             incumbent_direction: str | None = None, incumbent_approved=(),
             gain_per_good: float = DEFAULT_GAIN_PER_GOOD,
             loss_per_bad: float = DEFAULT_LOSS_PER_BAD, target_approval: float | None = None,
             target_bad_rate: float | None = None, refer_width: int | None = None,
             step: int | None = None) -> Strategy:
    """Cut-off table, chosen cut-off and swap set of a scorecard on one file.

    Parameters
    ----------
    model_path : path
        A model file written by ``scorecard build``.
    data_path : path
        A data file holding every characteristic of the scorecard; the outcome column is
        optional (without it bad rates are the card's expected ones).
    incumbent : str, optional
        Column of the score or decision in use today.
    incumbent_direction : {'higher-is-better', 'higher-is-riskier'}, optional
        Direction of an incumbent score; detected from the outcome (or the new score) if not
        given, and stated either way.
    incumbent_approved : sequence of str
        Values of a decision column that mean approved; makes the incumbent a decision.
    gain_per_good, loss_per_bad : float
        Economics of the profit column (defaults 1 and 5: placeholders, see the module).
    target_approval, target_bad_rate : float, optional
        Targets in (0, 1); the chosen cut-off meets the first one given (module docstring).
    refer_width : int, optional
        Points below the chosen cut-off referred for manual review.
    step : int, optional
        Points between the cut-offs shown (default: a round step giving at most 60 rows).

    Returns
    -------
    Strategy

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from scorecard.card.scorecard import Bin, Characteristic, Scorecard, RANGE, MISSING
    >>> from scorecard.card.points import scaling
    >>> b = (Bin("< 1", RANGE, 60, 40, -0.4, 10, upper=1.0),
    ...      Bin(">= 1", RANGE, 90, 10, 1.0, 30, lower=1.0), Bin("missing", MISSING, 0, 0, 0.0, 20))
    >>> char = Characteristic("x", "numeric", b, 1.0, "R01", "x is low", cuts=(1.0,))
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> _ = (folder / "card.json").write_text(Scorecard(
    ...     "demo", scaling(600, 50, 20), 0.5, (char,), {"column": "y", "bad": ["b"],
    ...     "good": ["g"]}).to_json())
    >>> _ = (folder / "a.csv").write_text("x,y,old\\n0.5,b,1\\n2,g,9\\n0.2,b,5\\n3,g,2\\n")
    >>> result = strategy(folder / "card.json", folder / "a.csv", incumbent="old",
    ...                   gain_per_good=1, loss_per_bad=1)
    >>> result.chosen, result.at(30)["approval_rate"]
    (Chosen(rule='profit maximum', score=30), 0.5)
    >>> result.swap.table[["cell", "rows", "bad_rate"]].values.tolist()
    [['kept_in', 1.0, 0.0], ['kept_out', 1.0, 1.0], ['swapped_in', 1.0, 0.0], ['swapped_out', 1.0, 1.0]]
    """
    _check_options(gain_per_good, loss_per_bad, target_approval, target_bad_rate, refer_width,
                   step, incumbent_direction)
    if incumbent is None and (incumbent_direction is not None or incumbent_approved):
        option = "--incumbent-direction" if incumbent_direction is not None \
            else "--incumbent-approved"
        raise InputError(f"{option}: needs --incumbent COLUMN")
    card = load_model(model_path)
    frame = read_rows(data_path)
    scored = score_rows(card, data_path, frame)
    kept = ~scored.rejected
    if not kept.any():
        raise InputError(f"{data_path}: the scorecard refuses every row, so there are no scores "
                         "to cut")
    label = outcome_labels(card, frame)
    low, high = int(scored.score[kept].min()), int(scored.score[kept].max())
    table, expected_bad = _counts_table(card, scored, kept, label, low, high, gain_per_good,
                                        loss_per_bad)
    targets = _targets(table, target_approval, target_bad_rate)
    chosen = _choose(targets, target_approval, target_bad_rate, table)
    swap = None
    if incumbent is not None:
        new_approved = kept & (scored.score >= chosen.score)
        swap = _incumbent(frame, data_path, incumbent, incumbent_direction,
                          tuple(incumbent_approved), new_approved, label, expected_bad,
                          scored.score, kept)
    return Strategy(
        model=str(model_path), data=str(data_path), rows=len(frame),
        refused=int(scored.rejected.sum()),
        left_out=0 if label is None else int((label < 0).sum()),
        bad_rates="expected" if label is None else "observed",
        gain_per_good=float(gain_per_good), loss_per_bad=float(loss_per_bad), table=table,
        step=step or grid_step(high + 1 - low), targets=targets,
        target_approval=target_approval, target_bad_rate=target_bad_rate, chosen=chosen,
        refer_width=refer_width, swap=swap)


def _counts_table(card: Scorecard, scored, kept, label, low, high, gain, loss):
    """The cut-off table from counts by score, and each row's expected bad (no outcome)."""
    at = scored.score - low
    width = high - low + 1
    rows = np.bincount(at[kept], minlength=width).astype(float)
    refused_rows = float((~kept).sum())
    if label is not None:
        goods = np.bincount(at[kept & (label == GOOD)], minlength=width).astype(float)
        bads = np.bincount(at[kept & (label == BAD)], minlength=width).astype(float)
        refused = (refused_rows, float(((~kept) & (label == GOOD)).sum()),
                   float(((~kept) & (label == BAD)).sum()))
        expected_bad = None
    else:
        expected_bad = bad_probability(card, scored.score)
        bads = rows * bad_probability(card, np.arange(low, high + 1))
        goods = rows - bads
        refused_bads = float(expected_bad[~kept].sum())
        refused = (refused_rows, refused_rows - refused_bads, refused_bads)
    table = cutoff_table(low, rows, goods, bads, gain_per_good=gain, loss_per_bad=loss,
                         refused=refused)
    return table, expected_bad


def band_cutoffs(low: int, goods, bads, starts) -> pd.DataFrame:
    """The cut-off view of a gains table: the trade-off at each band's lowest score.

    Parameters
    ----------
    low : int
        Score of the first entry of ``goods`` and ``bads`` (a score histogram).
    goods, bads : array-like
        Weights of goods and bads at each score.
    starts : array-like
        Lowest score of each band, ascending.

    Examples
    --------
    >>> band_cutoffs(500, [1, 3, 4, 2], [3, 1, 0, 0], [500, 502])["Approval rate"].tolist()
    [1.0, 0.42857142857142855]
    """
    goods, bads = np.asarray(goods, float), np.asarray(bads, float)
    table = cutoff_table(low, goods + bads, goods, bads).set_index("score")
    at = table.loc[np.asarray(starts)]
    return pd.DataFrame({"Cut-off (approve at or above)": np.asarray(starts),
                         "Approval rate": at["approval_rate"].to_numpy(),
                         "Bad rate of the approved": at["approved_bad_rate"].to_numpy(),
                         "Bad rate of the declined": at["declined_bad_rate"].to_numpy()})
