"""Invented development sample for the demo: cargo-bike lease applications.

An invented lender leases cargo bikes to couriers, families and small shops. Every row is drawn
from a fixed generative design, so no real people, firms or places appear. The outcome comes
from a logistic model of the log-odds of good on the characteristics, which means a scorecard
built on the sample can recover the design: the test of the demo is whether it does.

What the design builds in, so that each step of the build has something to find:

* ``months_at_address`` lowers risk as it grows and is mildly correlated with the protected
  ``age_band``; age band has no effect of its own, it reaches the outcome only through this
  proxy, which is what the fairness check should report.
* ``weekly_delivery_hours`` is not monotone: risk is lowest in the middle of the range.
* ``late_payments_12m`` holds the sentinel -999 ("no credit file") in about 4% of rows.
* ``monthly_income``, ``credit_utilisation`` and ``employment`` are missing in a few rows.
* ``phone_contract`` is independent of everything, outcome included; the demo config keeps it
  as a candidate so that it visibly falls below the information value floor.
* ``customer`` is ``new`` or ``existing`` (about 35% of applicants already lease from the
  lender). ``existing_leases`` reverses its effect between the two: a new customer's leases are
  held elsewhere and add to the burden (risk rises with each), while an existing customer's are
  leases with this lender kept going, a record of paying (risk falls with each). One card for
  everyone can follow only one direction; one card per segment finds both.
* About 2% of outcomes are the indeterminate ``in_arrears``, chosen at random, so that the
  good/bad model among the remaining rows is exactly the designed logistic model.
* ``staff_application`` is ``yes`` for about 1.5% of rows, at random: the lender's own staff
  lease on other terms, so the demo config excludes them from the build (``data.exclude``). The
  declined applications carry the flag too (their own draw), and leave reject inference by the
  same rule.

``drift=True`` draws a fresh sample (its own random stream) in which only the characteristics
named in :data:`DRIFTED_CHARACTERISTICS` have a shifted distribution; the risk model is the same.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
import yaml

from scorecard.errors import InputError

DRIFTED_CHARACTERISTICS: tuple[str, ...] = (
    "monthly_income",
    "credit_utilisation",
    "sales_channel",
)

_FIRST_DAY = np.datetime64("2024-01-01", "D")
_DAYS = int((np.datetime64("2026-01-01", "D") - _FIRST_DAY).astype(np.int64))
_OUT_OF_TIME_FROM = "2025-07-01"
# Part of the seed of the drifted sample, so that it is a different set of applicants rather
# than the development applicants with a few columns altered.
_DRIFT_STREAM = 1
# The older score's noise has a stream of its own, so adding it changes no other column.
_PREVIOUS_SCORE_STREAM = 2
# So has the staff flag, for the same reason.
_STAFF_STREAM = 3
_STAFF_SHARE = 0.015
_DECLINED_STAFF = 2   # the declined applications' own draw of the staff flag

_AGE_BANDS = ("18-25", "26-35", "36-50", "51-65", "66+")
_AGE_SHARES = (0.16, 0.30, 0.30, 0.17, 0.07)
_MEDIAN_MONTHS_AT_ADDRESS = (28.0, 36.0, 46.0, 56.0, 66.0)

_HOUSING = ("owner", "mortgage", "renter", "family", "other")
_HOUSING_SHARES = (0.14, 0.26, 0.38, 0.14, 0.08)
_HOUSING_EFFECT = (0.50, 0.35, -0.25, 0.05, -0.55)

_EMPLOYMENT = ("employed", "self_employed", "platform_courier", "student", "retired")
_EMPLOYMENT_SHARES = (0.46, 0.20, 0.22, 0.07, 0.05)
# The last entry of each employment table belongs to the missing rows.
_EMPLOYMENT_EFFECT = (0.30, -0.05, -0.35, -0.40, 0.20, -0.50)
_EMPLOYMENT_INCOME_FACTOR = (1.00, 1.05, 0.80, 0.45, 0.70, 0.90)
_EMPLOYMENT_MEAN_MONTHS_IN_JOB = (60.0, 54.0, 20.0, 10.0, 70.0, 40.0)

_BIKE_TYPES = ("two_wheeler", "long_tail", "trike")
_BIKE_TYPE_SHARES = (0.45, 0.35, 0.20)
_BIKE_TYPE_EFFECT = (0.15, 0.0, -0.35)
_BIKE_TYPE_MEDIAN_PRICE = (3200.0, 4300.0, 5600.0)

_SALES_CHANNELS = ("shop", "online", "partner")
_SALES_CHANNEL_EFFECT = (0.35, -0.40, 0.05)

_CUSTOMERS = ("new", "existing")
_EXISTING_CUSTOMER_SHARE = 0.35
# Effect on the log-odds of good of each existing lease: held elsewhere by a new customer, or
# with this lender by an existing one (the reversal the segmented demo card finds).
_LEASE_EFFECT_NEW, _LEASE_EFFECT_EXISTING = -0.70, 0.80
_EXISTING_CUSTOMER_MEAN_LEASES = 1.8     # each holds at least one lease with the lender

_PHONE_CONTRACTS = ("monthly", "prepaid", "business", "none")
_PHONE_CONTRACT_SHARES = (0.55, 0.25, 0.15, 0.05)

_CATEGORICAL_LEVELS = {
    "age_band": _AGE_BANDS,
    "housing": _HOUSING,
    "employment": _EMPLOYMENT,
    "bike_type": _BIKE_TYPES,
    "sales_channel": _SALES_CHANNELS,
    "phone_contract": _PHONE_CONTRACTS,
    "customer": _CUSTOMERS,
}
_PUBLISHED_ORDER = (
    "age_band",
    "monthly_income",
    "months_at_address",
    "credit_utilisation",
    "bike_price",
    "deposit_share",
    "months_in_job",
    "late_payments_12m",
    "weekly_delivery_hours",
    "existing_leases",
    "housing",
    "employment",
    "bike_type",
    "sales_channel",
    "phone_contract",
    "customer",
)

_INCOME_MISSING = 0.05
_UTILISATION_MISSING = 0.06
_EMPLOYMENT_MISSING = 0.03
_NO_CREDIT_FILE = 0.04
_IN_ARREARS = 0.02
_NO_CREDIT_FILE_VALUE = -999

# Chosen together with the effects above so that about 9% of determinate outcomes are bad.
_INTERCEPT = 3.26
# Fixed points of the risk model, so that a drifted population meets the same model.
_REFERENCE_INCOME = 2600.0
_REFERENCE_BIKE_PRICE = 4300.0


@dataclass(frozen=True)
class _Population:
    """The distribution parameters that the drifted sample changes."""

    median_income: float
    utilisation_beta: tuple[float, float]
    sales_channel_shares: tuple[float, float, float]


_DEVELOPMENT = _Population(2600.0, (2.0, 3.0), (0.45, 0.30, 0.25))
_DRIFTED = _Population(2050.0, (2.6, 2.6), (0.30, 0.50, 0.20))


def make_applications(rows: int = 20_000, seed: int = 2024, drift: bool = False) -> pd.DataFrame:
    """Draw an invented sample of cargo-bike lease applications.

    Parameters
    ----------
    rows : int, default 20000
        Number of applications (at least 1).
    seed : int, default 2024
        Non-negative seed; the same ``rows``, ``seed`` and ``drift`` give the same frame.
    drift : bool, default False
        If true, draw a recent sample whose :data:`DRIFTED_CHARACTERISTICS` are shifted
        (lower income, higher utilisation, more online sales) while every other column keeps
        its distribution. The outcome follows the same risk model.

    Returns
    -------
    pandas.DataFrame
        One row per application, ordered by ``decided_on``: ``application_id``,
        ``decided_on``, ``outcome`` ('repaid', 'defaulted' or 'in_arrears'), ``age_band``
        (protected), the characteristics and ``staff_application`` ('yes' or 'no'). Missing
        values are NaN; ``late_payments_12m`` is -999 where the applicant has no credit file.

    Raises
    ------
    InputError
        If ``rows``, ``seed`` or ``drift`` is not of the stated kind.

    Examples
    --------
    >>> frame = make_applications(rows=1000, seed=7)
    >>> frame.shape
    (1000, 20)
    >>> sorted(frame["outcome"].unique())
    ['defaulted', 'in_arrears', 'repaid']
    """
    _check_arguments(rows, seed, drift)
    rng = np.random.default_rng([seed, _DRIFT_STREAM] if drift else seed)
    population = _DRIFTED if drift else _DEVELOPMENT
    draws = _draw_applicants(rng, rows, population)
    outcome = _draw_outcome(rng, _log_odds_of_good(draws))
    return pd.DataFrame(
        {
            "application_id": np.arange(1, rows + 1, dtype=np.int64),
            "decided_on": _FIRST_DAY + np.sort(rng.integers(0, _DAYS, size=rows)),
            "outcome": pd.Series(outcome, dtype="str"),
            **_as_columns(draws),
            "staff_application": _staff_flags(rows, seed, int(drift)),
        }
    )


def _staff_flags(rows: int, seed: int, part: int) -> np.ndarray:
    """'yes' for the lender's own staff, at random; drawn apart so no other column changes.
    ``part``: 0 for the accepts, 1 for the drifted sample, 2 for the declined."""
    rng = np.random.default_rng([seed, _STAFF_STREAM, part])
    return np.where(rng.random(rows) < _STAFF_SHARE, "yes", "no")


def add_previous_score(frame: pd.DataFrame, seed: int = 2024) -> pd.DataFrame:
    """Add ``previous_score``: the invented lender's older, weaker score, higher is better.

    The older score saw only four characteristics (income, late payments, utilisation and
    housing) with cruder weights, plus noise of its own; the strategy command compares a new
    scorecard with it (swap sets). Returns a copy of ``frame`` with the column appended.

    Examples
    --------
    >>> frame = add_previous_score(make_applications(rows=1000, seed=7))
    >>> frame["previous_score"].dtype.kind, bool(frame["previous_score"].between(300, 800).all())
    ('i', True)
    """
    rng = np.random.default_rng([seed, _PREVIOUS_SCORE_STREAM])
    income = frame["monthly_income"].to_numpy(dtype=float)
    late = frame["late_payments_12m"].to_numpy()
    utilisation = frame["credit_utilisation"].to_numpy(dtype=float)
    owns = frame["housing"].isin(["owner", "mortgage"]).to_numpy()
    log_odds = (2.4 + np.where(np.isnan(income), -0.3, 0.5 * np.log(income / _REFERENCE_INCOME))
                + np.where(late == _NO_CREDIT_FILE_VALUE, -0.5, -0.4 * np.minimum(late, 4))
                + np.where(np.isnan(utilisation), -0.5, -1.2 * utilisation)
                + 0.3 * owns + rng.normal(0.0, 0.6, size=len(frame)))
    score = np.clip(np.round(500 + 40 * log_odds), 300, 800).astype(np.int64)
    return frame.assign(previous_score=score)


# The recent applications of the demo: one file of monthly intakes after development, drawn
# from the development population until DRIFT_FROM_MONTH and from the drifted one from then on.
RECENT_MONTHS = ("2026-01", "2026-02", "2026-03", "2026-04", "2026-05", "2026-06",
                 "2026-07", "2026-08", "2026-09")
DRIFT_FROM_MONTH = "2026-06"
# Outcomes of the last months have not matured yet: their outcome is left empty.
IMMATURE_MONTHS = 2


def recent_applications(rows_per_month: int = 2000, seed: int = 2024) -> pd.DataFrame:
    """Invented applications of :data:`RECENT_MONTHS`, with the drift starting in a known month.

    Months before :data:`DRIFT_FROM_MONTH` follow the development population; from it on,
    :data:`DRIFTED_CHARACTERISTICS` are shifted as in ``make_applications(drift=True)``. Each
    row carries ``applied_month`` (the first day of its month); the last
    :data:`IMMATURE_MONTHS` months have no outcome yet.

    Examples
    --------
    >>> frame = recent_applications(rows_per_month=100)
    >>> frame["applied_month"].iloc[[0, -1]].tolist(), int(frame["outcome"].isna().sum())
    (['2026-01-01', '2026-09-01'], 200)
    """
    parts = []
    for i, month in enumerate(RECENT_MONTHS):
        part = make_applications(rows_per_month, seed=seed + 100 + i,
                                 drift=month >= DRIFT_FROM_MONTH)
        part = part.drop(columns=["decided_on"])
        part.insert(1, "applied_month", f"{month}-01")
        if i >= len(RECENT_MONTHS) - IMMATURE_MONTHS:
            part["outcome"] = None
        parts.append(part)
    frame = pd.concat(parts, ignore_index=True)
    frame["application_id"] = np.arange(1, len(frame) + 1, dtype=np.int64)
    return frame


# The old policy of the invented lender, which declined part of the applicants: a simple score
# on observed characteristics plus an underwriter's impression the data do not hold. The
# impression is worse, on average, for applicants who went on to default, so the declined are
# worse than the accepts even at the same characteristics (as with real policies).
_POLICY_INTERCEPT = 2.3
_IMPRESSION_WEIGHT = 0.8
_IMPRESSION_SHIFT_OF_DEFAULTERS = 0.8
# Every kind of applicant had at least this chance of acceptance (overrides, trials), which
# keeps every region of the through-the-door population represented among the accepts.
_LEAST_ACCEPTANCE = 0.1
_DECLINED_STREAM = 2
_DECLINED_FIRST_ID = 1_000_001


def _acceptance(draws: dict[str, np.ndarray], impression: np.ndarray) -> np.ndarray:
    """Chance that the old policy accepted an applicant."""
    utilisation = np.nan_to_num(draws["credit_utilisation"], nan=0.5)
    late = draws["late_payments_12m"]
    income = draws["monthly_income"]
    old_score = (
        _POLICY_INTERCEPT
        - 2.2 * utilisation
        + np.where(late == _NO_CREDIT_FILE_VALUE, -1.0, -0.7 * np.minimum(late, 4))
        + 3.0 * draws["deposit_share"]
        + np.where(np.isnan(income), -0.3, 0.8 * np.log(income / _REFERENCE_INCOME))
        + _IMPRESSION_WEIGHT * impression
    )
    return _LEAST_ACCEPTANCE + (1.0 - _LEAST_ACCEPTANCE) / (1.0 + np.exp(-old_score))


def make_declined(rows: int = 20_000, seed: int = 2024) -> pd.DataFrame:
    """Draw the applications the invented old policy declined, to go with an accepts sample.

    The accepts sample of :func:`make_applications` (``rows`` rows) is read as the applicants
    the old policy accepted out of a larger through-the-door population; this draws the rest of
    that population, the declined. Candidates are drawn from the same design, each with an
    impression the data do not hold (worse for those who would default), and kept with
    probability proportional to (1 - a) / a, where a is the old policy's chance of accepting
    them: accepts and declined then follow the policy exactly. The declined keep their true
    outcome in ``true_outcome``, known only because the data are invented.

    Examples
    --------
    >>> declined = make_declined(rows=2000, seed=7)
    >>> "outcome" in declined.columns, sorted(declined["true_outcome"].unique())
    (False, ['defaulted', 'in_arrears', 'repaid'])
    """
    _check_arguments(rows, seed, False)
    rng = np.random.default_rng([seed, _DECLINED_STREAM])
    most = (1.0 - _LEAST_ACCEPTANCE) / _LEAST_ACCEPTANCE
    wanted, parts, found = None, [], 0
    while wanted is None or found < wanted:
        batch = 8 * rows
        draws = _draw_applicants(rng, batch, _DEVELOPMENT)
        outcome = _draw_outcome(rng, _log_odds_of_good(draws))
        defaulted = outcome == "defaulted"
        impression = rng.normal(size=batch) - _IMPRESSION_SHIFT_OF_DEFAULTERS * defaulted
        accept = _acceptance(draws, impression)
        odds_declined = (1.0 - accept) / accept
        if wanted is None:
            # Declined per accepted applicant, in expectation over the accepts.
            wanted = max(int(round(rows * odds_declined.mean())), 1)
        keep = rng.random(batch) < odds_declined / most
        parts.append(({k: v[keep] for k, v in draws.items()}, outcome[keep]))
        found += int(keep.sum())
    draws = {k: np.concatenate([p[0][k] for p in parts])[:wanted] for k in parts[0][0]}
    outcome = np.concatenate([p[1] for p in parts])[:wanted]
    return pd.DataFrame(
        {
            "application_id": np.arange(_DECLINED_FIRST_ID, _DECLINED_FIRST_ID + wanted,
                                        dtype=np.int64),
            "decided_on": _FIRST_DAY + np.sort(rng.integers(0, _DAYS, size=wanted)),
            **_as_columns(draws),
            "true_outcome": pd.Series(outcome, dtype="str"),
            "staff_application": _staff_flags(wanted, seed, _DECLINED_STAFF),
        }
    )


def demo_config_text(source: str = "applications.csv") -> str:
    """Return the YAML config that builds a scorecard on the demo sample.

    Parameters
    ----------
    source : str, default "applications.csv"
        Path of the data file, relative to the config file.

    Returns
    -------
    str
        YAML text following the config contract, with comments for a modeller.

    Raises
    ------
    InputError
        If ``source`` is not a non-empty single-line string.

    Examples
    --------
    >>> import yaml
    >>> yaml.safe_load(demo_config_text("data/applications.csv"))["data"]["source"]
    'data/applications.csv'
    """
    if not isinstance(source, str) or not source.strip() or "\n" in source or "\r" in source:
        raise InputError(f"demo_config_text: source must be a non-empty single-line path, got {source!r}")
    return _CONFIG_TEMPLATE.format(source=_yaml_scalar(source), out_of_time_from=_OUT_OF_TIME_FROM)


def segmented_config_text(source: str = "applications.csv") -> str:
    """The demo config with one card per customer segment (new, existing) instead of one card.

    The same sections as :func:`demo_config_text` (the staff exclusion and the declined
    applications among them: each card infers the outcomes of its own segment's declined
    applicants), plus ``segments`` on ``customer``, and its own outputs, so that ``scorecard
    challenge`` can put the two builds side by side.

    Examples
    --------
    >>> yaml.safe_load(segmented_config_text())["segments"]["groups"]
    {'new': ['new'], 'existing': ['existing']}
    """
    text = demo_config_text(source)
    end = text.index("\nengine:")
    text = text[:end] + _SEGMENTS_SECTION + text[end:]
    for old, new in (("name: Cargo-bike lease applications (invented demo data)",
                      "name: Cargo-bike lease applications by customer segment (invented demo data)"),
                     ("workbook: out/scorecard.xlsx", "workbook: out/segmented.xlsx"),
                     ("model: out/scorecard.json", "model: out/segmented.json")):
        if old not in text:
            raise AssertionError(f"the demo config template lost {old!r}")
        text = text.replace(old, new)
    return text


_SEGMENTS_SECTION = """
segments:
  # New and existing customers differ in kind: a new customer's existing leases are held
  # elsewhere and add risk, an existing customer's are leases with us kept going and lower it.
  # One card per segment lets each find its own direction; both cards share the scaling above,
  # so one cut-off means the same odds for new and existing customers. The declined
  # applications are split by the same column, and each card infers its own segment's.
  column: customer
  groups:
    new: [new]
    existing: [existing]
"""


def _check_arguments(rows: object, seed: object, drift: object) -> None:
    if not _is_whole_number(rows) or rows < 1:
        raise InputError(f"make_applications: rows must be a whole number of at least 1, got {rows!r}")
    if not _is_whole_number(seed) or seed < 0:
        raise InputError(f"make_applications: seed must be a non-negative whole number, got {seed!r}")
    if not isinstance(drift, (bool, np.bool_)):
        raise InputError(f"make_applications: drift must be True or False, got {drift!r}")


def _is_whole_number(value: object) -> bool:
    return isinstance(value, (int, np.integer)) and not isinstance(value, (bool, np.bool_))


def _draw_applicants(rng: np.random.Generator, rows: int, population: _Population) -> dict[str, np.ndarray]:
    """Draw the protected column and the characteristics; categorical ones as level codes."""
    draws = {
        "age_band": _pick(rng, rows, _AGE_SHARES),
        "housing": _pick(rng, rows, _HOUSING_SHARES),
        "employment": _with_missing(
            rng, _pick(rng, rows, _EMPLOYMENT_SHARES), len(_EMPLOYMENT), _EMPLOYMENT_MISSING
        ),
        "bike_type": _pick(rng, rows, _BIKE_TYPE_SHARES),
        "sales_channel": _pick(rng, rows, population.sales_channel_shares),
        "phone_contract": _pick(rng, rows, _PHONE_CONTRACT_SHARES),
    }
    draws["monthly_income"] = _monthly_income(rng, draws["employment"], population.median_income)
    draws["months_at_address"] = _months_at_address(rng, draws["age_band"])
    draws["credit_utilisation"] = _credit_utilisation(rng, rows, population.utilisation_beta)
    draws["bike_price"] = _bike_price(rng, draws["bike_type"])
    draws["deposit_share"] = np.round(0.5 * rng.beta(1.6, 3.0, size=rows), 2)
    draws["months_in_job"] = _months_in_job(rng, draws["employment"])
    draws["late_payments_12m"] = _late_payments(rng, rows)
    hours = np.clip(np.round(rng.normal(27.0, 11.0, size=rows)), 0, 70)
    draws["weekly_delivery_hours"] = hours.astype(np.int64)
    draws["existing_leases"] = np.minimum(rng.poisson(0.55, size=rows), 6)
    _add_customer(rng.spawn(1)[0], draws)
    return draws


def _add_customer(rng: np.random.Generator, draws: dict[str, np.ndarray]) -> None:
    """New or existing customer, from a stream of its own (no other column's draw changes);
    an existing customer holds at least one lease with the lender."""
    rows = draws["existing_leases"].size
    existing = rng.random(rows) < _EXISTING_CUSTOMER_SHARE
    own = 1 + rng.poisson(_EXISTING_CUSTOMER_MEAN_LEASES - 1, size=rows)
    draws["customer"] = existing.astype(np.int64)
    draws["existing_leases"] = np.where(existing, np.minimum(own, 6), draws["existing_leases"])


def _log_odds_of_good(draws: dict[str, np.ndarray]) -> np.ndarray:
    """The designed risk model: a sum of one effect per characteristic, none for age band."""
    income = draws["monthly_income"]
    utilisation = draws["credit_utilisation"]
    late = draws["late_payments_12m"]
    hours = draws["weekly_delivery_hours"]
    return (
        _INTERCEPT
        + np.asarray(_HOUSING_EFFECT)[draws["housing"]]
        + np.asarray(_EMPLOYMENT_EFFECT)[draws["employment"]]
        + np.asarray(_BIKE_TYPE_EFFECT)[draws["bike_type"]]
        + np.asarray(_SALES_CHANNEL_EFFECT)[draws["sales_channel"]]
        + np.where(np.isnan(income), -0.40, 0.70 * np.log(income / _REFERENCE_INCOME))
        + 0.45 * np.log1p(draws["months_at_address"] / 12.0)
        # Being over the credit limit (utilisation above 1) costs extra.
        + np.where(np.isnan(utilisation), -0.50, -1.9 * utilisation - np.maximum(utilisation - 1.0, 0.0))
        - 0.60 * np.log(draws["bike_price"] / _REFERENCE_BIKE_PRICE)
        + 3.2 * draws["deposit_share"]
        + 0.30 * np.log1p(draws["months_in_job"] / 12.0)
        + np.where(late == _NO_CREDIT_FILE_VALUE, -0.70, -0.50 * np.minimum(late, 4))
        # Few hours means little courier income, many means wear and accidents: a U in risk.
        - 0.45 * ((hours - 28.0) / 12.0) ** 2
        + np.where(draws["customer"] == 1, _LEASE_EFFECT_EXISTING * (draws["existing_leases"]
                   - _EXISTING_CUSTOMER_MEAN_LEASES), _LEASE_EFFECT_NEW * draws["existing_leases"])
    )


def _as_columns(draws: dict[str, np.ndarray]) -> dict[str, object]:
    """The draws in the published column order, with level codes turned into strings."""
    return {
        name: _labels(_CATEGORICAL_LEVELS[name], draws[name]) if name in _CATEGORICAL_LEVELS else draws[name]
        for name in _PUBLISHED_ORDER
    }


def _pick(rng: np.random.Generator, rows: int, shares: tuple[float, ...]) -> np.ndarray:
    """Level codes drawn with the given shares."""
    return rng.choice(len(shares), size=rows, p=np.asarray(shares) / np.sum(shares))


def _with_missing(rng: np.random.Generator, codes: np.ndarray, levels: int, share: float) -> np.ndarray:
    """Replace a random share of codes by the missing code, which is one past the last level."""
    return np.where(rng.random(codes.size) < share, levels, codes)


def _labels(levels: tuple[str, ...], codes: np.ndarray) -> pd.Series:
    """Strings for level codes; the code one past the last level becomes missing."""
    table = np.asarray([*levels, None], dtype=object)
    return pd.Series(table[codes], dtype="str")


def _monthly_income(rng: np.random.Generator, employment: np.ndarray, median: float) -> np.ndarray:
    """Right-skewed income that depends on employment, missing in a few rows."""
    factor = np.asarray(_EMPLOYMENT_INCOME_FACTOR)[employment]
    income = np.round(median * factor * rng.lognormal(0.0, 0.45, size=employment.size), -1)
    income = np.maximum(income, 300.0)
    return np.where(rng.random(employment.size) < _INCOME_MISSING, np.nan, income)


def _months_at_address(rng: np.random.Generator, age: np.ndarray) -> np.ndarray:
    """Months at the current address; older bands tend to have stayed longer (the proxy)."""
    median = np.asarray(_MEDIAN_MONTHS_AT_ADDRESS)[age]
    months = np.round(median * rng.lognormal(0.0, 0.85, size=age.size))
    return np.clip(months, 0, 480).astype(np.int64)


def _credit_utilisation(rng: np.random.Generator, rows: int, beta: tuple[float, float]) -> np.ndarray:
    """Share of revolving credit in use, 0 to 1.3 (above 1 means over the limit)."""
    utilisation = np.round(1.3 * rng.beta(*beta, size=rows), 3)
    return np.where(rng.random(rows) < _UTILISATION_MISSING, np.nan, utilisation)


def _bike_price(rng: np.random.Generator, bike_type: np.ndarray) -> np.ndarray:
    median = np.asarray(_BIKE_TYPE_MEDIAN_PRICE)[bike_type]
    return (np.round(median * rng.lognormal(0.0, 0.22, size=bike_type.size), -1)).astype(np.int64)


def _months_in_job(rng: np.random.Generator, employment: np.ndarray) -> np.ndarray:
    mean = np.asarray(_EMPLOYMENT_MEAN_MONTHS_IN_JOB)[employment]
    return np.floor(rng.exponential(mean)).astype(np.int64)


def _late_payments(rng: np.random.Generator, rows: int) -> np.ndarray:
    """Late payments in the last 12 months (over-dispersed counts), -999 without a credit file."""
    counts = np.minimum(rng.poisson(rng.gamma(0.5, 1.2, size=rows)), 12)
    return np.where(rng.random(rows) < _NO_CREDIT_FILE, _NO_CREDIT_FILE_VALUE, counts).astype(np.int64)


def _draw_outcome(rng: np.random.Generator, log_odds_of_good: np.ndarray) -> np.ndarray:
    """'repaid' or 'defaulted' from the logistic model, with a random 2% left 'in_arrears'."""
    bad = rng.random(log_odds_of_good.size) < 1.0 / (1.0 + np.exp(log_odds_of_good))
    outcome = np.where(bad, "defaulted", "repaid").astype(object)
    outcome[rng.random(log_odds_of_good.size) < _IN_ARREARS] = "in_arrears"
    return outcome


def _yaml_scalar(text: str) -> str:
    """Plain YAML scalar if it reads back unchanged, else a double-quoted one."""
    try:
        plain = yaml.safe_load(f"key: {text}") == {"key": text}
    except yaml.YAMLError:
        plain = False
    if plain:
        return text
    return yaml.safe_dump(text, default_style='"', allow_unicode=True, width=float("inf")).rstrip("\n")


_CONFIG_TEMPLATE = """\
# Scorecard for the invented cargo-bike lease demo. Every number below is a choice a modeller
# would make for a first application scorecard; the comments say why.
name: Cargo-bike lease applications (invented demo data)

data:
  source: {source}
  target: outcome
  # A default is the event the scorecard ranks against.
  bad: [defaulted]
  good: [repaid]
  # 'in_arrears' is neither good nor bad: those applications are still running and could go
  # either way, so they are left out of the fit and only counted.
  weight: null                      # every application counts once
  # The identifier carries no information; the decision date must not become a
  # characteristic, but it still defines the out-of-time sample below.
  ignore: [application_id, decided_on, staff_application]
  # Staff lease on other terms, so their applications say nothing about the customers the
  # card will decide on: they leave the build first, and the Overview counts them.
  exclude:
    - {{column: staff_application, in: [yes], reason: Staff application (other lease terms)}}
  # Age may not be used to decide. It is kept out of the model and examined afterwards, to see
  # whether a characteristic acts as a stand-in for it (months_at_address partly does).
  protected: [age_band]

samples:
  # 30% of the development period is held out at random to check the fit on unseen rows.
  holdout: 0.3
  seed: 2024
  # Applications decided from July 2025 on are scored but never fitted on: they show how the
  # scorecard holds up on a later period.
  out_of_time: {{column: decided_on, from: {out_of_time_from}}}

binning:
  # -999 in late_payments_12m means "no credit file": it is not a count of late payments, so
  # it gets its own bin instead of sitting below zero. The other binning settings keep their
  # defaults (fine classes, bin count and minimum bin sizes, trend detected).
  sentinels: [-999]

characteristics:
  # A longer stay at one address means lower risk; forcing the trend keeps sampling noise from
  # producing a bin that reverses it.
  months_at_address: {{trend: falls}}
  # Risk is lowest for middling hours and higher at both ends, so a monotone trend would
  # throw that shape away.
  weekly_delivery_hours: {{trend: any}}
  # phone_contract is deliberately left in as a candidate: it has no relation to the outcome
  # and falls below the information value floor in selection, which the workbook shows.

selection:
  min_iv: 0.02                      # below this a characteristic is too weak to be worth a line
  max_correlation: 0.6              # of two similar characteristics, keep the stronger
  max_vif: 5.0                      # guards the coefficients against near-duplicates
  method: stepwise                  # add characteristics while they improve the fit
  entry_p_value: 0.05
  max_characteristics: 12           # short enough for an underwriter to read
  keep: []

scaling:
  # 600 points means good:bad odds of 50:1, and every 20 points double the odds.
  base_score: 600
  base_odds: 50
  pdo: 20

fairness:
  # age_band is protected and never used; months_at_address carries a mild trace of it.
  # A Cramer's V of 0.10 flags such a trace for the reviewer's attention.
  proxy_cramers_v: 0.10

output:
  workbook: out/scorecard.xlsx
  model: out/scorecard.json

rejects:
  # Applications the old policy declined: the same characteristics, no outcome. The card is
  # built on the accepts plus these, with outcomes inferred by fuzzy augmentation (each declined
  # applicant counts as a good and as a bad, weighted by the accepts-only card's probabilities).
  source: declined.csv
  method: fuzzy
  # The declined applicants' true outcomes, known only because the data are invented: shown
  # beside the inferred bad rate in the workbook, never used to build.
  known_outcome: true_outcome

engine: local                       # the sample fits in memory; no cluster needed
"""
