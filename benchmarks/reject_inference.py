"""Reject inference on the demo, method by method, against the truth the invented data know.

    python benchmarks/reject_inference.py [--dir DIR] [--rows 20000] [--seed 2024]

Writes the demo (accepts with outcomes, declined applications whose true outcomes the invented
generator kept aside), builds it with each method, and prints per method: the rejects' inferred
bad rate, their true bad rate, and the AUC on the whole through-the-door population (accepts
with their outcomes plus rejects with their true outcomes) of the card built with the rejects
and of the accepts-only card. The demo's old policy declined partly on an impression the data
do not hold, so no method can be expected to find the true bad rate.
"""

from __future__ import annotations

import argparse
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd

from scorecard.api import open_engine, open_rejects_engine
from scorecard.build.pipeline import build_scorecard
from scorecard.card.scoring import apply_scorecard
from scorecard.config.loading import load_config
from scorecard.demo.files import CONFIG_FILE, DATA_FILE, DECLINED_FILE, write_demo
from scorecard.measures.ranking import discrimination

METHODS = ("none", "fuzzy", "parcelling", "hard_cutoff", "reweighting")


def whole_population_auc(card, everyone: pd.DataFrame) -> float:
    scored = apply_scorecard(card, everyone)
    keep = ~scored.rejected
    score = scored.score[keep] - card.min_score
    bad = everyone["outcome"].to_numpy()[keep] == "defaulted"
    width = card.max_score - card.min_score + 1
    goods = np.bincount(score[~bad], minlength=width)
    bads = np.bincount(score[bad], minlength=width)
    return discrimination(goods, bads).auc


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--dir", default=None)
    parser.add_argument("--rows", type=int, default=20_000)
    parser.add_argument("--seed", type=int, default=2024)
    args = parser.parse_args()
    folder = Path(args.dir or tempfile.mkdtemp())
    write_demo(folder, rows=args.rows, seed=args.seed)
    accepts = pd.read_csv(folder / DATA_FILE)
    declined = pd.read_csv(folder / DECLINED_FILE)
    everyone = pd.concat([accepts, declined.rename(columns={"true_outcome": "outcome"})])
    everyone = everyone[everyone["outcome"].isin(["repaid", "defaulted"])]
    text = (folder / CONFIG_FILE).read_text()
    print(f"demo: {len(accepts)} accepts, {len(declined)} declined; whole population "
          f"{len(everyone)} with a good or bad outcome")
    print(f"{'method':<12} {'inferred':>9} {'true':>7} {'AUC with rejects':>17} "
          f"{'AUC accepts only':>17}")
    for method in METHODS:
        path = folder / f"{method}.yaml"
        path.write_text(text.replace("  method: fuzzy\n", f"  method: {method}\n"))
        config = load_config(path)
        with open_engine(config) as engine, open_rejects_engine(config, engine) as rejects:
            result = build_scorecard(config, engine, rejects_engine=rejects)
        inference = result.rejects
        print(f"{method:<12} {inference.inferred_bad_rate:>9.2%} {inference.known_bad_rate:>7.2%} "
              f"{whole_population_auc(result.card, everyone):>17.4f} "
              f"{whole_population_auc(inference.accepts_only.card, everyone):>17.4f}")


if __name__ == "__main__":
    main()
