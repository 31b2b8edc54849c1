"""Outputs appear whole or not at all.

Every output is written to a temporary file in the destination folder and moved into place
with :func:`os.replace`, which is atomic on one file system: a killed run leaves the previous
file intact, and two runs writing the same path never interleave (the last one wins whole).
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path


@contextlib.contextmanager
def atomic_path(path):
    """Yield a temporary path beside ``path``; on success move it onto ``path``.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> target = pathlib.Path(tempfile.mkdtemp()) / "out.txt"
    >>> with atomic_path(target) as tmp:
    ...     _ = tmp.write_text("whole")
    >>> target.read_text()
    'whole'
    """
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, name = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".partial", dir=path.parent)
    os.close(fd)
    tmp = Path(name)
    # mkstemp makes the file private; outputs get the usual permissions of new files.
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(tmp, 0o666 & ~umask)
    try:
        yield tmp
        os.replace(tmp, path)
    finally:
        if tmp.exists():
            tmp.unlink()


def write_text(path, text: str) -> None:
    """Write ``text`` (UTF-8) to ``path`` atomically."""
    with atomic_path(path) as tmp:
        tmp.write_text(text, encoding="utf-8")
