"""How fast and how lean a database query is read, against the same rows read from CSV.

    python benchmarks/bench_database.py [--dir DIR] [--rows 1000000]

Writes invented rows (see ``synthetic.py``; fixed seed) as CSV and as a table of an SQLite
file, and, when SCORECARD_TEST_POSTGRES_URL and SCORECARD_TEST_POSTGRES_PASSWORD name a server
(``.ci/postgres.sh`` starts one), as a PostgreSQL table. Each read runs alone in a child process
that reports its time and its peak resident memory (VmHWM):

a. ``read_frame`` of the CSV file (the build's read of a file);
b. ``read_source`` of ``SELECT * FROM applications`` on SQLite and on PostgreSQL: the rows
   streamed in chunks into Arrow (the build's read of a query);
c. for scale, ``pandas.read_sql_query`` of the same query in one piece, the usual way to get a
   query's rows into a DataFrame.

The frame a build works on is the same size in every case (its memory is printed); the read's
peak above it is what the way of reading costs.
"""

from __future__ import annotations

import argparse
import json
import os
import sqlite3
import subprocess
import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
import synthetic  # noqa: E402

SEED = 11
QUERY = "SELECT * FROM applications"

CHILD = """
import json, sys, time
from pathlib import Path
kind, where = sys.argv[1], sys.argv[2]
start = time.perf_counter()
if kind == "csv":
    from scorecard.data.read import read_frame
    frame = read_frame(where)
elif kind == "query":
    from scorecard.config.sources import DatabaseQuery
    from scorecard.data.read import read_source
    url, variable, file = json.loads(where)
    frame = read_source(DatabaseQuery("data.source", url, QUERY, variable,
                                      Path(file) if file else None))
else:
    import os, pandas as pd, sqlalchemy
    url, variable, file = json.loads(where)
    url = sqlalchemy.engine.make_url(url)
    url = url.set(database=file) if file else url.set(password=os.environ[variable])
    with sqlalchemy.create_engine(url).connect() as connection:
        frame = pd.read_sql_query(QUERY, connection)
seconds = time.perf_counter() - start
status = Path("/proc/self/status").read_text().splitlines()
peak_kb = next(int(line.split()[1]) for line in status if line.startswith("VmHWM:"))
print(json.dumps({"seconds": seconds, "peak_kb": peak_kb, "rows": len(frame),
                  "frame_bytes": int(frame.memory_usage(deep=True).sum())}))
""".replace("QUERY", repr(QUERY))


def _child(kind: str, where: str) -> dict:
    done = subprocess.run([sys.executable, "-c", CHILD, kind, where], capture_output=True,
                          text=True, check=True)
    return json.loads(done.stdout)


def _write_sqlite(path: Path, rows: int) -> None:
    with sqlite3.connect(path) as db:
        for frame in synthetic.blocks(rows, SEED):
            frame.to_sql("applications", db, index=False, if_exists="append")


def _write_postgres(url: str, password: str, csv: Path) -> None:
    """The CSV file's rows as a PostgreSQL table, the table made by pandas and filled by COPY."""
    import sqlalchemy
    engine = sqlalchemy.create_engine(sqlalchemy.engine.make_url(url).set(password=password))
    with engine.begin() as connection:
        connection.exec_driver_sql("DROP TABLE IF EXISTS applications")
        synthetic.block(10, SEED).head(0).to_sql("applications", connection, index=False)
        names = ", ".join(pd_columns(csv))
        with connection.connection.cursor() as cursor, open(csv, "rb") as rows:
            with cursor.copy(f"COPY applications ({names}) FROM STDIN "
                             "WITH (FORMAT csv, HEADER true)") as copy:
                for block in iter(lambda: rows.read(1 << 20), b""):
                    copy.write(block)
    engine.dispose()


def pd_columns(csv: Path) -> list[str]:
    with open(csv, encoding="utf-8") as rows:
        return [name.strip('"') for name in rows.readline().rstrip("\n").split(",")]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--dir", type=Path, default=None)
    parser.add_argument("--rows", type=int, default=1_000_000)
    args = parser.parse_args()
    folder = args.dir or Path(tempfile.mkdtemp(prefix="bench_database_"))
    folder.mkdir(parents=True, exist_ok=True)
    parquet = synthetic.write_parquet(folder / "rows.parquet", args.rows, SEED)
    csv = synthetic.write_csv(folder / "rows.csv", parquet)
    database = folder / "rows.db"
    if not database.exists():
        _write_sqlite(database, args.rows)
    runs = [("a. CSV file, read_frame", "csv", str(csv)),
            ("b. SQLite query, read_source", "query",
             json.dumps(["sqlite:///rows.db", None, str(database)])),
            ("c. SQLite query, pandas.read_sql_query whole", "pandas",
             json.dumps(["sqlite:///rows.db", None, str(database)]))]
    url = os.environ.get("SCORECARD_TEST_POSTGRES_URL")
    password = os.environ.get("SCORECARD_TEST_POSTGRES_PASSWORD")
    if url and password:
        _write_postgres(url, password, csv)
        where = json.dumps([url, "SCORECARD_TEST_POSTGRES_PASSWORD", None])
        runs += [("b. PostgreSQL query, read_source", "query", where),
                 ("c. PostgreSQL query, pandas.read_sql_query whole", "pandas", where)]
    print(f"{args.rows:,} invented rows, {synthetic.N_NUMERIC + synthetic.N_CATEGORICAL + 1} "
          "columns; each read alone in a child process")
    for label, kind, where in runs:
        facts = _child(kind, where)
        print(f"{label:<52} {facts['seconds']:6.2f} s  peak {facts['peak_kb'] / 1e6:5.2f} GB  "
              f"frame {facts['frame_bytes'] / 1e9:5.2f} GB  ({facts['rows']:,} rows)")


if __name__ == "__main__":
    main()
