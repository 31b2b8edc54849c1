"""A build where nearly every row is its own pattern, timed from the shell as a user runs it.

    python benchmarks/bench_hard.py [--dir DIR] [--rows 1000000] [--runs 3] [--baseline ROOT]

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
alike; the table gives the median of the runs. With ``--baseline ROOT`` (the root folder of a
checkout of another version, such as an export of the main branch) each command of the package
also runs from there, right after this checkout's, for a before and after in one run. The data (see ``hard_data.py``; fixed seed) are
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
    """Run ``command`` to its end; its wall time and its own peak resident memory.

    It runs in the system's temporary folder: ``python -m`` and ``-c`` put the working folder
    first on the import path, which would shadow the version that PYTHONPATH names.
    """
    start = time.perf_counter()
    child = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                             text=True, env=env, cwd=tempfile.gettempdir())
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


PRODUCT = ("scorecard build (s)", "scorecard --help (s)", 'python -c "import scorecard.cli" (s)',
           "scorecard score, 1000 rows (s)")


def summary(runs: dict, shared: dict) -> dict:
    """Medians, peaks and ratios of one version of the package."""
    median = {name: statistics.median(r.seconds for r in done)
              for name, done in {**shared, **runs}.items()}
    peak = {name: max(r.peak_bytes for r in done) for name, done in {**shared, **runs}.items()}
    out = {name: (median[name], peak[name]) for name in median}
    build = median["scorecard build (s)"]
    out["build / read"] = (build / median["read with pyarrow (s)"], None)
    if "reference pipeline (s)" in median:
        out["reference / build"] = (median["reference pipeline (s)"] / build, None)
    out["build peak memory (GB)"] = (peak["scorecard build (s)"] / 1e9, None)
    return out


def table(versions: dict) -> str:
    labels = list(versions)
    lines = [f"{'measure':40s}" + "".join(f"{label:>16s}" for label in labels)
             + f"  {'target':>10s}  met", "-" * (56 + 16 * len(labels))]
    for name in versions[labels[0]]:
        cells = [versions[label].get(name, (float("nan"), None)) for label in labels]
        line = f"{name:40s}" + "".join(f"{value:16,.3f}" for value, _ in cells)
        target = TARGETS.get(name)
        if target:
            sign, limit = target
            value = cells[0][0]
            met = value <= limit if sign == "<=" else value >= limit
            line += f"  {sign} {limit:<7,g}  {'yes' if met else 'NO'}"
        lines.append(line)
        peaks = [peak for _, peak in cells]
        if any(peak is not None for peak in peaks):
            lines.append(f"{'    peak memory (GB)':40s}"
                         + "".join(f"{(peak or 0) / 1e9:16,.2f}" for peak in peaks))
    return "\n".join(lines)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--dir", type=Path, help="folder for the data (default: a temp folder)")
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--runs", type=int, default=3, help="runs of each command (default 3)")
    parser.add_argument("--no-reference", action="store_true",
                        help="skip the reference pipeline (it takes a minute or more)")
    parser.add_argument("--baseline", type=Path,
                        help="a checkout of another version of the package (its root folder): "
                             "its commands run in turn with this checkout's, for a before and "
                             "after measured in one run")
    args = parser.parse_args(argv)
    # The package is imported from this checkout, as the tests import it.
    roots = {"this checkout": HERE.parent}
    if args.baseline:
        roots["baseline"] = args.baseline.resolve()
    inherited = [p for p in os.environ.get("PYTHONPATH", "").split(os.pathsep) if p]
    envs = {label: dict(os.environ, PYTHONPATH=os.pathsep.join([str(root)] + inherited))
            for label, root in roots.items()}
    here = envs["this checkout"]
    with tempfile.TemporaryDirectory() as tmp:
        paths = prepare(args.dir or Path(tmp), args.rows, here)
        every = commands(paths)
        if args.no_reference:
            del every["reference pipeline (s)"]
        # Each version builds once first, so that the model exists for scoring and caches are
        # warm.
        fastest = {label: run(every["scorecard build (s)"], env) for label, env in envs.items()}
        shared = {name: [] for name in every if name not in PRODUCT}
        runs = {label: {name: [] for name in PRODUCT} for label in envs}
        for i in range(args.runs):
            for name, command in every.items():
                if name not in PRODUCT:
                    if name == "reference pipeline (s)" and i > 0:
                        continue  # one run of a minute-long pipeline is plenty
                    shared[name].append(run(command, here))
                    print(f"  run {i + 1}: {name} {shared[name][-1].seconds:.2f}",
                          file=sys.stderr)
                    continue
                for label, env in envs.items():
                    runs[label][name].append(run(command, env))
                    print(f"  run {i + 1}: {label}: {name} {runs[label][name][-1].seconds:.2f}",
                          file=sys.stderr)
    versions = {label: summary(runs[label], shared) for label in envs}
    print(f"{args.rows:,} rows, {args.runs} runs of each command (the reference pipeline once), "
          "medians of whole processes\n")
    print(table(versions))
    stages = {}
    for label in envs:
        best = min(runs[label]["scorecard build (s)"] + [fastest[label]], key=lambda r: r.seconds)
        stages[label] = stage_table(best, versions[label]['python -c "import scorecard.cli" (s)'][0])
    print("\nstages of the fastest build of each version (from its progress lines), seconds\n")
    labels = list(stages)
    print(f"{'stage':58s}" + "".join(f"{label:>16s}" for label in labels))
    for i, (name, _) in enumerate(stages[labels[0]]):
        cells = [stages[label][i][1] if i < len(stages[label]) else float("nan")
                 for label in labels]
        print(f"{name[:58]:58s}" + "".join(f"{value:16.2f}" for value in cells))
    return 0


if __name__ == "__main__":
    sys.exit(main())
