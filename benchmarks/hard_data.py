"""Invented application rows where nearly every row is its own pattern of bins.

Sixteen characteristics carry real signal: twelve numeric ones with continuous values (never
rounded, so every value is distinct), missing values and sentinel values that mean something of
their own, and four categorical ones with 4 to 15 levels. Eight more are noise: six numeric,
two categorical. Two shared latent factors make some of the signal columns moderately
correlated, as an applicant's income, limits and balances are. The outcome is ``bad`` for about
10% of the rows.

With a dozen or more characteristics of five to ten bins each in the model, a million rows
have about as many distinct patterns as rows: the case the pattern table no longer compresses.
Rows are made in blocks, each from its own seed, so a file of any length is the same whether
it is written at once or block by block.

    python benchmarks/hard_data.py OUT.parquet [--rows 1000000] [--seed 7] [--config OUT.yaml]
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

BLOCK_ROWS = 250_000
SENTINELS = (-999.0, 999999.0)
# Chosen by trial so that about 10% of the rows are bad.
BASE_LOG_ODDS = -1.75


def _signal_numeric(rng, latent, n):
    """The twelve signal columns: (name, values, effect on the log-odds of bad)."""
    a, b = latent
    out = []
    # Lease-applicant facts in the cargo-bike scenario; the shapes differ on purpose: rising,
    # falling, U-shaped, a threshold, a long tail.
    income = np.exp(10.3 + 0.45 * a + 0.25 * rng.standard_normal(n))
    out.append(("monthly_income", income, -0.55 * (np.log(income) - 10.3) / 0.5))
    rent = income * rng.beta(2, 5, n)
    share = rent / income
    out.append(("rent_share", share, 1.6 * (share - 0.28)))
    age = 18 + rng.gamma(4.0, 6.5, n)
    out.append(("applicant_age", age, 0.0009 * (age - 45) ** 2 - 0.45))
    tenure = rng.exponential(40.0, n) * np.exp(0.3 * a)
    out.append(("months_at_address", tenure, -0.35 * np.log1p(tenure / 12)))
    employed = rng.exponential(55.0, n)
    out.append(("months_employed", employed, -0.3 * np.log1p(employed / 6) + 0.3))
    utilisation = np.clip(rng.beta(1.5, 3.0, n) + 0.12 * b, 0, None)
    out.append(("card_utilisation", utilisation, 1.3 * utilisation - 0.45))
    enquiries = rng.gamma(1.2, 1.6, n) * np.exp(0.25 * b)
    out.append(("enquiry_intensity", enquiries, 0.18 * enquiries - 0.35))
    bike_price = np.exp(8.2 + 0.35 * rng.standard_normal(n) + 0.15 * a)
    out.append(("bike_price", bike_price, 0.3 * (np.log(bike_price) - 8.2) / 0.38))
    deposit = rng.beta(1.2, 6.0, n)
    out.append(("deposit_share", deposit, -2.2 * (deposit - 0.17)))
    balance = np.exp(7.0 + 1.1 * rng.standard_normal(n) - 0.3 * b)
    out.append(("savings_balance", balance, -0.22 * (np.log(balance) - 7.0)))
    late = rng.gamma(0.6, 12.0, n) * np.exp(0.2 * b)
    out.append(("days_late_past_year", late, np.where(late > 30, 0.6, 0.02 * late - 0.2)))
    distance = rng.lognormal(1.5, 0.8, n)
    out.append(("commute_km", distance, 0.12 * np.tanh(distance / 8 - 1)))
    return out


def _categorical(rng, n, name, n_levels, strength, column_seed):
    levels = np.array([f"{name}_{i + 1:02d}" for i in range(n_levels)])
    # Level shares are fixed per column, so every block has the same mix.
    share = np.random.default_rng(column_seed).dirichlet(np.full(n_levels, 1.5))
    codes = rng.choice(n_levels, size=n, p=share).astype(np.int32)
    effect = np.random.default_rng(column_seed + 1).normal(0.0, strength, n_levels)
    return levels, codes, effect[codes]


def block(rows: int, seed: int) -> pd.DataFrame:
    """One block of invented rows from its own seed."""
    rng = np.random.default_rng(seed)
    latent = rng.standard_normal((2, rows))
    columns, log_odds = {}, np.full(rows, BASE_LOG_ODDS)
    for j, (name, x, effect) in enumerate(_signal_numeric(rng, latent, rows)):
        draw = rng.random(rows)
        missing = draw < 0.01 + 0.01 * (j % 5)
        sentinel = ~missing & (draw < 0.01 + 0.01 * (j % 5) + (0.02 if j % 3 == 0 else 0.0))
        # A missing value or a sentinel each carries a risk of its own.
        log_odds += np.where(missing, 0.35, np.where(sentinel, 0.7 - 0.2 * (j % 2), effect))
        x = x.astype(np.float64)
        x[missing] = np.nan
        x[sentinel] = SENTINELS[j % 2]
        columns[name] = x
    for j, (name, n_levels, strength) in enumerate(
            [("region", 15, 0.35), ("bike_kind", 6, 0.3), ("housing", 4, 0.4),
             ("channel", 5, 0.25)]):
        levels, codes, effect = _categorical(rng, rows, name, n_levels, strength, 100 + j)
        log_odds += effect
        if j % 2 == 0:
            codes[rng.random(rows) < 0.02] = -1
        columns[name] = pd.Categorical.from_codes(codes, levels)
    for j in range(6):
        x = rng.lognormal(3.0 + 0.2 * j, 0.7, rows)
        x[rng.random(rows) < 0.02] = np.nan
        columns[f"noise_{j + 1:02d}"] = x
    for j in range(2):
        levels, codes, _ = _categorical(rng, rows, f"noise_kind_{j + 1}", 7, 0.0, 200 + j)
        columns[f"noise_kind_{j + 1}"] = pd.Categorical.from_codes(codes, levels)
    bad = rng.random(rows) < 1.0 / (1.0 + np.exp(-log_odds))
    columns["outcome"] = pd.Categorical.from_codes(bad.astype(np.int8), ["good", "bad"])
    return pd.DataFrame(columns)


def write_parquet(path: Path, rows: int, seed: int) -> Path:
    """One Parquet file of ``rows`` rows, written block by block."""
    writer = None
    for i, start in enumerate(range(0, rows, BLOCK_ROWS)):
        frame = block(min(BLOCK_ROWS, rows - start), seed * 1000 + i)
        table = pa.Table.from_pandas(frame, preserve_index=False)
        if writer is None:
            writer = pq.ParquetWriter(path, table.schema)
        writer.write_table(table)
    writer.close()
    return path


CONFIG = """\
name: Hard benchmark applications ({rows} invented rows)
data:
  source: {source}
  target: outcome
  bad: [bad]
  good: [good]
samples:
  holdout: 0.3
  seed: 2024
binning:
  sentinels: [-999, 999999]
selection:
  min_iv: 0.02
output:
  workbook: {out}/scorecard.xlsx
  model: {out}/scorecard.json
"""


def write_config(path: Path, source: Path, rows: int) -> Path:
    """A build config for ``source``; outputs go to out/<config name>/ beside the config."""
    out = path.parent.resolve() / "out" / path.stem
    path.write_text(CONFIG.format(rows=rows, source=source.resolve(), out=out))
    return path


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("out", type=Path, help="Parquet file to write")
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--seed", type=int, default=7)
    parser.add_argument("--config", type=Path, help="also write a build config for the file here")
    args = parser.parse_args(argv)
    if not args.out.exists():
        write_parquet(args.out, args.rows, args.seed)
    if args.config:
        write_config(args.config, args.out, args.rows)
    return 0


if __name__ == "__main__":
    sys.exit(main())
