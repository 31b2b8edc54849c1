"""One engine over the accepts followed by copies of the declined applications.

Reject inference adds the declined applicants to the counts with inferred outcomes and
weights; fuzzy augmentation adds each of them twice (once as a good, once as a bad). Counts add
up, so every pass of a build runs unchanged: its per-row facts cover the accepts' rows and then
each copy of the rejects' rows, each part runs on the engine that holds its rows, and the count
tables merge in that order.
"""

from __future__ import annotations

import numpy as np

from scorecard.engines.base import ordered_fold, slice_rows
from scorecard.engines.passes import RowFacts


class AugmentedEngine:
    """The rows of ``accepts`` and then ``copies`` copies of the rows of ``rejects``.

    Both engines belong to the caller, who closes them. A pass without per-row facts (a
    summary of values or levels) reads each engine once, whatever the number of copies.

    Examples
    --------
    >>> import pandas as pd
    >>> from scorecard.engines.local import LocalEngine
    >>> both = AugmentedEngine(LocalEngine(pd.DataFrame({"x": [1.0, 2.0]})),
    ...                        LocalEngine(pd.DataFrame({"x": [5.0]})), copies=2)
    >>> rows = RowFacts(np.array([0, 1, 0, 1], np.int8), np.array([1, 1, .7, .3]),
    ...                 np.zeros(4, np.int8))
    >>> both.reduce(lambda chunk, r: float((chunk["x"].to_numpy() * r.weight).sum()),
    ...             lambda a, b: a + b, rows)
    8.0
    """

    def __init__(self, accepts, rejects, copies: int):
        if copies < 0:
            raise ValueError(f"copies must be at least 0, not {copies}")
        self.accepts = accepts
        self.rejects = rejects
        self.parts = [accepts] + [rejects] * copies
        self.columns = accepts.columns
        self._split: tuple = (None, None)   # (the RowFacts last split, its parts)

    @property
    def n_rows(self) -> int:
        return self.accepts.n_rows + (len(self.parts) - 1) * self.rejects.n_rows

    def sample_rows(self, n: int = 1000):
        return self.accepts.sample_rows(n)

    def _parts_of(self, rows: RowFacts) -> list[RowFacts]:
        """Each part's slice of ``rows``; the same objects for the same ``rows``, so that an
        engine that ships the facts to workers ships them once."""
        seen, parts = self._split
        if seen is not rows:
            sizes = [self.accepts.n_rows] + [self.rejects.n_rows] * (len(self.parts) - 1)
            bounds = np.concatenate([[0], np.cumsum(sizes)])
            if bounds[-1] != len(rows.label):
                raise ValueError(f"the per-row facts cover {len(rows.label)} rows, "
                                 f"the accepts and rejects {bounds[-1]}")
            parts = [slice_rows(rows, int(a), int(b)) for a, b in zip(bounds[:-1], bounds[1:])]
            self._split = (rows, parts)
        return parts

    def collect(self, fn, columns=None):
        results = [engine.collect(fn, columns=columns) for engine in self.parts]
        return tuple(np.concatenate(p) for p in zip(*results))

    def reduce(self, fn, merge, rows: RowFacts | None = None, *args, columns=None):
        if rows is None:
            engines = [self.accepts] + ([self.rejects] if len(self.parts) > 1 else [])
            return ordered_fold(merge, [e.reduce(fn, merge, None, *args, columns=columns)
                                        for e in engines])
        return ordered_fold(merge, [engine.reduce(fn, merge, part, *args, columns=columns)
                                    for engine, part in zip(self.parts, self._parts_of(rows))])

    def close(self) -> None:
        """Nothing to release: both engines belong to the caller."""

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
