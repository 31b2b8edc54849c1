"""Where the passes run: on one in-memory frame, or on the partitions of a Dask dataframe.

An engine offers two operations. ``collect`` runs a function on every chunk and concatenates
the per-row arrays it returns (used for the outcome, so that the samples are drawn once over the
whole file). ``reduce`` runs a pass on every chunk with that chunk's slice of the per-row facts
and merges the small count tables the chunks return. Merges always join neighbouring chunks,
earlier one first, so a result never depends on how the rows were cut into chunks.

This module holds the engine that works in memory (:class:`LocalEngine`) and what every engine
shares: the ordered merge and the progress line of a pass. The Dask engine is in
:mod:`scorecard.dask_engine`.
"""

from __future__ import annotations

import time

import numpy as np
import pandas as pd

from .passes import RowFacts

# What a pass does, by the name of the pass function, for the progress line.
PASS_NAMES = {
    "code_outcome": "coding the outcome",
    "column_summary": "summarising columns",
    "fine_counts": "counting fine classes",
    "bin_counts": "counting rows into bins",
    "coded_patterns": "coding rows into patterns",
    "protected_counts": "counting protected groups",
    "protected_levels": "finding protected groups",
}


def slice_rows(rows: RowFacts | None, start: int, stop: int) -> RowFacts | None:
    """The per-row facts of rows ``start`` to ``stop`` (views, no copy)."""
    if rows is None:
        return None
    return RowFacts(rows.label[start:stop], rows.weight[start:stop], rows.sample[start:stop])


def ordered_fold(merge, parts):
    """Merge ``parts`` in order as a balanced tree of neighbour merges.

    Each merge joins two neighbours, the earlier first, so the result equals a left-to-right
    fold for any merge that is associative; but a part takes part in only about log2(parts)
    merges, which matters when the merged tables grow with the rows (pattern tables).
    At most one partial result per tree level is held.

    Examples
    --------
    >>> ordered_fold(lambda a, b: f"({a}{b})", "abcde")
    '(((ab)(cd))e)'
    """
    stack: list = []   # (level, partial result), levels strictly decreasing
    for part in parts:
        level, value = 0, part
        while stack and stack[-1][0] == level:
            value = merge(stack.pop()[1], value)
            level += 1
        stack.append((level, value))
    if not stack:
        raise ValueError("nothing to merge: the engine produced no chunks")
    value = stack.pop()[1]
    while stack:
        value = merge(stack.pop()[1], value)
    return value


def pass_label(fn) -> str:
    """Words for the progress line of a pass, from its function (or the pass a lambda calls)."""
    name = getattr(fn, "__name__", "")
    if name in PASS_NAMES:
        return PASS_NAMES[name]
    code = getattr(fn, "__code__", None)
    called = (code.co_names + code.co_freevars) if code is not None else ()
    return next((PASS_NAMES[n] for n in called if n in PASS_NAMES), "reading rows")


class PassProgress:
    """Rows done and time elapsed of one pass, kept on one line of a terminal.

    ``progress`` is the build's stage printer (a :class:`scorecard.progress.StageLog` or any
    callable). The line is drawn only when that printer writes to a terminal and is not quiet;
    when the pass ends the line is wiped, leaving the build's one summary line per stage.

    Examples
    --------
    >>> import io
    >>> class Terminal(io.StringIO):
    ...     def isatty(self):
    ...         return True
    >>> class Log:
    ...     quiet, stream = False, Terminal()
    >>> p = PassProgress(Log(), "counting fine classes", 1000)
    >>> p.advance(400)
    >>> "counting fine classes: 400 of 1,000 rows" in Log.stream.getvalue()
    True
    """

    def __init__(self, progress, label: str, total_rows: int):
        stream = getattr(progress, "stream", None)
        self.live = (progress is not None and not getattr(progress, "quiet", False)
                     and stream is not None and _is_terminal(stream))
        self.stream = stream
        self.label = label
        self.total = total_rows
        self.done = 0
        self.start = time.perf_counter()

    def advance(self, rows: int) -> None:
        self.done += rows
        if self.live:
            elapsed = time.perf_counter() - self.start
            self.stream.write(f"\r\x1b[K  {self.label}: {self.done:,} of {self.total:,} rows, "
                              f"{elapsed:.1f} s")
            self.stream.flush()

    def finish(self) -> None:
        if self.live:
            self.stream.write("\r\x1b[K")
            self.stream.flush()


def _is_terminal(stream) -> bool:
    try:
        return bool(stream.isatty())
    except (AttributeError, ValueError):   # a closed or file-less stream is no terminal
        return False


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
