"""Loading a config: the two entry points, from a file and from text.

The steps are those of the sub-modules, in order: read the text
(:mod:`~scorecard.config.safe_yaml`), compose it with the event-stream check, check the node
graph, then read the values and apply the rules (:mod:`~scorecard.config.reading`).
Text values (column names, levels, reason codes) are taken exactly as written in the file, so a
level written ``01`` stays the text ``"01"`` rather than becoming the number 1.
"""

from __future__ import annotations

from os import PathLike
from pathlib import Path

import yaml

from scorecard.config import safe_yaml
from scorecard.config.messages import message
from scorecard.config.nodes import Source, describe, is_null
from scorecard.config.reading import read_config
from scorecard.config.schema import Config
from scorecard.errors import InputError

__all__ = ["load_config", "parse_config"]


def load_config(path: str | PathLike) -> Config:
    """Read, check and resolve a YAML config file.

    Parameters
    ----------
    path : str or path-like
        The config file. Relative paths inside it are resolved against its folder.

    Returns
    -------
    Config

    Raises
    ------
    InputError
        The file is missing, unreadable, too large, not UTF-8, or its content is not a valid
        config; the message names the file, the key path and its line.

    Examples
    --------
    >>> _ = Path("lease.yaml").write_text("data: {source: x.csv, target: y, bad: [1], good: [0]}")
    >>> load_config("lease.yaml").binning.max_bins
    6
    """
    file = safe_yaml.file_name(path)
    return parse_config(safe_yaml.read_text(file), file)


def parse_config(text: str, path: str | PathLike) -> Config:
    """Check and resolve a YAML config given as text.

    Parameters
    ----------
    text : str
        The YAML document.
    path : str or path-like
        Where the config lives: named in messages, its folder anchors relative paths and its
        stem is the default ``name``. The file itself is not read.

    Returns
    -------
    Config

    Raises
    ------
    InputError
        The text is not a valid config; the message names the file, the key path and its line.

    Examples
    --------
    >>> text = "data: {source: x.csv, target: y, bad: [1], good: [0]}"
    >>> parse_config(text, "/data/lease.yaml").data.source
    PosixPath('/data/x.csv')
    """
    if not isinstance(text, str):
        raise TypeError(f"text must be a str, got {type(text).__name__}")
    file = safe_yaml.file_name(path)
    root = safe_yaml.compose(text, file)
    if root is None or is_null(root):
        raise InputError(message(file, "", "is empty; a config needs at least a data section"))
    source = Source(file)
    source.record((), root)
    if not isinstance(root, yaml.MappingNode):
        source.fail((), f"must be a mapping of keys such as 'data:', got {describe(root)}")
    safe_yaml.check_graph(root, file)
    base = Path(file).expanduser().absolute().parent
    return read_config(source, root, base, Path(file).stem)
