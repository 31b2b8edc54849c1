"""The summary pass's extra work for extreme values: counting each numeric column's values by
sign and binary exponent, against the exact range it already took.

    PYTHONPATH=. python benchmarks/bench_magnitude_summary.py
"""

from __future__ import annotations

import time

import numpy as np

from scorecard.binning.fine import numeric_summary, regular_range

ROWS = 2_000_000


def timed(fn, repeat: int = 10) -> float:
    fn()
    start = time.perf_counter()
    for _ in range(repeat):
        fn()
    return (time.perf_counter() - start) / repeat


def main() -> None:
    x = np.random.default_rng(0).lognormal(8, 1, ROWS)
    x[::50] = np.nan
    x[::70] = -999.0
    specials = (-999.0,)
    before = timed(lambda: regular_range(x, specials))
    after = timed(lambda: numeric_summary(x, specials))
    print(f"{ROWS:,} values of one column: range only {before * 1e3:.1f} ms, "
          f"range and magnitude counts {after * 1e3:.1f} ms "
          f"({(after - before) / ROWS * 1e9:.1f} ns more per value)")


if __name__ == "__main__":
    main()
