"""Invented application rows for the benchmarks: many characteristics, many rows, fixed seed.

Twenty numeric characteristics (some with missing values and the sentinel -999) and ten
categorical ones with 3 to 12 levels (some with missing values) drive a logistic risk; the
outcome is ``bad`` for about 9% of the rows. Rows are made in blocks, each from its own seed,
so a file of any length is the same whether it is written at once or block by block.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq

N_NUMERIC = 20
N_CATEGORICAL = 10
BLOCK_ROWS = 250_000
SENTINEL = -999.0
# Chosen by trial so that about 9% of the rows are bad.
BASE_LOG_ODDS = -2.22


def _numeric(rng, n, j):
    """Column j: a value, its effect on the log-odds of bad, missing and sentinel shares."""
    shape = j % 4
    if shape == 0:
        x = rng.lognormal(7.5 + 0.05 * j, 0.6, n).round(0)
        effect = -0.5 * (np.log(x) - 7.5) / 0.6
    elif shape == 1:
        x = rng.integers(0, 240, n).astype(float)
        effect = -0.004 * (x - 120)
    elif shape == 2:
        x = rng.uniform(0, 1, n).round(3)
        effect = 1.2 * (x - 0.5) ** 2 * 4 - 0.4
    else:
        x = rng.normal(50, 15, n).round(1)
        effect = 0.02 * (x - 50)
    effect *= 0.15 + 0.05 * (j % 5)
    missing_share = 0.02 + 0.01 * (j % 6)
    sentinel_share = 0.015 if j % 3 == 0 else 0.0
    return x, effect, missing_share, sentinel_share


def block(rows: int, seed: int) -> pd.DataFrame:
    """One block of invented rows from its own seed."""
    rng = np.random.default_rng(seed)
    columns, log_odds = {}, np.full(rows, BASE_LOG_ODDS)
    for j in range(N_NUMERIC):
        x, effect, missing_share, sentinel_share = _numeric(rng, rows, j)
        draw = rng.random(rows)
        missing = draw < missing_share
        sentinel = ~missing & (draw < missing_share + sentinel_share)
        log_odds += np.where(missing, 0.3, np.where(sentinel, 0.6, effect))
        x[missing] = np.nan
        x[sentinel] = SENTINEL
        columns[f"number_{j + 1:02d}"] = x
    for j in range(N_CATEGORICAL):
        n_levels = 3 + j % 10
        levels = np.array([f"level_{chr(97 + i)}" for i in range(n_levels)])
        # Level shares are fixed per column, so every block has the same mix.
        share = np.random.default_rng(j).dirichlet(np.full(n_levels, 2.0))
        codes = rng.choice(n_levels, size=rows, p=share).astype(np.int32)
        effect = np.linspace(-0.4, 0.4, n_levels) * (0.3 + 0.1 * (j % 4))
        log_odds += effect[codes]
        if j % 2 == 0:
            codes[rng.random(rows) < 0.03] = -1
        columns[f"group_{j + 1:02d}"] = pd.Categorical.from_codes(codes, levels)
    bad = rng.random(rows) < 1.0 / (1.0 + np.exp(-log_odds))
    columns["outcome"] = pd.Categorical.from_codes(bad.astype(np.int8), ["good", "bad"])
    return pd.DataFrame(columns)


def blocks(rows: int, seed: int):
    """Blocks of at most BLOCK_ROWS rows adding up to ``rows``."""
    for i, start in enumerate(range(0, rows, BLOCK_ROWS)):
        yield block(min(BLOCK_ROWS, rows - start), seed * 1000 + i)


def write_parquet(path: Path, rows: int, seed: int) -> Path:
    """One Parquet file of ``rows`` rows, written block by block."""
    writer = None
    for frame in blocks(rows, seed):
        table = pa.Table.from_pandas(frame, preserve_index=False)
        if writer is None:
            writer = pq.ParquetWriter(path, table.schema)
        writer.write_table(table)
    writer.close()
    return path


def write_parquet_folder(folder: Path, rows: int, seed: int, file_rows: int) -> Path:
    """A folder of Parquet files of ``file_rows`` rows each: the layout a cluster reads."""
    folder.mkdir(parents=True, exist_ok=True)
    for i, start in enumerate(range(0, rows, file_rows)):
        write_parquet(folder / f"part_{i:04d}.parquet", min(file_rows, rows - start), seed + 7919 * i)
    return folder


def write_csv(path: Path, parquet: Path) -> Path:
    """The same rows as a CSV file, converted from the Parquet file batch by batch."""
    import pyarrow.csv as pacsv
    source = pq.ParquetFile(parquet)
    with pacsv.CSVWriter(path, source.schema_arrow) as writer:
        for batch in source.iter_batches(batch_size=BLOCK_ROWS):
            writer.write_batch(batch)
    return path


CONFIG = """\
name: Benchmark applications ({rows} invented rows)
data:
  source: {source}
  target: outcome
  bad: [bad]
  good: [good]
samples:
  holdout: 0.3
  seed: 2024
binning:
  sentinels: [-999]
output:
  workbook: {out}/scorecard.xlsx
  model: {out}/scorecard.json
engine: {engine}
"""


def write_config(path: Path, source: Path, rows: int, engine: str = "local",
                 extra: str = "") -> Path:
    """A build config for ``source``; outputs go to out/<config name>/ beside the config.

    ``extra`` is YAML appended to the config, such as ``"selection: {min_iv: 0}"``.
    """
    out = path.parent.resolve() / "out" / path.stem
    text = CONFIG.format(rows=rows, source=source.resolve(), out=out, engine=engine)
    path.write_text(text + (extra + "\n" if extra else ""))
    return path
