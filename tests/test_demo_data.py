"""Tests of the invented cargo-bike lease sample and its demo config.

Information value and the population stability index are computed here from their
definitions with pandas, independently of the package's own measures, so that the designed
properties of the sample are checked without trusting the code under construction.
"""

import datetime
import time

import numpy as np
import pandas as pd
import pytest
import yaml
from hypothesis import given, settings
from hypothesis import strategies as st

from scorecard.demo.applications import (
    DRIFTED_CHARACTERISTICS,
    demo_config_text,
    make_applications,
)
from scorecard.errors import InputError

COLUMNS = [
    "application_id",
    "decided_on",
    "outcome",
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
    "staff_application",
]
CHARACTERISTICS = COLUMNS[4:-1]
# customer has little effect of its own: it changes the direction of existing_leases (tested
# below), which a card per customer segment finds.
USEFUL = [name for name in CHARACTERISTICS if name not in ("phone_contract", "customer")]
LEVELS = {
    "outcome": {"repaid", "defaulted", "in_arrears"},
    "age_band": {"18-25", "26-35", "36-50", "51-65", "66+"},
    "housing": {"owner", "mortgage", "renter", "family", "other"},
    "employment": {"employed", "self_employed", "platform_courier", "student", "retired"},
    "bike_type": {"two_wheeler", "long_tail", "trike"},
    "sales_channel": {"shop", "online", "partner"},
    "phone_contract": {"monthly", "prepaid", "business", "none"},
    "customer": {"new", "existing"},
}
NO_CREDIT_FILE = -999


@pytest.fixture(scope="module")
def development():
    return make_applications()


@pytest.fixture(scope="module")
def drifted():
    return make_applications(drift=True)


@pytest.fixture(scope="module")
def config():
    return yaml.safe_load(demo_config_text())


def determinate(frame):
    return frame[frame["outcome"] != "in_arrears"]


def classes(base, other=None):
    """Class labels for ``base`` (and ``other``, classed on ``base``'s edges).

    Numeric columns with many values are cut at the deciles of ``base``; other columns keep
    their levels, with levels under 1% of ``base`` (or absent from it) folded into one class
    so that no class is empty of goods or bads. Missing values and the sentinel are classes of their own.
    """
    plain = base.where(base != NO_CREDIT_FILE) if pd.api.types.is_numeric_dtype(base) else base
    if pd.api.types.is_numeric_dtype(base) and base.nunique() > 12:
        edges = np.unique(np.nanquantile(plain, np.linspace(0, 1, 11))[1:-1])

        def label(series):
            return pd.Series(np.searchsorted(edges, series, side="right"), index=series.index).astype(str)

    else:
        shares = base.value_counts(normalize=True)
        frequent = shares.index[shares >= 0.01]

        def label(series):
            return series.astype(str).where(series.isin(frequent), "rare")

    def with_own_classes(series):
        return label(series).where(series.notna(), "missing").where(series != NO_CREDIT_FILE, "sentinel")

    if other is None:
        return with_own_classes(base)
    return with_own_classes(base), with_own_classes(other)


def information_value(frame, column):
    """IV = sum over classes of (share of goods - share of bads) * ln(share of goods / share of bads)."""
    rows = determinate(frame)
    table = pd.crosstab(classes(rows[column]), rows["outcome"])
    goods = table["repaid"] / table["repaid"].sum()
    bads = table["defaulted"] / table["defaulted"].sum()
    assert (goods > 0).all() and (bads > 0).all(), f"{column}: a class without goods or bads"
    return float(((goods - bads) * np.log(goods / bads)).sum())


def stability_index(base, recent):
    """PSI = sum over classes of (recent share - base share) * ln(recent share / base share)."""
    base_classes, recent_classes = classes(base, recent)
    base_shares = base_classes.value_counts(normalize=True)
    recent_shares = recent_classes.value_counts(normalize=True)
    assert set(base_shares.index) == set(recent_shares.index), "a class is empty in one sample"
    recent_shares = recent_shares[base_shares.index]
    return float(((recent_shares - base_shares) * np.log(recent_shares / base_shares)).sum())


def bad_rate_by_quintile(frame, column):
    rows = determinate(frame).dropna(subset=[column])
    rows = rows[rows[column] != NO_CREDIT_FILE]
    quintile = pd.qcut(rows[column].rank(method="first"), 5, labels=False)
    return (rows["outcome"] == "defaulted").groupby(quintile).mean().to_numpy()


# Determinism, shape and value ranges


def test_same_seed_gives_the_same_frame():
    pd.testing.assert_frame_equal(make_applications(3000, seed=11), make_applications(3000, seed=11))
    pd.testing.assert_frame_equal(
        make_applications(3000, seed=11, drift=True), make_applications(3000, seed=11, drift=True)
    )


def test_other_seed_or_drift_gives_other_applicants():
    base = make_applications(3000, seed=11)
    assert not base["monthly_income"].equals(make_applications(3000, seed=12)["monthly_income"])
    # The drifted sample is a fresh draw: even an undrifted column differs row by row.
    assert not base["bike_price"].equals(make_applications(3000, seed=11, drift=True)["bike_price"])


def test_columns_rows_and_order(development):
    assert list(development.columns) == COLUMNS
    assert len(development) == 20_000
    assert development["application_id"].tolist() == list(range(1, 20_001))
    assert development["decided_on"].is_monotonic_increasing
    assert development["decided_on"].min() >= pd.Timestamp("2024-01-01")
    assert development["decided_on"].max() <= pd.Timestamp("2025-12-31")


def test_out_of_time_period_holds_a_quarter_of_the_rows(development):
    # Designed: dates uniform over 731 days, 184 of them from 2025-07-01; binomial sd is 0.3%.
    share = (development["decided_on"] >= pd.Timestamp("2025-07-01")).mean()
    assert share == pytest.approx(184 / 731, abs=0.015)


@pytest.mark.parametrize("rows", [1, 2, 17])
def test_tiny_samples_have_the_requested_rows(rows):
    frame = make_applications(rows, seed=3)
    assert frame.shape == (rows, len(COLUMNS))


@settings(max_examples=30, deadline=None)
@given(rows=st.integers(1, 400), seed=st.integers(0, 2**32 - 1), drift=st.booleans())
def test_every_sample_stays_within_the_designed_ranges(rows, seed, drift):
    frame = make_applications(rows, seed=seed, drift=drift)
    for column, levels in LEVELS.items():
        assert set(frame[column].dropna()) <= levels, column
    assert frame["credit_utilisation"].dropna().between(0, 1.3).all()
    assert frame["deposit_share"].between(0, 0.5).all()
    assert (frame["monthly_income"].dropna() > 0).all()
    late = frame["late_payments_12m"]
    assert ((late == NO_CREDIT_FILE) | late.between(0, 12)).all()
    counts = ["months_at_address", "bike_price", "months_in_job", "weekly_delivery_hours", "existing_leases"]
    for column in counts:
        assert (frame[column] >= 0).all(), column
        assert (frame[column] != NO_CREDIT_FILE).all(), column


# Outcome, missing values and sentinels


def test_bad_rate_and_indeterminate_share(development):
    rows = determinate(development)
    # Designed: about 9% bad among determinate rows; binomial sd at 19,600 rows is 0.2%.
    assert 0.08 <= (rows["outcome"] == "defaulted").mean() <= 0.10
    # Designed: 2% in arrears; binomial sd at 20,000 rows is 0.1%.
    assert (development["outcome"] == "in_arrears").mean() == pytest.approx(0.02, abs=0.005)


@pytest.mark.parametrize(
    ("column", "share"),
    [("monthly_income", 0.05), ("credit_utilisation", 0.06), ("employment", 0.03)],
)
def test_missing_shares_are_as_designed(development, column, share):
    # Binomial sd of a 3-6% share at 20,000 rows is at most 0.17%; 1% is about six sd.
    assert development[column].isna().mean() == pytest.approx(share, abs=0.01)


def test_only_the_designed_columns_have_missing_values(development):
    assert set(development.columns[development.isna().any()]) == {
        "monthly_income",
        "credit_utilisation",
        "employment",
    }


def test_no_credit_file_share_and_only_in_late_payments(development):
    # Designed: 4% of applicants without a credit file.
    assert (development["late_payments_12m"] == NO_CREDIT_FILE).mean() == pytest.approx(0.04, abs=0.01)
    others = development.drop(columns="late_payments_12m").select_dtypes("number")
    assert not (others == NO_CREDIT_FILE).any().any()


# Association with the outcome


def test_useless_column_falls_below_the_information_value_floor(development, config):
    floor = config["selection"]["min_iv"]
    # From memory: for a column independent of the outcome, IV is about
    # (classes - 1) * (1/goods + 1/bads), here 3 * (1/17,800 + 1/1,800), i.e. about 0.002.
    assert information_value(development, "phone_contract") < 0.01 < floor


@pytest.mark.parametrize("column", USEFUL)
def test_useful_characteristics_carry_information(development, column):
    # Common practice: an IV under 0.02 is "not predictive"; every designed effect clears it.
    assert information_value(development, column) > 0.03


def test_existing_leases_reverses_between_new_and_existing_customers(development):
    # Known truth of the design: within each segment the leases carry information, and the bad
    # rate rises with them for new customers and falls for existing ones.
    for segment, direction in (("new", 1), ("existing", -1)):
        rows = development[development["customer"] == segment]
        assert information_value(rows, "existing_leases") > 0.03, segment
        det = determinate(rows)
        rate = (det["outcome"] == "defaulted").groupby(det["existing_leases"].clip(upper=3)).mean()
        assert direction * np.corrcoef(rate.index, rate.to_numpy())[0, 1] > 0.8, segment
    assert (development["customer"] == "existing").mean() == pytest.approx(0.35, abs=0.02)


def test_age_band_is_only_a_mild_proxy(development):
    order = development["age_band"].map({band: i for i, band in enumerate(sorted(LEVELS["age_band"]))})
    correlation = order.corr(development["months_at_address"], method="spearman")
    # Designed: older bands stay longer at one address, but far from one-to-one.
    assert 0.15 < correlation < 0.45
    # Age band has no effect of its own, so its information value stays below the floor.
    assert 0 < information_value(development, "age_band") < 0.02


@pytest.mark.parametrize(
    ("column", "direction"),
    [
        ("credit_utilisation", 1),
        ("months_at_address", -1),
        ("monthly_income", -1),
        ("deposit_share", -1),
        ("months_in_job", -1),
    ],
)
def test_risk_trend_of_monotone_characteristics(development, column, direction):
    rates = bad_rate_by_quintile(development, column)
    assert direction * (rates[-1] - rates[0]) > 0.02
    assert np.sign(np.corrcoef(np.arange(5), rates)[0, 1]) == direction


def test_delivery_hours_risk_is_lowest_in_the_middle(development):
    rates = bad_rate_by_quintile(development, "weekly_delivery_hours")
    assert rates[2] + 0.02 < min(rates[0], rates[4])


def test_no_credit_file_is_riskier_than_a_clean_file(development):
    rows = determinate(development)
    bad = rows["outcome"] == "defaulted"
    late = rows["late_payments_12m"]
    assert bad[late == NO_CREDIT_FILE].mean() > bad[late == 0].mean() + 0.02


# Drifted sample


def test_drifted_characteristics_are_named_columns():
    assert set(DRIFTED_CHARACTERISTICS) <= set(CHARACTERISTICS)
    assert {"monthly_income", "credit_utilisation", "sales_channel"} == set(DRIFTED_CHARACTERISTICS)


@pytest.mark.parametrize("column", DRIFTED_CHARACTERISTICS)
def test_drifted_characteristics_shift(development, drifted, column):
    # Common practice: a stability index of 0.10 or more is a shift worth a look.
    assert stability_index(development[column], drifted[column]) > 0.12


UNDRIFTED = [name for name in ["age_band", *CHARACTERISTICS] if name not in DRIFTED_CHARACTERISTICS]


@pytest.mark.parametrize("column", UNDRIFTED)
def test_other_characteristics_stay_stable(development, drifted, column):
    # From memory: between two samples of one population the index is about
    # (classes - 1) * (1/n1 + 1/n2), under 0.002 here; 0.02 is far below the 0.10 mark.
    assert stability_index(development[column], drifted[column]) < 0.02


def test_drift_direction_and_same_missing_shares(development, drifted):
    assert drifted["monthly_income"].median() < 0.9 * development["monthly_income"].median()
    assert drifted["credit_utilisation"].mean() > development["credit_utilisation"].mean() + 0.05
    def online(frame):
        return (frame["sales_channel"] == "online").mean()

    assert online(drifted) > online(development) + 0.1
    for column in ["monthly_income", "credit_utilisation"]:
        assert drifted[column].isna().mean() == pytest.approx(development[column].isna().mean(), abs=0.01)


def test_drifted_population_is_riskier_under_the_same_model(development, drifted):
    # Every shift moves towards risk, so the unchanged risk model yields more defaults.
    def bad_rate(frame):
        return (determinate(frame)["outcome"] == "defaulted").mean()

    assert bad_rate(drifted) > bad_rate(development) + 0.02


# Speed


def test_twenty_thousand_rows_take_well_under_a_second():
    started = time.perf_counter()
    make_applications(20_000, seed=5)
    assert time.perf_counter() - started < 1.0


# Bad arguments


@pytest.mark.parametrize(
    ("arguments", "named"),
    [
        ({"rows": 0}, "rows"),
        ({"rows": 2.5}, "rows"),
        ({"rows": True}, "rows"),
        ({"rows": "100"}, "rows"),
        ({"seed": -1}, "seed"),
        ({"seed": 1.0}, "seed"),
        ({"drift": "yes"}, "drift"),
        ({"drift": 1}, "drift"),
    ],
)
def test_bad_arguments_raise_input_error_naming_them(arguments, named):
    with pytest.raises(InputError, match=named):
        make_applications(**arguments)


@pytest.mark.parametrize("source", ["", "   ", "a\nb.csv", 3, None])
def test_bad_source_raises_input_error(source):
    with pytest.raises(InputError, match="source"):
        demo_config_text(source)


# Demo config


def test_config_has_the_contract_sections_in_order(config):
    assert list(config) == [
        "name",
        "data",
        "samples",
        "binning",
        "characteristics",
        "selection",
        "scaling",
        "fairness",
        "output",
        "rejects",
        "engine",
    ]
    # The fairness threshold is lowered so the demo's mild built-in proxy gets flagged.
    assert config["fairness"] == {"proxy_cramers_v": 0.10}
    assert config["name"] == "Cargo-bike lease applications (invented demo data)"


def test_config_data_section(config):
    assert config["data"] == {
        "source": "applications.csv",
        "target": "outcome",
        "bad": ["defaulted"],
        "good": ["repaid"],
        "weight": None,
        "ignore": ["application_id", "decided_on", "staff_application"],
        "protected": ["age_band"],
        "exclude": [{"column": "staff_application", "in": [True],
                     "reason": "Staff application (other lease terms)"}],
    }


def test_config_samples_binning_and_overrides(config):
    assert config["samples"] == {
        "holdout": 0.3,
        "seed": 2024,
        "out_of_time": {"column": "decided_on", "from": datetime.date(2025, 7, 1)},
    }
    assert config["binning"] == {"sentinels": [NO_CREDIT_FILE]}
    assert config["characteristics"] == {
        "months_at_address": {"trend": "falls"},
        "weekly_delivery_hours": {"trend": "any"},
    }


def test_config_selection_scaling_output(config):
    assert config["selection"]["min_iv"] == 0.02
    assert config["selection"]["method"] == "stepwise"
    assert config["scaling"] == {"base_score": 600, "base_odds": 50, "pdo": 20}
    assert config["output"] == {"workbook": "out/scorecard.xlsx", "model": "out/scorecard.json"}


def test_config_names_only_columns_of_the_sample(config, development):
    data = config["data"]
    named = [data["target"], *data["ignore"], *data["protected"], *config["characteristics"]]
    assert set(named) <= set(development.columns)
    assert set(data["bad"] + data["good"]) < set(development["outcome"])


@settings(max_examples=200, deadline=None)
@given(
    source=st.text(
        alphabet=st.characters(blacklist_categories=("Cs",), blacklist_characters="\n\r"),
        min_size=1,
        max_size=40,
    ).filter(str.strip)
)
def test_any_source_path_reads_back_unchanged(source):
    assert yaml.safe_load(demo_config_text(source))["data"]["source"] == source
