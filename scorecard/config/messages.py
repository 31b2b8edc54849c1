"""The one-line messages of the config reader: ``<file>: <key.path>: <what> (line N)``.

Key paths are tuples of keys and list positions while the file is read; users see them written
as in the file's own terms, ``characteristics.housing.groups[1][0]``.
"""

from __future__ import annotations

import difflib
import re
from collections.abc import Iterable

__all__ = ["did_you_mean", "display", "message", "shorten"]

_PLAIN_KEY = re.compile(r"[^.\[\]'\"]+")


def display(path: tuple) -> str:
    """A key path as users write it.

    Parameters
    ----------
    path : tuple of str and int
        Keys of mappings and positions in lists, outermost first.

    Returns
    -------
    str

    Examples
    --------
    >>> display(("characteristics", "housing", "groups", 1, 0))
    'characteristics.housing.groups[1][0]'
    >>> display(("characteristics", "a.b"))
    "characteristics['a.b']"
    """
    parts = []
    for part in path:
        if isinstance(part, int):
            parts.append(f"[{part}]")
        elif _PLAIN_KEY.fullmatch(part):
            parts.append(("." if parts else "") + part)
        else:
            parts.append(f"[{part!r}]")
    return "".join(parts)


def message(file: str, key: str, what: str, line: int | None = None) -> str:
    """One line naming the file, the key and what is wrong, with the line if known.

    Parameters
    ----------
    file : str
        The config file as the user named it.
    key : str
        The key path as displayed; empty for the whole file.
    what : str
        What is wrong.
    line : int or None
        1-based line of the key.

    Returns
    -------
    str
        Control characters quoted from the file are escaped, so the message is one line.

    Examples
    --------
    >>> message("lease.yaml", "binning.max_bins", "must be at least 2, got 1", 9)
    'lease.yaml: binning.max_bins: must be at least 2, got 1 (line 9)'
    >>> message("lease.yaml", "", "no such file")
    'lease.yaml: no such file'
    """
    text = ": ".join(part for part in (file, key, what) if part)
    # Values quoted from the file may hold line breaks or control characters; a message is one line.
    text = "".join(char if char.isprintable() else repr(char)[1:-1] for char in text)
    return text if line is None else f"{text} (line {line})"


def did_you_mean(word: str, options: Iterable[str]) -> str:
    """A suggestion to append to a message, or the empty string.

    Examples
    --------
    >>> did_you_mean("binnig", ["data", "binning"])
    "; did you mean 'binning'?"
    >>> did_you_mean("zzz", ["data"])
    ''
    """
    matches = difflib.get_close_matches(word, list(options), n=1)
    return f"; did you mean '{matches[0]}'?" if matches else ""


def shorten(text: str, limit: int = 40) -> str:
    """``text`` cut to ``limit`` characters, ending in ``...`` when cut.

    Examples
    --------
    >>> shorten("a" * 50, 10)
    'aaaaaaa...'
    """
    return text if len(text) <= limit else text[: limit - 3] + "..."
