"""Invented lease applications whose true log-odds of default are known exactly.

Two shapes that a scorecard must not lose:

* ``arrears_balance``: most applicants owe nothing or a little, and the risk sits in the long
  upper tail, rising steeply through its top tenth;
* ``rider_age``: U-shaped risk, higher for the youngest and the oldest riders.

Beside them a falling trend (``months_at_address``), a categorical column (``bike_type``), a
column with missing values that carry risk (``deposit_share``) and a pure-noise column
(``postcode_digit``). :func:`true_log_odds` gives the log-odds of bad that drew the outcome,
so the best possible ranking of any sample is known.

    >>> frame = known_risk_frame(1000, seed=1)
    >>> sorted(frame.columns)[:3], frame["outcome"].isin(["defaulted", "repaid"]).all()
    (['arrears_balance', 'bike_type', 'deposit_share'], True)
"""

from __future__ import annotations

import numpy as np
import pandas as pd

TARGET = "outcome"
BAD, GOOD = "defaulted", "repaid"
BIKE_TYPES = ("longtail", "box front", "trike", "folding", "electric box")
_BIKE_EFFECT = np.array([0.0, -0.3, 0.25, 0.5, -0.1])
_BASE_LOG_ODDS = -3.1


def known_risk_frame(rows: int, seed: int = 2026) -> pd.DataFrame:
    """Invented rows: the characteristics, the outcome and (column ``true_log_odds``) the truth."""
    rng = np.random.default_rng(seed)
    owes = rng.random(rows) < 0.65
    balance = np.where(owes, np.round(rng.lognormal(6.0, 1.1, rows), 0), 0.0)
    age = rng.integers(18, 76, rows).astype(float)
    months = np.round(rng.exponential(40.0, rows), 0)
    bike = rng.integers(0, len(BIKE_TYPES), rows)
    deposit = np.round(rng.beta(2, 5, rows), 3)
    deposit_missing = rng.random(rows) < 0.06
    noise = rng.integers(0, 10, rows).astype(float)
    frame = pd.DataFrame({
        "arrears_balance": balance,
        "rider_age": age,
        "months_at_address": months,
        "bike_type": np.array(BIKE_TYPES, dtype=object)[bike],
        "deposit_share": np.where(deposit_missing, np.nan, deposit),
        "postcode_digit": noise,
    })
    truth = true_log_odds(frame)
    bad = rng.random(rows) < 1.0 / (1.0 + np.exp(-truth))
    frame[TARGET] = np.where(bad, BAD, GOOD)
    frame["true_log_odds"] = truth
    return frame


def true_log_odds(frame: pd.DataFrame) -> np.ndarray:
    """Log-odds of bad that drew the outcome of each row."""
    balance = frame["arrears_balance"].to_numpy(float)
    # Flat below about 1,500 owed (the upper fifth of those who owe), then steep.
    tail = np.clip((np.log1p(balance) - np.log(1500.0)) / 0.4, 0.0, 4.0)
    age = frame["rider_age"].to_numpy(float)
    u_shape = 1.2 * ((age - 45.0) / 27.0) ** 2
    months = frame["months_at_address"].to_numpy(float)
    settled = -0.5 * np.log1p(months / 12.0)
    bike = pd.Categorical(frame["bike_type"], categories=BIKE_TYPES).codes
    deposit = frame["deposit_share"].to_numpy(float)
    deposit_effect = np.where(np.isnan(deposit), 0.6, -2.0 * (np.nan_to_num(deposit) - 0.28))
    return _BASE_LOG_ODDS + 1.3 * tail + u_shape + settled + _BIKE_EFFECT[bike] + deposit_effect
