"""The engine that runs every pass on one in-memory frame (see :mod:`scorecard.engines.base`)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from scorecard.engines.base import PassProgress, ordered_fold, pass_label, slice_rows
from scorecard.engines.passes import RowFacts


class LocalEngine:
    """Runs every pass on one pandas frame in memory, in chunks of ``chunk_rows`` rows.

    Chunks bound the memory of the per-row code arrays a pass makes; the counts are exact
    whatever the chunk size. ``progress`` (the build's stage printer) gets a live line per pass
    on a terminal.

    Examples
    --------
    >>> engine = LocalEngine(pd.DataFrame({"x": [1, 2, 3, 4, 5]}), chunk_rows=2)
    >>> engine.collect(lambda chunk: (chunk["x"].to_numpy() * 10,))[0].tolist()
    [10, 20, 30, 40, 50]
    >>> engine.reduce(lambda chunk: int(chunk["x"].sum()), lambda a, b: a + b)
    15
    """

    def __init__(self, frame: pd.DataFrame, chunk_rows: int = 2_000_000, progress=None):
        if chunk_rows < 1:
            raise ValueError(f"chunk_rows must be at least 1, not {chunk_rows}")
        self.frame = frame
        self.columns = list(frame.columns)
        self.chunk_rows = chunk_rows
        self.progress = progress

    def _chunks(self):
        n = len(self.frame)
        for start in range(0, max(n, 1), self.chunk_rows):
            stop = min(start + self.chunk_rows, n)
            yield start, stop, self.frame.iloc[start:stop] if (start, stop) != (0, n) else self.frame

    def _run(self, label, call):
        shown = PassProgress(self.progress, label, self.n_rows)
        try:
            for start, stop, chunk in self._chunks():
                yield call(start, stop, chunk)
                shown.advance(stop - start)
        finally:
            shown.finish()

    def collect(self, fn, columns=None):
        """Per-row arrays of ``fn`` over every chunk, concatenated.

        ``columns`` names the columns ``fn`` reads; an engine that reads files reads only
        those, while this one holds the frame already and passes it whole.
        """
        parts = list(self._run(pass_label(fn), lambda a, b, chunk: fn(chunk)))
        return tuple(np.concatenate(p) for p in zip(*parts))

    def reduce(self, fn, merge, rows: RowFacts | None = None, *args, columns=None):
        """``fn`` on every chunk with its slice of ``rows``, merged in order (``columns``: as
        for :meth:`collect`)."""
        def call(start, stop, chunk):
            if rows is None:
                return fn(chunk, *args)
            return fn(chunk, slice_rows(rows, start, stop), *args)
        return ordered_fold(merge, self._run(pass_label(fn), call))

    @property
    def n_rows(self) -> int:
        return len(self.frame)

    def sample_rows(self, n: int = 1000) -> pd.DataFrame:
        """The first ``n`` rows, with every column's type: enough to classify the columns."""
        return self.frame.iloc[:n]

    def close(self) -> None:
        """Nothing to release: the frame belongs to the caller."""

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
