"""Scoring throughput: rows per second of ``scorecard score`` on a million invented rows.

Builds the demo scorecard on 20,000 rows, draws ``--rows`` fresh applications from the same
invented design, and times

* scoring after the read: bin codes, points, score, bad probability and reasons for batches
  already in memory (the target is at least a million rows per second), and
* the whole command, Parquet to Parquet and CSV to CSV, reading and writing included.

Run: ``python benchmarks/bench_score.py [--rows 1000000]``.
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq

from scorecard.api import open_engine
from scorecard.build.pipeline import build_scorecard
from scorecard.config.loading import load_config
from scorecard.demo.applications import make_applications
from scorecard.demo.files import write_demo
from scorecard.outputs.scored_file import CHUNK_ROWS, score_file, scored_batch


def _timed(label: str, rows: int, work) -> float:
    start = time.perf_counter()
    work()
    seconds = time.perf_counter() - start
    print(f"{label:38s} {seconds:7.2f} s  {rows / seconds / 1e6:6.2f} million rows/s")
    return seconds


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1_000_000)
    args = parser.parse_args()
    with tempfile.TemporaryDirectory(prefix="bench-score-") as folder:
        run(Path(folder), args.rows)


def run(folder: Path, rows: int) -> None:
    config = load_config(write_demo(folder / "demo", rows=20_000))
    card = build_scorecard(config, open_engine(config)).card
    frame = make_applications(rows=rows, seed=99, drift=False)
    table = pa.Table.from_pandas(frame, preserve_index=False)
    for name in frame.columns:
        if pa.types.is_large_string(table.schema.field(name).type):
            table = table.set_column(table.schema.get_field_index(name), name,
                                     table.column(name).dictionary_encode())
    parquet, csv = folder / "rows.parquet", folder / "rows.csv"
    pq.write_table(table, parquet, row_group_size=CHUNK_ROWS)
    frame.to_csv(csv, index=False)
    batches = table.to_batches(max_chunksize=CHUNK_ROWS)
    print(f"{rows} rows, {len(card.characteristics)} characteristics, "
          f"{len(batches)} chunks of at most {CHUNK_ROWS} rows")

    _timed("scoring after the read", rows,
           lambda: [scored_batch(card, b, ("application_id",)) for b in batches])
    _timed("score Parquet -> Parquet (whole command)", rows,
           lambda: score_file(card, parquet, folder / "scored.parquet", keep=("application_id",)))
    _timed("score CSV -> CSV (whole command)", rows,
           lambda: score_file(card, csv, folder / "scored.csv", keep=("application_id",)))


if __name__ == "__main__":
    main()
