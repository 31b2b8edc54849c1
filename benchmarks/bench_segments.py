"""What a card per segment costs against one card, on the invented demo applications.

    python benchmarks/bench_segments.py [--dir DIR] [--rows 200000] [--repeats 1]

Writes the demo folder with ``--rows`` applications, then builds, in this process, the demo's
config without its declined applications (one card) and the config with a card per customer
segment (two cards), and prints the seconds of each and their ratio. The segments share every
pass that counts rows (each row coded once, by its own segment's bins); what each card adds is
its classing, selection and fit, and the benchmark regression and fairness check on its rows.
A build of each config on a small demo comes first, untimed, so that neither timing carries the
imports; with ``--repeats`` the two builds alternate and the fastest of each counts. The CPU
seconds of this process are printed beside the wall seconds: on a shared machine they move
less with the other work on it.
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
    if "\nrejects:\n" in text:
        start = text.index("\nrejects:\n")
        end = min(i for i in (text.find("\nsegments:", start), text.find("\nengine:", start))
                  if i > 0)
        text = text[:start] + text[end:]
    plain = config.with_name(f"{config.stem}_without_rejects.yaml")
    plain.write_text(text)
    return plain


def _configs(folder: Path) -> dict:
    """One card and a card per segment, both without declined applications."""
    return {"one card": _without_rejects(folder / CONFIG_FILE),
            "a card per segment": _without_rejects(folder / SEGMENTED_CONFIG_FILE)}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--dir", type=Path, default=None)
    parser.add_argument("--rows", type=int, default=200_000)
    parser.add_argument("--repeats", type=int, default=1)
    args = parser.parse_args()
    folder = args.dir or Path(tempfile.mkdtemp())
    warm = folder / "warm-up"
    write_demo(warm, rows=2000)
    for config in _configs(warm).values():
        api.build(config)
    write_demo(folder, rows=args.rows)
    times, cpus = {}, {}
    for _ in range(args.repeats):
        for name, config in _configs(folder).items():
            start, cpu = time.perf_counter(), time.process_time()
            result = api.build(config)
            seconds, cpu = time.perf_counter() - start, time.process_time() - cpu
            times[name] = min(times.get(name, seconds), seconds)
            cpus[name] = min(cpus.get(name, cpu), cpu)
            print(f"{name:20s} {seconds:7.2f} s, CPU {cpu:7.2f} s   holdout AUC "
                  f"{result.performance['holdout'].auc:.4f}", flush=True)
    print(f"ratio {times['a card per segment'] / times['one card']:.2f} (CPU "
          f"{cpus['a card per segment'] / cpus['one card']:.2f}) at {args.rows:,} rows "
          f"(fastest of {args.repeats})")


if __name__ == "__main__":
    main()
