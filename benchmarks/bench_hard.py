"""A build where nearly every row is its own pattern, timed from the shell as a user runs it.

    python benchmarks/bench_hard.py [--dir DIR] [--rows 1000000] [--runs 3]

Use ``--rows 5000000`` for the larger case. It needs the test extras (statsmodels). Every
figure comes from a fresh process, started the way a shell starts it, so the interpreter's
start, the imports and the memory each process claims are all counted:

a. reading the file with pyarrow in a fresh process (the whole process);
b. ``scorecard build`` with workbook and model file (the whole process), and the stages of
   one build from its progress lines;
c. the plain qcut/crosstab/Logit pipeline of ``bench_build.py`` on the same file, in a fresh
   process that reads it with pandas first;
d. ``scorecard --help``, ``python -c "import scorecard.cli"`` and ``scorecard score`` of a
   thousand rows with the built model;
e. the peak resident memory of each, from the operating system's account of the finished
   child (``os.wait4``).

The commands run in turn, A B C A B C ..., so a drift of the machine's speed touches each
alike; the table gives the median of the runs. The data (see ``hard_data.py``; fixed seed) are
kept in ``--dir`` for the next run.
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
from typing import NamedTuple

HERE = Path(__file__).resolve().parent
SEED = 7
TARGETS = {
    "build / read": ("<=", 5.0),
    "reference / build": (">=", 15.0),
    "build peak memory (GB)": ("<=", 1.0),
    "scorecard --help (s)": ("<=", 0.3),
    "scorecard score, 1000 rows (s)": ("<=", 0.3),
}

READ = "import sys, pyarrow.parquet as pq; pq.read_table(sys.argv[1])"

REFERENCE = """
import sys
sys.path.insert(0, sys.argv[1])
import pandas as pd
from bench_build import reference_pipeline
reference_pipeline(pd.read_parquet(sys.argv[2]), sentinel=[-999, 999999])
"""

SMALL = """
import sys, pyarrow.parquet as pq
pq.write_table(pq.read_table(sys.argv[1]).slice(0, 1000), sys.argv[2])
"""


class Run(NamedTuple):
    seconds: float
    peak_bytes: int
    stderr: str


def run(command: list[str], env: dict) -> Run:
    """Run ``command`` to its end; its wall time and its own peak resident memory."""
    start = time.perf_counter()
    child = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                             text=True, env=env)
    stderr = child.stderr.read()
    _, status, usage = os.wait4(child.pid, 0)
    seconds = time.perf_counter() - start
    child.returncode = os.waitstatus_to_exitcode(status)
    if child.returncode != 0:
        raise RuntimeError(f"{' '.join(command)} failed ({child.returncode}):\n{stderr[-3000:]}")
    # ru_maxrss is in kilobytes on Linux.
    return Run(seconds, usage.ru_maxrss * 1024, stderr)


def prepare(folder: Path, rows: int, env: dict) -> dict:
    """The data, a thousand-row sample of them and the config, made in child processes: this
    process stays small, since a child forked from it starts with its resident size."""
    folder.mkdir(parents=True, exist_ok=True)
    parquet = folder / f"hard_{rows}_seed{SEED}.parquet"
    config = folder / f"hard_{rows}.yaml"
    if not parquet.exists():
        print(f"writing {rows:,} rows to {parquet}", file=sys.stderr)
    subprocess.run([sys.executable, str(HERE / "hard_data.py"), str(parquet), "--rows", str(rows),
                    "--seed", str(SEED), "--config", str(config)], check=True, env=env)
    small = folder / f"hard_1000_seed{SEED}.parquet"
    if not small.exists():
        subprocess.run([sys.executable, "-c", SMALL, str(parquet), str(small)], check=True,
                       env=env)
    model = folder / "out" / config.stem / "scorecard.json"
    return {"parquet": parquet, "small": small, "config": config, "model": model,
            "scored": folder / "scored.parquet"}


def commands(paths: dict) -> dict[str, list[str]]:
    py, here = sys.executable, str(HERE)
    scorecard = [py, "-m", "scorecard"]
    return {
        "read with pyarrow (s)": [py, "-c", READ, str(paths["parquet"])],
        "scorecard build (s)": scorecard + ["build", str(paths["config"])],
        "reference pipeline (s)": [py, "-c", REFERENCE, here, str(paths["parquet"])],
        "scorecard --help (s)": scorecard + ["--help"],
        'python -c "import scorecard.cli" (s)': [py, "-c", "import scorecard.cli"],
        "scorecard score, 1000 rows (s)": scorecard + ["score", str(paths["model"]),
                                                     str(paths["small"]), "--out",
                                                     str(paths["scored"])],
    }


STAGE = re.compile(r"^\[\s*([\d.]+) s\] (.*)$")


def stage_table(build: Run, import_seconds: float) -> list[tuple[str, float]]:
    """Seconds of each stage of one build, from its progress lines."""
    stages = [("start Python, import the command layer", import_seconds)]
    last = 0.0
    for line in build.stderr.splitlines():
        match = STAGE.match(line)
        if match:
            at = float(match.group(1))
            stages.append((match.group(2), at - last))
            last = at
    stages.append(("importing the build modules, the summary, exit",
                   build.seconds - import_seconds - last))
    return stages


def table(rows: list) -> str:
    lines = [f"{'measure':46s} {'value':>12s}  {'target':>10s}  met", "-" * 80]
    for name, value, note in rows:
        target = TARGETS.get(name)
        if target:
            sign, limit = target
            met = value <= limit if sign == "<=" else value >= limit
            lines.append(f"{name:46s} {value:12,.3f}  {sign} {limit:<7,g}  {'yes' if met else 'NO'}")
        else:
            lines.append(f"{name:46s} {value:12,.3f}")
        if note:
            lines.append(f"{'':4s}{note}")
    return "\n".join(lines)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--dir", type=Path, help="folder for the data (default: a temp folder)")
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--runs", type=int, default=3, help="runs of each command (default 3)")
    parser.add_argument("--no-reference", action="store_true",
                        help="skip the reference pipeline (it takes a minute or more)")
    args = parser.parse_args(argv)
    # The package is imported from this checkout, as the tests import it.
    root = str(Path(__file__).resolve().parent.parent)
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(
        [root] + [p for p in os.environ.get("PYTHONPATH", "").split(os.pathsep) if p]))
    with tempfile.TemporaryDirectory() as tmp:
        paths = prepare(args.dir or Path(tmp), args.rows, env)
        every = commands(paths)
        if args.no_reference:
            del every["reference pipeline (s)"]
        # The build runs first, once, so that the model exists for scoring and caches are warm.
        first = run(every["scorecard build (s)"], env)
        runs = {name: [] for name in every}
        for i in range(args.runs):
            for name, command in every.items():
                if name == "reference pipeline (s)" and i > 0:
                    continue  # one run of a minute-long pipeline is plenty
                runs[name].append(run(command, env))
                print(f"  run {i + 1}: {name} {runs[name][-1].seconds:.2f}", file=sys.stderr)
    median = {name: statistics.median(r.seconds for r in done) for name, done in runs.items()}
    peak = {name: max(r.peak_bytes for r in done) for name, done in runs.items()}
    rows = [(name, median[name], f"peak memory {peak[name] / 1e9:.2f} GB")
            for name in every]
    read, build = median["read with pyarrow (s)"], median["scorecard build (s)"]
    rows.append(("build / read", build / read, "whole processes, medians"))
    if "reference pipeline (s)" in median:
        rows.append(("reference / build", median["reference pipeline (s)"] / build, ""))
    rows.append(("build peak memory (GB)", peak["scorecard build (s)"] / 1e9, ""))
    stages = stage_table(min(runs["scorecard build (s)"] + [first], key=lambda r: r.seconds),
                         median['python -c "import scorecard.cli" (s)'])
    print(f"{args.rows:,} rows, {args.runs} runs of each command, medians\n")
    print(table(rows))
    print("\nstages of the fastest build (from its progress lines)\n")
    print(f"{'stage':66s} {'seconds':>8s}")
    for name, seconds in stages:
        print(f"{name[:66]:66s} {seconds:8.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
