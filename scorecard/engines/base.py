"""What every engine shares: the ordered merge of chunk results and the progress line of a pass.

An engine offers two operations. ``collect`` runs a function on every chunk and concatenates
the per-row arrays it returns (used for the outcome, so that the samples are drawn once over the
whole file). ``reduce`` runs a pass on every chunk with that chunk's slice of the per-row facts
and merges the small count tables the chunks return. Merges always join neighbouring chunks,
earlier one first, so a result never depends on how the rows were cut into chunks.
"""

from __future__ import annotations

import time

from scorecard.engines.passes import RowFacts

# What a pass does, by the name of the pass function, for the progress line.
PASS_NAMES = {
    "code_outcome": "coding the outcome",
    "column_summary": "summarising columns",
    "fine_counts": "counting fine classes",
    "bin_counts": "counting rows into bins",
    "coded_patterns": "coding rows into patterns",
    "fine_counts_by_segment": "counting fine classes by segment",
    "bin_counts_by_segment": "counting rows into bins by segment",
    "patterns_by_segment": "coding rows into patterns by segment",
    "protected_counts": "counting protected groups",
    "protected_levels": "finding protected groups",
}


def slice_rows(rows: RowFacts | None, start: int, stop: int) -> RowFacts | None:
    """The per-row facts of rows ``start`` to ``stop`` (views, no copy), of the same kind
    (:class:`RowFacts`, or :class:`scorecard.engines.passes.SegmentFacts` with segment codes)."""
    if rows is None:
        return None
    return type(rows)(*(column[start:stop] for column in rows))


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
