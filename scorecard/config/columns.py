"""Checking that every column a config names is present in the data.

Done once the data's column names are known, before any pass over the rows; the message names
the key path and the line where the column was named.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator

from scorecard.config.messages import did_you_mean, display, message
from scorecard.config.schema import Config
from scorecard.errors import InputError

__all__ = ["check_columns"]


def check_columns(config: Config, columns: Iterable[str]) -> None:
    """Check that every column the config names is present in the data.

    Checked: the target, the weight, ignored and protected columns, the out-of-time date
    column, characteristics with an override, forced-in characteristics and the columns of
    exclusion rules.

    Parameters
    ----------
    config : Config
    columns : iterable of str
        Column names of the data.

    Raises
    ------
    InputError
        For the first named column that is absent, naming its key path and line.

    Examples
    --------
    >>> from scorecard.config import parse_config
    >>> config = parse_config("data: {source: x.csv, target: y, bad: [1], good: [0]}", "c.yaml")
    >>> check_columns(config, ["y", "age"])
    >>> check_columns(config, ["outcome", "age"])
    Traceback (most recent call last):
    ...
    scorecard.errors.InputError: c.yaml: data.target: column 'y' is not in the data (line 1)
    """
    present = set(columns)
    for path, column in _named_columns(config):
        if column not in present:
            spelled = [name for name in present if isinstance(name, str)]
            what = f"column '{column}' is not in the data{did_you_mean(column, spelled)}"
            key = display(path)
            raise InputError(message(config.config_file, key, what, config.key_lines.get(key)))


def _named_columns(config: Config) -> Iterator[tuple[tuple, str]]:
    data = config.data
    yield ("data", "target"), data.target
    if data.weight is not None:
        yield ("data", "weight"), data.weight
    for key in ("ignore", "protected"):
        for index, column in enumerate(getattr(data, key)):
            yield ("data", key, index), column
    if config.samples.out_of_time is not None:
        yield ("samples", "out_of_time", "column"), config.samples.out_of_time.column
    if config.segments is not None:
        yield ("segments", "column"), config.segments.column
    for name in config.characteristics:
        yield ("characteristics", name), name
    for index, column in enumerate(config.selection.keep):
        yield ("selection", "keep", index), column
    for index, rule in enumerate(data.exclude):
        yield ("data", "exclude", index, "column"), rule.column
