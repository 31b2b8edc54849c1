"""What the exclusion rules cost in the outcome pass, against the outcome coding they sit beside.

    python benchmarks/bench_exclusions.py [--rows 1000000] [--repeats 5]

Invented rows (fixed seed): a text outcome, a text channel, a number with missing values. Four
rules, one of each condition, are evaluated by ``first_rule`` (the function the build and
``scorecard score --apply-exclusions`` call per chunk); the outcome coding of the same rows
(``code_outcome``) is the yardstick. Best of ``--repeats`` runs, in milliseconds.
"""

from __future__ import annotations

import argparse
import time

import numpy as np
import pandas as pd

from scorecard.config.exclusions import ExclusionRule
from scorecard.data.exclusions import first_rule
from scorecard.data.outcome import code_outcome

RULES = (
    ExclusionRule("channel", "in", ("staff", "test"), "not a customer"),
    ExclusionRule("deposit", "below", 0.05, "no deposit"),
    ExclusionRule("deposit", "missing", True, "unknown deposit"),
    ExclusionRule("deposit", "at_least", 0.45, "balloon product"),
)


def _rows(n: int) -> pd.DataFrame:
    rng = np.random.default_rng(7)
    deposit = np.where(rng.random(n) < 0.03, np.nan, rng.uniform(0, 0.5, n))
    return pd.DataFrame({
        "outcome": rng.choice(["repaid", "defaulted", "in_arrears"], n, p=[.9, .08, .02]),
        "channel": rng.choice(["shop", "online", "staff", "test"], n, p=[.5, .44, .04, .02]),
        "deposit": deposit,
    })


def _best(fn, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return 1000 * min(times)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--repeats", type=int, default=5)
    args = parser.parse_args()
    frame = _rows(args.rows)
    rules_ms = _best(lambda: first_rule(frame, RULES), args.repeats)
    outcome_ms = _best(lambda: code_outcome(frame["outcome"], ["defaulted"], ["repaid"]),
                       args.repeats)
    caught = np.bincount(first_rule(frame, RULES), minlength=len(RULES) + 1)
    print(f"{args.rows:,} rows, {len(RULES)} rules; rows caught per rule: {caught[1:].tolist()}")
    print(f"  exclusion rules (first_rule): {rules_ms:8.1f} ms")
    print(f"  outcome coding (code_outcome): {outcome_ms:8.1f} ms")
    print(f"  rules / outcome coding:        {rules_ms / outcome_ms:8.2f}")


if __name__ == "__main__":
    main()
