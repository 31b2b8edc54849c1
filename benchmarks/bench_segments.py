"""What a card per segment costs against one card, on the invented demo applications.

    python benchmarks/bench_segments.py [--dir DIR] [--rows 200000]

Writes the demo folder with ``--rows`` applications, then builds, in this process, the demo's
config without its declined applications (one card) and the config with a card per customer
segment (two cards), and prints the seconds of each and their ratio. The segments share every
pass that counts rows (each row coded once, by its own segment's bins); what each card adds is
its classing, selection and fit, and the benchmark regression and fairness check on its rows.
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import scorecard.api as api
from scorecard.demo.files import CONFIG_FILE, SEGMENTED_CONFIG_FILE, write_demo


def _without_rejects(config: Path) -> Path:
    text = config.read_text()
    start, end = text.index("\nrejects:\n"), text.index("\nengine:")
    single = config.with_name("single.yaml")
    single.write_text(text[:start] + text[end:])
    return single


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--dir", type=Path, default=None)
    parser.add_argument("--rows", type=int, default=200_000)
    args = parser.parse_args()
    folder = args.dir or Path(tempfile.mkdtemp())
    write_demo(folder, rows=args.rows)
    single = _without_rejects(folder / CONFIG_FILE)
    times = {}
    for name, config in (("one card", single), ("a card per segment", folder / SEGMENTED_CONFIG_FILE)):
        start = time.perf_counter()
        result = api.build(config)
        times[name] = time.perf_counter() - start
        print(f"{name:20s} {times[name]:7.2f} s   holdout AUC "
              f"{result.performance['holdout'].auc:.4f}")
    print(f"ratio {times['a card per segment'] / times['one card']:.2f} at {args.rows:,} rows")


if __name__ == "__main__":
    main()
