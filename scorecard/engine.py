"""Where the passes run: on one in-memory frame, or on the partitions of a Dask dataframe.

An engine offers two operations. ``collect`` runs a function on every chunk and concatenates
the per-row arrays it returns (used for the outcome, so that the samples are drawn once over the
whole file). ``reduce`` runs a pass on every chunk with that chunk's slice of the per-row facts
and merges the small count tables the chunks return.
"""

from __future__ import annotations

from functools import reduce as fold

import numpy as np
import pandas as pd

from .passes import RowFacts


def _slice(rows: RowFacts | None, start: int, stop: int):
    if rows is None:
        return None
    return RowFacts(rows.label[start:stop], rows.weight[start:stop], rows.sample[start:stop])


class LocalEngine:
    """Runs every pass on one pandas frame in memory, in chunks of ``chunk_rows`` rows.

    Chunks bound the memory of the per-row code arrays a pass makes; the counts are exact
    whatever the chunk size.
    """

    def __init__(self, frame: pd.DataFrame, chunk_rows: int = 2_000_000):
        self.frame = frame
        self.columns = list(frame.columns)
        self.chunk_rows = chunk_rows

    def _chunks(self):
        n = len(self.frame)
        for start in range(0, max(n, 1), self.chunk_rows):
            stop = min(start + self.chunk_rows, n)
            yield start, stop, self.frame.iloc[start:stop] if (start, stop) != (0, n) else self.frame

    def collect(self, fn):
        parts = [fn(chunk) for _, _, chunk in self._chunks()]
        return tuple(np.concatenate(p) for p in zip(*parts))

    def reduce(self, fn, merge, rows: RowFacts | None = None, *args):
        parts = [fn(chunk, _slice(rows, a, b), *args) if rows is not None else fn(chunk, *args)
                 for a, b, chunk in self._chunks()]
        return fold(merge, parts)

    @property
    def n_rows(self) -> int:
        return len(self.frame)

    def sample_rows(self, n: int = 1000) -> pd.DataFrame:
        """The first ``n`` rows, with every column's type: enough to classify the columns."""
        return self.frame.iloc[:n]
