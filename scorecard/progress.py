"""Progress of long work on stderr: one line per stage with the time elapsed."""

from __future__ import annotations

import sys
import time


class StageLog:
    """Callable that prints ``[  1.2 s] text`` lines to a stream; silent when ``quiet``.

    Examples
    --------
    >>> import io
    >>> out = io.StringIO()
    >>> log = StageLog(stream=out)
    >>> log("rows read")
    >>> out.getvalue().endswith("rows read\\n")
    True
    """

    def __init__(self, quiet: bool = False, stream=None):
        self.quiet = quiet
        self.stream = stream if stream is not None else sys.stderr
        self.start = time.perf_counter()

    def __call__(self, text: str) -> None:
        if not self.quiet:
            elapsed = time.perf_counter() - self.start
            print(f"[{elapsed:7.2f} s] {text}", file=self.stream, flush=True)
