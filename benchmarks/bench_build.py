"""How fast and how lean a build is, measured in one run so the ratios share the machine's load.

    python benchmarks/bench_build.py [--dir DIR] [--rows 1000000] [--dask-rows 20000000]
                                     [--dask-only] [--dask-report FOLDER]

It needs the test extras (``pip install -e ".[test]"``: statsmodels, psutil, Dask).

Writes invented rows (see ``synthetic.py``; fixed seed) as Parquet and CSV, then reports:

a. reading the Parquet file into memory against ``scorecard build`` end to end (workbook and
   model file written), both in this process and both in fresh processes; and, as a harder case with no target, a build in
   which every characteristic passes the information value floor and joins the pattern table;
b. a plain reference pipeline on the same rows: decile bins by ``pandas.qcut``, weights of
   evidence from ``pandas.crosstab``, a ``statsmodels`` Logit on the full WoE matrix, points
   by the same scaling; against the build;
c. the peak memory of a build run alone in a child process;
d. a build of one tenth of the rows against the full build;
e. ``scorecard score`` of the rows with the built model (Parquet in, Parquet out), in rows per
   second after the time a plain read of the file takes;
f. with ``--dask-rows``: a build of that many rows, as a folder of Parquet files, on a local
   Dask cluster, with the peak memory of the whole process tree; then, on one cluster of the
   same kind started by the benchmark, the time to read every partition once (all columns,
   best of two) against a build on that cluster, and with ``--dask-report`` a
   ``dask.distributed.performance_report`` of that build (HTML written to FOLDER; it needs
   bokeh). The compute time of the build's tasks, by kind, is printed either way.
   ``--dask-only`` skips a. to e.
"""

from __future__ import annotations

import argparse
import contextlib
import json
import math
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path
from typing import NamedTuple

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parent))
import synthetic  # noqa: E402

SEED = 11
TARGETS = {
    "build / read": ("<=", 5.0),
    "build / read, fresh processes": ("<=", 5.0),
    "reference / build": (">=", 15.0),
    "build peak memory (GB)": ("<=", 1.0),
    "full / tenth build time": ("<=", 12.0),
    "scoring rows per second": (">=", 1e6),
    "Dask build peak memory (GB)": ("<=", 3.0),
    "Dask build / read": ("<=", 3.0),
}

# The child reports its own peak from VmHWM: ru_maxrss survives exec, so a child forked from this
# big process would report this process's size instead of its own.
CHILD_BUILD = """
import json, sys, time
from pathlib import Path
from scorecard.progress import StageLog
from scorecard.api import build
start = time.perf_counter()
build(sys.argv[1], progress=StageLog())
seconds = time.perf_counter() - start
status = Path("/proc/self/status").read_text().splitlines()
peak_kb = next(int(line.split()[1]) for line in status if line.startswith("VmHWM:"))
print(json.dumps({"seconds": seconds, "peak_kb": peak_kb}))
"""


CHILD_READ = """
import json, sys, time
from scorecard.data.read import read_frame
start = time.perf_counter()
read_frame(sys.argv[1])
print(json.dumps({"seconds": time.perf_counter() - start}))
"""


# A cluster like the one the Dask engine starts for ``dask: local``, then on it: every partition
# read once (all columns into pandas, the bytes summed), and a build given the cluster's address.
CHILD_DASK = """
import contextlib, json, logging, sys, time
from pathlib import Path
import dask, dask.dataframe as dd, psutil
from dask.utils import key_split
from distributed import Client, LocalCluster, get_task_stream, performance_report
from scorecard.api import build
from scorecard.engines import dask_engine as de
from scorecard.progress import StageLog
config, report = Path(sys.argv[1]), sys.argv[2]
memory = int(psutil.virtual_memory().total * de.LOCAL_MEMORY_SHARE / de.LOCAL_WORKERS)
cluster = LocalCluster(n_workers=de.LOCAL_WORKERS, threads_per_worker=1, processes=True,
                       memory_limit=memory, dashboard_address=":0", silence_logs=logging.ERROR)
client = Client(cluster)
text = config.read_text().replace("engine: {dask: local}",
                                  "engine: {dask: '" + cluster.scheduler_address + "'}")
given = config.with_name(config.stem + "_address.yaml")
given.write_text(text)
source = next(line.split(":", 1)[1].strip() for line in text.splitlines()
              if line.strip().startswith("source:"))
frame = dd.read_parquet([str(f) for f in de.parquet_files(source)])
nbytes = lambda part: int(part.memory_usage(deep=False).sum())
reads = []
for _ in range(2):
    start = time.perf_counter()
    read = sum(client.compute([dask.delayed(nbytes)(p) for p in frame.to_delayed()], sync=True))
    reads.append(time.perf_counter() - start)
# Said at once, so that a build stopped early still leaves the read to compare its stages with.
print(f"read every partition once: {min(reads):.2f} s", file=sys.stderr, flush=True)
shown = performance_report(filename=report) if report else contextlib.nullcontext()
with shown, get_task_stream(client) as stream:
    start = time.perf_counter()
    build(given, progress=StageLog())
    seconds = time.perf_counter() - start
tasks = {}
for task in stream.data:
    name = key_split(task["key"])
    spent = tasks.setdefault(name, {"tasks": 0, "compute": 0.0, "transfer": 0.0})
    spent["tasks"] += 1
    for part in task["startstops"]:
        kind = "compute" if part["action"] == "compute" else "transfer"
        spent[kind] += part["stop"] - part["start"]
client.close()
cluster.close()
print(json.dumps({"read": min(reads), "bytes": read, "build": seconds,
                  "partitions": frame.npartitions, "tasks": tasks}))
"""


def child_facts(script: str, argument) -> dict:
    """Run a child script in a fresh process; the facts it prints as its last line of JSON."""
    out = subprocess.run([sys.executable, "-c", script, str(argument)], check=True,
                         capture_output=True, text=True).stdout
    return json.loads(out.strip().splitlines()[-1])


def row_count(path) -> int:
    """Read a file into memory and let the frame go at once, keeping only its length."""
    from scorecard.data.read import read_frame
    return len(read_frame(path))


def timed(fn, *args, **kwargs):
    start = time.perf_counter()
    out = fn(*args, **kwargs)
    return time.perf_counter() - start, out


class StageTimes:
    """Progress callback that keeps each stage line with the time since the build began."""

    def __init__(self):
        self.start = time.perf_counter()
        self.lines = []

    def __call__(self, text):
        self.lines.append((time.perf_counter() - self.start, text))


def prepare(folder: Path, rows: int, dask_rows: int | None, one_file: bool = True) -> dict:
    """Data files and configs, reused when a previous run left them in ``folder``; with
    ``one_file`` False only the Dask folder."""
    folder.mkdir(parents=True, exist_ok=True)
    paths = {}
    for key, n in (("full", rows), ("tenth", rows // 10)) if one_file else ():
        parquet = folder / f"rows_{n}_seed{SEED}.parquet"
        if not parquet.exists():
            print(f"writing {n:,} rows to {parquet}", file=sys.stderr)
            synthetic.write_parquet(parquet, n, SEED)
        paths[key] = synthetic.write_config(folder / f"{key}.yaml", parquet, n)
        paths[f"{key} parquet"] = parquet
    if one_file:
        _prepare_one_file(folder, rows, paths)
    if dask_rows:
        parts = folder / f"rows_{dask_rows}_seed{SEED}_parts"
        if not parts.with_suffix(".done").exists():
            print(f"writing {dask_rows:,} rows to {parts}", file=sys.stderr)
            synthetic.write_parquet_folder(parts, dask_rows, SEED, file_rows=1_000_000)
            parts.with_suffix(".done").write_text("")
        paths["dask"] = synthetic.write_config(folder / "dask.yaml", parts, dask_rows,
                                               engine="{dask: local}")
    return paths


def _prepare_one_file(folder: Path, rows: int, paths: dict) -> None:
    # Every characteristic a candidate: the pattern table then holds all thirty columns.
    paths["all candidates"] = synthetic.write_config(folder / "all_candidates.yaml",
                                                     paths["full parquet"], rows,
                                                     extra="selection: {min_iv: 0}")
    csv = folder / f"rows_{rows}_seed{SEED}.csv"
    if not csv.exists():
        synthetic.write_csv(csv, paths["full parquet"])
    paths["csv"] = csv


def reference_pipeline(frame: pd.DataFrame, sentinel=synthetic.SENTINEL) -> dict:
    """The plain way: decile bins, crosstab WoE, one Logit on every WoE column, points.

    ``sentinel`` is one value or a list of values that get a bin of their own.
    """
    import statsmodels.api as sm

    from scorecard.card.points import scaling

    is_bad = (frame["outcome"] == "bad").to_numpy()
    woe_columns, tables = {}, {}
    for name in frame.columns.drop("outcome"):
        column = frame[name]
        if isinstance(column.dtype, pd.CategoricalDtype):
            labels = column.cat.add_categories(["missing"]).fillna("missing")
        else:
            is_sentinel = column.isin(np.atleast_1d(sentinel))
            deciles = pd.qcut(column.where(~is_sentinel), 10, duplicates="drop").astype(str)
            labels = deciles.where(column.notna(), "missing").where(~is_sentinel, "sentinel")
        table = pd.crosstab(labels, is_bad) + 0.5
        woe = np.log((table[False] / table[False].sum()) / (table[True] / table[True].sum()))
        woe_columns[name] = labels.map(woe).astype(float)
        tables[name] = woe
    X = sm.add_constant(pd.DataFrame(woe_columns))
    fit = sm.Logit((~is_bad).astype(float), X).fit(disp=0)
    scale = scaling(600, 50, 20)
    k = len(woe_columns)
    alpha = fit.params["const"]
    return {name: ((fit.params[name] * woe + alpha / k) * scale.factor + scale.offset / k).round()
            for name, woe in tables.items()}


class TreeRun(NamedTuple):
    """A child process run to its end, or stopped at the memory cap."""

    seconds: float
    peak_bytes: int
    stdout: str
    stderr: str
    stopped: bool        # True when the whole tree passed the cap and was killed


def peak_of_tree(command: list[str], interval: float = 0.1, cap_bytes: float = math.inf) -> TreeRun:
    """Run ``command``, sampling the summed resident memory of it and all its children."""
    import psutil

    start = time.perf_counter()
    child = subprocess.Popen(command, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    peak, stopped = 0, False
    done = threading.Event()

    def sample():
        nonlocal peak, stopped
        root = psutil.Process(child.pid)
        while not done.is_set():
            try:
                tree = [root] + root.children(recursive=True)
            except psutil.NoSuchProcess:
                break
            peak = max(peak, sum(_rss(p) for p in tree))
            if peak > cap_bytes:
                stopped = True
                for process in reversed(tree):
                    with contextlib.suppress(psutil.NoSuchProcess):
                        process.kill()
                break
            time.sleep(interval)

    watcher = threading.Thread(target=sample, daemon=True)
    watcher.start()
    out, err = child.communicate()
    done.set()
    watcher.join()
    if child.returncode != 0 and not stopped:
        raise RuntimeError(f"child failed ({child.returncode}):\n{err[-3000:]}")
    return TreeRun(time.perf_counter() - start, peak, out, err, stopped)


def _rss(process) -> int:
    import psutil
    try:
        return process.memory_info().rss
    except psutil.NoSuchProcess:
        return 0


def measure(paths: dict, dask: bool, reference: bool, memory_cap_gb: float = 10.0,
            dask_only: bool = False, dask_report: Path | None = None,
            ) -> list[tuple[str, float, str]]:
    rows_out = []

    def report(name, value, note=""):
        rows_out.append((name, value, note))
        print(f"  {name}: {value:,.3f} {note}", file=sys.stderr)

    if not dask_only:
        measure_one_file(paths, reference, report)
    if dask:
        measure_dask(paths, memory_cap_gb, dask_report, report)
    return rows_out


def measure_one_file(paths: dict, reference: bool, report) -> None:
    from scorecard.api import build
    from scorecard.card.scorecard import load_scorecard
    from scorecard.card.scoring import apply_scorecard
    from scorecard.data.read import read_frame, read_table
    from scorecard.outputs.scored_file import score_file

    # a. Read and build in this warm process. Each read's frame is let go before the next, so
    # the reads find freed memory to reuse, as the build's own read does; the first read warms
    # the file cache and the imports.
    t_read = min(timed(row_count, paths["full parquet"])[0] for _ in range(3))
    report("read Parquet (s)", t_read, "best of three reads in this process")
    builds = []
    for _ in range(2):
        stages = StageTimes()
        builds.append((*timed(build, paths["full"], progress=stages), stages))
    t_build, result, stages = min(builds, key=lambda b: b[0])
    del builds
    report("build with workbook (s)", t_build,
           f"best of two in this process; {len(result.card.characteristics)} characteristics, "
           f"{len(result.patterns.codes):,} patterns")
    for at, text in stages.lines:
        print(f"      [{at:7.2f} s] {text}", file=sys.stderr)
    report("build / read", t_build / t_read, "both in this process")
    # The same in fresh processes, each paying for its own new memory, as `scorecard build`
    # run from a shell does.
    fresh_read = min(child_facts(CHILD_READ, paths["full parquet"])["seconds"] for _ in range(3))
    fresh_builds = [child_facts(CHILD_BUILD, paths["full"]) for _ in range(3)]
    fresh_build = min(facts["seconds"] for facts in fresh_builds)
    report("read Parquet, fresh process (s)", fresh_read, "best of three; imports excluded")
    report("build, fresh process (s)", fresh_build, "best of three; imports excluded")
    report("build / read, fresh processes", fresh_build / fresh_read)
    frame = read_frame(paths["full parquet"])
    n = len(frame)
    t_csv = timed(row_count, paths["csv"])[0]
    report("read CSV (s)", t_csv)
    t_all, every = timed(build, paths["all candidates"])
    report("build, every characteristic a candidate (s)", t_all,
           f"min_iv 0: {len(every.patterns.codes):,} patterns, "
           f"{len(every.card.characteristics)} characteristics in the model; "
           f"{t_all / t_read:.1f} times the read")
    del every

    if reference:
        t_reference, _ = timed(reference_pipeline, frame)
        report("reference pipeline (s)", t_reference)
        report("reference / build", t_reference / t_build)

    t_tenth, _ = timed(build, paths["tenth"])
    report("tenth build (s)", t_tenth, f"{n // 10:,} rows")
    report("full / tenth build time", t_build / t_tenth)

    card = load_scorecard(result.outputs["model"])
    t_apply, _ = timed(apply_scorecard, card, frame)
    report("points and score of every row in memory (s)", t_apply,
           f"{n / t_apply:,.0f} rows per second")
    with tempfile.TemporaryDirectory() as tmp:
        t_file, _ = timed(score_file, card, paths["full parquet"], Path(tmp) / "scored.parquet",
                          reasons=4)
    t_table, _ = timed(read_table, paths["full parquet"])
    report("scorecard score, Parquet to Parquet (s)", t_file,
           f"4 reasons per row; reading alone takes {t_table:.2f} s")
    report("scoring rows per second", n / (t_file - t_table), "after the read")
    del frame, result

    child = peak_of_tree([sys.executable, "-c", CHILD_BUILD, str(paths["full"])])
    facts = json.loads(child.stdout.strip().splitlines()[-1])
    peak_kb = max([facts["peak_kb"]] + [b["peak_kb"] for b in fresh_builds])
    report("build peak memory (GB)", peak_kb * 1024 / 1e9,
           f"largest peak resident memory of four builds alone in child processes, from their "
           f"VmHWM (sampled every 0.1 s: {child.peak_bytes / 1e9:.2f} GB)")


def measure_dask(paths: dict, memory_cap_gb: float, dask_report: Path | None, report) -> None:
    child = peak_of_tree([sys.executable, "-c", CHILD_BUILD, str(paths["dask"])],
                         interval=0.25, cap_bytes=memory_cap_gb * 1e9)
    stages = [line for line in child.stderr.splitlines() if line.startswith("[")]
    for line in stages:
        print(f"      {line}", file=sys.stderr)
    if child.stopped:
        report("Dask build peak memory (GB)", child.peak_bytes / 1e9,
               f"stopped at the {memory_cap_gb:g} GB cap after {child.seconds:.0f} s, "
               f"past: {stages[-1] if stages else 'start'}")
    else:
        facts = json.loads(child.stdout.strip().splitlines()[-1])
        report("Dask build (s)", facts["seconds"],
               f"{child.seconds:.1f} s with cluster start and stop")
        report("Dask build peak memory (GB)", child.peak_bytes / 1e9,
               "client, scheduler and workers together")
    if dask_report is not None:
        dask_report.mkdir(parents=True, exist_ok=True)
    html = "" if dask_report is None else str(dask_report / "dask_build.html")
    child = peak_of_tree([sys.executable, "-c", CHILD_DASK, str(paths["dask"]), html],
                         interval=0.25, cap_bytes=memory_cap_gb * 1e9)
    if child.stopped:
        report("Dask build on a given cluster, peak memory (GB)", child.peak_bytes / 1e9,
               f"stopped at the {memory_cap_gb:g} GB cap after {child.seconds:.0f} s")
        return
    for line in child.stderr.splitlines():
        if line.startswith("["):
            print(f"      {line}", file=sys.stderr)
    facts = json.loads(child.stdout.strip().splitlines()[-1])
    report("Dask read of every partition (s)", facts["read"],
           f"{facts['partitions']} partitions, {facts['bytes'] / 1e9:.2f} GB in pandas, "
           "best of two on the build's cluster")
    report("Dask build on that cluster (s)", facts["build"],
           "cluster already running" + (f"; performance report {html}" if html else ""))
    report("Dask build / read", facts["build"] / facts["read"])
    for name, spent in sorted(facts["tasks"].items(), key=lambda t: -t[1]["compute"]):
        print(f"      {spent['tasks']:4d} tasks {name[:40]:40s} compute {spent['compute']:7.2f} s,"
              f" transfer and disk {spent['transfer']:6.2f} s", file=sys.stderr)
    report("Dask build on a given cluster, peak memory (GB)", child.peak_bytes / 1e9,
           "client, scheduler and workers together, reads included")


def table(rows: list) -> str:
    lines = [f"{'measure':46s} {'value':>14s}  {'target':>10s}  met", "-" * 80]
    for name, value, note in rows:
        target = TARGETS.get(name)
        if target:
            sign, limit = target
            met = value <= limit if sign == "<=" else value >= limit
            lines.append(f"{name:46s} {value:14,.2f}  {sign} {limit:<7,g}  {'yes' if met else 'NO'}")
        else:
            lines.append(f"{name:46s} {value:14,.2f}")
        if note:
            lines.append(f"{'':4s}{note}")
    return "\n".join(lines)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--dir", type=Path, help="folder for the data (default: a temp folder)")
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--dask-rows", type=int, default=0,
                        help="also build this many rows on a local Dask cluster")
    parser.add_argument("--memory-cap-gb", type=float, default=10.0,
                        help="stop the Dask build when its process tree passes this (default 10)")
    parser.add_argument("--no-reference", action="store_true",
                        help="skip the reference pipeline (b)")
    parser.add_argument("--dask-only", action="store_true",
                        help="with --dask-rows: measure only the Dask build (f)")
    parser.add_argument("--dask-report", type=Path,
                        help="write a Dask performance report of the build (f) to this folder")
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        folder = args.dir or Path(tmp)
        paths = prepare(folder, args.rows, args.dask_rows, one_file=not args.dask_only)
        rows = measure(paths, bool(args.dask_rows), not args.no_reference, args.memory_cap_gb,
                       args.dask_only, args.dask_report)
    print(table(rows))
    return 0


if __name__ == "__main__":
    sys.exit(main())
