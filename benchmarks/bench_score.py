"""Scoring throughput: rows per second of ``scorecard score`` on a million invented rows.

Builds the demo scorecard on 20,000 rows, draws ``--rows`` fresh applications from the same
invented design, and times

* scoring after the read: bin codes, points, score, bad probability and reasons for batches
  already in memory (the target is at least a million rows per second), and
* the whole command, Parquet to Parquet and CSV to CSV, reading and writing included.

Run: ``python benchmarks/bench_score.py [--rows 1000000]``. With ``--baseline ROOT`` (the root
folder of another checkout, such as an export of the main branch) the whole benchmark runs in
child processes, this checkout's and the baseline's in turn (A B A B ...), ``--runs`` times each,
and the table gives each version's median and the median of the paired ratios: a before and
after measured in one run.
"""

from __future__ import annotations

import argparse
import os
import re
import statistics
import subprocess
import sys
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
    parser.add_argument("--baseline", type=Path,
                        help="root folder of another checkout, timed in turn with this one")
    parser.add_argument("--runs", type=int, default=3, help="runs of each version (--baseline)")
    args = parser.parse_args()
    if args.baseline:
        paired(args.baseline.resolve(), args.rows, args.runs)
        return
    with tempfile.TemporaryDirectory(prefix="bench-score-") as folder:
        run(Path(folder), args.rows)


FIGURE = re.compile(r"^(.+?)\s+([\d.]+) s\s+[\d.]+ million rows/s$")


def paired(baseline: Path, rows: int, runs: int) -> None:
    """This checkout and ``baseline`` in turn, each in a child process that imports its own
    package; medians of each and the median of the paired ratios."""
    roots = {"this checkout": Path(__file__).resolve().parent.parent, "baseline": baseline}
    seconds = {label: {} for label in roots}
    for i in range(runs):
        for label, root in roots.items():
            env = dict(os.environ, PYTHONPATH=str(root))
            out = subprocess.run([sys.executable, str(root / "benchmarks" / "bench_score.py"),
                                  "--rows", str(rows)], capture_output=True, text=True,
                                 check=True, env=env, cwd=tempfile.gettempdir()).stdout
            for line in out.splitlines():
                match = FIGURE.match(line.strip())
                if match:
                    seconds[label].setdefault(match.group(1), []).append(float(match.group(2)))
            print(f"run {i + 1}, {label}: " + "; ".join(
                f"{name} {times[-1]:.2f} s" for name, times in seconds[label].items()),
                file=sys.stderr)
    ours, theirs = seconds["this checkout"], seconds["baseline"]
    print(f"{rows} rows, {runs} runs of each version in turn; medians\n")
    print(f"{'measure':42s}{'baseline s':>12s}{'this s':>10s}{'this / baseline':>17s}")
    for name, times in ours.items():
        ratio = statistics.median(a / b for a, b in zip(times, theirs[name]))
        print(f"{name:42s}{statistics.median(theirs[name]):12.2f}"
              f"{statistics.median(times):10.2f}{ratio:17.2f}")


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
