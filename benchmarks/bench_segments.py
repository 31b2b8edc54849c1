"""What a card per segment costs against one card, on the invented demo applications.

    python benchmarks/bench_segments.py [--dir DIR] [--rows 200000] [--repeats 1] [--passes]

Writes the demo folder with ``--rows`` applications, then builds, in this process, the demo's
config without its declined applications (one card) and the config with a card per customer
segment (two cards), and prints the seconds of each and their ratio. The segments share every
pass that counts rows (each row coded once, by its own segment's bins); what each card adds is
its classing, selection and fit, and the benchmark regression and fairness check on its rows.
A build of each config on a small demo comes first, untimed, so that neither timing carries the
imports; with ``--repeats`` the two builds alternate and the fastest of each counts. The CPU
seconds of this process are printed beside the wall seconds: on a shared machine they move
less with the other work on it.

``--passes`` then times the passes that count rows (summary, fine classes, bins, patterns) of
the segmented build alone, both ways in turn on the same engine: shared by the segments (as the
build runs them) and once per segment over every row with the other segments' rows outside
every sample (as before they were shared). Only the passes are timed, the fastest of
``--repeats`` each.
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import scorecard.api as api
from scorecard.demo.files import CONFIG_FILE, SEGMENTED_CONFIG_FILE, write_demo

COUNTING = ("summary", "fine classes", "bins", "patterns")


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


def _timed(answer, kind_of, seconds: list):
    """``answer`` adding the CPU seconds of each counting pass to ``seconds``."""
    def timed(*args):
        if kind_of(*args) not in COUNTING:
            return answer(*args)
        start = time.process_time()
        out = answer(*args)
        seconds.append(time.process_time() - start)
        return out
    return timed


def pass_seconds(config_path: Path, repeats: int) -> dict:
    """CPU seconds of the counting passes of a segmented build, shared and once per segment."""
    from dataclasses import replace

    import numpy as np

    from scorecard.build import pipeline, shared_passes
    from scorecard.build.segments import build_segmented, segment_rule
    from scorecard.config import load_config
    from scorecard.engines.passes import SegmentFacts

    config = load_config(config_path)
    best: dict = {}
    with api.open_engine(config) as engine:
        rows, _ = pipeline._outcome_facts(config, engine)
        rule = segment_rule(config)
        segment = engine.collect(lambda chunk: (rule.codes(chunk[rule.column]),),
                                 columns=[rule.column])[0]
        facts = SegmentFacts(rows.label, rows.weight, rows.sample, segment.astype(np.int8))
        shared_pass = shared_passes._shared_pass
        for _ in range(repeats):
            seconds: list = []
            shared_passes._shared_pass = _timed(
                shared_pass, lambda asks, *_: next(iter(asks.values())).kind, seconds)
            try:
                build_segmented(config, engine)
            finally:
                shared_passes._shared_pass = shared_pass
            best["shared by the segments"] = min(best.get("shared by the segments", 1e9),
                                                 sum(seconds))
            seconds = []
            for index, name in enumerate(rule.names):
                pipeline.answered(pipeline._build_steps(
                    replace(config, name=f"{config.name}: {name}"), engine, None,
                    facts.own(index), True, None),
                    _timed(pipeline._one_pass, lambda ask: ask.kind, seconds))
            best["once per segment"] = min(best.get("once per segment", 1e9), sum(seconds))
    return best


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--dir", type=Path, default=None)
    parser.add_argument("--rows", type=int, default=200_000)
    parser.add_argument("--repeats", type=int, default=1)
    parser.add_argument("--passes", action="store_true")
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
    if args.passes:
        seconds = pass_seconds(_configs(folder)["a card per segment"], args.repeats)
        for name, value in seconds.items():
            print(f"counting passes {name:24s} CPU {value:6.2f} s")
        print(f"ratio {seconds['shared by the segments'] / seconds['once per segment']:.2f}")


if __name__ == "__main__":
    main()
