"""Readers that turn one YAML node into one checked value of the config.

A reader is called as ``reader(source, path, node)`` and returns the value or raises through
``source.fail`` with the key path and line. Numbers and words whose limits are declared in
:mod:`scorecard.constraints` are read by :func:`setting`, so the config refuses exactly what the
algorithms would.

Examples
--------
>>> from scorecard import constraints
>>> source = Source("lease.yaml")
>>> setting(constraints.MAX_BINS)(source, ("binning", "max_bins"), yaml.compose("6"))
6
>>> setting(constraints.MAX_VIF)(source, ("selection", "max_vif"), yaml.compose("1"))
Traceback (most recent call last):
...
scorecard.errors.InputError: lease.yaml: selection.max_vif: must be above 1, got 1
"""

from __future__ import annotations

import codecs
import datetime
import math
import re
from collections.abc import Callable, Mapping
from typing import Any

import yaml

from scorecard.config.messages import did_you_mean, display, shorten
from scorecard.config.nodes import YAML_TAG, Source, describe, is_null, short_tag
from scorecard.config.schema import OutcomeValue, SentinelValue
from scorecard.constraints import Interval, Setting

__all__ = [
    "Reader", "choice", "dask_address", "date", "delimiter", "encoding", "finite", "flag",
    "list_of", "number", "optional", "outcome_value", "require", "section", "setting",
    "sentinel", "text", "whole",
]

Reader = Callable[[Source, tuple, yaml.Node], Any]


def _example(reader: Reader, yaml_text: str) -> Any:
    """Run ``reader`` on a node written as YAML (for the examples)."""
    return reader(Source("lease.yaml"), ("key",), yaml.compose(yaml_text))


def text(source: Source, path: tuple, node: yaml.Node) -> str:
    """A non-empty scalar exactly as written: ``01`` stays the text ``'01'``.

    Examples
    --------
    >>> _example(text, "01")
    '01'
    """
    return source.text(path, node)


def flag(source: Source, path: tuple, node: yaml.Node) -> bool:
    """A yes/no value.

    Examples
    --------
    >>> _example(flag, "false")
    False
    """
    return source.value(path, node, ("bool",), "yes/no (true or false)")


def optional(reader: Reader) -> Reader:
    """``reader``, with null read as None.

    Examples
    --------
    >>> _example(optional(text), "~") is None
    True
    """

    def read(source: Source, path: tuple, node: yaml.Node) -> Any:
        return None if is_null(node) else reader(source, path, node)

    return read


def whole(interval: Interval) -> Reader:
    """A whole number within ``interval``.

    Examples
    --------
    >>> _example(whole(Interval(2)), "1")
    Traceback (most recent call last):
    ...
    scorecard.errors.InputError: lease.yaml: key: must be at least 2, got 1
    """

    def read(source: Source, path: tuple, node: yaml.Node) -> int:
        value = source.value(path, node, ("int",), "a whole number")
        if value not in interval:
            source.fail(path, f"must be {interval.describe()}, got {value}")
        return value

    return read


# YAML 1.1 reads an exponent without a decimal point (1e-3) as text; users mean a number.
_PLAIN_EXPONENT = re.compile(r"[-+]?(\d+\.?\d*|\.\d+)[eE][-+]?\d+")


def finite(source: Source, path: tuple, node: yaml.Node) -> float:
    """A finite number; ``1e-3`` counts as one although YAML 1.1 reads it as text.

    Examples
    --------
    >>> _example(finite, "1e-3")
    0.001
    """
    unquoted = node.tag == YAML_TAG + "str" and node.style is None
    if unquoted and _PLAIN_EXPONENT.fullmatch(node.value):
        raw = node.value
    else:
        raw = source.value(path, node, ("int", "float"), "a number")
    try:
        value = float(raw)
    except OverflowError:
        value = math.inf
    if not math.isfinite(value):
        source.fail(path, f"must be a finite number, got {shorten(node.value)}")
    return value


def number(interval: Interval) -> Reader:
    """A finite number within ``interval``.

    Examples
    --------
    >>> _example(number(Interval(0, 1, low_open=True)), "0")
    Traceback (most recent call last):
    ...
    scorecard.errors.InputError: lease.yaml: key: must be above 0 and at most 1, got 0
    """

    def read(source: Source, path: tuple, node: yaml.Node) -> float:
        value = finite(source, path, node)
        if value not in interval:
            source.fail(path, f"must be {interval.describe()}, got {node.value}")
        return value

    return read


def choice(options: tuple[str, ...], renamed: tuple[tuple[str, str], ...] = ()) -> Reader:
    """One of the words ``options``, with a suggestion when it is close to one.

    A word in ``renamed`` (old, new) is refused with its new spelling named.

    Examples
    --------
    >>> _example(choice(("stepwise", "all")), "stepwse")
    Traceback (most recent call last):
    ...
    scorecard.errors.InputError: lease.yaml: key: must be one of stepwise, all, got 'stepwse'; did you mean 'stepwise'?
    >>> _example(choice(("rises", "falls"), (("ascending", "rises"),)), "ascending")
    Traceback (most recent call last):
    ...
    scorecard.errors.InputError: lease.yaml: key: 'ascending' is now written 'rises'
    """
    new_words = dict(renamed)

    def read(source: Source, path: tuple, node: yaml.Node) -> str:
        value = source.text(path, node)
        if value in new_words:
            source.fail(path, f"'{value}' is now written '{new_words[value]}'")
        if value not in options:
            source.fail(path, f"must be one of {', '.join(options)}, got '{shorten(value)}'"
                              + did_you_mean(value, options))
        return value

    return read


def setting(declared: Setting) -> Reader:
    """The reader of a setting declared in :mod:`scorecard.constraints`.

    Examples
    --------
    >>> from scorecard.constraints import MIN_BIN_SHARE
    >>> _example(setting(MIN_BIN_SHARE), "0.05")
    0.05
    """
    if declared.choices:
        return choice(declared.choices, declared.renamed)
    interval = declared.interval or Interval()
    return whole(interval) if declared.whole else number(interval)


def list_of(item: Reader, *, unique: bool = False, increasing: bool = False,
            nonempty: bool = False) -> Reader:
    """A list whose items ``item`` reads, read into a tuple.

    Parameters
    ----------
    item : Reader
    unique : bool
        Refuse an item equal to an earlier one.
    increasing : bool
        Refuse an item not larger than the one before it.
    nonempty : bool
        Refuse an empty list.

    Examples
    --------
    >>> _example(list_of(finite, increasing=True), "[1, 2.5]")
    (1.0, 2.5)
    """

    def read(source: Source, path: tuple, node: yaml.Node) -> tuple:
        values: list = []
        first_at: dict = {}
        for item_path, item_node in source.items(path, node):
            value = item(source, item_path, item_node)
            if unique:
                if value in first_at:
                    source.fail(item_path, f"'{shorten(item_node.value)}' is already listed at "
                                           f"{display(first_at[value])}")
                first_at[value] = item_path
            if increasing and values and value <= values[-1]:
                source.fail(item_path, f"must be larger than the value before it, got "
                                       f"{item_node.value} after {values[-1]:g}")
            values.append(value)
        if nonempty and not values:
            source.fail(path, "must list at least one value")
        return tuple(values)

    return read


def outcome_value(source: Source, path: tuple, node: yaml.Node) -> OutcomeValue:
    """An outcome value: text, a number or yes/no, as rows are matched against it.

    Examples
    --------
    >>> _example(outcome_value, "defaulted"), _example(outcome_value, "1")
    ('defaulted', 1)
    """
    value = source.value(path, node, ("str", "int", "float", "bool"), "text, a number or yes/no")
    if value == "" or (isinstance(value, float) and not math.isfinite(value)):
        source.fail(path, f"must be text, a number or yes/no, got {describe(node)}")
    return value


def sentinel(source: Source, path: tuple, node: yaml.Node) -> SentinelValue:
    """A sentinel: a value that stands for a fact rather than a quantity, binned apart.

    Such as -999 for "no credit file"; a whole or finite number, or text.

    Examples
    --------
    >>> _example(sentinel, "-999"), _example(sentinel, "none")
    (-999, 'none')
    """
    tag = short_tag(node)
    if isinstance(node, yaml.ScalarNode) and tag == "str":
        return source.text(path, node)
    if tag == "float":
        return finite(source, path, node)
    return source.value(path, node, ("int",), "a number or text")


def date(source: Source, path: tuple, node: yaml.Node) -> datetime.date:
    """A date without a time, written ``2025-07-01``.

    Examples
    --------
    >>> _example(date, "2025-07-01")
    datetime.date(2025, 7, 1)
    """
    value = source.value(path, node, ("timestamp", "str"), "a date like 2025-07-01")
    if isinstance(value, str):
        try:
            value = datetime.date.fromisoformat(value)
        except ValueError:
            source.fail(path, f"must be a date like 2025-07-01, got '{shorten(node.value)}'")
    if isinstance(value, datetime.datetime):
        source.fail(path, f"must be a date like 2025-07-01 without a time, got '{node.value}'")
    return value


def encoding(source: Source, path: tuple, node: yaml.Node) -> str:
    """The name of a text encoding Python knows.

    Examples
    --------
    >>> _example(encoding, "latin-1")
    'latin-1'
    """
    value = source.text(path, node)
    try:
        codecs.lookup(value)
    except LookupError:
        source.fail(path, f"'{shorten(value)}' is not a known text encoding")
    return value


def delimiter(source: Source, path: tuple, node: yaml.Node) -> str:
    """One character that separates the fields of a CSV file.

    Examples
    --------
    >>> _example(delimiter, "';'")
    ';'
    """
    value = source.text(path, node)
    if len(value) != 1 or value in "\r\n\"":
        source.fail(path, f"must be one character such as ',' or ';', got {describe(node)}")
    return value


_DASK_ADDRESS = re.compile(r"tcp://([A-Za-z0-9.-]+|\[[0-9A-Fa-f:.]+\]):(\d{1,5})")


def dask_address(source: Source, path: tuple, node: yaml.Node) -> str:
    """``local``, or the address of a running Dask scheduler, ``tcp://host:port``.

    Examples
    --------
    >>> _example(dask_address, "tcp://10.0.0.5:8786")
    'tcp://10.0.0.5:8786'
    """
    value = source.text(path, node)
    address = _DASK_ADDRESS.fullmatch(value)
    if value != "local" and not (address and 1 <= int(address.group(2)) <= 65535):
        source.fail(path, "must be local or an address like tcp://host:8786, "
                          f"got {describe(node)}")
    return value


def section(source: Source, path: tuple, node: yaml.Node | None,
            schema: dict[str, Reader], renamed: Mapping[str, str] | None = None) -> dict[str, Any]:
    """The keys present in a mapping, each read by its reader in ``schema``.

    A key in ``renamed`` (old key to new key) is refused with the new key named.

    Examples
    --------
    >>> source = Source("lease.yaml")
    >>> section(source, ("output",), yaml.compose("{model: m.json}"), {"model": text})
    {'model': 'm.json'}
    """
    found = source.mapping(path, node, tuple(schema), renamed)
    return {key: schema[key](source, path + (key,), value) for key, value in found.items()}


def require(source: Source, path: tuple, values: dict, keys: tuple[str, ...]) -> None:
    """Refuse the first of ``keys`` missing from ``values``, a section read by :func:`section`.

    Examples
    --------
    >>> require(Source("lease.yaml"), ("data",), {"source": "a.csv"}, ("source", "target"))
    Traceback (most recent call last):
    ...
    scorecard.errors.InputError: lease.yaml: data.target: is required but missing
    """
    for key in keys:
        if key not in values:
            source.fail(path + (key,), "is required but missing")
